"""Benchmark of the requirements solver: rank N synthetic parts for every sample design.

Run: ``python tests/bench/bench_solver.py [N ...]`` (default 1000 10000 100000). Not a pytest test.

The synthetic catalogue is the invented demo catalogue (``sample-catalog/parts``) repeated with
random variations: every part record is copied with a new part number and each of its parameters
(all sides of a min/typ/max spec together, and each headroom curve as a whole) scaled by a random
factor between 0.7 and 1.4, its price likewise; supply range, temperatures and packages are kept.
So the mix of topologies, and of parts that hand over, matches the demo catalogue. The records go
through the normal validation and load into a temporary SQLite file (setup, timed separately).

Printed per N: the setup time, the time to load the catalogue from SQLite into the solver's
table (``parts_frame`` + ``PartTable``), the first ranking on each basis (builds the cached stage
parameters) and, per sample design, the warm ranking time (median of three) and the number of
feasible parts; then how load and rank times grow from one N to the next (near 10x per 10x is
linear). Targets (issue 4): warm ranking under 0.5 s and load under 3 s at 100,000 parts.
"""

from __future__ import annotations

import copy
import itertools
import random
import statistics
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from partsel.catalogue import load_documents, open_catalogue, parts_frame, read_and_validate
from partsel.catalogue.validate import validate_documents
from partsel.design import load_design
from partsel.solver import PartTable, rank

ROOT = Path(__file__).resolve().parents[2]
PARTS = ROOT / "sample-catalog" / "parts"
DESIGNS = sorted((ROOT / "sample-catalog" / "designs").glob("*.toml"))

#: Record fields left as they are (ranges and conditions that define the part's class).
_KEEP = {"range", "temperature", "packages", "at", "min_stable_gain", "junction_max", "channels"}


def _scale(node: Any, rng: random.Random) -> Any:
    """Copy of a canonical record with every spec scaled by its own random factor."""
    if isinstance(node, dict):
        if {"min", "typ", "max"} & set(node) and all(
            isinstance(node.get(k), int | float) for k in ("min", "typ", "max") if k in node
        ):
            f = rng.uniform(0.7, 1.4)
            return {k: (v * f if k in ("min", "typ", "max") else v) for k, v in node.items()}
        return {k: (v if k in _KEEP else _scale(v, rng)) for k, v in node.items()}
    curve = isinstance(node, list) and bool(node)
    if curve and all(isinstance(p, dict) and "headroom" in p for p in node):
        f = rng.uniform(0.7, 1.4)  # a swing curve: one factor for the whole rail
        return [
            {**p, "headroom": {k: (v * f if k != "at" else v) for k, v in p["headroom"].items()}}
            for p in node
        ]
    return node


def synthetic_records(n: int, seed: int) -> list[dict[str, Any]]:
    """``n`` invented part records derived from the demo catalogue."""
    rng = random.Random(seed)
    base = [c for doc in read_and_validate([PARTS]) for c in doc.canonical_parts]
    out = []
    for i in range(n):
        rec = _scale(copy.deepcopy(base[i % len(base)]), rng)
        rec["part_number"] = f"SYN-{i:06d}"
        rec["maker"] = f"Synthetic Maker {i % 17}"
        if "price" in rec:
            rec["price"] = {
                **rec["price"],
                "unit": round(rec["price"]["unit"] * rng.uniform(0.7, 1.4), 3),
            }
        out.append(rec)
    return out


def bench(n: int) -> tuple[float, float]:
    """Run one size; return (load time, mean warm rank time) in seconds."""
    designs = [load_design(p) for p in DESIGNS]
    with tempfile.TemporaryDirectory() as tmp:
        t0 = time.perf_counter()
        engine = open_catalogue(f"sqlite:///{Path(tmp) / 'bench.sqlite'}")
        docs = validate_documents([("synthetic.json", {"parts": synthetic_records(n, n)})])
        load_documents(engine, docs)
        t_setup = time.perf_counter() - t0

        t0 = time.perf_counter()
        table = PartTable(parts_frame(engine))
        t_load = time.perf_counter() - t0
        engine.dispose()

        t0 = time.perf_counter()
        rank(table, designs[0])  # worst-case basis: builds and caches its stage parameters
        t_first = time.perf_counter() - t0
        print(
            f"N={n:>7}: setup {t_setup:6.1f} s | load {t_load:6.3f} s | first rank {t_first:6.3f} s"
        )
        warm = []
        for path, design in zip(DESIGNS, designs, strict=True):
            runs = []
            for _ in range(3):
                t0 = time.perf_counter()
                r = rank(table, design)
                runs.append(time.perf_counter() - t0)
            med = statistics.median(runs)
            warm.append(med)
            print(
                f"    {path.stem:<26} {r.requirements.basis:<10} rank {med:6.3f} s "
                f"| feasible {r.n_feasible:>6} | pareto {int(r.pareto.sum()):>4} "
                f"| fix sized {int(r.fix.sized.sum()):>6}"
            )
    return t_load, statistics.fmean(warm)


if __name__ == "__main__":
    sizes = [int(a) for a in sys.argv[1:]] or [1000, 10000, 100000]
    results = [(n, *bench(n)) for n in sizes]
    print("growth (time ratio per size ratio; 1.0 = linear):")
    for (n0, l0, r0), (n1, l1, r1) in itertools.pairwise(results):
        k = n1 / n0
        print(
            f"    {n0:>7} -> {n1:>7} (x{k:g}): load x{l1 / l0:5.1f} ({l1 / l0 / k:4.2f}), "
            f"rank x{r1 / r0:5.1f} ({r1 / r0 / k:4.2f})"
        )
    n, load, rnk = results[-1]
    print(
        f"at N={n}: load {load:.3f} s (target < 3 s: {'ok' if load < 3 else 'MISSED'}), "
        f"mean warm rank {rnk:.3f} s (target < 0.5 s: {'ok' if rnk < 0.5 else 'MISSED'})"
    )
