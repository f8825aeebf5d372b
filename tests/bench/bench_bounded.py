"""Benchmark of bounded computation: how long the prediction takes for extreme designs.

Run: ``python tests/bench/bench_bounded.py``. Not a pytest test; prints figures only.

Circuit: the invented line driver of tests/physics_helpers.line_design (5 V, gain 2, 1 V peak
out, 10 uF into 10 kohm AC-coupled), three invented parts (class B with pull-down, class AB,
class A); the whole prediction through the API (closed form, simulation as designed and with
the fix) at 1 kHz, 10 Hz, 0.01 Hz, 1 uHz and 1e-300 Hz, and at 1 kHz with a GBW of 1e12 Hz.
Seconds are wall time after the stepper is loaded (median of 3); "given up" counts the parts
the step budget stopped (stepper_layout.MAX_BAD_STEPS), which then carry a reason instead of
figures.
"""

from __future__ import annotations

import statistics
import sys
import time
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from physics_helpers import line_design, stage_columns

from partsel.api import Session
from partsel.physics import stepper


def _frame(**extra: float) -> pd.DataFrame:
    frame = pd.DataFrame(stage_columns(["class-b-pulldown", "class-ab", "class-a"], **extra))
    frame["part_number"] = ["B1", "AB1", "A1"]
    return frame


def main() -> None:
    print(f"stepper load/compile: {stepper.warm_up():.2f} s")
    cases = [
        ("1 kHz", 1e3, {}),
        ("10 Hz", 10.0, {}),
        ("0.01 Hz", 0.01, {}),
        ("1 uHz", 1e-6, {}),
        ("1e-300 Hz", 1e-300, {}),
        ("1 kHz, GBW 1e12 Hz", 1e3, {"gbw": 1e12}),
    ]
    print(f"{'case':<22} {'seconds':>8} {'steps/period':>13} {'given up':>9}")
    for label, f, extra in cases:
        times = []
        for _ in range(3):
            with Session(_frame(**extra)) as s:
                t0 = time.perf_counter()
                pred = s.predict(line_design(frequency_hz=f), basis="typical")
                times.append(time.perf_counter() - t0)
        sim = pred.sim
        assert sim is not None
        given_up = int(sim.abandoned.sum())
        print(
            f"{label:<22} {statistics.median(times):>8.3f} {sim.steps_per_period:>13d} "
            f"{given_up:>6d}/{sim.abandoned.size}"
        )


if __name__ == "__main__":
    main()
