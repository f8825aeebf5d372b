"""Several writers at once, with real parallel connections (threads and processes), on SQLite
and on PostgreSQL (see conftest).

What must hold (the issue's contract, and serialisability of the writes): conflicting edits
are refused, none is lost, the history of a part is a complete chain (each version's old
record is the previous version's new one), two loads at once both succeed one after the
other and never leave a mixed state, readers only ever see whole loads.
"""

from __future__ import annotations

import copy
import itertools
import os
import subprocess
import sys
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
import sqlalchemy as sa
import yaml
from conftest import CATALOGUE_DATA, PROJECT, SAMPLE_PARTS

import partsel.catalogue.db as db
from partsel.catalogue import (
    BusyError,
    ConflictError,
    edit_part,
    get_part,
    load_documents,
    load_paths,
    open_catalogue,
    part_history,
    parts_frame,
    read_and_validate,
    validate_documents,
)
from partsel.catalogue.db import write_transaction

#: Seconds any one wait in these tests may take before the test fails (not a benchmark:
#: only keeps a broken lock from hanging the run).
WAIT_S = 60


@pytest.fixture
def open_engines(db_url: str) -> Iterator[Callable[[], sa.Engine]]:
    """Open separate engines (own connection pools) on the test database; disposed after."""
    made: list[sa.Engine] = []

    def new() -> sa.Engine:
        eng = open_catalogue(db_url)
        made.append(eng)
        return eng

    yield new
    for eng in made:
        eng.dispose()


def run_threads(targets: list[Callable[[], Any]]) -> list[Any]:
    """Run the callables in parallel threads; return their results, re-raise their errors."""
    results: list[Any] = [None] * len(targets)
    errors: list[BaseException] = []

    def wrap(i: int, fn: Callable[[], Any]) -> None:
        try:
            results[i] = fn()
        except BaseException as exc:  # handed to the main thread
            errors.append(exc)

    threads = [threading.Thread(target=wrap, args=(i, f)) for i, f in enumerate(targets)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(WAIT_S)
        assert not t.is_alive(), "a worker hung"
    if errors:
        raise errors[0]
    return results


def assert_complete_chain(entries: list[Any]) -> None:
    """Versions 1..n without gaps; each old record is the previous version's new record."""
    assert [e.version for e in entries] == list(range(1, len(entries) + 1))
    assert entries[0].old_record is None
    for before, after in itertools.pairwise(entries):
        assert after.old_record == before.new_record
        assert after.changed_at >= before.changed_at


def test_parallel_edits_of_one_part_none_lost(
    open_engines: Callable[[], sa.Engine],
) -> None:
    """N editors read version 1 together and all edit it: one wins, N-1 are refused; each
    then re-reads and retries until stored. Every edit ends up in the history, once."""
    n = 5
    load_paths(open_engines(), [CATALOGUE_DATA])
    engines = [open_engines() for _ in range(n)]
    read_together = threading.Barrier(n, timeout=WAIT_S)
    first_try: list[str] = []

    def editor(i: int) -> int:
        eng = engines[i]
        part = get_part(eng, "QFA-2210")
        read_together.wait()  # all hold version 1 before anyone writes
        for attempt in range(50):
            record = copy.deepcopy(part.record)
            record["notes"] = f"edit by worker {i}"
            try:
                edit_part(eng, record, part.version, user=f"worker-{i}")
            except ConflictError as exc:
                if attempt == 0:
                    first_try.append("refused")
                    assert exc.expected_version == 1 and exc.current_version >= 2
                    assert "/notes" in {c.pointer for c in exc.changes}
                part = get_part(eng, "QFA-2210")
                continue
            if attempt == 0:
                first_try.append("stored")
            return attempt
        raise AssertionError("editor never got its edit in")

    run_threads([lambda i=i: editor(i) for i in range(n)])
    assert sorted(first_try) == ["refused"] * (n - 1) + ["stored"]
    entries = part_history(engines[0], "QFA-2210")
    assert len(entries) == n + 1 and get_part(engines[0], "QFA-2210").version == n + 1
    assert_complete_chain(entries)
    notes = sorted(e.new_record["notes"] for e in entries[1:])
    assert notes == sorted(f"edit by worker {i}" for i in range(n))  # each exactly once
    assert {e.changed_by for e in entries[1:]} == {f"worker-{i}" for i in range(n)}


def _relabelled(docs: list[Any], label: str) -> list[Any]:
    """The documents with every part's description set to ``label`` (validated again)."""
    items = []
    for d in docs:
        parts = [{**copy.deepcopy(p), "description": label} for p in d.parts]
        items.append((f"{label}.yaml", {"makers": copy.deepcopy(d.makers), "parts": parts}))
    return validate_documents(items)


def test_parallel_loads_serialise_and_readers_never_see_a_mix(
    open_engines: Callable[[], sa.Engine],
) -> None:
    """Two loaders rewrite every part of the sample catalogue at the same moment, four rounds,
    while a reader keeps reading frames: both loads of every round succeed, each frame shows
    one load's labels only, and the history orders the loads the same way for every part."""
    base = read_and_validate([SAMPLE_PARTS])
    load_documents(open_engines(), _relabelled(base, "setup"), user="setup")
    loaders = [open_engines(), open_engines()]
    reader = open_engines()
    rounds = 4
    start = threading.Barrier(2, timeout=WAIT_S)
    done = threading.Event()
    seen: list[set[str]] = []

    def loader(k: int) -> None:
        for r in range(rounds):
            docs = _relabelled(base, f"loader {k} round {r}")
            start.wait()
            load_documents(loaders[k], docs, user=f"loader-{k}")

    def read() -> None:
        while not done.is_set():
            seen.append(set(parts_frame(reader)["description"]))

    reading = threading.Thread(target=read)
    reading.start()
    try:
        run_threads([lambda: loader(0), lambda: loader(1)])
    finally:
        done.set()
        reading.join(WAIT_S)
    seen.append(set(parts_frame(reader)["description"]))
    mixed = [s for s in seen if len(s) != 1]
    assert not mixed, f"a reader saw a mixed state: {mixed[:1]}"
    final = seen[-1].pop()
    assert final.endswith(f"round {rounds - 1}")

    # Every part's history lists the same loads in the same order, without gaps.
    orders = []
    for pn in parts_frame(reader)["part_number"]:
        entries = part_history(reader, pn)
        assert_complete_chain(entries)
        orders.append([(e.changed_by, e.new_record.get("description")) for e in entries[1:]])
    assert all(o == orders[0] for o in orders)
    assert orders[0][-1][1] == final
    # A load whose content equals the state left by the other stores nothing; otherwise
    # both loads of a round each add one version.
    assert rounds <= len(orders[0]) <= 2 * rounds


def test_a_writer_waits_for_another_and_readers_do_not(
    open_engines: Callable[[], sa.Engine],
) -> None:
    eng, other = open_engines(), open_engines()
    load_paths(eng, [CATALOGUE_DATA])
    held, release = threading.Event(), threading.Event()
    order: list[str] = []

    def holder() -> None:
        with write_transaction(eng, "test holding the lock"):
            held.set()
            release.wait(WAIT_S)
            order.append("holder commits")

    def editor() -> None:
        held.wait(WAIT_S)
        part = get_part(other, "QFA-2214")
        record = {**part.record, "notes": "waited"}
        edit_part(other, record, part.version)
        order.append("editor stored")

    t_hold = threading.Thread(target=holder)
    t_edit = threading.Thread(target=editor)
    t_hold.start()
    t_edit.start()
    held.wait(WAIT_S)
    # While the lock is held a reader still reads (frames, parts, history) ...
    assert len(parts_frame(open_engines())) == 3
    time.sleep(0.3)  # give the editor time to reach the lock
    assert order == []  # ... and the editor waits for the holder
    release.set()
    t_hold.join(WAIT_S)
    t_edit.join(WAIT_S)
    assert order == ["holder commits", "editor stored"]
    assert get_part(eng, "QFA-2214").record["notes"] == "waited"


def test_a_writer_blocked_too_long_fails_cleanly(
    db_url: str, monkeypatch: pytest.MonkeyPatch, open_engines: Callable[[], sa.Engine]
) -> None:
    monkeypatch.setattr(db, "SQLITE_BUSY_TIMEOUT_MS", 200)
    monkeypatch.setattr(db, "PG_LOCK_TIMEOUT_MS", 200)
    holder_engine = open_engines()
    load_paths(holder_engine, [CATALOGUE_DATA])
    impatient = open_engines()  # connects after the patch: short timeouts
    before = parts_frame(impatient)
    held, release = threading.Event(), threading.Event()

    def holder() -> None:
        with write_transaction(holder_engine, "test holding the lock"):
            held.set()
            release.wait(WAIT_S)

    t = threading.Thread(target=holder)
    t.start()
    try:
        held.wait(WAIT_S)
        part = get_part(impatient, "QFA-2210")
        with pytest.raises(BusyError, match="busy: another writer held it"):
            edit_part(impatient, {**part.record, "notes": "too late"}, part.version)
        with pytest.raises(BusyError):
            load_paths(impatient, [CATALOGUE_DATA / "brightwater.json"], user="x")
    finally:
        release.set()
        t.join(WAIT_S)
    assert parts_frame(impatient).equals(before)
    assert len(part_history(impatient, "QFA-2210")) == 1


# --- separate processes ----------------------------------------------------------------------


def _partsel(db_url: str, *args: str | Path) -> subprocess.Popen[str]:
    return subprocess.Popen(
        [sys.executable, "-m", "partsel.cli.main", "--db", db_url, *map(str, args)],
        cwd=PROJECT,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env={**os.environ, "PYTHONWARNINGS": "error"},
    )


def test_parallel_processes_edit_and_load(db_url: str, tmp_path: Path) -> None:
    """Four partsel processes at once: two edit one part against version 1 (exactly one is
    refused, exit 2), two load overlapping files of other parts (both succeed, one after the
    other: every part ends with the same load's values)."""
    engine = open_catalogue(db_url)
    try:
        load_paths(engine, [CATALOGUE_DATA])
        part = get_part(engine, "BWD-R71")
        commands: list[tuple[str | Path, ...]] = []
        for who in ("ann", "ben"):
            path = tmp_path / f"{who}.yaml"
            path.write_text(yaml.safe_dump({"parts": [{**part.record, "notes": who}]}), "utf-8")
            commands.append(("--user", who, "edit", "BWD-R71", path, "--expect-version", "1"))
        quill = yaml.safe_load((CATALOGUE_DATA / "quill.yaml").read_text(encoding="utf-8"))
        for k in range(2):
            d = copy.deepcopy(quill)
            for p in d["parts"]:
                p["family"] = f"family from process {k}"
            path = tmp_path / f"load{k}.yaml"
            path.write_text(yaml.safe_dump(d), encoding="utf-8")
            commands.append(("--user", f"proc-{k}", "load", path))
        procs = [_partsel(db_url, *c) for c in commands]
        outs = [p.communicate(timeout=WAIT_S) for p in procs]
        codes = [p.returncode for p in procs]

        assert sorted(codes[:2]) == [0, 2], outs[:2]
        loser = outs[codes.index(2)][1]
        assert "conflict" in loser and "nothing was changed" in loser
        edits = part_history(engine, "BWD-R71")
        assert [e.version for e in edits] == [1, 2]
        assert edits[1].changed_by == ("ann", "ben")[codes.index(0)]

        assert codes[2:] == [0, 0], outs[2:]
        fams = {get_part(engine, pn).record["family"] for pn in ("QFA-2210", "QFA-2214")}
        assert len(fams) == 1 and fams <= {f"family from process {k}" for k in range(2)}
        for pn in ("QFA-2210", "QFA-2214"):
            assert_complete_chain(part_history(engine, pn))
    finally:
        engine.dispose()
