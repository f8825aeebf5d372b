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


if __name__ == "__main__":
    main()
