"""Benchmark of the spread analysis: Monte Carlo boards through the closed form and the checks.

Run: ``python tests/bench/bench_spread.py [PARTS [SAMPLES]]`` (default 1000 parts x 10,000
samples, the target of issue 13: under 1 s). Not a pytest test.

The parts are the synthetic catalogue of ``bench_solver.py`` (the demo catalogue repeated with
every spec scaled by a random factor between 0.7 and 1.4), loaded through SQLite as usual; the
design is ``sample-catalog/designs/line-driver-5v-yield.toml`` (five tolerances drawn per
board), every part analysed whatever its verdict, no fix fitted. Timed: the verdict of every
board (:func:`partsel.solver.spread.yields.part_yields` with ``detail=False``, the ranking's
yield check), in chunks of ``CHUNK_ROWS`` rows; printed: the time, boards per second, the share
of marginal boards (those simulated by the device law), and the peak resident memory of the
process (bounded by the chunking, not by PARTS x SAMPLES).
"""

from __future__ import annotations

import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_solver import synthetic_records

from partsel.catalogue import load_documents, open_catalogue, parts_frame, temperature_data
from partsel.catalogue.validate import validate_documents
from partsel.design import load_design
from partsel.solver import PartTable
from partsel.solver.requirements import Requirements
from partsel.solver.spread import board
from partsel.solver.spread.evaluate import CHUNK_ROWS
from partsel.solver.spread.yields import part_yields

ROOT = Path(__file__).resolve().parents[2]
DESIGN = ROOT / "sample-catalog" / "designs" / "line-driver-5v-yield.toml"


def main(n_parts: int, n_samples: int) -> None:
    design = load_design(DESIGN)
    req = Requirements.from_mapping(design.requirements)
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        engine = open_catalogue(f"sqlite:///{Path(tmp) / 'bench.sqlite'}")
        docs = validate_documents(
            [("synthetic.json", {"parts": synthetic_records(n_parts, n_parts)})]
        )
        load_documents(engine, docs)
        table = PartTable(parts_frame(engine), temperature_data(engine))
        engine.dispose()
        t_setup = time.perf_counter() - t0
    b = board(table, np.arange(table.n), design, req)
    rss0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    # warm-up (numba's compiled stepper, numpy's first calls) on a few boards
    part_yields(b, 100, 1, detail=False)
    t0 = time.perf_counter()
    passed, _ = part_yields(b, n_samples, 13, detail=False)
    dt = time.perf_counter() - t0
    rss1 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    boards = n_parts * n_samples
    print(f"design: {DESIGN.name}; {table.n} synthetic parts (setup {t_setup:.1f} s)")
    print(
        f"{n_parts} parts x {n_samples:,} samples = {boards:,} boards in {dt:.2f} s "
        f"({boards / dt / 1e6:.2f} million boards/s; chunks of {CHUNK_ROWS:,} rows)"
    )
    print(f"mean yield {passed.mean() / n_samples:.4f}; parts with yield 100 %: "
          f"{int((passed == n_samples).sum())}")  # fmt: skip
    print(f"peak resident memory {rss1:.0f} MB (before the run {rss0:.0f} MB)")
    verdict = "ok" if dt < 1.0 else "MISSED"
    print(f"target < 1 s for 10,000 x 1,000: {dt:.2f} s ({verdict}) at {n_parts} x {n_samples:,}")


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:]]
    main(args[0] if args else 1000, args[1] if len(args) > 1 else 10_000)
