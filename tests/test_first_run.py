"""The first run: filling the default catalogue from the sample is atomic. A first run killed
(SIGKILL) or interrupted (SIGINT, Ctrl-C) at each stage of the fill leaves either no catalogue
or the full one, and the next run holds the whole sample (51 invented parts); two first runs
at once both succeed. Each run is a subprocess under CPU and memory limits, paused at a stage
by the PARTSEL_TEST_FILL_PAUSE hook (it waits for a line on stdin), so that the moment of the
signal is exact, not a race with a sleep."""

from __future__ import annotations

import os
import signal
import sqlite3
import time
from pathlib import Path

import pytest
from conftest import SAMPLE_PARTS
from limited import describe, run_limited, start_limited

from partsel.catalogue.db import FILL_PAUSE_ENV, FILL_STAGES, STALE_FILL_SECONDS, default_db_path

#: Parts in the bundled sample catalogue (sample-catalog/parts/*.yaml), counted independently.
SAMPLE_COUNT = sum(
    line.lstrip().startswith("- part_number:")
    for f in SAMPLE_PARTS.glob("*.yaml")
    for line in f.read_text(encoding="utf-8").splitlines()
)
COUNT = (
    "from partsel.catalogue import open_catalogue, part_numbers\n"
    "e = open_catalogue()\n"
    "print(len(part_numbers(e)))\n"
    "e.dispose()\n"
)


def test_the_sample_has_51_parts() -> None:
    assert SAMPLE_COUNT == 51


def _paused(stage: str):
    proc = start_limited(COUNT, env={FILL_PAUSE_ENV: stage})
    assert proc.stderr is not None
    line = proc.stderr.readline()
    assert f"paused at {stage}" in line, line + proc.stderr.read()
    return proc


def _next_run_count() -> int:
    done = run_limited(COUNT)
    assert done.returncode == 0, describe(done)
    return int(done.stdout.split()[-1])


def _integrity(path: Path) -> str:
    conn = sqlite3.connect(path)
    try:
        return conn.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        conn.close()


@pytest.mark.parametrize("stage", FILL_STAGES)
@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGINT], ids=["SIGKILL", "SIGINT"])
def test_killed_first_run_is_redone(stage: str, sig: signal.Signals) -> None:
    path = default_db_path()
    proc = _paused(stage)
    proc.send_signal(sig)
    proc.communicate(timeout=60)
    assert proc.returncode != 0
    if stage == "published":
        assert path.exists()  # killed after publishing: the full catalogue is there
    else:
        assert not path.exists()  # no half-filled catalogue is ever visible
    if sig == signal.SIGINT:  # the interrupted run cleaned up after itself
        assert not [f for f in path.parent.glob(f".{path.name}.fill-*")]
    assert _next_run_count() == SAMPLE_COUNT
    assert _integrity(path) == "ok"


def test_two_first_runs_at_once_both_succeed() -> None:
    """Both build, both publish: the first to publish wins, the other uses its catalogue."""
    a, b = _paused("loaded"), _paused("loaded")
    outs = []
    for proc in (a, b):
        out, err = proc.communicate(input="\n", timeout=120)
        assert proc.returncode == 0, err
        outs.append(int(out.split()[-1]))
    assert outs == [SAMPLE_COUNT, SAMPLE_COUNT]
    assert _next_run_count() == SAMPLE_COUNT
    path = default_db_path()
    conn = sqlite3.connect(path)
    try:  # filled once: one history row per part, all at version 1
        rows = conn.execute("SELECT count(*), max(version) FROM part_history").fetchone()
    finally:
        conn.close()
    assert rows == (SAMPLE_COUNT, 1)
    assert not list(path.parent.glob(f".{path.name}.fill-*"))


def test_a_run_that_finishes_first_wins() -> None:
    slow = _paused("migrated")
    assert _next_run_count() == SAMPLE_COUNT  # a second first run, unpaused, publishes first
    out, err = slow.communicate(input="\n", timeout=120)
    assert slow.returncode == 0, err
    assert int(out.split()[-1]) == SAMPLE_COUNT


def test_left_over_fill_files_are_removed_when_stale() -> None:
    path = default_db_path()
    proc = _paused("loaded")
    proc.kill()
    proc.communicate(timeout=60)
    (left,) = [f for f in path.parent.glob(f".{path.name}.fill-*") if "-" not in f.name[-4:]]
    old = time.time() - STALE_FILL_SECONDS - 10
    os.utime(left, (old, old))
    assert _next_run_count() == SAMPLE_COUNT
    assert not left.exists()


def test_an_empty_catalogue_from_an_older_interrupted_fill_is_filled(tmp_path: Path) -> None:
    """A default file with tables but no part, maker or history row (what an interrupted fill
    of an older partsel left) is filled again in place."""
    from partsel.catalogue import open_catalogue
    from partsel.catalogue.db import make_engine, migrate, sqlite_url

    path = default_db_path()
    path.parent.mkdir(parents=True, exist_ok=True)
    engine = make_engine(sqlite_url(path))
    migrate(engine)
    engine.dispose()
    engine = open_catalogue()
    try:
        from partsel.catalogue import part_numbers

        assert len(part_numbers(engine)) == SAMPLE_COUNT
    finally:
        engine.dispose()
