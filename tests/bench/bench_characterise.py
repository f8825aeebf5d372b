"""Benchmark of ``partsel characterise``: seconds per model, and its accuracy on partsel's
transistor-level op-amps (a script; not collected by pytest, asserts nothing).

Run from the project root: ``python tests/bench/bench_characterise.py [--runs N] [--jobs J]``.
For each circuit of tests/circuits/ (class B with pull-down, class AB, CMOS rail-to-rail) it
prints the median wall time of ``N`` characterisations (the benches run as ``J`` ngspice
processes at once; target: under 20 s per model on 2 cores) and the measured values against
the circuits' own references (tests/circuits/characterise.py: internal probes for the stage
current and the dead band, its datasheet-style benches for GBW, slew and supply current),
then for the class-B circuit the glitch the fitted dead band gives in the gain-2 circuits of
tests/test_characterise.py against the transistor-level glitch.

The first run in a fresh environment also compiles partsel's simulation (numba, about 10 s,
cached afterwards); it is timed and printed apart.

Last, ``partsel fit-capture``'s step convergence: the sample part BRQ-622 in the sample line
driver simulated with 32768 steps per period (stage current 42 uA, dead band 1.65 V, no
noise) and fitted with 2048 to 16384 steps: the fitted values' error and the fit's time.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(HERE))

from circuits import characterise as reference  # noqa: E402
from circuits.characterise import CLASS_AB, CLASS_B, CMOS, run_all  # noqa: E402
from test_characterise import GRID, _deviation  # noqa: E402
from test_transistor_level_opamp import design_of  # noqa: E402

from partsel.characterise.benches import Conditions  # noqa: E402
from partsel.characterise.model_file import read_models  # noqa: E402
from partsel.characterise.record import stage_params  # noqa: E402
from partsel.characterise.run import characterise  # noqa: E402
from partsel.physics.analysis import predict_closed_form  # noqa: E402
from partsel.physics.simulate import simulate  # noqa: E402


def _pct(x: float, ref: float) -> str:
    return f"{100.0 * (x / ref - 1.0):+.1f} %"


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3)
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    cond = Conditions(5.0)
    t0 = time.perf_counter()
    first = characterise(read_models([CLASS_B.path], CLASS_B.name), cond, jobs=args.jobs)
    print(f"first run (compiles the simulation if not cached): {time.perf_counter() - t0:.1f} s")
    del first
    with tempfile.TemporaryDirectory() as tmp:
        for c in (CLASS_B, CLASS_AB, CMOS):
            models = read_models([c.path], c.name)
            times, r = [], None
            for _ in range(args.runs):
                t1 = time.perf_counter()
                r = characterise(models, cond, jobs=args.jobs)
                times.append(time.perf_counter() - t1)
            assert r is not None
            ref = reference.characterise(c, Path(tmp) / c.name)
            rise, fall = reference._slew(c, Path(tmp) / f"{c.name}-slew", r.step.low_v,
                                         r.step.high_v)  # fmt: skip
            print(
                f"\n{c.name}: {statistics.median(times):.2f} s per model (median of "
                f"{args.runs}, {args.jobs} ngspice at once, {len(r.benches)} benches), "
                f"topology {r.topology.value}"
            )
            rows = [
                ("stage current (probe)", r.knee.stage_current_a, ref.stage_current_probe_a),
                ("supply current", r.quiescent.supply_current_a, ref.supply_current_a),
                ("GBW (|A| f at 10 kHz)", r.open_loop.gbw_hz, ref.gbw_hz),
                ("slew rise", r.slew.rise_v_per_s, rise),
                ("slew fall", r.slew.fall_v_per_s, fall),
            ]
            if r.dead_band is not None:
                rows.append(("dead band (probe)", r.dead_band.value_v, ref.dead_band_v))
            for name, got, want in rows:
                print(f"  {name:24} {got:12.5g}  reference {want:12.5g}  {_pct(got, want)}")
            d = r.dead_band
            if d is None:
                continue
            print(
                f"  dead-band check at {d.slopes_v_per_s[1]:.4g} V/s: closed form "
                f"{100 * d.closed_form_error:+.1f} %, simulation {100 * d.simulated_error:+.1f} %"
            )
            stage = stage_params(r, d.value_v)
            waves = run_all([(c, g) for g in GRID], Path(tmp) / "grid", {c.name: ref.offset_v})
            print("  gain-2 grid (R_L, f, A_out): closed form / simulation against ngspice")
            for g in GRID:
                w = waves[(c, g)]
                if np.max(-w.i_sink) < 5e-6:
                    continue
                dev = _deviation(g, w)
                design = design_of(g)
                cf = float(predict_closed_form(stage, design).glitch_v[0])
                sim = float(simulate(stage, design, steps_per_period=1024).deviation_peak_v[0])
                print(
                    f"    {g.r_load_ohm:6.0f} ohm {g.frequency_hz:6.0f} Hz {g.amplitude_v:.1f} V:"
                    f" ngspice {dev * 1e3:7.2f} mV  cf {_pct(cf, dev):>8}  sim {_pct(sim, dev):>8}"
                )


def fit_convergence() -> None:
    """The fit's error against its steps per period (see the module docstring)."""
    import partsel.characterise.fit as fit
    from partsel.api import Session
    from partsel.catalogue import load_paths, open_catalogue
    from partsel.design import load_design
    from partsel.io.scope import Capture
    from partsel.physics.simulate import simulate

    root = HERE.parent
    eng = open_catalogue("sqlite://")
    load_paths(eng, [root / "sample-catalog" / "parts"])
    s = Session(eng)
    design = load_design(root / "sample-catalog" / "designs" / "line-driver-5v.toml")
    stage = s.table.stage("typical").take(s.rows(["BRQ-622"]))
    true_i, true_db = 42e-6, 1.65
    truth = stage.replace(stage_current_a=np.array([true_i]), stage_current_high_a=np.array(
        [true_i]), dead_band_v=np.array([true_db]))  # fmt: skip
    n_true = 32768
    wave = simulate(truth, design, steps_per_period=n_true).v_out[0]
    period = 1.0 / design.signal.frequency_hz
    grid = (np.arange(n_true) + 1) * period / n_true
    t = np.arange(2000) * period / 500
    v = np.interp(np.mod(t, period), np.concatenate([[0.0], grid]), np.concatenate([[wave[-1]],
                  wave]))  # fmt: skip
    cap = Capture("bench", t, v, design.v_in(t), (), 1)
    print("\nfit-capture: BRQ-622 in line-driver-5v, truth simulated with 32768 steps per period")
    saved = fit.MIN_STEPS, fit.MAX_STEPS
    try:
        for steps in (2048, 4096, 8192, 16384):
            fit.MIN_STEPS = fit.MAX_STEPS = steps
            t0 = time.perf_counter()
            f = fit.fit_capture(stage, design, cap)
            dt = time.perf_counter() - t0
            got_i, got_db = f.get("stage_current"), f.get("dead_band")
            assert got_i is not None and got_db is not None
            print(
                f"  {steps:6d} steps: stage current {_pct(got_i.value, true_i):>8}, dead band "
                f"{_pct(got_db.value, true_db):>8}, {dt:.2f} s"
            )
    finally:
        fit.MIN_STEPS, fit.MAX_STEPS = saved


if __name__ == "__main__":
    main()
    fit_convergence()
