"""``partsel characterise`` against partsel's transistor-level op-amps (tests/circuits/).

The characteriser sees only the five pins of each subcircuit. Every figure it measures is
checked against something it cannot see or does not share:

* internal probes (device currents; the characteriser's benches never name them): the
  class-B pull-down transistor's collector current, the source device's collector (drain)
  current at no load for the biased stages;
* tests/circuits/characterise.py, the circuits' own datasheet-style measurements written
  independently of partsel.characterise (GBW as |A| f at 10 kHz, slew rates from its own step
  bench, supply current, swing with a current-source load);
* transistor-level transients of circuits the characteriser never ran (gain 2, other loads,
  frequencies and amplitudes), for the dead band and for the end-to-end prediction.

Tolerances (issue 12): stage current +-5 %, GBW +-10 %, slew rate +-10 %, supply current
+-5 %, the topology right, and the glitch the fitted dead band gives at slopes not used for
the fit within +-15 % of the transistor-level glitch. Measured (ngspice 39; the table:
``python tests/bench/bench_characterise.py``): stage current -0.3 % (class B), -1.2 % (class
AB), -0.0 % (CMOS) from the probes; GBW within 0.2 % and slew rates within 0.2 % of the
reference benches; supply current within 0.1 %; the fitted dead band 0.8 % below the probe's
drive-node distance, and its glitches in the 15 crossover cases of the grid -8.0 .. +10.7 %
(closed form) and -0.1 .. +14.0 % (simulation) from the transistor level's. The closest
agreements (GBW, slew, supply) are the same quantity read by two benches; the probe checks
are the independent ones.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import yaml
from circuits import characterise as reference
from circuits.characterise import CLASS_AB, CLASS_B, CMOS, Case, Circuit, run_all
from test_transistor_level_opamp import design_of

from partsel.characterise.benches import Conditions
from partsel.characterise.model_file import read_models
from partsel.characterise.record import stage_params
from partsel.characterise.run import Characterisation, characterise
from partsel.physics.analysis import predict_closed_form
from partsel.physics.simulate import simulate

CIRCUITS = (CLASS_B, CLASS_AB, CMOS)
SUPPLY = Conditions(5.0)
#: Gain-2 circuits (R_f = R_g = 100 kohm around 2.5 V, load to 2.5 V) the dead-band fit never
#: saw: three loads, three frequencies, two output amplitudes.
GRID = [Case(r, f, a) for r in (600.0, 2e3, 10e3) for f in (1e3, 5e3, 20e3) for a in (0.5, 0.8)]


@dataclass(frozen=True)
class Run:
    result: Characterisation
    ref: reference.Measured
    slew_ref: tuple[float, float]  #: the reference's step bench at the characteriser's levels


@pytest.fixture(scope="module")
def runs(need_ngspice: None, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Run]:
    tmp = tmp_path_factory.mktemp("characterise")
    out = {}
    for c in CIRCUITS:
        models = read_models([c.path], c.name)
        r = characterise(models, SUPPLY, work=tmp / c.name)
        ref = reference.characterise(c, tmp / "ref" / c.name)
        slew = reference._slew(c, tmp / "ref" / f"{c.name}-slew", r.step.low_v, r.step.high_v)
        out[c.name] = Run(r, ref, slew)
    return out


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_topology(runs: dict[str, Run], c: Circuit) -> None:
    """Class B: the supply current falls one for one with the current pulled into the output
    (slope -1) and the loop holds the output past the knee; biased stages share it (slope
    about -1/2, the value for two equal devices at balance); CMOS swings to both rails."""
    r = runs[c.name].result
    assert r.topology.value == c.topology
    expected = -1.0 if c.pulldown else -0.5
    assert r.knee.slope_at_zero == pytest.approx(expected, abs=0.05)


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_stage_current_within_5_percent_of_the_probe(runs: dict[str, Run], c: Circuit) -> None:
    run = runs[c.name]
    assert run.result.knee.stage_current_a == pytest.approx(run.ref.stage_current_probe_a, rel=0.05)


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_supply_current_within_5_percent(runs: dict[str, Run], c: Circuit) -> None:
    run = runs[c.name]
    assert run.result.quiescent.supply_current_a == pytest.approx(
        run.ref.supply_current_a, rel=0.05
    )


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_gbw_within_10_percent(runs: dict[str, Run], c: Circuit) -> None:
    run = runs[c.name]
    ol = run.result.open_loop
    assert ol.integrator and ol.gbw_hz == pytest.approx(run.ref.gbw_hz, rel=0.10)
    # unity-gain stable (the circuits' phase margins are 59 to 87 degrees)
    assert ol.phase_margin_deg > 45.0 and ol.min_stable_gain == 1.0


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_slew_within_10_percent(runs: dict[str, Run], c: Circuit) -> None:
    run = runs[c.name]
    rise, fall = run.slew_ref
    assert run.result.slew.rise_v_per_s == pytest.approx(rise, rel=0.10)
    assert run.result.slew.fall_v_per_s == pytest.approx(fall, rel=0.10)
    assert run.result.slew.swing_v > 1.0  # a large step: many times the linear range


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_swing_curves(runs: dict[str, Run], c: Circuit) -> None:
    """At least four points, increasing; the polyline through them (what partsel
    interpolates) misses the measured curve at no current of the sweep by more than 25 mV
    in headroom or 25 % in current (where the curve steps, the class-B sink headroom jumping
    by 0.4 V within microamps at the pull-down current, it is the current that stays close);
    the dense curve gives the reference's current-source bench's headroom at the reference's
    currents within 10 mV (the same physics, another bench)."""
    run = runs[c.name]
    for curve, ref_points in (
        (run.result.swing_pos, run.ref.swing_pos),
        (run.result.swing_neg, run.ref.swing_neg),
    ):
        i, h = np.array(curve.points).T
        assert 4 <= i.size <= 6 and np.all(np.diff(i) > 0) and np.all(np.diff(h) >= 0)
        assert i[0] == 0.0
        x, y = curve.current_a, curve.headroom_v
        up = np.abs(np.interp(x, i, h) - y)
        side = np.abs(np.interp(y, h + np.arange(h.size) * 1e-12, i) - x)
        ok = (up <= 0.025) | (side <= 0.25 * np.maximum(x, 1e-3 * x[-1]))
        assert ok.all(), (c.name, x[~ok][:3])
        for i_ref, h_ref in ref_points:
            if i_ref <= curve.current_a[-1]:
                assert np.interp(i_ref, curve.current_a, curve.headroom_v) == pytest.approx(
                    h_ref, abs=0.01
                ), (c.name, i_ref)
    if c is CMOS:  # rail-to-rail: a common-source device on at no load leaves millivolts
        assert run.result.swing_pos.headroom_v[0] < 0.01
        assert run.result.swing_neg.headroom_v[0] < 0.01


@pytest.mark.parametrize("c", CIRCUITS, ids=lambda c: c.name)
def test_current_limits_hold_the_output_at_mid_supply(runs: dict[str, Run], c: Circuit) -> None:
    """The limits are where the output, driven hard, holds mid-supply (no protection in these
    circuits): beyond every swing-curve current, and the swing curve reaches mid-supply's
    headroom near the limit (the sweep goes to 80 % of it)."""
    r = runs[c.name].result
    assert r.source_limit_a > r.swing_pos.current_a[-1]
    assert r.sink_limit_a > r.swing_neg.current_a[-1]


def test_input_common_mode_range(runs: dict[str, Run]) -> None:
    """The bipolar circuits' PNP pair saturates when its base falls below its collector node
    (two base-emitter drops up, about 1.2 V) by more than about 0.4 V: range from about 0.8 V;
    its tail source needs about 0.6 V (one V_BE and the emitter resistor's drop) to V+. The
    CMOS pair (PMOS, NMOS mirror) works down to below ground. Values from the circuits' design
    (common practice for these structures), windows of +-0.3 V."""
    for name in (CLASS_B.name, CLASS_AB.name):
        cm = runs[name].result.common_mode
        assert 0.5 < cm.low_v < 1.1 and 4.1 < cm.high_v < 4.7
    cm = runs[CMOS.name].result.common_mode
    assert cm.low_v < 0.0 and cm.high_v < 4.7


def test_dead_band_is_checked_at_a_second_slope(runs: dict[str, Run]) -> None:
    """The characteriser's own report: at three times the fit's slope its dead band gives the
    glitch ngspice measured there within 15 % (closed form and simulation)."""
    d = runs[CLASS_B.name].result.dead_band
    assert d is not None
    assert d.slopes_v_per_s[1] == pytest.approx(3.0 * d.slopes_v_per_s[0], rel=0.05)
    assert abs(d.closed_form_error) < 0.15 and abs(d.simulated_error) < 0.15
    for name in (CLASS_AB.name, CMOS.name):
        assert runs[name].result.dead_band is None


@pytest.fixture(scope="module")
def grid_waves(
    runs: dict[str, Run], tmp_path_factory: pytest.TempPathFactory
) -> dict[Case, reference.Wave]:
    offset = runs[CLASS_B.name].ref.offset_v
    waves = run_all([(CLASS_B, c) for c in GRID], tmp_path_factory.mktemp("grid"),
                    {CLASS_B.name: offset})  # fmt: skip
    return {c: waves[(CLASS_B, c)] for c in GRID}


def _deviation(case: Case, w: reference.Wave) -> float:
    d = design_of(case)
    t = np.arange(w.v_out.size) / (w.v_out.size * case.frequency_hz)
    return float(np.max(np.abs(w.v_out - (w.v_static - d.out_bias_v) - d.v_ideal(t))))


def test_fitted_dead_band_reproduces_the_transistor_level_glitch(
    runs: dict[str, Run], grid_waves: dict[Case, reference.Wave]
) -> None:
    """Every crossover case of the grid (the sink device takes over in ngspice: 15 of 18),
    none of them a bench the fit used: partsel's closed-form glitch and its simulated peak
    deviation with the record's values (the fitted dead band among them) within 15 % of the
    transistor-level peak deviation. The fitted dead band itself lies within 10 % of the
    drive-node distance the reference measures with the drive node exposed (a probe)."""
    run = runs[CLASS_B.name]
    d = run.result.dead_band
    assert d is not None
    assert d.value_v == pytest.approx(run.ref.dead_band_v, rel=0.10)
    stage = stage_params(run.result, d.value_v)
    n = 0
    for case, w in grid_waves.items():
        if np.max(-w.i_sink) < 5e-6:  # no handover in ngspice (boundary cases at 10 kohm)
            continue
        n += 1
        design = design_of(case)
        cf = predict_closed_form(stage, design)
        sim = simulate(stage, design, steps_per_period=1024)
        dev = _deviation(case, w)
        assert cf.conduction[0] == "changes-mode", case
        assert cf.glitch_v[0] == pytest.approx(dev, rel=0.15), case
        assert sim.deviation_peak_v[0] == pytest.approx(dev, rel=0.15), case
    assert n == 15


# ---- the command line, end to end -----------------------------------------------------------


def _design(path: Path, case: Case, *, r_neg: str | None = None) -> Path:
    """The design file of a reference test circuit (see design_of): gain 2 around 2.5 V."""
    extra = f'to_negative_rail = "{r_neg}"\n' if r_neg else ""
    path.write_text(
        f"""name = "characterise end to end"
[supply]
positive = "5 V"
[signal]
bias = "2.5 V"
amplitude = "{case.amplitude_v / case.gain!r} V"
frequency = "{case.frequency_hz!r} Hz"
[amplifier]
configuration = "non-inverting"
gain = {case.gain!r}
feedback_resistor = "100 kohm"
[load]
resistance = "{case.r_load_ohm!r} ohm"
reference = "2.5 V"
coupling = "dc"
{extra}[requirements]
basis = "typical"
conduction = "allowed"
""",
        encoding="utf-8",
    )
    return path


def test_characterise_store_predict_against_the_transistor_level_circuit(
    cli, tmp_path: Path, need_ngspice: None
) -> None:
    """characterise -> --store -> predict in circuits the characteriser never ran, against
    the same circuits at transistor level in ngspice: the glitch within 15 % and the
    handover verdict right (the sink device conducts in ngspice exactly where partsel says
    the stage changes mode)."""
    res = cli(
        "characterise", CLASS_B.path, "--subckt", "opamp_class_b", "--part-number", "TLB-50",
        "--maker", "Test Bench Works", "--store", "--json",
    )  # fmt: skip
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    assert out["stored"] == {"version": 1, "action": "added"}
    benches = {b["name"]: b for b in out["benches"]}
    for m in out["measurements"]:  # every measurement names its bench and conditions
        assert m["bench"] in benches and m["at"]["supply"] == "5 V", m
    assert benches["knee"]["circuit"][0].startswith("* partsel characterise bench 'knee'")
    assert not any("Qpd" in line for b in benches.values() for line in b["circuit"])
    show = json.loads(cli("show", "TLB-50", "--json").stdout)
    assert show["record"]["output"]["topology"] == "class-b-pulldown"
    ref = reference.characterise(CLASS_B, tmp_path / "ref")
    cases = {
        "changes-mode": (Case(2e3, 5e3, 0.8), None),
        "one-mode": (Case(10e3, 2e3, 0.5, r_neg_ohm=10e3), "10 kohm"),
    }
    waves = run_all([(CLASS_B, c) for c, _ in cases.values()], tmp_path / "t",
                    {CLASS_B.name: ref.offset_v})  # fmt: skip
    for verdict, (case, r_neg) in cases.items():
        design = _design(tmp_path / f"{verdict}.toml", case, r_neg=r_neg)
        pred = cli("predict", design, "TLB-50", "--json")
        assert pred.exit_code in (0, 1), pred.output
        p = json.loads(pred.stdout)[0]["prediction"]
        w = waves[(CLASS_B, case)]
        sink_on = float(np.max(-w.i_sink)) > 0.1 * ref.stage_current_probe_a
        assert p["conduction"] == verdict
        assert sink_on == (verdict == "changes-mode")
        if verdict == "changes-mode":
            assert p["glitch_v"] == pytest.approx(_deviation(case, w), rel=0.15)


def test_characterise_record_passes_check_and_stores_versioned(
    cli, tmp_path: Path, need_ngspice: None
) -> None:
    """The YAML record passes partsel check; --store adds the part, a second --store over an
    edited part keeps its own fields and replaces the measured ones (a new version in the
    history, by characterise), and --plots writes one PNG per bench."""
    res = cli("characterise", CLASS_AB.path, "--subckt", "opamp_class_ab", "--plots",
              tmp_path / "figs")  # fmt: skip
    assert res.exit_code == 0, res.output
    f = tmp_path / "rec.yaml"
    f.write_text(res.stdout, encoding="utf-8")
    assert cli("check", f).exit_code == 0
    doc = yaml.safe_load(res.stdout)
    part = doc["parts"][0]
    assert part["part_number"] == "OPAMP_CLASS_AB" and part["output"]["topology"] == "class-ab"
    assert "dead_band" not in part["output"]
    pngs = sorted(p.name for p in (tmp_path / "figs").glob("*.png"))
    assert pngs == sorted(
        f"{n}.png"
        for n in ("supply", "open_loop", "short_pos", "short_neg", "input_cm", "knee",
                  "swing_pos", "swing_neg", "slew")
    )  # fmt: skip
    # an existing part with its own package and price: characterise --store keeps them
    part["packages"] = [{"code": "SO-8", "pinout": "SGL-8A"}]
    part["price"] = {"unit": 0.5, "currency": "USD"}
    part["output"]["stage_current"] = {"typ": "1 mA"}
    f.write_text(yaml.safe_dump(doc), encoding="utf-8")
    assert cli("load", f).exit_code == 0
    res = cli("characterise", CLASS_AB.path, "--subckt", "opamp_class_ab", "--store")
    assert res.exit_code == 0, res.output
    assert "OPAMP_CLASS_AB: version 2 stored (changed)" in res.output
    rec = json.loads(cli("show", "OPAMP_CLASS_AB", "--json").stdout)["record"]
    assert rec["packages"] == [{"code": "SO-8", "pinout": "SGL-8A"}] and rec["price"]["unit"] == 0.5
    assert rec["output"]["stage_current"]["typ"] != "1 mA"
    hist = json.loads(cli("history", "OPAMP_CLASS_AB", "--json").stdout)
    assert [h["version"] for h in hist] == [1, 2]
    assert hist[-1]["source"] == "characterise opamp_class_ab"
    assert math.isfinite(float(rec["dynamics"]["min_stable_gain"]))


def test_the_characterised_sample_is_what_characterise_measures(runs: dict[str, Run]) -> None:
    """sample-catalog/characterised holds the three test subcircuits' records (README.md in
    sample-catalog/parts): its measured values are today's measurements within 0.5 % (the
    record's four significant digits and ngspice's tolerances)."""
    from partsel.units import parse_quantity

    path = Path(__file__).resolve().parents[1] / "sample-catalog" / "characterised"
    doc = yaml.safe_load((path / "pellacott-devices.yaml").read_text(encoding="utf-8"))
    by_circuit = {"PCD-150": CLASS_B, "PCD-240": CLASS_AB, "PCD-360R": CMOS}
    assert sorted(p["part_number"] for p in doc["parts"]) == sorted(by_circuit)
    for part in doc["parts"]:
        r = runs[by_circuit[part["part_number"]].name].result
        out, dyn = part["output"], part["dynamics"]
        assert out["topology"] == r.topology.value
        pairs = [
            (out["stage_current"]["typ"], "current", r.knee.stage_current_a),
            (part["supply"]["current_per_channel"]["typ"], "current",
             r.quiescent.supply_current_a),
            (dyn["gbw"]["typ"], "frequency", r.open_loop.gbw_hz),
            (dyn["slew_rise"]["typ"], "slew", r.slew.rise_v_per_s),
            (dyn["slew_fall"]["typ"], "slew", r.slew.fall_v_per_s),
        ]  # fmt: skip
        if r.dead_band is not None:
            pairs.append((out["dead_band"]["typ"], "voltage", r.dead_band.value_v))
        for text, dim, now in pairs:
            assert parse_quantity(text, dim) == pytest.approx(now, rel=0.005), (part, text)


def test_fit_capture_of_the_transistor_level_circuit_agrees_with_characterise(
    runs: dict[str, Run], tmp_path: Path
) -> None:
    """A capture of the transistor-level class-B circuit itself (the last of six periods of a
    gain-2 circuit, 2 kohm to mid-supply, 0.8 V at 5 kHz, 2000 samples: the circuit stands in
    for a part on the bench) fitted from the characterised record: the stage current and the
    dead band within 10 % of what characterise measured at its own benches, the slew rates
    (the crossing slews here, so they are fitted too) within 15 %. Measured: -5.0 %, -5.9 %,
    -9.6 %. The fit's intervals reflect noise only and are far narrower here (0.3 to 1.5 %):
    what is left is the macro-model's own error against the transistor level (1.8 mV rms of
    residual against a 195 mV glitch)."""
    from partsel.characterise.fit import fit_capture
    from partsel.io.scope import Capture

    run = runs[CLASS_B.name]
    case = Case(2e3, 5e3, 0.8)
    design = design_of(case)
    w = reference.transient(CLASS_B, case, tmp_path, periods=6, n=2000, steps=4096)
    t = np.arange(2000) / (2000 * case.frequency_hz)
    fit = fit_capture(stage_params(run.result, run.result.dead_band.value_v), design,
                      Capture("transistor level", t, w.v_out, design.v_in(t), (), 1))  # fmt: skip
    got = {p.key: p.value for p in fit.params}
    assert got["stage_current"] == pytest.approx(run.result.knee.stage_current_a, rel=0.10)
    assert got["dead_band"] == pytest.approx(run.result.dead_band.value_v, rel=0.10)
    assert got["slew_rise"] == pytest.approx(run.result.slew.rise_v_per_s, rel=0.15)
    assert got["slew_fall"] == pytest.approx(run.result.slew.fall_v_per_s, rel=0.15)
    assert fit.residual_rms_v < 0.02 * _deviation(case, w)


def test_class_a_is_the_class_b_circuit_without_its_sink_device(
    need_ngspice: None, tmp_path: Path
) -> None:
    """The class-B circuit with its sink device (Qk) removed is a class-A stage: its pull-down
    is the sink bias, and the loop lets go of the output once the pulled current passes it.
    Topology class-a, stage current (the knee) within 5 % of the pull-down transistor's own
    collector current (probe), and the sink limit is that same current."""
    text = CLASS_B.path.read_text(encoding="utf-8")
    assert "\nQk vn nd out PGEN 4\n" in text
    sub = tmp_path / "opamp_class_a.sub"
    sub.write_text(
        text.replace("\nQk vn nd out PGEN 4\n", "\n").replace("opamp_class_b", "opamp_class_a"),
        encoding="utf-8",
    )
    seen: list[tuple[int, int]] = []
    r = characterise(read_models([sub], "opamp_class_a"), SUPPLY, work=tmp_path / "w",
                     progress=lambda done, total: seen.append((done, total)))  # fmt: skip
    assert seen[-1] == (9, 9) and [d for d, _ in seen] == list(range(1, 10))  # no dead band
    i_pd = _pulldown_probe(sub, tmp_path / "probe")
    assert r.topology.value == "class-a"
    assert r.knee.stage_current_a == pytest.approx(i_pd, rel=0.05)
    assert r.sink_limit_a == pytest.approx(i_pd, rel=0.05)
    assert r.dead_band is None


def _pulldown_probe(sub: Path, work: Path) -> float:
    """The pull-down transistor's collector current, the follower at mid-supply, no load."""
    from partsel.spice_run import run_ngspice_columns

    deck = (
        f"* probe\n{sub.read_text(encoding='utf-8')}\nVp vp 0 5\nVin inp 0 DC 2.5\n"
        "X1 inp out out vp 0 opamp_class_a\n.control\nset wr_singlescale\nset wr_vecnames\n"
        "save @q.x1.qpd[ic]\nop\nwrdata data.txt @q.x1.qpd[ic]\nquit\n.endc\n.end\n"
    )
    cols = run_ngspice_columns(deck, work)
    return float(np.ravel(cols["@q.x1.qpd[ic]"])[0])


TWO_POLE = """* a two-pole behavioural amplifier, invented for this test
.subckt twopole inp inn out vp vn
G1 0 n1 inp inn 1m
R1 n1 0 1meg
C1 n1 0 {c1}
E2 n2 0 n1 0 1
R2 n2 n3 1k
C2 n3 0 {c2}
E3 out 0 n3 0 1
Rq vp vn 20k
.ends twopole
"""


def test_phase_margin_and_minimum_stable_gain_of_a_two_pole_amplifier(
    need_ngspice: None, tmp_path: Path
) -> None:
    """A0 = 1000 with poles at f1 = 1 kHz and f2 = 300 kHz: GBW = A0 f1 = 1 MHz, unity gain
    where A0 / sqrt((1 + x1^2)(1 + x2^2)) = 1 (x_i = f / f_i), phase margin
    180 - atan x1 - atan x2 degrees, and a phase of -135 degrees where x1 + x2 = x1 x2 - 1
    (the tangent of a sum), the minimum stable gain being |A| there (common practice: 45
    degrees of phase margin). The open-loop bench and its measurement against that analysis,
    within 2 % (0.2 degrees for the margin) and rounded up to a tenth for the gain."""
    import math

    from partsel.characterise import benches as bench
    from partsel.characterise import measure
    from partsel.spice_run import run_ngspice_tables

    f1, f2, a0 = 1e3, 300e3, 1000.0
    c1, c2 = 1 / (2 * math.pi * 1e6 * f1), 1 / (2 * math.pi * 1e3 * f2)
    sub = tmp_path / "twopole.sub"
    sub.write_text(TWO_POLE.format(c1=repr(c1), c2=repr(c2)), encoding="utf-8")
    models = read_models([sub], "twopole")
    b = bench.open_loop(models, SUPPLY)
    ac = run_ngspice_tables(b.deck, tmp_path / "ol", no_init=True)["ac.txt"]
    ol = measure.open_loop(ac["frequency"], ac["vdb(out)"], ac["vp(out)"])

    def mag(f: float) -> float:
        return a0 / math.sqrt((1 + (f / f1) ** 2) * (1 + (f / f2) ** 2))

    lo, hi = f1, 10 * f2
    for _ in range(200):  # unity gain by bisection (|A| falls with f)
        mid = math.sqrt(lo * hi)
        lo, hi = (mid, hi) if mag(mid) > 1 else (lo, mid)
    f_u = lo
    pm = 180 - math.degrees(math.atan(f_u / f1) + math.atan(f_u / f2))
    # x1 + x2 = x1 x2 - 1 with x1 = f / f1, x2 = f / f2: f^2 / (f1 f2) - f (1/f1 + 1/f2) - 1 = 0
    qa, qb = 1 / (f1 * f2), -(1 / f1 + 1 / f2)
    f135 = (-qb + math.sqrt(qb * qb + 4 * qa)) / (2 * qa)
    assert ol.gbw_hz == pytest.approx(a0 * f1, rel=0.02)
    assert ol.unity_hz == pytest.approx(f_u, rel=0.02)
    assert ol.phase_margin_deg == pytest.approx(pm, abs=0.2)
    assert pm < 45 and ol.min_stable_gain == math.ceil(10 * mag(f135)) / 10
