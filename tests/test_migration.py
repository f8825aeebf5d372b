"""Schema migrations: a catalogue made at the first schema revision upgrades in place, on
SQLite and on PostgreSQL (see conftest), with its data intact and its history started.

The old catalogue is written the way partsel stored parts at revision 0001: the part and
maker tables as that revision created them (reflected from the database, so the test does not
depend on today's table classes), rows with the flat columns, packed floats, record, hash,
version and update time.
"""

from __future__ import annotations

import copy
import json
import threading
from datetime import UTC, datetime
from typing import Any

import pandas as pd
import pytest
import sqlalchemy as sa
from alembic import command
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from conftest import CATALOGUE_DATA
from typer.testing import CliRunner

import partsel.catalogue.store as store
from partsel.catalogue import (
    ConflictError,
    ReadOnlyError,
    dump_documents,
    edit_part,
    get_part,
    head_revision,
    load_paths,
    make_engine,
    migrate,
    open_catalogue,
    part_history,
    parts_frame,
    read_and_validate,
    schema_revision,
)
from partsel.catalogue.db import alembic_config
from partsel.catalogue.tables import metadata
from partsel.cli.common import ExitCode
from partsel.cli.main import app

#: When the old catalogue's parts were last changed (any fixed time in the past).
OLD_TIME = datetime(2024, 11, 5, 9, 30, tzinfo=UTC)
#: Versions the old catalogue had reached (QFA-2214 was changed twice before).
OLD_VERSIONS = {"BWD-R71": 1, "QFA-2210": 1, "QFA-2214": 3}


def make_first_revision_catalogue(url: str) -> None:
    """A catalogue at schema revision 0001 holding the fixture parts, as stored back then."""
    engine = make_engine(url)
    try:
        migrate(engine, "0001")
        old = sa.MetaData()
        old.reflect(engine)
        assert set(old.tables) == {"alembic_version", "part", "maker"}
        part_t, maker_t = old.tables["part"], old.tables["maker"]
        docs = read_and_validate([CATALOGUE_DATA])
        makers: dict[str, dict[str, Any]] = {}
        parts = []
        for doc in docs:
            for m in doc.makers:
                makers[m["name"].casefold()] = {
                    "name": m["name"],
                    "suffix_rules": m["suffix_rules"],
                }
            for p, canon in zip(doc.parts, doc.canonical_parts, strict=True):
                row = store._table_row(p, canon)
                row.update(
                    content_hash=store.content_hash(canon),
                    version=OLD_VERSIONS[p["part_number"]],
                    updated_at=OLD_TIME,
                )
                assert set(row) == set(part_t.c.keys()) - {"id"}  # the 0001 columns
                parts.append(row)
        with engine.begin() as conn:
            conn.execute(
                sa.insert(maker_t),
                [{"name_key": k, **m} for k, m in makers.items()],
            )
            conn.execute(sa.insert(part_t), parts)
    finally:
        engine.dispose()


def fresh_catalogue() -> sa.Engine:
    """The same parts loaded into a new in-memory catalogue by today's partsel."""
    engine = make_engine("sqlite://")
    migrate(engine)
    load_paths(engine, [CATALOGUE_DATA])
    return engine


def test_first_revision_catalogue_upgrades_in_place(db_url: str) -> None:
    make_first_revision_catalogue(db_url)
    # Any command upgrades it; here the listing a designer would run first.
    listed = CliRunner().invoke(app, ["--db", db_url, "list", "--json"])
    assert listed.exit_code == ExitCode.OK, listed.output
    assert [r["part_number"] for r in json.loads(listed.stdout)] == sorted(OLD_VERSIONS)

    engine = open_catalogue(db_url)
    reference = fresh_catalogue()
    try:
        assert schema_revision(engine) == head_revision()
        with engine.connect() as conn:  # the schema is the one a new catalogue gets
            assert compare_metadata(MigrationContext.configure(conn), metadata) == []
        pd.testing.assert_frame_equal(parts_frame(engine), parts_frame(reference))
        assert dump_documents(engine) == dump_documents(reference)
        for pn, version in OLD_VERSIONS.items():
            stored = get_part(engine, pn)
            assert (stored.version, stored.updated_at, stored.updated_by) == (
                version,
                OLD_TIME,
                None,
            )
            (baseline,) = part_history(engine, pn)
            assert (baseline.version, baseline.action, baseline.changed_at) == (
                version,
                "baseline",
                OLD_TIME,
            )
            assert baseline.old_record is None and baseline.new_record == stored.record

        # Editing goes on from the old version; the history grows from the baseline.
        part = get_part(engine, "QFA-2214")
        record = {**copy.deepcopy(part.record), "notes": "after the upgrade"}
        assert edit_part(engine, record, 3, user="mo").version == 4
        entries = part_history(engine, "QFA-2214")
        assert [(e.version, e.action) for e in entries] == [(3, "baseline"), (4, "changed")]
        assert entries[1].old_record == entries[0].new_record
        with pytest.raises(ConflictError, match="predates the kept history"):
            edit_part(engine, record, 2)
    finally:
        engine.dispose()
        reference.dispose()


def test_downgrade_and_upgrade_again_keep_the_parts(db_url: str) -> None:
    engine = open_catalogue(db_url)
    try:
        load_paths(engine, [CATALOGUE_DATA], user="ada")
        frame = parts_frame(engine)
        cfg = alembic_config()
        with engine.begin() as conn:
            cfg.attributes["connection"] = conn
            command.downgrade(cfg, "0001")
        assert schema_revision(engine) == "0001"
        assert "part_history" not in sa.inspect(engine).get_table_names()
        migrate(engine)
        assert schema_revision(engine) == head_revision()
        pd.testing.assert_frame_equal(parts_frame(engine), frame)
        assert [e.action for e in part_history(engine, "QFA-2210")] == ["baseline"]
    finally:
        engine.dispose()


def test_read_only_open_neither_creates_nor_upgrades(db_url: str) -> None:
    with pytest.raises(ReadOnlyError, match=r"has no partsel tables|no catalogue file"):
        open_catalogue(db_url, read_only=True)
    make_first_revision_catalogue(db_url)
    with pytest.raises(ReadOnlyError, match="is at revision 0001"):
        open_catalogue(db_url, read_only=True)
    engine = make_engine(db_url)
    assert schema_revision(engine) == "0001"
    engine.dispose()


def test_opened_by_two_at_once_migrates_once(db_url: str) -> None:
    """Two processes' first use of a new database: both open it, the schema is made once."""
    engines: list[sa.Engine] = []
    errors: list[BaseException] = []
    start = threading.Barrier(2, timeout=60)

    def opener() -> None:
        try:
            start.wait()
            engines.append(open_catalogue(db_url))
        except BaseException as exc:  # handed to the main thread
            errors.append(exc)

    threads = [threading.Thread(target=opener) for _ in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(60)
    try:
        assert not errors, errors
        with engines[0].connect() as conn:
            versions = conn.exec_driver_sql("SELECT version_num FROM alembic_version").all()
        assert versions == [(head_revision(),)]
    finally:
        for e in engines:
            e.dispose()


def test_revision_graph_read_from_the_scripts_agrees_with_alembic() -> None:
    """partsel reads the head revision from the migration scripts' own lines (to open an
    up-to-date catalogue without importing Alembic); Alembic's script directory is the
    reference."""
    from alembic.script import ScriptDirectory

    from partsel.catalogue.db import _revision_graph, alembic_config, head_revision

    scripts = ScriptDirectory.from_config(alembic_config())
    assert head_revision() == scripts.get_current_head()
    assert _revision_graph() == {s.revision: s.down_revision for s in scripts.walk_revisions()}
