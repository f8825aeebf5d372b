"""Characterise a subcircuit: run partsel's benches in ngspice, in parallel, and measure.

Three rounds of benches, each round's decks run as separate ngspice processes at once
(``jobs`` at a time): first the ones that need nothing measured (supply, open loop, short
circuits, input common mode, knee), then the ones sized from those results (swing sweeps to
80 % of the current limits, the slew step inside the input range and timed from the GBW), and
for a class-B stage the two dead-band sines (load from the stage current, frequencies from
the GBW and the slew rates). The dead band is then inverted with partsel's closed form at the
first slope and checked against the glitch measured at the second one, with the closed form
and with partsel's simulation.

A failing or missing ngspice, a run that times out and a model that does not behave like an
amplifier are :class:`~partsel.errors.InputError` naming the model files (and the line, where
ngspice's message points at one).
"""

from __future__ import annotations

import math
import os
import tempfile
import threading
import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from partsel.characterise import benches as B
from partsel.characterise import measure as M
from partsel.characterise.model_file import ModelSet
from partsel.errors import InputError, Problem
from partsel.params import Topology
from partsel.physics.stage import V_T

#: Seconds one bench may take before ngspice is stopped.
DEFAULT_TIMEOUT_S = 60.0
#: Glitch aimed at by the first dead-band bench, in units of the input stage's linear range
#: ``V_lin = SR_0 / omega_t`` (:func:`partsel.physics.stage.input_law`): the crossing's end
#: turns from the integrator's law to the slew limit there, the middle of the glitches that
#: matter (tens to hundreds of millivolts at audio-band slopes). On partsel's transistor-level
#: class-B op-amp a dead band fitted deep in the integrator regime instead (a 19 mV glitch)
#: came out 17 % lower and under-predicted the glitches of gain-2 circuits at 1..20 kHz by up
#: to 18 %; fitted at V_lin it lies within 2 % of the drive-node distance an internal probe
#: measures and predicts them within -9..+10 % (tests/test_characterise.py).
GLITCH_TARGET_LIN = 1.0
#: Dead band assumed to size the dead-band benches, V (two to three base-emitter drops, the
#: usual class-B stage: design notes section 2). The measurement does not depend on it.
DEAD_BAND_GUESS_V = 1.5
#: Second dead-band bench: this many times the first one's output slope.
SECOND_SLOPE = 3.0
#: Load current at the dead-band benches' trough, in stage currents (the stage hands over at a
#: quarter of the amplitude below mid-supply).
HANDOVER_DEPTH = 4.0


@dataclass(frozen=True)
class DeadBand:
    """The dead band from terminal behaviour, and its check at a second slope."""

    value_v: float  #: inverted with the closed form at the first slope
    first_guess_v: float  #: dV = g^2 omega_t / (2 G s)
    sines: tuple[B.Sine, B.Sine]
    slopes_v_per_s: tuple[float, float]  #: ideal output slope at the handover
    glitch_v: tuple[float, float]  #: measured (ngspice)
    closed_form_v: float  #: the closed form's glitch at the second slope with ``value_v``
    simulated_v: float  #: simulate()'s peak deviation at the second slope with ``value_v``

    @property
    def closed_form_error(self) -> float:
        return self.closed_form_v / self.glitch_v[1] - 1.0

    @property
    def simulated_error(self) -> float:
        return self.simulated_v / self.glitch_v[1] - 1.0


@dataclass
class Characterisation:
    """Everything measured on one subcircuit (SI units), with the benches and their data."""

    models: ModelSet
    cond: B.Conditions
    quiescent: M.Quiescent
    open_loop: M.OpenLoop
    source_limit_a: float
    sink_limit_a: float
    common_mode: M.CommonMode
    knee: M.Knee
    topology: Topology
    swing_pos: M.SwingCurve
    swing_neg: M.SwingCurve
    slew: M.Slew
    step: B.Step
    dead_band: DeadBand | None
    benches: dict[str, B.Bench] = field(default_factory=dict)
    tables: dict[str, dict[str, dict[str, np.ndarray]]] = field(default_factory=dict)
    seconds: float = math.nan
    warnings: list[str] = field(default_factory=list)


def _bench_error(models: ModelSet, bench: B.Bench, exc: Exception) -> InputError:
    from partsel.spice_run import NgspiceError

    files = ", ".join(models.files)
    if isinstance(exc, NgspiceError):
        if exc.kind == "missing":
            return InputError(
                "ngspice is not installed (Debian package 'ngspice'); partsel characterise "
                "runs its test benches in it"
            )
        if exc.kind == "timeout":
            return InputError(
                f"bench {bench.name!r} ({bench.title}) did not finish in time: ngspice was "
                f"stopped; the model of subcircuit {models.name!r} may not converge",
                file=files,
                pointer=f"/benches/{bench.name}",
            )
        tail = [ln.strip() for ln in str(exc).splitlines()[1:] if ln.strip()][-4:]
        where = models.locate(exc.log)
        msg = (
            f"ngspice failed on bench {bench.name!r} ({bench.title}) with subcircuit "
            f"{models.name!r}: " + (" / ".join(tail) or "no data written")
        )
        problems = [Problem(msg, files, None, f"/benches/{bench.name}")]
        if where is not None:
            problems.append(where)
        else:
            head = models.subckt.head
            problems.append(Problem(f"the subcircuit is defined at {head.where}", head.file))
        return InputError(problems=problems)
    return InputError(f"bench {bench.name!r}: {exc}", file=files)


def _run(
    models: ModelSet,
    benches: list[B.Bench],
    work: Path,
    jobs: int,
    timeout_s: float,
    advance: Callable[[int], None],
) -> dict[str, dict[str, dict[str, np.ndarray]]]:
    from partsel.spice_run import NgspiceError, run_ngspice_tables

    def one(b: B.Bench) -> tuple[str, Any]:
        try:
            out = run_ngspice_tables(b.deck, work / b.name, timeout_s=timeout_s, no_init=True)
        except (NgspiceError, OSError, ValueError) as exc:  # ValueError: unreadable data
            return b.name, _bench_error(models, b, exc)
        finally:
            advance(1)
        return b.name, out

    with ThreadPoolExecutor(max_workers=max(1, jobs)) as pool:
        results = dict(pool.map(one, benches))
    for b in benches:
        if isinstance(results[b.name], InputError):
            raise results[b.name]
    return results


def default_jobs() -> int:
    """ngspice processes run at once: the CPUs this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _dead_band_sines(
    cond: B.Conditions, cm: M.CommonMode, i_stage: float, gbw: float, sl: M.Slew
) -> tuple[B.Sine, B.Sine]:
    """The two dead-band benches: amplitude inside the input range, a load that makes the
    stage hand over a quarter of the amplitude below mid-supply, and the frequencies whose
    slopes give a glitch of about ``GLITCH_TARGET_LIN`` V_lin for a dead band of
    ``DEAD_BAND_GUESS_V`` (the design notes' ``g = sqrt(2 dV s / omega_t)``), then
    ``SECOND_SLOPE`` times that slope."""
    from partsel.physics.stage import input_law

    room = min(cond.mid_v - max(cm.low_v, 0.0), min(cm.high_v, cond.supply_v) - cond.mid_v)
    amp = min(0.5, 0.4 * room)
    load = amp / (HANDOVER_DEPTH * i_stage)
    wt = 2.0 * math.pi * gbw
    sr0 = float(input_law(np.array([gbw]), np.array([sl.rise_v_per_s]),
                          np.array([sl.fall_v_per_s]))[0][0])  # fmt: skip
    target = GLITCH_TARGET_LIN * sr0 / wt
    cos_h = math.sqrt(1.0 - 1.0 / HANDOVER_DEPTH**2)  # the handover's phase: sin = -1/4
    sines = []
    for factor in (1.0, SECOND_SLOPE):
        slope = factor * target**2 * wt / (2.0 * DEAD_BAND_GUESS_V)
        f = slope / (2.0 * math.pi * amp * cos_h)
        tau = 2.0 * DEAD_BAND_GUESS_V / (wt * target * math.sqrt(factor))
        t_max = min(1.0 / (4096.0 * f), tau / 25.0)
        sines.append(B.Sine(amp, f, load, 2, t_max))
    return sines[0], sines[1]


def _slew_step(cond: B.Conditions, cm: M.CommonMode, gbw: float, widen: float) -> B.Step:
    lo_in, hi_in = max(cm.low_v, 0.0), min(cm.high_v, cond.supply_v)
    lo = lo_in + 0.25 * (hi_in - lo_in)
    hi = hi_in - 0.25 * (hi_in - lo_in)
    # the slowest slew a part of this GBW has: an input pair linear over 2 V_T at most two
    # thirds of the way (degeneration only widens it, i.e. makes it faster)
    sr_min = 2.0 * math.pi * gbw * (2.0 * V_T) / 1.5
    window = widen * (2.0 * (hi - lo) / sr_min + 20.0 / (2.0 * math.pi * gbw))
    return B.step_for(lo, hi, window)


def characterise(
    models: ModelSet,
    cond: B.Conditions,
    *,
    work: Path | None = None,
    jobs: int | None = None,
    timeout_s: float = DEFAULT_TIMEOUT_S,
    progress: Callable[[int, int], None] | None = None,
) -> Characterisation:
    """Measure ``models``' subcircuit at ``cond`` (see the module docstring).

    ``progress(done, total)`` is called as each bench finishes; ``total`` is the benches
    still expected (it shrinks when the stage turns out not to be class B)."""
    t0 = time.perf_counter()
    count = {"done": 0, "total": 11}  # 6 + 3 + the two dead-band benches of a class-B stage
    lock = threading.Lock()

    def advance(n: int = 1) -> None:
        with lock:
            count["done"] += n
            count["total"] = max(count["total"], count["done"])
            if progress is not None:
                progress(count["done"], count["total"])

    jobs = jobs or default_jobs()
    with tempfile.TemporaryDirectory(prefix="partsel-characterise-") as tmp:
        root = Path(work) if work is not None else Path(tmp)
        first = [
            B.supply(models, cond),
            B.open_loop(models, cond),
            B.short(models, cond, "pos"),
            B.short(models, cond, "neg"),
            B.input_cm(models, cond),
            B.knee(models, cond),
        ]
        t1 = _run(models, first, root, jobs, timeout_s, advance)
        q = M.quiescent(t1["supply"]["op.txt"], cond.mid_v)
        ac = t1["open_loop"]["ac.txt"]
        ol = M.open_loop(ac["frequency"], ac["vdb(out)"], ac["vp(out)"])
        src = M.short_current(t1["short_pos"]["op.txt"], "pos")
        snk = M.short_current(t1["short_neg"]["op.txt"], "neg")
        cmt = t1["input_cm"]["cm.txt"]
        cm = M.common_mode(cmt["v-sweep"], cmt["v(out)"], cond.mid_v)
        kn = M.knee([t1["knee"][d] for d in B.knee(models, cond).data])
        top_pos = min(0.8 * src, 25e-3)
        top_neg = min(0.8 * snk, 25e-3)
        step = _slew_step(cond, cm, ol.gbw_hz, 1.0)
        second = [
            B.swing(models, cond, "pos", top_pos),
            B.swing(models, cond, "neg", top_neg),
            B.slew(models, cond, step),
        ]
        if kn.biased or kn.class_a:
            count["total"] -= 2
        t2 = _run(models, second, root, jobs, timeout_s, advance)
        sw_pos = M.swing_curve(list(t2["swing_pos"].values()), "pos", cond.supply_v, top_pos)
        sw_neg = M.swing_curve(list(t2["swing_neg"].values()), "neg", cond.supply_v, top_neg)
        topo = M.topology(kn, float(sw_pos.headroom_v[0]), float(sw_neg.headroom_v[0]))
        tr = t2["slew"]["tran.txt"]
        sl = M.slew(tr["time"], tr["v(out)"], step.t_rise_s, step.t_fall_s, step.t_end_s)
        if not sl.settled:  # a slower part than its GBW suggests: once more, four times longer
            count["total"] += 1
            step = _slew_step(cond, cm, ol.gbw_hz, 4.0)
            again = B.slew(models, cond, step)
            t2["slew"] = _run(models, [again], root, jobs, timeout_s, advance)["slew"]
            second[2] = again
            tr = t2["slew"]["tran.txt"]
            sl = M.slew(tr["time"], tr["v(out)"], step.t_rise_s, step.t_fall_s, step.t_end_s)
        third: list[B.Bench] = []
        sines = None
        if topo == Topology.CLASS_B_PULLDOWN:
            sines = _dead_band_sines(cond, cm, kn.stage_current_a, ol.gbw_hz, sl)
            third = [
                B.deadband(models, cond, "deadband_1", sines[0]),
                B.deadband(models, cond, "deadband_2", sines[1]),
            ]
            t2.update(_run(models, third, root, jobs, timeout_s, advance))
        result = Characterisation(
            models=models,
            cond=cond,
            quiescent=q,
            open_loop=ol,
            source_limit_a=src,
            sink_limit_a=snk,
            common_mode=cm,
            knee=kn,
            topology=topo,
            swing_pos=sw_pos,
            swing_neg=sw_neg,
            slew=sl,
            step=step,
            dead_band=None,
            benches={b.name: b for b in first + second + third},
            tables={**t1, **t2},
        )
        if sines is not None:
            result.dead_band = _dead_band(result, sines, t2)
    result.seconds = time.perf_counter() - t0
    return result


def _bench_design(cond: B.Conditions, sine: B.Sine) -> Any:
    from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply

    return Design(
        "partsel characterise: dead-band bench",
        Supply(cond.supply_v),
        Signal(cond.mid_v, sine.amplitude_v, sine.frequency_hz),
        ClosedLoop("non-inverting", 1.0),
        Load(r_load_ohm=sine.load_ohm, reference_v=cond.mid_v, coupling="dc"),
        t_ambient_min_c=cond.temperature_c,
        t_ambient_max_c=cond.temperature_c,
    )


def _dead_band(
    result: Characterisation,
    sines: tuple[B.Sine, B.Sine],
    tables: dict[str, dict[str, dict[str, np.ndarray]]],
) -> DeadBand:
    """Invert the first dead-band bench's glitch, check it at the second (module docstring)."""
    from partsel.characterise.record import stage_params
    from partsel.physics.analysis import predict_closed_form
    from partsel.physics.simulate import simulate

    glitches = []
    for name, sine in zip(("deadband_1", "deadband_2"), sines, strict=True):
        tr = tables[name]["tran.txt"]
        glitches.append(M.glitch(tr["time"], tr["v(out)"], tr["v(inp)"], 1 / sine.frequency_hz))
    stage = stage_params(result, dead_band_v=DEAD_BAND_GUESS_V)
    d1, d2 = (_bench_design(result.cond, s) for s in sines)
    value, slope1 = M.invert_dead_band(stage, d1, glitches[0])
    guess = M.dead_band_first_guess(glitches[0], slope1, result.open_loop.gbw_hz, 1.0)
    fitted = stage.replace(dead_band_v=np.array([value]))
    cf2 = predict_closed_form(fitted, d2)
    sim2 = simulate(fitted, d2)
    return DeadBand(
        value_v=value,
        first_guess_v=guess,
        sines=sines,
        slopes_v_per_s=(slope1, float(cf2.slope_v_per_s[0])),
        glitch_v=(glitches[0], glitches[1]),
        closed_form_v=float(cf2.glitch_v[0]),
        simulated_v=float(sim2.deviation_peak_v[0]),
    )
