"""Benchmark of the physics core: closed form, compiled simulation, ngspice, the CLI (a script).

Run from the project root: ``python tests/bench/bench_physics.py``. Not collected by pytest;
prints figures, asserts nothing about time. Targets (issue 11):

(i)   closed-form predictions for 100,000 synthetic parts in one call: under 0.1 s (the
      marginal parts' device-law simulation is printed separately);
(ii)  simulate() of 1,000 synthetic parts over two periods (one warm-up, one recorded) at the
      resolution of the ngspice comparison (tests/test_ngspice.py, 1024 steps per period):
      under 0.2 s; one part (default steps, settled) under 5 ms after the first call; the first
      call (numba compile, or loading the compiled code from the cache) printed separately;
(iii) the same circuit in ngspice, one deck per part for a few parts: partsel per part at least
      1000 times faster than ngspice per part;
(iv)  ``partsel predict DESIGN PART`` (sample catalogue, line-driver-5v.toml, BRQ-622) with and
      without simulation: the simulation (with and without the fix) adds under 0.5 s.

Wall-clock times on a shared machine vary with the other load; each figure is the best of a
few runs, CPU time beside it. The synthetic parts are invented: classic single-supply values
spread at random (seeded).
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import tempfile
import time
from collections.abc import Callable
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


def _best(fn: Callable[[], object], repeat: int = 3) -> tuple[float, float]:
    """Best wall and CPU seconds of ``repeat`` calls of ``fn``."""
    best = cpu = np.inf
    for _ in range(repeat):
        t0, c0 = time.perf_counter(), time.process_time()
        fn()
        best = min(best, time.perf_counter() - t0)
        cpu = min(cpu, time.process_time() - c0)
    return best, cpu


def bench_closed_form(n: int) -> float:
    """Seconds per part of the closed form (best of 3 wall-clock runs)."""
    from partsel.physics.analysis import MARGINAL_STEPS, predict_closed_form

    st = synthetic_parts(n)
    predict_closed_form(st.take(np.arange(2000)), DESIGN)  # warm-up (imports, numba caches)
    cf = predict_closed_form(st, DESIGN)
    best, cpu = _best(lambda: predict_closed_form(st, DESIGN))
    marg = np.flatnonzero(cf.conduction == "marginal")
    sub = st.take(marg)
    m_best, m_cpu = _best(
        lambda: simulate(sub, DESIGN, steps_per_period=MARGINAL_STEPS, n_warmup=1, max_warmup=2)
    )
    print(
        f"(i)   closed form, {n:,} parts in one call: {best:.3f} s wall, {cpu:.3f} s CPU "
        "(best of 3; target < 0.1 s)"
    )
    print(
        f"      of which the device law of the {marg.size:,} marginal parts "
        f"({100 * marg.size / n:.1f} %): {m_best:.3f} s wall, {m_cpu:.3f} s CPU; the rest "
        f"{best - m_best:.3f} s wall"
    )
    return best / n


def bench_first_call() -> None:
    """First simulate() in a fresh process: loading the compiled code from the numba cache,
    and compiling it into an empty cache (both a one-part simulation of the default part)."""
    code = (
        "import time; t0 = time.perf_counter()\n"
        "import sys; sys.path.insert(0, 'tests')\n"
        "from physics_helpers import line_design, make_stage\n"
        "from partsel.physics.simulate import simulate\n"
        "st = make_stage('class-b-pulldown'); d = line_design(); t1 = time.perf_counter()\n"
        "simulate(st, d); t2 = time.perf_counter()\n"
        "simulate(st, d); t3 = time.perf_counter()\n"
        "print(f'{t1 - t0:.3f} {t2 - t1:.3f} {t3 - t2:.4f}')\n"
    )
    for label, env in (
        ("from the cache", dict(os.environ)),
        ("empty cache: compile", {**os.environ, "NUMBA_CACHE_DIR": tempfile.mkdtemp()}),
    ):
        if label == "from the cache":  # make sure the cache holds the compiled code
            subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, check=True)
        out = subprocess.run(
            [sys.executable, "-c", code], env=env, capture_output=True, text=True, check=True
        ).stdout.split()
        print(
            f"      first call, {label}: {float(out[1]):.3f} s (imports before it "
            f"{float(out[0]):.3f} s; the next call {1e3 * float(out[2]):.2f} ms)"
        )


def bench_simulate(n: int) -> float:
    """Seconds per part of simulate() (best wall clock of 3)."""
    st = synthetic_parts(n)
    simulate(st, DESIGN, steps_per_period=STEPS, n_warmup=1, max_warmup=1)  # warm-up
    best, cpu = _best(
        lambda: simulate(st, DESIGN, steps_per_period=STEPS, n_warmup=1, max_warmup=1)
    )
    print(
        f"(ii)  simulate(), {n:,} parts, 2 periods at {STEPS} steps/period: {best:.3f} s wall, "
        f"{cpu:.3f} s CPU ({1e3 * best / n:.3f} ms per part; {os.cpu_count()} cores; "
        "target < 0.2 s)"
    )
    one = st.take([1])  # a class-B part
    best1, cpu1 = _best(lambda: simulate(one, DESIGN), repeat=10)
    sim = simulate(one, DESIGN)
    print(
        f"      one part, default steps ({sim.steps_per_period}/period, "
        f"{int(sim.warmup_periods[0])} warm-up periods until settled + 1 recorded): "
        f"{1e3 * best1:.2f} ms wall, {1e3 * cpu1:.2f} ms CPU (target < 5 ms)"
    )
    bench_first_call()
    return best / n


def bench_cli() -> None:
    """``partsel predict`` on the sample catalogue, with and without the simulation."""
    root = Path(__file__).resolve().parents[2]
    design = root / "sample-catalog" / "designs" / "line-driver-5v.toml"
    exe = Path(sys.executable).with_name("partsel")
    with tempfile.TemporaryDirectory() as tmp:
        env = {**os.environ, "PARTSEL_DB": f"sqlite:///{tmp}/bench.db", "XDG_DATA_HOME": tmp}
        parts = sorted(str(p) for p in (root / "sample-catalog" / "parts").glob("*.yaml"))
        subprocess.run([str(exe), "load", *parts], env=env, capture_output=True, check=True)
        # as installed without the test extras: scipy absent (numba then skips its BLAS probe)
        no_scipy = (
            "import sys; sys.modules['scipy'] = None; from partsel.cli.main import run; "
            "sys.argv[0] = 'partsel'; run()"
        )
        runs = {
            "with simulation": [str(exe), "predict"],
            "--no-sim": [str(exe), "predict", "--no-sim"],
            "no scipy, with simulation": [sys.executable, "-c", no_scipy, "predict"],
            "no scipy, --no-sim": [sys.executable, "-c", no_scipy, "predict", "--no-sim"],
        }
        times = {}
        for label, cmd in runs.items():
            best = np.inf
            for _ in range(5):
                t0 = time.perf_counter()
                subprocess.run(
                    [*cmd, str(design), "BRQ-622"], env=env, capture_output=True, check=True
                )
                best = min(best, time.perf_counter() - t0)
            times[label] = best
    for pre in ("", "no scipy, "):
        sim_t, fast = times[f"{pre}with simulation"], times[f"{pre}--no-sim"]
        note = f" ({pre[:-2]})" if pre else ""
        print(
            f"(iv)  partsel predict line-driver-5v.toml BRQ-622{note}: {sim_t:.2f} s wall with "
            f"simulation and fix, {fast:.2f} s with --no-sim (best of "
            f"5): the simulation adds {sim_t - fast:.2f} s (target < 0.5 s)"
        )


def bench_ngspice(n: int, per_part_partsel_s: float, per_part_closed_s: float) -> None:
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
    bench_cli()


if __name__ == "__main__":
    main()
