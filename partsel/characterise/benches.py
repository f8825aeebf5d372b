"""partsel's test benches around a subcircuit: one ngspice deck per measurement.

Every deck is written here from numbers and partsel's own text only: its title, the bench
circuit, the analyses and the control block; the model appears as the cards
:mod:`partsel.characterise.model_file` checked (``ModelSet.text``). The pins are the nodes
``inp``, ``inn``, ``out``, ``vp``; V- is the bench's ground (node 0), so a model that refers
to node 0 internally is measured on a single supply, as partsel's designs are. The benches use
no other node names than :data:`partsel.characterise.model_file.BENCH_NODES`.

Benches (``mid`` = half the supply; every resistive load but the slew bench's returns to ``mid``):

=============== =============================================================================
``supply``      unity-gain follower at mid-supply, no load: supply current (V+), input offset
                (output minus input) and input bias current (operating point)
``open_loop``   open loop with a DC servo (1 GH from the output to IN-, IN- to ground through
                1 F, so the DC operating point is the follower's), 10 kohm load, AC
                0.1 Hz .. 1 GHz: gain-bandwidth, unity-gain frequency, phase margin
``short_pos``   inputs overdriven 100 mV high, the output held at mid-supply by a voltage
                source: the short-circuit (source) current limit (operating point)
``short_neg``   likewise overdriven low: the sink current limit
``swing_pos``   inputs overdriven high, open loop, a DC current drawn from the output swept
                from 0 to 80 % of the source limit (at most 25 mA): headroom to V+ against it
``swing_neg``   likewise low, the current pushed into the output: headroom to V-
``input_cm``    the output held at mid-supply by a loop whose IN- follows IN+ (an ideal level
                shifter: v(IN-) = v(IN+) + v(OUT) - mid), IN+ swept from 0.5 V below V- to
                0.5 V above V+: the input offset against the common-mode voltage
``knee``        follower at mid-supply, a DC current pulled into the output through 1 kohm
                from a swept source (0..10 uA, 100 uA, 1 mA, 10 mA): V+ supply current
                against it (design notes section 11)
``slew``        follower, 10 kohm to V- (the usual single-supply condition: the output only
                sources, so a class-B stage does not hand over during the edges), a step
                between two levels inside the input range (transient), both edges
``deadband_1``  follower, resistive load to mid-supply small enough that the stage hands over
``deadband_2``  on every negative half-wave, a sine at two frequencies (two output slopes)
=============== =============================================================================
"""

from __future__ import annotations

from dataclasses import dataclass

from partsel.characterise.model_file import ModelSet

#: Simulator options of every bench (tight tolerances: the knee and the swing read currents
#: of microamps next to milliamps).
OPTIONS = ".options reltol=1e-5 abstol=1e-12 vntol=1e-7"
#: Load of the open-loop, slew and output benches, ohm (a common datasheet load).
LOAD_OHM = 10e3
#: Overdrive of the output benches' inputs, V.
OVERDRIVE_V = 0.1
#: How far the input common-mode sweep goes beyond each rail, V.
CM_BEYOND_V = 0.5
#: Resistor the knee bench pulls its current through, ohm.
KNEE_OHM = 1e3
#: Full scale of the knee bench's sweeps (one sweep each, 1000 steps), A.
KNEE_SCALES_A = (10e-6, 100e-6, 1e-3, 10e-3)
#: Points per sweep of the DC benches.
SWEEP_POINTS = 1000


@dataclass(frozen=True)
class Conditions:
    """Where every bench measures: the supply (V- = 0 V, V+ = ``supply_v``) and the
    simulation temperature."""

    supply_v: float
    temperature_c: float = 27.0

    @property
    def mid_v(self) -> float:
        return 0.5 * self.supply_v


@dataclass(frozen=True)
class Bench:
    """One deck: its name, what it measures (for people), its data files and conditions."""

    name: str
    title: str
    deck: str
    data: tuple[str, ...]
    load_ohm: float | None = None
    note: str = ""


def _n(x: float) -> str:
    """A number for a deck (``repr``: every digit kept)."""
    return repr(float(x))


def _deck(
    models: ModelSet,
    cond: Conditions,
    name: str,
    title: str,
    body: list[str],
    analyses: list[tuple[str, str, str]],
) -> tuple[str, tuple[str, ...]]:
    """The deck text and its data files; ``analyses`` are (analysis, data file, vectors)."""
    lines = [
        f"* partsel characterise bench '{name}': {title}",
        "* the model, as partsel read and checked it:",
        models.text.rstrip("\n"),
        "* the bench:",
        f"Vp vp 0 DC {_n(cond.supply_v)}",
        *body,
        OPTIONS,
        f".temp {_n(cond.temperature_c)}",
        ".control",
        "set wr_singlescale",
        "set wr_vecnames",
    ]
    for analysis, data, vectors in analyses:
        lines += [f"save {vectors}", analysis, f"wrdata {data} {vectors}"]
    lines += ["quit", ".endc", ".end", ""]
    return "\n".join(lines), tuple(d for _, d, _ in analyses)


def _bench(
    models: ModelSet,
    cond: Conditions,
    name: str,
    title: str,
    body: list[str],
    analyses: list[tuple[str, str, str]],
    *,
    load_ohm: float | None = None,
    note: str = "",
) -> Bench:
    deck, data = _deck(models, cond, name, title, body, analyses)
    return Bench(name, title, deck, data, load_ohm, note)


def _follower(models: ModelSet) -> str:
    return models.instance(nodes={"IN-": "out"})


def supply(models: ModelSet, cond: Conditions) -> Bench:
    body = [f"Vin inp 0 DC {_n(cond.mid_v)}", _follower(models)]
    return _bench(
        models,
        cond,
        "supply",
        "follower at mid-supply, no load: supply current, offset, bias current",
        body,
        [("op", "op.txt", "i(vp) v(out) i(vin)")],
        note="follower at mid-supply, no load",
    )


def open_loop(models: ModelSet, cond: Conditions) -> Bench:
    body = [
        f"Vin inp 0 DC {_n(cond.mid_v)} AC 1",
        models.instance(),
        "Lfb out inn 1e9",
        "Cg inn 0 1",
        f"Rl out lref {_n(LOAD_OHM)}",
        f"Vlr lref 0 DC {_n(cond.mid_v)}",
    ]
    return _bench(
        models,
        cond,
        "open_loop",
        "open loop with a DC servo, 10 kohm load: gain and phase 0.1 Hz to 1 GHz",
        body,
        [("ac dec 20 0.1 1e9", "ac.txt", "vdb(out) vp(out)")],
        load_ohm=LOAD_OHM,
        note="open loop, DC servo",
    )


def short(models: ModelSet, cond: Conditions, rail: str) -> Bench:
    """The output driven towards ``rail`` ("pos" or "neg") and held at mid-supply by a
    voltage source: the short-circuit current (operating point)."""
    high = rail == "pos"
    v_plus = cond.mid_v + (OVERDRIVE_V if high else -OVERDRIVE_V)
    v_minus = cond.mid_v - (OVERDRIVE_V if high else -OVERDRIVE_V)
    body = [
        f"Vin inp 0 DC {_n(v_plus)}",
        f"Vinn inn 0 DC {_n(v_minus)}",
        models.instance(),
        f"Vf out 0 DC {_n(cond.mid_v)}",
    ]
    word = "source" if high else "sink"
    return _bench(
        models,
        cond,
        f"short_{rail}",
        f"inputs overdriven {'high' if high else 'low'}, output held at mid-supply: "
        f"{word} current limit",
        body,
        [("op", "op.txt", "i(vf)")],
        note=f"output held at mid-supply, inputs overdriven {OVERDRIVE_V * 1e3:g} mV",
    )


def swing(models: ModelSet, cond: Conditions, rail: str, top_a: float) -> Bench:
    """The output driven to ``rail`` ("pos" or "neg"), open loop, with a DC load current
    swept from 0 to ``top_a`` out of the output (pos: source) or into it (neg: sink): a fine
    sweep to ``top_a / 50`` and a full one."""
    high = rail == "pos"
    v_plus = cond.mid_v + (OVERDRIVE_V if high else -OVERDRIVE_V)
    v_minus = cond.mid_v - (OVERDRIVE_V if high else -OVERDRIVE_V)
    load = "Il out 0 DC 0" if high else "Il vp out DC 0"
    body = [
        f"Vin inp 0 DC {_n(v_plus)}",
        f"Vinn inn 0 DC {_n(v_minus)}",
        models.instance(),
        load,
    ]
    analyses = [
        (f"dc Il 0 {_n(top / 50 if k == 0 else top)} {_n(step)}", f"swing{k}.txt", "v(out)")
        for k, (top, step) in enumerate(
            ((top_a, top_a / 50 / SWEEP_POINTS), (top_a, top_a / (2 * SWEEP_POINTS)))
        )
    ]
    word = "source" if high else "sink"
    return _bench(
        models,
        cond,
        f"swing_{rail}",
        f"inputs overdriven {'high' if high else 'low'}: headroom to "
        f"{'V+' if high else 'V-'} against the {word} current",
        body,
        analyses,
        note=f"open loop, inputs overdriven {OVERDRIVE_V * 1e3:g} mV",
    )


def input_cm(models: ModelSet, cond: Conditions) -> Bench:
    body = [
        f"Vcm inp 0 DC {_n(cond.mid_v)}",
        "Esh inn inp out mref 1",
        f"Vmr mref 0 DC {_n(cond.mid_v)}",
        models.instance(),
    ]
    lo, hi = -CM_BEYOND_V, cond.supply_v + CM_BEYOND_V
    step = (hi - lo) / (2 * SWEEP_POINTS)
    return _bench(
        models,
        cond,
        "input_cm",
        "output held at mid-supply, common-mode input swept past both rails: offset",
        body,
        [(f"dc Vcm {_n(lo)} {_n(hi)} {_n(step)}", "cm.txt", "v(out)")],
        note="output held at mid-supply",
    )


def knee(models: ModelSet, cond: Conditions) -> Bench:
    body = [
        f"Vin inp 0 DC {_n(cond.mid_v)}",
        _follower(models),
        f"Vx xs 0 DC {_n(cond.mid_v)}",
        f"Rx xs out {_n(KNEE_OHM)}",
    ]
    analyses = []
    for k, full in enumerate(KNEE_SCALES_A):
        top = cond.mid_v + full * KNEE_OHM
        step = (top - cond.mid_v) / SWEEP_POINTS
        analyses.append(
            (f"dc Vx {_n(cond.mid_v)} {_n(top)} {_n(step)}", f"knee{k}.txt", "i(vp) i(vx) v(out)")
        )
    return _bench(
        models,
        cond,
        "knee",
        "follower at mid-supply, DC current pulled into the output: V+ supply current",
        body,
        analyses,
        note="follower at mid-supply, DC current into the output",
    )


@dataclass(frozen=True)
class Step:
    """The slew bench's input: from ``low_v`` to ``high_v`` at ``t_rise_s``, back at
    ``t_fall_s``; the run ends at ``t_end_s`` with steps of at most ``t_max_s``."""

    low_v: float
    high_v: float
    t_rise_s: float
    t_fall_s: float
    t_end_s: float
    t_max_s: float
    edge_s: float  #: input edge duration, s


def step_for(low_v: float, high_v: float, window_s: float) -> Step:
    """A step whose edges each get ``window_s`` to slew and settle."""
    edge = min(1e-9, window_s / 1000.0)
    t_rise = 0.05 * window_s
    t_fall = t_rise + window_s
    return Step(low_v, high_v, t_rise, t_fall, t_fall + window_s, window_s / 2000.0, edge)


def slew(models: ModelSet, cond: Conditions, step: Step) -> Bench:
    width = step.t_fall_s - step.t_rise_s - step.edge_s
    body = [
        f"Vin inp 0 PULSE({_n(step.low_v)} {_n(step.high_v)} {_n(step.t_rise_s)} "
        f"{_n(step.edge_s)} {_n(step.edge_s)} {_n(width)} {_n(10 * step.t_end_s)})",
        _follower(models),
        f"Rl out 0 {_n(LOAD_OHM)}",
    ]
    tran = f"tran {_n(step.t_max_s)} {_n(step.t_end_s)} 0 {_n(step.t_max_s)}"
    return _bench(
        models,
        cond,
        "slew",
        f"follower, 10 kohm to V-, step {step.low_v:.3g} V to {step.high_v:.3g} V and back",
        body,
        [(tran, "tran.txt", "v(out) v(inp)")],
        load_ohm=LOAD_OHM,
        note=f"follower, load to V-, step {step.low_v:.3g} V to {step.high_v:.3g} V, 20-80 %",
    )


@dataclass(frozen=True)
class Sine:
    """A dead-band bench's drive: a sine of ``amplitude_v`` at ``frequency_hz`` around
    mid-supply into ``load_ohm`` to mid-supply, ``periods`` periods with steps of at most
    ``t_max_s``."""

    amplitude_v: float
    frequency_hz: float
    load_ohm: float
    periods: int
    t_max_s: float


def deadband(models: ModelSet, cond: Conditions, name: str, sine: Sine) -> Bench:
    body = [
        f"Vin inp 0 SIN({_n(cond.mid_v)} {_n(sine.amplitude_v)} {_n(sine.frequency_hz)})",
        _follower(models),
        f"Rl out mref {_n(sine.load_ohm)}",
        f"Vmr mref 0 DC {_n(cond.mid_v)}",
    ]
    t_end = sine.periods / sine.frequency_hz
    tran = f"tran {_n(sine.t_max_s)} {_n(t_end)} 0 {_n(sine.t_max_s)}"
    return _bench(
        models,
        cond,
        name,
        f"follower, {sine.amplitude_v:.3g} V peak at {sine.frequency_hz:.4g} Hz into "
        f"{sine.load_ohm:.4g} ohm to mid-supply: handover glitch",
        body,
        [(tran, "tran.txt", "v(out) v(inp)")],
        load_ohm=sine.load_ohm,
        note=f"follower, {sine.amplitude_v:.3g} V peak at {sine.frequency_hz:.4g} Hz",
    )
