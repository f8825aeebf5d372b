"""Benchmark of the catalogue layer: validate, bulk-insert and read back N synthetic parts.

Run: ``python tests/bench/bench_catalogue.py [N ...]`` (default 1000 10000 100000). Parts are
invented and random; values are SI numbers (as an import from a sheet or another database
would give) with a few quantity strings. Uses a temporary SQLite file. Not a pytest test.
"""

from __future__ import annotations

import random
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

from partsel.catalogue import load_documents, open_catalogue, parts_frame, validate_documents


def synthetic_part(i: int, rng: random.Random) -> dict[str, Any]:
    """One invented part record with plausible values."""
    gbw = 10 ** rng.uniform(5, 8)
    slew = gbw * rng.uniform(0.2, 1.0)
    topology = rng.choice(["class-b-pulldown", "class-ab", "cmos-rail-to-rail", "class-a"])
    i_stage = 10 ** rng.uniform(-5.5, -3)
    out: dict[str, Any] = {
        "topology": topology,
        "stage_current": {"min": 0.6 * i_stage, "typ": i_stage, "max": 1.5 * i_stage},
        "source_limit": {"min": 0.02, "typ": 0.04},
        "sink_limit": {"min": 0.01, "typ": 0.02},
        "swing_pos": {
            "saturation": {"typ": 0.02, "max": 0.04},
            "resistance": {"typ": 40.0, "max": 70.0},
        },
        "swing_neg": [
            {"current": 0.0, "headroom": {"typ": 0.005, "max": 0.02}},
            {"current": 1e-3, "headroom": {"typ": 0.1, "max": 0.2}},
            {"current": 1e-2, "headroom": {"typ": 0.6, "max": 0.9}},
        ],
    }
    if topology == "class-b-pulldown":
        out["dead_band"] = {"min": 1.1, "typ": 1.3, "max": 1.6}
    return {
        "part_number": f"SYN-{i:06d}",
        "maker": f"Synthetic Maker {i % 20}",
        "family": f"SYN family {i % 500}",
        "channels": rng.choice([1, 2, 4]),
        "lifecycle": rng.choice(["active", "active", "not-for-new-designs", "obsolete"]),
        "packages": [{"code": "SO-8", "pinout": "DUAL-8A", "theta_ja": 150.0}],
        "temperature": {"min": "-40 degC", "max": "125 degC"},
        "price": {"unit": round(rng.uniform(0.1, 5), 2), "currency": "USD"},
        "supply": {
            "range": {"min": 2.7, "max": rng.choice([5.5, 16.0, 36.0])},
            "current_per_channel": {"typ": 3 * i_stage, "max": 5 * i_stage},
        },
        "input": {
            "offset_voltage": {"typ": 1e-3, "max": 5e-3},
            "bias_current": {"typ": 2e-8, "max": 2e-7},
        },
        "dynamics": {
            "gbw": {"min": 0.7 * gbw, "typ": gbw},
            "slew_rise": {"min": 0.6 * slew, "typ": slew},
            "slew_fall": {"typ": slew},
        },
        "output": out,
    }


def bench(n: int) -> None:
    rng = random.Random(n)
    parts = [synthetic_part(i, rng) for i in range(n)]
    with tempfile.TemporaryDirectory() as tmp:
        engine = open_catalogue(f"sqlite:///{Path(tmp) / 'bench.sqlite'}")
        t0 = time.perf_counter()
        docs = validate_documents([("synthetic.json", {"parts": parts})])
        t1 = time.perf_counter()
        report = load_documents(engine, docs)
        t2 = time.perf_counter()
        df = parts_frame(engine)
        t3 = time.perf_counter()
        report2 = load_documents(engine, docs)
        t4 = time.perf_counter()
        engine.dispose()
    assert len(df) == n == len(report.added) == len(report2.unchanged)
    print(
        f"N={n:>7}: validate {t1 - t0:7.2f} s | bulk insert {t2 - t1:7.2f} s | "
        f"frame {t3 - t2:6.2f} s ({df.shape[1]} columns) | reload unchanged {t4 - t3:6.2f} s"
    )


if __name__ == "__main__":
    for arg in sys.argv[1:] or ["1000", "10000", "100000"]:
        bench(int(arg))
