"""Measure the transistor-level op-amps of this folder the way a datasheet would, and run them.

Written independently of :mod:`partsel.characterise` (partsel's own characteriser, which
tests/test_characterise.py checks against these measurements and the probes here).

Each circuit is a ``.subckt`` with the pins ``IN+ IN- OUT V+ V-`` (see README.md here). The
measurements use only those pins where a datasheet would, and internal probes (named in each
file's header) where a datasheet could not:

* GBW: open loop with a DC feedback inductor (1 GH, the inverting input AC-grounded through
  1 F), 10 kohm to mid-supply, ``|A(f)| f`` at 10 kHz on the -20 dB/decade slope;
* slew rate: unity-gain follower, 10 kohm to V-, a 1.5 V to 3.5 V step (or other levels),
  20 % to 80 % of the swing, rising and falling edge;
* stage current of a class-B stage: the follower at mid-supply with a DC current pulled into
  its output from a higher node: the V+ supply current falls one for one while the source
  device conducts and stops at the knee, ``I_x = I_pd`` (design notes section 11); checked
  against the pull-down transistor's own collector current (probe);
* quiescent current of a class-AB or CMOS stage: the source device's collector (drain)
  current at zero output current (probe: a datasheet gives only the supply current);
* dead band (class B, probe): the drive node exposed as a sixth pin and forced, the output held
  at mid-supply: the drive points where the source device and the sink device each carry the
  stage current;
* output swing: open loop driven to each rail, headroom against a DC load current;
* quiescent supply current: the follower at mid-supply, no load;
* input offset voltage: the output of a gain-2 stage around mid-supply, no load, over the gain
  (the transients can null it, as a trimmed part or a bench set-up would: partsel models an
  offset-free part).

Device models are generic small-signal values from memory (see each file); ngspice 39 (Debian
``ngspice``) runs the decks. The circuits and this module are invented for partsel's tests.
"""

from __future__ import annotations

import math
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from partsel.physics.stage import StageParams
from partsel.spice_run import run_ngspice_columns

HERE = Path(__file__).parent
SUPPLY_V = 5.0
MID_V = 2.5
OPTIONS = ".options reltol=1e-5 abstol=1e-12 vntol=1e-7\n"
#: Load currents at which the swing headroom is read, A (the catalogue's two to six points).
SWING_CURRENTS_A = (0.0, 50e-6, 1e-3, 10e-3)


@dataclass(frozen=True)
class Circuit:
    """One transistor-level op-amp of this folder and its probe names."""

    name: str  #: subcircuit name (= file stem)
    topology: str  #: partsel topology it stands for
    source: str  #: instance of the source device (output transistor)
    sink: str  #: instance of the sink device
    pulldown: str | None = None  #: instance of the pull-down transistor (class B)
    drive: str = "nd"  #: drive node (the macro-model's integrator node)
    kind: str = "q"  #: device letter of the probes: "q" bipolar, "m" MOS

    def probe(self, device: str) -> str:
        """ngspice's name of ``device``'s collector (drain) current in instance X1."""
        return f"@{self.kind}.x1.{device}[{'ic' if self.kind == 'q' else 'id'}]"

    @property
    def path(self) -> Path:
        return HERE / f"{self.name}.sub"

    def text(self, extra_pins: tuple[str, ...] = ()) -> str:
        """The subcircuit, with internal nodes exposed as extra pins (probes) if asked."""
        txt = self.path.read_text(encoding="utf-8")
        head = f".subckt {self.name} inp inn out vp vn"
        if head not in txt:
            raise ValueError(f"{self.path}: no line {head!r}")
        return txt.replace(head, " ".join([head, *extra_pins]))


CLASS_B = Circuit("opamp_class_b", "class-b-pulldown", "qs2", "qk", "qpd")
CLASS_AB = Circuit("opamp_class_ab", "class-ab", "qs", "qk")
CMOS = Circuit("opamp_cmos_rr", "cmos-rail-to-rail", "mp", "mn", drive="gn", kind="m")


@dataclass(frozen=True)
class Measured:
    """What the measurements give, SI units."""

    circuit: Circuit
    gbw_hz: float
    slew_rise_v_per_s: float
    slew_fall_v_per_s: float
    stage_current_a: float  #: knee (class B) or quiescent source current (class AB)
    stage_current_probe_a: float  #: the pull-down's (class B) or source's collector current
    dead_band_v: float  #: class B only (0 for class AB)
    supply_current_a: float
    offset_v: float  #: input offset voltage (added to the non-inverting input), V
    swing_pos: tuple[tuple[float, float], ...]  #: (source current A, headroom to V+ V)
    swing_neg: tuple[tuple[float, float], ...]  #: (sink current A, headroom to V- V)

    def part(self, source_limit_a: float = 40e-3, sink_limit_a: float = 20e-3) -> StageParams:
        """The measured op-amp as a one-part catalogue (typical values). The circuits have no
        short-circuit protection; the limits given are beyond every test case's currents."""
        cols: dict[str, np.ndarray] = {
            "topology": np.array([self.circuit.topology]),
            "stage_current_typ": np.array([self.stage_current_a]),
            "source_limit_typ": np.array([source_limit_a]),
            "sink_limit_typ": np.array([sink_limit_a]),
            "gbw_typ": np.array([self.gbw_hz]),
            "slew_rise_typ": np.array([self.slew_rise_v_per_s]),
            "slew_fall_typ": np.array([self.slew_fall_v_per_s]),
            "supply_current_typ": np.array([self.supply_current_a]),
        }
        if self.dead_band_v > 0:
            cols["dead_band_typ"] = np.array([self.dead_band_v])
        for rail, points in (("pos", self.swing_pos), ("neg", self.swing_neg)):
            for k, (i_a, h_v) in enumerate(points):
                cols[f"swing_{rail}_i{k}"] = np.array([i_a])
                cols[f"swing_{rail}_v{k}_typ"] = np.array([h_v])
        return StageParams.from_columns(cols)


def _control(analysis: str, vectors: str) -> str:
    return (
        ".control\nset wr_singlescale\nset wr_vecnames\n"
        f"save {vectors}\n{analysis}\nwrdata data.txt {vectors}\nquit\n.endc\n.end\n"
    )


def _deck(c: Circuit, body: str, analysis: str, vectors: str, pins: tuple[str, ...] = ()) -> str:
    return (
        f"* partsel test: {c.name}\n{c.text(pins)}\nVp vp 0 {SUPPLY_V}\n{body}{OPTIONS}"
        + _control(analysis, vectors)
    )


def open_loop_gbw(c: Circuit, work: Path, r_load_ohm: float = 10e3) -> float:
    """``|A(10 kHz)| x 10 kHz`` open loop (DC feedback through 1 GH), ``r_load_ohm`` to
    mid-supply, Hz: the datasheet's GBW at 10 kohm, and the loaded figure at other loads."""
    body = (
        f"Vin inp 0 DC {MID_V} AC 1\nX1 inp inn out vp 0 {c.name}\nLfb out inn 1e9\n"
        f"Cg inn 0 1\nRL out lref {r_load_ohm!r}\nVlr lref 0 {MID_V}\n"
    )
    cols = run_ngspice_columns(_deck(c, body, "ac dec 20 1k 100k", "vdb(out)"), work)
    f = cols["frequency"]
    k = int(np.argmin(np.abs(f - 10e3)))
    return float(10 ** (cols["vdb(out)"][k] / 20) * f[k])


def _slew(c: Circuit, work: Path, lo: float = 1.5, hi: float = 3.5) -> tuple[float, float]:
    """Rising and falling slew rate of the follower stepped from ``lo`` to ``hi`` and back."""
    body = (
        f"Vin inp 0 PULSE({lo!r} {hi!r} 2u 1n 1n 20u 40u)\nX1 inp out out vp 0 {c.name}\n"
        "RL out 0 10k\n"
    )
    cols = run_ngspice_columns(_deck(c, body, "tran 2n 44u 0 2n", "v(out)"), work)
    t, v = cols["time"], cols["v(out)"]
    rates = []
    for lo_t, hi_t, rising in ((2e-6, 22e-6, True), (22e-6, 42e-6, False)):
        m = (t >= lo_t) & (t < hi_t)
        tt, vv = t[m], v[m]
        lo, hi = float(vv.min()), float(vv.max())
        v20, v80 = lo + 0.2 * (hi - lo), lo + 0.8 * (hi - lo)
        if rising:
            t20, t80 = tt[np.argmax(vv > v20)], tt[np.argmax(vv > v80)]
        else:
            t20, t80 = tt[np.argmax(vv < v80)], tt[np.argmax(vv < v20)]
        rates.append(0.6 * (hi - lo) / float(t80 - t20))
    return rates[0], rates[1]


def _knee(c: Circuit, work: Path) -> tuple[float, float]:
    """(knee current, supply current at no load) of the follower at mid-supply, A."""
    probe = f" {c.probe(c.pulldown)}" if c.pulldown else ""
    body = (
        f"Vin inp 0 DC {MID_V}\nX1 inp out out vp 0 {c.name}\nVhi hi 0 {2 * SUPPLY_V}\n"
        "Ix hi out DC 0\n"
    )
    cols = run_ngspice_columns(_deck(c, body, "dc Ix 0 150u 0.25u", "i(vp)" + probe), work)
    ix = cols["i-sweep"]
    supply = -cols["i(vp)"]
    slope = np.gradient(supply, ix)
    # the supply current falls one for one (slope -1) until the source device cuts off (0)
    past = np.flatnonzero(slope > -0.5)
    past = past[past > 4]
    knee = float(ix[past[0]]) if past.size else math.nan
    return knee, float(supply[0])


def _probe_current(c: Circuit, work: Path) -> float:
    """The pull-down's (class B) or source device's (class AB) collector current, the
    follower at mid-supply with no load, A."""
    dev = c.pulldown or c.source
    body = f"Vin inp 0 DC {MID_V}\nX1 inp out out vp 0 {c.name}\n"
    cols = run_ngspice_columns(_deck(c, body, "op", c.probe(dev)), work)
    return float(np.ravel(cols[c.probe(dev)])[0])


def _dead_band(c: Circuit, work: Path, i_stage: float) -> float:
    """Drive-point distance between source and sink device each carrying ``i_stage``, V."""
    body = (
        f"Vin inp 0 DC {MID_V}\nVinn inn 0 {MID_V}\nVo out 0 {MID_V}\nVnd nd 0 {MID_V}\n"
        f"X1 inp inn out vp 0 nd {c.name}\n"
    )
    vec = f"{c.probe(c.source)} {c.probe(c.sink)}"
    cols = run_ngspice_columns(_deck(c, body, "dc Vnd 0.8 4.2 0.0005", vec, pins=(c.drive,)), work)
    nd = cols["v-sweep"]
    x_src = float(np.interp(i_stage, cols[c.probe(c.source)], nd))
    x_snk = float(np.interp(i_stage, -cols[c.probe(c.sink)][::-1], nd[::-1]))
    return x_src - x_snk


def _offset(c: Circuit, work: Path) -> float:
    body = (
        f"Vin inp 0 DC {MID_V}\nVref ref 0 {MID_V}\nRf out inn 100k\nRg inn ref 100k\n"
        f"X1 inp inn out vp 0 {c.name}\n"
    )
    cols = run_ngspice_columns(_deck(c, body, "op", "v(out)"), work)
    return (float(np.ravel(cols["v(out)"])[0]) - MID_V) / 2.0


def _swing(c: Circuit, work: Path, rail: str) -> tuple[tuple[float, float], ...]:
    hi, lo = (MID_V + 0.1, MID_V - 0.1) if rail == "pos" else (MID_V - 0.1, MID_V + 0.1)
    load = "Il out 0 DC 0" if rail == "pos" else "Il vp out DC 0"
    body = f"Vin inp 0 DC {hi}\nVinn inn 0 {lo}\nX1 inp inn out vp 0 {c.name}\n{load}\n"
    cols = run_ngspice_columns(_deck(c, body, "dc Il 0 10m 5u", "v(out)"), work)
    i, v = cols["i-sweep"], cols["v(out)"]
    head = SUPPLY_V - v if rail == "pos" else v
    return tuple((float(ia), float(np.interp(ia, i, head))) for ia in SWING_CURRENTS_A)


def characterise(c: Circuit, work: Path) -> Measured:
    """All the measurements of ``c`` (ngspice runs in ``work``)."""
    probe = _probe_current(c, work / "probe")
    if c.pulldown:
        knee, supply = _knee(c, work / "knee")
        i_stage = knee
        dead_band = _dead_band(c, work / "deadband", probe)
    else:
        _, supply = _knee(c, work / "knee")
        i_stage = probe
        dead_band = 0.0
    rise, fall = _slew(c, work / "slew")
    return Measured(
        circuit=c,
        gbw_hz=open_loop_gbw(c, work / "gbw"),
        slew_rise_v_per_s=rise,
        slew_fall_v_per_s=fall,
        stage_current_a=i_stage,
        stage_current_probe_a=probe,
        dead_band_v=dead_band,
        supply_current_a=supply,
        offset_v=_offset(c, work / "offset"),
        swing_pos=_swing(c, work / "swing_pos", "pos"),
        swing_neg=_swing(c, work / "swing_neg", "neg"),
    )


@dataclass(frozen=True)
class Case:
    """One closed-loop circuit: non-inverting gain ``gain`` around mid-supply (R_f = R_g =
    100 kohm, R_g to the 2.5 V reference), a load ``r_load`` DC-coupled to the 2.5 V reference
    (as an AC-coupled load sits in steady state, without its slow capacitor), and optionally a
    resistor ``r_neg`` from the output to V- (0 V)."""

    r_load_ohm: float
    frequency_hz: float
    amplitude_v: float  #: output peak, V
    r_neg_ohm: float | None = None
    gain: float = 2.0


@dataclass(frozen=True)
class Wave:
    """ngspice's last period on a uniform grid of ``n`` points (t = k T / n)."""

    v_out: np.ndarray
    i_source: np.ndarray  #: source device's collector current, A
    i_sink: np.ndarray  #: sink device's collector current (negative when it sinks), A
    v_drive: np.ndarray  #: the drive node (probe), V
    v_static: float  #: the output at the DC operating point (no signal yet), V


def transient(
    c: Circuit,
    case: Case,
    work: Path,
    *,
    offset_v: float = 0.0,
    periods: int = 3,
    n: int = 1024,
    steps: int = 2048,
) -> Wave:
    """Run ``case`` on ``c`` for ``periods`` periods (largest step T / ``steps``), the input's
    DC level moved by ``-offset_v`` (nulls an input offset voltage ``offset_v``)."""
    f = case.frequency_hz
    period = 1.0 / f
    v_dc = MID_V - offset_v
    body = (
        f"Vin inp 0 SIN({v_dc!r} {case.amplitude_v / case.gain!r} {f!r})\nVref ref 0 {MID_V}\n"
        f"Rf out inn 100k\nRg inn ref {100e3 / (case.gain - 1.0)!r}\n"
        f"X1 inp inn out vp 0 {c.name}\nRL out ref {case.r_load_ohm!r}\n"
        + (f"Rneg out 0 {case.r_neg_ohm!r}\n" if case.r_neg_ohm else "")
    )
    vec = f"v(out) v(x1.{c.drive}) {c.probe(c.source)} {c.probe(c.sink)}"
    step = period / steps
    cols = run_ngspice_columns(
        _deck(c, body, f"tran {step!r} {periods * period!r} 0 {step!r}", vec), work
    )
    t = (periods - 1) * period + np.arange(n) * period / n
    return Wave(
        v_out=np.interp(t, cols["time"], cols["v(out)"]),
        i_source=np.interp(t, cols["time"], cols[c.probe(c.source)]),
        i_sink=np.interp(t, cols["time"], cols[c.probe(c.sink)]),
        v_drive=np.interp(t, cols["time"], cols[f"v(x1.{c.drive})"]),
        v_static=float(cols["v(out)"][0]),
    )


def run_all(
    jobs: list[tuple[Circuit, Case]],
    work: Path,
    offsets: dict[str, float] | None = None,
    workers: int = 2,
) -> dict[tuple[Circuit, Case], Wave]:
    """Run many transients, ``workers`` ngspice processes at a time; ``offsets`` (input offset
    voltage per circuit name) are nulled."""

    def one(k: int) -> Wave:
        c, case = jobs[k]
        return transient(c, case, work / f"t{k}", offset_v=(offsets or {}).get(c.name, 0.0))

    with ThreadPoolExecutor(max_workers=workers) as pool:
        waves = list(pool.map(one, range(len(jobs))))
    return dict(zip(jobs, waves, strict=True))
