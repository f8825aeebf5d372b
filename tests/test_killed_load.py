"""A load killed with SIGKILL at any moment is all or nothing: the catalogue holds either every
part it held before or every part of the load, never a part of it, and SQLite's integrity check
passes (one transaction per load; SQLite's atomic commit, WAL mode)."""

from __future__ import annotations

import copy
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import yaml

PROJECT = Path(__file__).resolve().parents[1]
SAMPLE = PROJECT / "sample-catalog" / "parts"
COPIES = 30  # 51 x 30 = 1,530 invented parts: a load that takes a second or more here


def big_catalogue(folder: Path) -> int:
    """The sample's parts copied under new part numbers (invented, for the test only)."""
    n = 0
    for src in sorted(SAMPLE.glob("*.yaml")):
        doc = yaml.safe_load(src.read_text(encoding="utf-8"))
        parts = []
        for k in range(COPIES):
            for p in doc["parts"]:
                q = copy.deepcopy(p)
                q["part_number"] = f"{p['part_number']}-K{k:02d}"
                parts.append(q)
        doc["parts"] = parts
        n += len(parts)
        (folder / src.name).write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return n


def count(db: Path) -> tuple[int, str]:
    conn = sqlite3.connect(db)
    try:
        n = conn.execute("SELECT count(*) FROM part").fetchone()[0]
        ok = conn.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        conn.close()
    return int(n), str(ok)


def test_killed_load_is_all_or_nothing(tmp_path: Path) -> None:
    db = tmp_path / "team.sqlite"
    url = f"sqlite:///{db}"
    partsel = [sys.executable, "-m", "partsel.cli.main", "--db", url]
    subprocess.run([*partsel, "load", str(SAMPLE)], check=True, capture_output=True)
    before, _ = count(db)
    assert before == 51
    big = tmp_path / "big"
    big.mkdir()
    total = big_catalogue(big)
    outcomes = set()
    for delay in (0.2, 0.6, 1.0, 1.5, 2.5):
        proc = subprocess.Popen([*partsel, "load", str(big)], stdout=subprocess.DEVNULL,
                                stderr=subprocess.DEVNULL)  # fmt: skip
        time.sleep(delay)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        n, ok = count(db)
        assert ok == "ok"
        assert n in (before, before + total), (delay, n)
        outcomes.add(n)
        if n == before + total:
            break
    # a load left to finish stores everything
    if before + total not in outcomes:
        subprocess.run([*partsel, "load", str(big)], check=True, capture_output=True)
        assert count(db) == (before + total, "ok")
