"""partsel's predictions against a transistor-level output stage simulated in ngspice.

:mod:`tests.test_ngspice` checks simulate() against ngspice running partsel's *own* macro-model.
Here the output stage is built from bipolar transistors instead (SPICE Gummel-Poon models of
generic small-signal devices, ``IS = 1e-15 A``, ``BF`` 150 / 60, Early voltages 80 / 50 V: values
of the common-practice order, from memory), so that the device laws, the dead band, the
pull-down current source and its Early effect come from ngspice's transistor equations, not
from partsel's:

* class B with pull-down: a Darlington NPN emitter follower sources, a PNP follower sinks, and
  an NPN current mirror (50 uA) pulls down; the dead band is the three base-emitter drops
  between the two followers' drive points;
* class AB: complementary followers biased by two diode-connected transistors carrying 40 uA.

The rest of the amplifier is behavioural, as in any op-amp macro-model: the input stage is a
transconductance with the ``tanh`` limit of a differential pair (``I_tail tanh(gm e /
I_tail)``: GBW 1 MHz with the 20 pF compensation capacitor, slew rate ``I_tail / C`` 0.5 V/us)
and the integrator node drives the stage through an ideal buffer (the gain stage of a real
part). The part's catalogue values are then *measured* on the transistor stage, as a datasheet
would: a DC sweep gives the stage current (the mirror's collector current with the output at
2.5 V) and the dead band (drive difference between the Darlington carrying the stage current
and the PNP carrying it).

Circuit: 5 V single supply, non-inverting gain 2 (100 kohm / 100 kohm to the 2.5 V bias),
output 2.5 V +- 1 V at 1 kHz into 4.7 kohm through 10 uF. The load sinks up to 213 uA > 50 uA,
so the class-B stage hands over twice a period. ngspice 39 (Debian ``ngspice``), step limit
T/4096, reltol 1e-6. Waveforms are compared over the third period on simulate()'s grid.

What must agree, with the tolerances set from the model differences named beside them
(measured values in brackets):

* handover: simulate()'s THD_F and glitch residual within 15 % (-1.6 %, +2.5 %: the tanh front
  end here is not exactly partsel's degenerated-pair law); the closed-form THD estimate
  between 0.8 and 1.5 times ngspice's (0.93); the closed-form glitch (deviation from the ideal
  at the end of the crossing) within 20 % of ngspice's largest deviation (+4.4 %);
* with size_fix's resistor the PNP never conducts (below 1 nA), and simulate()'s THD_F and its
  smallest source current agree within 10 % (-0.5 %, +1.3 %), as does the closed form's
  one-mode THD estimate (-0.4 %);
* marginal cases (a resistor to 0 V leaving 30 % and 10 % of the stage current at the least):
  the closed form's verdict is ``marginal``, simulate()'s least source current within 10 % at
  30 % (+4.3 %) and its THD_F within 10 % (-1.6 %) and 30 % (+16.6 %: near 0.1 uA the source
  device's law is exponential over decades and the mirror's Early effect moves the result);
  the closed form's estimate of a marginal stage comes from the same device law in time, so
  the same tolerances (-1.6 %, +14.9 %);
* class AB (4.7 kohm and 1 kohm): simulate()'s THD_F within 10 % (+3.2 %, +2.4 %) and the
  closed-form bound above ngspice's THD_F (3.1 times both).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from physics_helpers import residual_peak, thd_f

from partsel.physics.analysis import ClosedForm, predict_closed_form
from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.physics.fix import size_fix
from partsel.physics.simulate import SimResult, simulate
from partsel.physics.stage import StageParams
from partsel.spice_run import run_ngspice_columns

F_HZ = 1e3
GBW_HZ = 1e6
SLEW_V_PER_S = 0.5e6
C_COMP_F = 20e-12
I_PULLDOWN_A = 50e-6
I_QUIESCENT_A = 40e-6
R_LOAD_OHM = 4.7e3
N_STEPS = 1024
SWEEP = "v-sweep"  # ngspice's name of the DC sweep's scale column
PERIODS = 3

MODELS = """.model NGEN NPN(IS=1e-15 BF=150 VAF=80)
.model PGEN PNP(IS=1e-15 BF=60 VAF=50)
"""


def _front_end() -> str:
    """Differential-pair transconductance into the compensation capacitor, buffered drive."""
    gm = 2 * math.pi * GBW_HZ * C_COMP_F
    i_tail = SLEW_V_PER_S * C_COMP_F
    return (
        f"Bgm 0 n I = {i_tail:.6g}*tanh({gm / i_tail:.6g}*(v(inp)-v(inn)))\n"
        f"Ccomp n 0 {C_COMP_F:.6g}\n"
        "Rleak n 0 1G\n"
        "Ebuf nb 0 n 0 1\n"
    )


def _class_b_stage() -> str:
    return (
        "Q1 vcc nb e1 NGEN\n"
        "Q2 vcc e1 out NGEN\n"  # Darlington source follower
        "Q3 0 nb out PGEN\n"  # sink follower
        f"Iref vcc r1 {I_PULLDOWN_A:.6g}\n"
        "Q5 r1 r1 0 NGEN\n"
        "Q4 out r1 0 NGEN\n"  # pull-down mirror
    )


def _class_ab_stage() -> str:
    return (
        f"Ibias vcc bt {I_QUIESCENT_A:.6g}\n"
        "Qd1 bt bt nb NGEN\n"
        "Qd2 bb bb nb PGEN\n"
        f"Ibias2 bb 0 {I_QUIESCENT_A:.6g}\n"
        "Q2 vcc bt out NGEN\n"
        "Q3 0 bb out PGEN\n"
    )


def _control(analysis: str, vectors: str) -> str:
    return (
        ".control\nset wr_singlescale\nset wr_vecnames\n"
        f"save {vectors}\n{analysis}\nwrdata data.txt {vectors}\nquit\n.endc\n.end\n"
    )


def _dc_sweep(stage: str, work: Path) -> dict[str, np.ndarray]:
    """Output held at 2.5 V, drive swept: the followers' and the mirror's currents."""
    deck = (
        f"* partsel test: stage characterisation\n{MODELS}Vcc vcc 0 5\nVout out 0 2.5\n"
        f"Vn nb 0 2.5\n{stage}"
        + _control(
            "dc Vn 1.5 4.0 0.0005", "@q2[ic] @q3[ic]" + (" @q4[ic]" if "Q4" in stage else "")
        )
    )
    return run_ngspice_columns(deck, work)


def _transient(stage: str, work: Path, r_load: float, r_neg: float | None) -> dict[str, np.ndarray]:
    period = 1.0 / F_HZ
    step = period / 4096
    deck = (
        f"* partsel test: transistor-level stage in the line driver\n{MODELS}Vcc vcc 0 5\n"
        f"Vin inp 0 SIN(2.5 0.5 {F_HZ:.6g})\nVref ref 0 2.5\n"
        "Rf out inn 100k\nRg inn ref 100k\n"
        f"{_front_end()}{stage}"
        f"Cout out x 10u\nRL x 0 {r_load:.6g}\n"
        + (f"Rneg out 0 {r_neg:.6g}\n" if r_neg else "")
        + ".options reltol=1e-6 abstol=1e-13 vntol=1e-9\n"
        + _control(f"tran {step:.6g} {PERIODS * period:.6g} 0 {step:.6g}", "v(out) @q2[ic] @q3[ic]")
    )
    return run_ngspice_columns(deck, work)


def _design(r_load: float = R_LOAD_OHM, r_neg: float | None = None) -> Design:
    return Design(
        "line driver, AC-coupled, transistor-level check",
        Supply(5.0),
        Signal(bias_v=2.5, amplitude_v=0.5, frequency_hz=F_HZ),
        ClosedLoop("non-inverting", gain=2.0, feedback_ohm=100e3),
        Load(r_load_ohm=r_load, coupling="ac", c_couple_f=10e-6, r_to_neg_ohm=r_neg),
    )


def _part(topology: str, stage_current: float, dead_band: float | None) -> StageParams:
    """The measured stage as a catalogue part (typical values); swing far from this signal."""
    cols: dict[str, np.ndarray] = {
        "topology": np.array([topology]),
        "stage_current_typ": np.array([stage_current]),
        "source_limit_typ": np.array([40e-3]),
        "sink_limit_typ": np.array([20e-3]),
        "gbw_typ": np.array([GBW_HZ]),
        "slew_rise_typ": np.array([SLEW_V_PER_S]),
        "slew_fall_typ": np.array([SLEW_V_PER_S]),
        "supply_current_typ": np.array([350e-6]),
        "swing_pos_i0": np.array([0.0]),
        "swing_pos_v0_typ": np.array([1.0]),
        "swing_pos_i1": np.array([10e-3]),
        "swing_pos_v1_typ": np.array([1.3]),
        "swing_neg_i0": np.array([0.0]),
        "swing_neg_v0_typ": np.array([0.005]),
        "swing_neg_i1": np.array([10e-3]),
        "swing_neg_v1_typ": np.array([0.8]),
    }
    if dead_band is not None:
        cols["dead_band_typ"] = np.array([dead_band])
    return StageParams.from_columns(cols)


@dataclass(frozen=True)
class Case:
    """One circuit: partsel's predictions and ngspice's waveforms on simulate()'s grid."""

    design: Design
    sim: SimResult
    cf: ClosedForm
    v_ng: np.ndarray
    i_source_ng: np.ndarray
    i_sink_ng: np.ndarray


def _case(
    stage_txt: str,
    part: StageParams,
    work: Path,
    r_load: float = R_LOAD_OHM,
    r_neg: float | None = None,
) -> Case:
    design = _design(r_load, r_neg)
    sim = simulate(part, design, steps_per_period=N_STEPS)
    cf = predict_closed_form(part, design)
    cols = _transient(stage_txt, work, r_load, r_neg)
    period = 1.0 / F_HZ
    t = sim.t_s - sim.t_s[0] + (PERIODS - 1) * period + period / N_STEPS
    return Case(
        design,
        sim,
        cf,
        np.interp(t, cols["time"], cols["v(out)"]),
        np.interp(t, cols["time"], cols["@q2[ic]"]),
        np.interp(t, cols["time"], cols["@q3[ic]"]),
    )


@pytest.fixture(scope="module")
def class_b(need_ngspice: None, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Case]:
    """The class-B stage measured, then the handover, fixed and marginal circuits."""
    work = tmp_path_factory.mktemp("transistor-b")
    dc = _dc_sweep(_class_b_stage(), work / "dc")
    i_stage = float(np.median(dc["@q4[ic]"]))
    drive = dc[SWEEP]
    x_source = float(np.interp(i_stage, dc["@q2[ic]"], drive))  # Darlington carries I_stage
    x_sink = float(np.interp(-i_stage, dc["@q3[ic]"], drive))  # PNP carries I_stage
    dead_band = x_source - x_sink
    # a classic single-supply stage (common practice): three base-emitter drops, 1.6 to 2 V
    assert 1.6 < dead_band < 2.0
    assert i_stage == pytest.approx(I_PULLDOWN_A, rel=0.05)
    part = _part("class-b-pulldown", i_stage, dead_band)
    r_fix = float(size_fix(part, _design(), series="E24").r_neg_ohm[0])
    assert math.isfinite(r_fix)
    # resistors to 0 V leaving 30 % and 10 % of the stage current at the least (ideal currents)
    excess = 1.0 / R_LOAD_OHM - I_PULLDOWN_A
    cases = {
        "handover": _case(_class_b_stage(), part, work / "a"),
        "fixed": _case(_class_b_stage(), part, work / "b", r_neg=r_fix),
    }
    for frac in (0.3, 0.1):
        r = 1.5 / (excess + frac * I_PULLDOWN_A)
        cases[f"marginal-{frac}"] = _case(_class_b_stage(), part, work / f"m{frac}", r_neg=r)
    return cases


def test_handover_glitch_and_thd_against_transistor_level(class_b: dict[str, Case]) -> None:
    c = class_b["handover"]
    assert float(np.max(-c.i_sink_ng)) > 20e-6  # ngspice's PNP does take over
    assert c.sim.handover[0] and c.cf.handover[0]
    thd_ng = thd_f(c.v_ng)
    assert c.sim.thd_f[0] == pytest.approx(thd_ng, rel=0.15)
    assert c.sim.residual_peak_v[0] == pytest.approx(residual_peak(c.v_ng), rel=0.15)
    assert 0.8 * thd_ng <= c.cf.thd_estimate[0] <= 1.5 * thd_ng
    deviation_ng = float(np.max(np.abs(c.v_ng - c.sim.v_ideal)))
    assert c.cf.glitch_v[0] == pytest.approx(deviation_ng, rel=0.2)


def test_fix_keeps_the_transistor_stage_in_one_mode(class_b: dict[str, Case]) -> None:
    c = class_b["fixed"]
    assert float(np.max(-c.i_sink_ng)) < 1e-9
    assert not c.sim.handover[0] and not c.cf.handover[0]
    assert c.sim.thd_f[0] == pytest.approx(thd_f(c.v_ng), rel=0.1)
    assert c.sim.min_source_a[0] == pytest.approx(float(np.min(c.i_source_ng)), rel=0.1)
    assert c.cf.thd_estimate[0] == pytest.approx(thd_f(c.v_ng), rel=0.1)
    assert thd_f(c.v_ng) < thd_f(class_b["handover"].v_ng) / 50


@pytest.mark.parametrize(("frac", "rel_thd"), [(0.3, 0.1), (0.1, 0.3)])
def test_marginal_source_mode_against_transistor_level(
    class_b: dict[str, Case], frac: float, rel_thd: float
) -> None:
    c = class_b[f"marginal-{frac}"]
    assert float(np.max(-c.i_sink_ng)) < 1e-9  # the sink never conducts ...
    assert c.cf.marginal[0]  # ... but the source device nearly cuts off: flagged
    assert c.sim.thd_f[0] == pytest.approx(thd_f(c.v_ng), rel=rel_thd)
    # the closed form takes a marginal stage's THD from the device law in time
    assert c.cf.thd_estimate[0] == pytest.approx(thd_f(c.v_ng), rel=rel_thd)
    if frac == 0.3:
        assert c.sim.min_source_a[0] == pytest.approx(float(np.min(c.i_source_ng)), rel=0.1)
    # and it distorts more than the fixed circuit, less than the handover
    assert thd_f(class_b["fixed"].v_ng) < thd_f(c.v_ng) < thd_f(class_b["handover"].v_ng)


@pytest.mark.parametrize("r_load", [4.7e3, 1e3])
def test_class_ab_against_transistor_level(
    need_ngspice: None, tmp_path: Path, r_load: float
) -> None:
    dc = _dc_sweep(_class_ab_stage(), tmp_path / "dc")
    drive = dc[SWEEP]
    balance = int(np.argmin(np.abs(dc["@q2[ic]"] + dc["@q3[ic]"])))  # zero output current
    i_q = float(dc["@q2[ic]"][balance])
    assert drive[balance] == pytest.approx(2.5, abs=0.01)
    assert i_q == pytest.approx(I_QUIESCENT_A, rel=0.05)
    c = _case(_class_ab_stage(), _part("class-ab", i_q, None), tmp_path / "ab", r_load=r_load)
    thd_ng = thd_f(c.v_ng)
    assert c.sim.thd_f[0] == pytest.approx(thd_ng, rel=0.1)
    assert c.cf.thd_estimate[0] >= thd_ng  # the closed form is a bound for biased stages
