"""Benchmark of the terminal UI: time from a design edit to the updated ranking table.

Run: ``python tests/bench/bench_tui.py [N ...]`` (default 10000 100000). Not a pytest test.

The catalogue is the invented demo catalogue (``sample-catalog/parts``, loaded into a temporary
SQLite file and read back as the parts frame) repeated to N rows, each copy with a new part
number and every electrical parameter (all sides of its range together, and each output swing
curve as a whole) and the price scaled by its own random factor between 0.7 and 1.4 (seeded):
the mix of topologies, and of parts that hand over, stays that of the demo catalogue. The UI
runs headless (Textual's ``run_test``) on that frame with the simulation off, so what is timed is
what a keystroke costs: reading the form, ranking the whole catalogue in the worker, and refilling
the table (top 100 rows).

Printed per N: the time to build the solver's table and the first ranking, then for a series of
load-resistance edits the time from setting the field to the table holding the new ranking
(median, min, max), with the solver's share. Target (issue 6): under 100 ms at 10,000 parts.
"""

from __future__ import annotations

import asyncio
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[2]
PARTS = ROOT / "sample-catalog" / "parts"
DESIGN = ROOT / "sample-catalog" / "designs" / "line-driver-5v.toml"
EDITS = ("1.8 kohm", "2.2 kohm", "2.7 kohm", "1.5 kohm", "3.3 kohm", "2 kohm", "1.2 kohm")
TARGET_S = 0.100


def demo_frame() -> pd.DataFrame:
    """The demo catalogue as a parts frame (through a temporary SQLite file)."""
    from partsel.catalogue import load_paths, open_catalogue, parts_frame

    with tempfile.TemporaryDirectory() as tmp:
        engine = open_catalogue(f"sqlite:///{Path(tmp) / 'demo.sqlite'}")
        load_paths(engine, [PARTS])
        frame = parts_frame(engine)
        engine.dispose()
    return frame


def synthetic_frame(base: pd.DataFrame, n: int, seed: int) -> pd.DataFrame:
    """``n`` invented parts derived from ``base`` (see the module docstring)."""
    from partsel.params import PARAMS

    rng = np.random.default_rng(seed)
    rows = np.arange(n) % len(base)
    out = base.iloc[rows].reset_index(drop=True).copy()
    out["part_number"] = [f"SYN-{i:06d}" for i in range(n)]
    out["maker"] = [f"Synthetic Maker {i % 17}" for i in range(n)]
    groups = [[f"{p.key}_{s}" for s in ("min", "typ", "max")] for p in PARAMS]
    for rail in ("swing_pos", "swing_neg"):
        groups.append([c for c in out.columns if c.startswith(f"{rail}_v")])
    groups.append(["price"])
    for cols in groups:
        cols = [c for c in cols if c in out.columns]
        factor = rng.uniform(0.7, 1.4, size=n)
        for c in cols:
            out[c] = out[c].to_numpy(dtype=float) * factor
    return out


async def time_edits(frame: pd.DataFrame) -> tuple[float, list[float], list[float]]:
    """Run the app on ``frame``; return (first ranking, edit-to-table times, solver times)."""
    from partsel.tui.app import PartselApp

    app = PartselApp(frame=frame, design=DESIGN, simulate=False)
    edit_s: list[float] = []
    solver_s: list[float] = []
    async with app.run_test(size=(160, 50)) as pilot:
        t0 = time.perf_counter()
        while app.rank_count == 0:
            await asyncio.sleep(0.001)
        first = time.perf_counter() - t0
        await pilot.pause()
        form = app.screen.form
        for value in EDITS:
            count = app.rank_count
            t0 = time.perf_counter()
            form.set_field("f-load-resistance", value)
            while app.rank_count == count:
                await asyncio.sleep(0.0005)
            edit_s.append(time.perf_counter() - t0)
            assert app.ranking is not None
            solver_s.append(app.ranking.timing_s["total"])
            await pilot.pause()
    return first, edit_s, solver_s


def bench(base: pd.DataFrame, n: int) -> float:
    """One size; returns the median edit-to-table time, s."""
    frame = synthetic_frame(base, n, seed=n)
    first, edit_s, solver_s = asyncio.run(time_edits(frame))
    med = statistics.median(edit_s)
    print(
        f"N={n:>7}: first ranking {first:6.3f} s | edit -> table: median {med * 1e3:6.1f} ms, "
        f"min {min(edit_s) * 1e3:6.1f} ms, max {max(edit_s) * 1e3:6.1f} ms "
        f"(solver median {statistics.median(solver_s) * 1e3:6.1f} ms) over {len(edit_s)} edits"
    )
    return med


if __name__ == "__main__":
    sizes = [int(a) for a in sys.argv[1:]] or [10000, 100000]
    base = demo_frame()
    results = {n: bench(base, n) for n in sizes}
    if 10000 in results:
        ok = "ok" if results[10000] < TARGET_S else "MISSED"
        print(f"target: edit -> table under {TARGET_S * 1e3:.0f} ms at N=10000: {ok}")
