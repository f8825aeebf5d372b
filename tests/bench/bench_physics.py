"""Benchmark of the physics core: closed form, time-domain simulation, ngspice (a script).

Run from the project root: ``/tmp/venv/bin/python tests/bench/bench_physics.py``. Not collected
by pytest; prints figures, asserts nothing about time. Targets (partsel's own):

(i)   closed-form predictions for 100,000 synthetic parts in one call: under 0.1 s;
(ii)  simulate() of 1,000 synthetic parts over two periods (one warm-up, one recorded) at the
      resolution of the ngspice comparison (tests/test_ngspice.py, 1024 steps per period):
      under 2 s;
(iii) the same circuit in ngspice, one deck per part for a few parts: partsel per part at least
      1000 times faster than ngspice per part.

The synthetic parts are invented: classic single-supply values spread at random (seeded).
"""

from __future__ import annotations

import argparse
import resource
import tempfile
import time
from pathlib import Path

import numpy as np

from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.physics.simulate import simulate
from partsel.physics.spice import spice_deck
from partsel.physics.stage import TOPOLOGIES as STAGE_TOPOLOGIES
from partsel.physics.stage import StageParams
from partsel.spice_run import ngspice_path, run_ngspice_columns

TOPOLOGIES = ("class-a", "class-b-pulldown", "class-ab", "cmos-rail-to-rail")
DESIGN = Design(
    "line driver, AC-coupled",
    Supply(5.0),
    Signal(bias_v=2.5, amplitude_v=0.5, frequency_hz=1e3),
    ClosedLoop("non-inverting", gain=2.0),
    Load(r_load_ohm=4.7e3, coupling="ac", c_couple_f=10e-6),
)
STEPS = 1024  # resolution of the ngspice comparison


def synthetic_parts(n: int, seed: int = 1, topologies: tuple[str, ...] = TOPOLOGIES) -> StageParams:
    """``n`` invented parts: log-uniform spreads around classic single-supply values."""
    rng = np.random.default_rng(seed)

    def logu(lo: float, hi: float) -> np.ndarray:
        return np.exp(rng.uniform(np.log(lo), np.log(hi), n))

    cols: dict[str, np.ndarray] = {
        "topology": rng.choice(np.array(topologies), n),
        "dead_band_typ": rng.uniform(1.0, 1.8, n),
        "stage_current_typ": logu(10e-6, 200e-6),
        "source_limit_typ": logu(10e-3, 60e-3),
        "sink_limit_typ": logu(5e-3, 40e-3),
        "gbw_typ": logu(0.3e6, 10e6),
        "supply_current_typ": logu(100e-6, 2e-3),
    }
    sr = logu(0.2e6, 5e6)
    cols["slew_rise_typ"] = sr
    cols["slew_fall_typ"] = sr * rng.uniform(0.7, 1.3, n)
    h_pos = rng.uniform(0.02, 1.4, n)
    cols["swing_pos_i0"] = np.zeros(n)
    cols["swing_pos_v0_typ"] = h_pos
    cols["swing_pos_i1"] = np.full(n, 10e-3)
    cols["swing_pos_v1_typ"] = h_pos + rng.uniform(0.1, 0.5, n)
    h_neg = rng.uniform(0.005, 0.1, n)
    cols["swing_neg_i0"] = np.zeros(n)
    cols["swing_neg_v0_typ"] = h_neg
    cols["swing_neg_i1"] = np.full(n, 1e-3)
    cols["swing_neg_v1_typ"] = h_neg + rng.uniform(0.1, 0.7, n)
    cols["swing_neg_i2"] = np.full(n, 10e-3)
    cols["swing_neg_v2_typ"] = cols["swing_neg_v1_typ"] + rng.uniform(0.2, 0.6, n)
    return StageParams.from_columns(cols)


def _children_cpu_s() -> float:
    ru = resource.getrusage(resource.RUSAGE_CHILDREN)
    return ru.ru_utime + ru.ru_stime


def bench_closed_form(n: int) -> float | None:
    """Seconds per part of the closed form (best of 3 wall-clock runs), or None if missing."""
    try:
        from partsel.physics.analysis import predict_closed_form
    except ImportError as exc:
        print(f"(i)   closed form: partsel.physics.analysis.predict_closed_form missing ({exc})")
        return None
    st = synthetic_parts(n)
    predict_closed_form(st.take(np.arange(100)), DESIGN)  # warm-up (imports, caches)
    best = cpu = np.inf
    for _ in range(3):
        t0, c0 = time.perf_counter(), time.process_time()
        predict_closed_form(st, DESIGN)
        best = min(best, time.perf_counter() - t0)
        cpu = min(cpu, time.process_time() - c0)
    print(
        f"(i)   closed form, {n:,} parts in one call: {best:.3f} s wall, {cpu:.3f} s CPU "
        "(best of 3; target < 0.1 s)"
    )
    return best / n


def bench_simulate(n: int) -> float:
    """Seconds per part of simulate() (wall clock)."""
    st = synthetic_parts(n)
    t0, c0 = time.perf_counter(), time.process_time()
    simulate(st, DESIGN, steps_per_period=STEPS, n_warmup=1, max_warmup=1, n_record=1)
    dt, cpu = time.perf_counter() - t0, time.process_time() - c0
    print(
        f"(ii)  simulate(), {n:,} parts, 2 periods at {STEPS} steps/period: {dt:.2f} s wall, "
        f"{cpu:.2f} s CPU ({1e3 * dt / n:.3f} ms per part; target < 2 s)"
    )
    return dt / n


def bench_ngspice(n: int, per_part_partsel_s: float, per_part_closed_s: float | None) -> None:
    if ngspice_path() is None:
        print("(iii) ngspice: not installed (Debian package 'ngspice'), skipped")
        return
    st = synthetic_parts(n, seed=2)
    times = []
    cpus = []
    with tempfile.TemporaryDirectory() as tmp:
        for i in range(n):
            deck = spice_deck(st, i, DESIGN, periods=2, steps_per_period=STEPS)
            t0, c0 = time.perf_counter(), _children_cpu_s()
            run_ngspice_columns(deck, Path(tmp) / f"p{i}")
            times.append(time.perf_counter() - t0)
            cpus.append(_children_cpu_s() - c0)
            name = STAGE_TOPOLOGIES[int(st.topology[i])].value
            print(f"      ngspice part {i} ({name}): {times[-1]:.3f} s wall, {cpus[-1]:.3f} s CPU")
    per = float(np.mean(times))
    print(
        f"(iii) ngspice, {n} parts one deck each, 2 periods: {per:.3f} s wall per part "
        f"({np.mean(cpus):.3f} s CPU); simulate() per part {1e3 * per_part_partsel_s:.3f} ms: "
        f"speed ratio {per / per_part_partsel_s:,.0f}x (target >= 1000x)"
    )
    if per_part_closed_s is not None:
        print(
            f"      closed form per part {1e6 * per_part_closed_s:.1f} us: speed ratio "
            f"{per / per_part_closed_s:,.0f}x"
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--closed-form-parts", type=int, default=100_000)
    ap.add_argument("--sim-parts", type=int, default=1_000)
    ap.add_argument("--ngspice-parts", type=int, default=5)
    args = ap.parse_args()
    per_closed = bench_closed_form(args.closed_form_parts)
    per = bench_simulate(args.sim_parts)
    bench_ngspice(args.ngspice_parts, per, per_closed)


if __name__ == "__main__":
    main()
