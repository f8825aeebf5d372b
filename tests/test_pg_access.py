"""Read access without write access, database URLs, and the same answers from both backends.

``--read-only`` runs on SQLite and PostgreSQL (see conftest); the SELECT-only role and the
cross-backend comparison need the PostgreSQL test server (``PARTSEL_TEST_PG_URL``).
"""

from __future__ import annotations

import copy
import json
from collections.abc import Iterator
from pathlib import Path

import pandas as pd
import pytest
import sqlalchemy as sa
from conftest import CATALOGUE_DATA, PROJECT, SAMPLE_PARTS, PgServer
from typer.testing import CliRunner, Result

from partsel.catalogue import (
    ReadOnlyError,
    backend,
    dump_documents,
    edit_part,
    get_part,
    load_documents,
    load_paths,
    open_catalogue,
    part_history,
    parts_frame,
    read_and_validate,
    restore_part,
    validate_documents,
)
from partsel.cli.common import ExitCode
from partsel.cli.main import app
from partsel.errors import InputError

DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"
SHEET = Path(__file__).parent / "data" / "sheet"


def run(url: str, *args: str | Path) -> Result:
    return CliRunner().invoke(app, ["--db", url, *map(str, args)])


def snapshot(url: str) -> tuple[pd.DataFrame, dict]:
    engine = open_catalogue(url)
    try:
        return parts_frame(engine), dump_documents(engine)
    finally:
        engine.dispose()


def same_snapshot(a: tuple[pd.DataFrame, dict], b: tuple[pd.DataFrame, dict]) -> None:
    pd.testing.assert_frame_equal(a[0], b[0])
    assert a[1] == b[1]


@pytest.fixture
def record_file(db_url: str, tmp_path: Path) -> Path:
    """A loaded catalogue, and an edit file for QFA-2210 made from its stored record."""
    assert run(db_url, "load", CATALOGUE_DATA).exit_code == ExitCode.OK
    shown = run(db_url, "show", "QFA-2210", "--record").stdout
    path = tmp_path / "edit.yaml"
    path.write_text(shown.replace("Invented part for tests.", "edited"), encoding="utf-8")
    return path


# --- --read-only ----------------------------------------------------------------------------

WRITES = [
    ("load", CATALOGUE_DATA),
    ("import-sheet", SHEET / "parts.csv", "--map", SHEET / "map.yaml"),
    ("edit", "QFA-2210", "{file}", "--expect-version", "1"),
    ("restore", "QFA-2210", "1"),
]


@pytest.mark.parametrize("args", WRITES, ids=[w[0] for w in WRITES])
def test_read_only_refuses_every_write(
    db_url: str, record_file: Path, args: tuple[str | Path, ...]
) -> None:
    before = snapshot(db_url)
    argv = [str(record_file) if a == "{file}" else a for a in args]
    result = run(db_url, "--read-only", *argv)
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "--read-only" in result.stderr and "nothing was changed" in result.stderr
    assert result.stdout == ""
    same_snapshot(snapshot(db_url), before)


def test_read_only_reads_and_dry_runs(db_url: str, record_file: Path) -> None:
    for args in (("list", "--json"), ("show", "QFA-2210"), ("history", "QFA-2210"),
                 ("export-csv", "-"), ("load", "--dry-run", CATALOGUE_DATA)):  # fmt: skip
        writable = run(db_url, *args)
        read_only = run(db_url, "--read-only", *args)
        assert read_only.exit_code == writable.exit_code == ExitCode.OK, read_only.output
        assert read_only.stdout == writable.stdout
    predicted = run(db_url, "--read-only", "predict", DESIGN, "QFA-2210", "--no-sim", "--json")
    assert predicted.exit_code == ExitCode.OK, predicted.output
    assert json.loads(predicted.stdout)[0]["part_number"] == "QFA-2210"


def test_read_only_from_the_environment(
    db_url: str, record_file: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("PARTSEL_READ_ONLY", "1")
    assert run(db_url, "load", CATALOGUE_DATA).exit_code == ExitCode.BAD_INPUT
    assert run(db_url, "list").exit_code == ExitCode.OK


def test_read_only_engine_refuses_in_the_store(db_url: str, record_file: Path) -> None:
    """Scripts and the UI that call the store directly get the same refusal."""
    engine = open_catalogue(db_url, read_only=True)
    try:
        part = get_part(engine, "QFA-2210")
        before = snapshot(db_url)
        with pytest.raises(ReadOnlyError, match="read-only"):
            load_paths(engine, [CATALOGUE_DATA])
        with pytest.raises(ReadOnlyError):
            edit_part(engine, {**part.record, "notes": "x"}, part.version)
        with pytest.raises(ReadOnlyError):
            restore_part(engine, "QFA-2210", 1)
        assert isinstance(ReadOnlyError("x"), InputError)  # exit code 2 in the CLI
        report = load_paths(engine, [CATALOGUE_DATA], dry_run=True)
        assert report.counts()["unchanged"] == 3
        same_snapshot(snapshot(db_url), before)
        assert len(parts_frame(engine)) == 3
    finally:
        engine.dispose()


def test_read_only_sqlite_file_is_not_written(tmp_path: Path) -> None:
    url = f"sqlite:///{tmp_path / 'c.sqlite'}"
    engine = open_catalogue(url)
    load_paths(engine, [CATALOGUE_DATA])
    engine.dispose()  # checkpoints the WAL into the file
    files = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    for args in (("list",), ("show", "BWD-R71"), ("load", CATALOGUE_DATA)):
        run(url, "--read-only", *args)
    after = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.name in files}
    assert after == files


# --- PostgreSQL: a role that may only read ----------------------------------------------------


@pytest.fixture
def pg(pg_server: PgServer | None) -> PgServer:
    if pg_server is None:
        pytest.skip("needs the PostgreSQL test server (PARTSEL_TEST_PG_URL)")
    return pg_server


@pytest.fixture
def pg_url(pg: PgServer) -> Iterator[str]:
    url = pg.new_database()
    yield url
    pg.drop_database(url)


def test_select_only_role_ranks_predicts_checks_boms_and_cannot_write(
    pg: PgServer, pg_url: str, tmp_path: Path
) -> None:
    owner = open_catalogue(pg_url)
    load_paths(owner, [SAMPLE_PARTS], user="librarian")
    owner.dispose()
    reader = pg.select_only_role(pg_url)
    assert sa.make_url(reader).username != sa.make_url(pg_url).username

    reads = [
        ("list", "--json"),
        ("show", "BRQ-622", "--json"),
        ("history", "BRQ-622", "--json"),
        ("predict", DESIGN, "BRQ-622", "BRQ-722", "--no-sim", "--json"),
        ("rank", DESIGN, "--json"),
        ("vet", "BRQ-622", "--design", DESIGN, "--json"),
        ("bom-check", PROJECT / "sample-catalog" / "bom" / "mixed-board.csv", "--json"),
        ("export-csv", "-"),
    ]
    for args in reads:
        mine, theirs = run(pg_url, *args), run(reader, *args)
        assert theirs.exit_code == mine.exit_code, theirs.output
        assert theirs.exit_code in (ExitCode.OK, ExitCode.FINDINGS), theirs.output
        assert theirs.stdout == mine.stdout
        assert run(reader, "--read-only", *args).stdout == mine.stdout

    before = snapshot(pg_url)
    shown = run(reader, "show", "BRQ-622", "--record").stdout
    edit_file = tmp_path / "e.yaml"
    edit_file.write_text(shown.replace("channels: 2", "channels: 4"), encoding="utf-8")
    for args in (("load", SAMPLE_PARTS),
                 ("edit", "BRQ-622", edit_file, "--expect-version", "1"),
                 ("restore", "BRQ-622", "1")):  # fmt: skip
        refused = run(reader, *args)
        assert refused.exit_code == ExitCode.BAD_INPUT, refused.output
        assert "may only read" in refused.stderr and "nothing was changed" in refused.stderr
    same_snapshot(snapshot(pg_url), before)


def test_select_only_role_on_a_new_database_says_why(pg: PgServer, pg_url: str) -> None:
    reader = pg.select_only_role(pg_url)  # the database has no tables yet
    result = run(reader, "list")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "refused the schema upgrade" in result.stderr and "may only read" in result.stderr


# --- URLs ------------------------------------------------------------------------------------


def test_postgresql_url_without_driver_means_psycopg(pg: PgServer, pg_url: str) -> None:
    plain = pg_url.replace("postgresql+psycopg://", "postgresql://", 1)
    engine = open_catalogue(plain)
    try:
        assert engine.dialect.driver == "psycopg" and backend(engine) == "postgresql"
    finally:
        engine.dispose()


def test_unreachable_database_is_a_clear_error(pg: PgServer) -> None:
    url = sa.make_url(pg.url).set(database="partsel_no_such_db", password="s3cret-word")
    result = run(url.render_as_string(hide_password=False), "list")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "cannot open the catalogue database" in result.stderr
    assert "partsel_no_such_db" in result.stderr and "s3cret-word" not in result.stderr


@pytest.mark.parametrize(
    ("url", "fragment"),
    [("mysql://u@h/db", "unsupported database"), ("not a url", "not a database URL")],
)
def test_unsupported_urls_exit_2(url: str, fragment: str) -> None:
    result = run(url, "list")
    assert result.exit_code == ExitCode.BAD_INPUT and fragment in result.stderr


# --- both backends give the same answers --------------------------------------------------------


def test_sqlite_and_postgresql_store_and_sort_the_same(pg_url: str, tmp_path: Path) -> None:
    """Frames, dumps and listings agree, including the order of part numbers that a language
    collation (the test server's default is ICU en-US) would sort otherwise than code points."""
    docs = read_and_validate([SAMPLE_PARTS])
    extra = copy.deepcopy(docs[0].parts[0])
    odd = [
        {**copy.deepcopy(extra), "part_number": pn}
        for pn in ("ZZ_10", "ZZ-10", "zz10", "ZZ.10", "Zz 9")
    ]
    docs += validate_documents([("odd.json", {"parts": odd})])
    engines = [open_catalogue(f"sqlite:///{tmp_path / 'c.sqlite'}"), open_catalogue(pg_url)]
    try:
        for e in engines:
            load_documents(e, docs, user="same")
        lite, pg_frame = (parts_frame(e) for e in engines)
        pd.testing.assert_frame_equal(lite, pg_frame)
        keys = list(lite["part_number"].str.casefold())
        assert keys == sorted(keys)  # code-point order (Python's str ordering)
        assert dump_documents(engines[0]) == dump_documents(engines[1])
        assert [e.new_record for e in part_history(engines[0], "ZZ_10")] == [
            e.new_record for e in part_history(engines[1], "ZZ_10")
        ]
    finally:
        for e in engines:
            e.dispose()


def test_a_role_missing_a_grant_gets_a_message_not_a_traceback(pg: PgServer, pg_url: str) -> None:
    owner = open_catalogue(pg_url)
    load_paths(owner, [CATALOGUE_DATA])
    reader = pg.select_only_role(pg_url)
    role = sa.make_url(reader).username
    with owner.begin() as conn:  # e.g. a table added by an upgrade after the grant was given
        conn.exec_driver_sql(f'REVOKE SELECT ON part_history FROM "{role}"')
    owner.dispose()
    assert run(reader, "show", "QFA-2210").exit_code == ExitCode.OK
    result = run(reader, "history", "QFA-2210")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "permission denied for table part_history" in result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)


def test_read_only_postgresql_sessions_are_read_only_in_the_server(pg_url: str) -> None:
    """Besides partsel's own refusal, the server itself refuses writes of a read-only engine;
    connection options given in the URL are kept."""
    open_catalogue(pg_url).dispose()
    url = sa.make_url(pg_url).update_query_dict({"options": "-c statement_timeout=4321"})
    engine = open_catalogue(url.render_as_string(hide_password=False), read_only=True)
    try:
        with engine.connect() as conn:
            assert conn.exec_driver_sql("SHOW default_transaction_read_only").scalar() == "on"
            assert conn.exec_driver_sql("SHOW statement_timeout").scalar() == "4321ms"
            with pytest.raises(sa.exc.DBAPIError, match="read-only transaction"):
                conn.exec_driver_sql("DELETE FROM part")
    finally:
        engine.dispose()
