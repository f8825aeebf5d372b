"""Versions and history of parts: edits against a version, conflicts, restore, the CLI.

Runs on SQLite and on PostgreSQL (see conftest). Changed fields are named by JSON pointers;
the tests resolve them in the records with RFC 6901 section 4 evaluation (``resolve`` below)
and check that the reported old and new values are the values found there.
"""

from __future__ import annotations

import copy
import itertools
import json
from collections.abc import Callable
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
import sqlalchemy as sa
import yaml
from conftest import CATALOGUE_DATA
from typer.testing import Result

from partsel.catalogue import (
    ConflictError,
    edit_part,
    get_part,
    load_documents,
    load_paths,
    part_history,
    parts_frame,
    record_changes,
    restore_part,
    validate_documents,
)
from partsel.cli.common import ExitCode
from partsel.errors import InputError

Cli = Callable[..., Result]
_MISSING = object()


def resolve(doc: Any, pointer: str) -> Any:
    """Evaluate an RFC 6901 JSON pointer (section 4; ``~1`` is ``/``, ``~0`` is ``~``)."""
    if pointer == "":
        return doc
    assert pointer.startswith("/")
    for token in pointer[1:].split("/"):
        token = token.replace("~1", "/").replace("~0", "~")
        if isinstance(doc, list):
            doc = doc[int(token)] if token.isdigit() and int(token) < len(doc) else _MISSING
        elif isinstance(doc, dict):
            doc = doc.get(token, _MISSING)
        else:
            return _MISSING
        if doc is _MISSING:
            return _MISSING
    return doc


def check_changes(changes: list[Any], old: dict[str, Any], new: dict[str, Any]) -> set[str]:
    """Every reported change holds the values found at its pointer in ``old`` and ``new``."""
    for c in changes:
        was, now = resolve(old, c.pointer), resolve(new, c.pointer)
        assert c.old_present == (was is not _MISSING) and c.new_present == (now is not _MISSING)
        assert (c.old if c.old_present else _MISSING) == was
        assert (c.new if c.new_present else _MISSING) == now
        assert was != now
    return {c.pointer for c in changes}


def part_rows(engine: sa.Engine) -> list[tuple[Any, ...]]:
    with engine.connect() as conn:
        return [tuple(r) for r in conn.execute(sa.text("SELECT * FROM part ORDER BY id"))]


# --- record differences ----------------------------------------------------------------------


def test_record_changes_name_each_field_by_pointer() -> None:
    old = {"a": {"b": 1, "c": [1, 2]}, "x/y": "s", "gone": True, "list": [1]}
    new = {"a": {"b": 2, "c": [1, 3]}, "x/y": "t", "list": [1, 2], "new~": None}
    changes = record_changes(old, new)
    # RFC 6901 escaping: "/" in a key is "~1", "~" is "~0".
    assert [c.pointer for c in changes] == ["/a/b", "/a/c/1", "/x~1y", "/gone", "/list", "/new~0"]
    assert check_changes(changes, old, new) == {c.pointer for c in changes}
    assert record_changes(new, copy.deepcopy(new)) == []
    assert record_changes({"v": 1}, {"v": 1.0}) != []  # 1 and 1.0 are spelled differently


# --- history of loads ------------------------------------------------------------------------


def test_every_load_change_is_kept_with_who_and_when(engine: sa.Engine, quill_doc: dict) -> None:
    t0 = datetime.now(UTC)
    load_paths(engine, [CATALOGUE_DATA], user="ada")
    changed = copy.deepcopy(quill_doc)
    changed["parts"][1]["notes"] = "new note"
    changed["parts"][1]["dynamics"]["gbw"] = "1.1 MHz"
    load_documents(engine, validate_documents([("chg.yaml", changed)]), user="grace")
    t1 = datetime.now(UTC)

    (only,) = part_history(engine, "QFA-2210")  # unchanged by the second load
    assert (only.version, only.action, only.changed_by) == (1, "added", "ada")
    assert only.old_record is None and only.new_record == quill_doc["parts"][0]
    assert only.source.endswith("quill.yaml")

    first, second = part_history(engine, "qfa-2214")
    assert (second.version, second.action, second.changed_by) == (2, "changed", "grace")
    assert second.old_record == first.new_record == quill_doc["parts"][1]
    assert second.new_record == changed["parts"][1]
    assert second.source == "load chg.yaml"
    assert t0 <= first.changed_at <= second.changed_at <= t1
    assert first.changed_at.tzinfo is not None
    pointers = check_changes(second.changes(), second.old_record, second.new_record)
    assert pointers == {"/notes", "/dynamics/gbw"}  # a bare value in this record
    stored = get_part(engine, "QFA-2214")
    assert (stored.version, stored.updated_by) == (2, "grace")


def test_default_user_is_the_os_user(engine: sa.Engine) -> None:
    import getpass

    load_paths(engine, [CATALOGUE_DATA])
    assert part_history(engine, "BWD-R71")[0].changed_by == getpass.getuser()


# --- edits against a version -----------------------------------------------------------------


def test_edit_against_the_stored_version(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    part = get_part(engine, "QFA-2210")
    record = copy.deepcopy(part.record)
    record["dynamics"]["gbw"]["typ"] = "1.2 MHz"
    result = edit_part(engine, record, part.version, user="lin")
    assert (result.version, result.action) == (2, "changed")
    assert check_changes(result.changes, part.record, record) == {"/dynamics/gbw/typ"}
    after = get_part(engine, "QFA-2210")
    assert after.version == 2 and after.updated_by == "lin"
    assert after.flat["gbw_typ"] == pytest.approx(1.2e6)
    assert parts_frame(engine).set_index("part_number").loc["QFA-2210", "gbw_typ"] == (
        pytest.approx(1.2e6)
    )
    entry = part_history(engine, "QFA-2210")[-1]
    assert (entry.version, entry.action, entry.changed_by) == (2, "changed", "lin")
    assert entry.old_record == part.record and entry.new_record == record


def test_stale_edit_is_refused_showing_what_changed(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    seen_by_alice = get_part(engine, "QFA-2210")
    seen_by_bob = get_part(engine, "QFA-2210")
    alice = copy.deepcopy(seen_by_alice.record)
    alice["notes"] = "checked on the bench"
    alice["dynamics"]["gbw"]["typ"] = "1.1 MHz"
    edit_part(engine, alice, seen_by_alice.version, user="alice")
    before = part_rows(engine)

    bob = copy.deepcopy(seen_by_bob.record)
    bob["dynamics"]["slew_rise"]["typ"] = "0.6 V/us"
    with pytest.raises(ConflictError) as info:
        edit_part(engine, bob, seen_by_bob.version, user="bob")
    err = info.value
    assert (err.expected_version, err.current_version) == (1, 2)
    assert [(e.version, e.changed_by) for e in err.since] == [(2, "alice")]
    assert check_changes(err.changes, seen_by_bob.record, alice) == {
        "/notes",
        "/dynamics/gbw/typ",
    }
    text = str(err)
    assert "version 1" in text and "version 2" in text and "alice" in text
    assert '"1 MHz" → "1.1 MHz"' in text
    assert isinstance(err, InputError)  # the CLI exits 2 for it
    assert part_rows(engine) == before  # nothing stored
    assert [e.version for e in part_history(engine, "QFA-2210")] == [1, 2]


def test_edit_meaning_the_same_stores_nothing(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    part = get_part(engine, "QFA-2210")
    record = copy.deepcopy(part.record)
    record["output"]["stage_current"] = {"min": 3e-5, "typ": "0.05 mA", "max": 8e-5}
    result = edit_part(engine, record, 1)
    assert (result.version, result.action, result.changed) == (1, None, False)
    assert len(part_history(engine, "QFA-2210")) == 1


def test_version_zero_adds_and_conflicts_with_an_existing_part(
    engine: sa.Engine, quill_doc: dict
) -> None:
    load_paths(engine, [CATALOGUE_DATA / "brightwater.json"])
    new = copy.deepcopy(quill_doc["parts"][0])
    result = edit_part(engine, new, 0, user="kim")
    assert (result.version, result.action) == (1, "added")
    assert get_part(engine, "QFA-2210").record == new
    with pytest.raises(ConflictError) as info:
        edit_part(engine, new, 0)
    assert info.value.current_version == 1 and "already holds version 1" in str(info.value)
    with pytest.raises(ConflictError, match="no such part"):
        edit_part(engine, {**new, "part_number": "QFA-9999"}, 3)


def test_bad_record_names_the_field_and_stores_nothing(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    before = part_rows(engine)
    record = copy.deepcopy(get_part(engine, "QFA-2210").record)
    record["dynamics"]["gbw"]["typ"] = "1 Mhzz"
    with pytest.raises(InputError) as info:
        edit_part(engine, record, 1)
    (problem,) = info.value.problems
    assert problem.pointer == "/dynamics/gbw/typ" and "unknown unit" in problem.message
    assert part_rows(engine) == before


# --- restore ---------------------------------------------------------------------------------


def test_restore_stores_an_old_record_as_the_newest_version(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    v1 = get_part(engine, "QFA-2210")
    frame_v1 = parts_frame(engine)
    record = copy.deepcopy(v1.record)
    record["lifecycle"] = "obsolete"
    edit_part(engine, record, 1, user="ines")

    result = restore_part(engine, "qfa-2210", 1, user="otto")
    assert (result.version, result.action) == (3, "restored")
    assert check_changes(result.changes, record, v1.record) == {"/lifecycle"}
    v3 = get_part(engine, "QFA-2210")
    assert v3.record == v1.record and v3.version == 3
    pd.testing.assert_frame_equal(parts_frame(engine), frame_v1)
    entries = part_history(engine, "QFA-2210")
    assert [(e.version, e.action, e.changed_by) for e in entries] == [
        (1, "added", v1.updated_by),
        (2, "changed", "ines"),
        (3, "restored", "otto"),
    ]
    assert entries[2].old_record == record and entries[2].source == "restore of version 1"
    assert entries[1].old_record == entries[0].new_record  # the chain is complete

    again = restore_part(engine, "QFA-2210", 1)  # already that record: nothing stored
    assert (again.version, again.action) == (3, None)
    with pytest.raises(ConflictError):
        restore_part(engine, "QFA-2210", 2, expected_version=2)
    with pytest.raises(InputError, match="kept versions: 1, 2, 3"):
        restore_part(engine, "QFA-2210", 7)
    with pytest.raises(InputError, match="no part"):
        restore_part(engine, "QFA-0000", 1)


# --- command line ----------------------------------------------------------------------------


@pytest.fixture
def loaded(cli: Cli) -> Cli:
    assert cli("--user", "ada", "load", CATALOGUE_DATA).exit_code == ExitCode.OK
    return cli


def _record_file(cli: Cli, tmp_path: Path, name: str, change: Callable[[dict], None]) -> Path:
    shown = cli("show", "QFA-2210", "--record")
    assert shown.exit_code == ExitCode.OK
    doc = yaml.safe_load(shown.stdout)
    change(doc["parts"][0])
    path = tmp_path / name
    path.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return path


def test_cli_edit_conflict_history_restore(loaded: Cli, tmp_path: Path) -> None:
    shown = loaded("show", "QFA-2210", "--record")
    assert "--expect-version 1" in shown.stdout.splitlines()[1]
    alice = _record_file(loaded, tmp_path, "alice.yaml", lambda r: r.update(notes="bench ok"))
    bob = _record_file(loaded, tmp_path, "bob.yaml", lambda r: r.update(channels=4))

    ok = loaded("--user", "alice", "edit", "QFA-2210", alice, "--expect-version", "1")
    assert ok.exit_code == ExitCode.OK, ok.stderr
    assert "version 2 stored" in ok.stdout and "/notes" in ok.stdout

    refused = loaded("--user", "bob", "edit", "QFA-2210", bob, "--expect-version", "1")
    assert refused.exit_code == ExitCode.BAD_INPUT
    assert refused.stdout == ""
    for text in ("conflict", "version 2", "alice", '/notes: changed since version 1: "Invented',
                 "--expect-version 2", "nothing was changed"):  # fmt: skip
        assert text in refused.stderr
    data = json.loads(loaded("show", "--json", "QFA-2210").stdout)
    assert (data["version"], data["record"]["channels"], data["updated_by"]) == (2, 2, "alice")

    as_json = loaded("edit", "QFA-2210", bob, "--expect-version", "1", "--json")
    problems = json.loads(as_json.stdout)
    assert as_json.exit_code == ExitCode.BAD_INPUT
    assert {"pointer": "/notes", "record": "QFA-2210"}.items() <= problems[-1].items()

    rerun = loaded("--user", "bob", "edit", "QFA-2210", bob, "--expect-version", "2", "--json")
    assert rerun.exit_code == ExitCode.OK, rerun.stderr
    out = json.loads(rerun.stdout)
    assert (out["version"], out["action"]) == (3, "changed")
    # bob's file still holds the old note: re-applied against version 2 it also undoes alice's
    assert {c["pointer"] for c in out["changes"]} == {"/channels", "/notes"}

    restored = loaded("--user", "carol", "restore", "QFA-2210", "2")
    assert restored.exit_code == ExitCode.OK and "version 4 stored (restored)" in restored.stdout

    hist = json.loads(loaded("history", "qfa-2210", "--json").stdout)
    assert [(h["version"], h["action"], h["changed_by"]) for h in hist] == [
        (1, "added", "ada"),
        (2, "changed", "alice"),
        (3, "changed", "bob"),
        (4, "restored", "carol"),
    ]
    assert hist[3]["new_record"] == hist[1]["new_record"]
    for earlier, later in itertools.pairwise(hist):
        assert later["old_record"] == earlier["new_record"]
    text = loaded("history", "QFA-2210")
    assert text.exit_code == ExitCode.OK
    lines = text.stdout.splitlines()
    assert lines[0] == "QFA-2210: 4 versions, newest first"
    assert lines[1].startswith("version 4  restored") and "by carol" in lines[1]
    assert lines[-1].startswith("version 1  added") and "by ada" in lines[-1]


def test_cli_edit_refuses_another_part_and_unknown_parts(loaded: Cli, tmp_path: Path) -> None:
    path = _record_file(loaded, tmp_path, "q.yaml", lambda r: r.update(notes="x"))
    other = loaded("edit", "QFA-2214", path, "--expect-version", "1")
    assert other.exit_code == ExitCode.BAD_INPUT
    assert "field /parts/0/part_number" in other.stderr and "cannot rename" in other.stderr
    missing = loaded("history", "QFA-221")
    assert missing.exit_code == ExitCode.BAD_INPUT and "QFA-2210" in missing.stderr
    no_version = loaded("restore", "QFA-2210", "5")
    assert no_version.exit_code == ExitCode.BAD_INPUT and "kept versions: 1" in no_version.stderr
    required = loaded("edit", "QFA-2210", path)
    assert required.exit_code == ExitCode.BAD_INPUT  # --expect-version is required
