"""Catalogue database: engine from a URL, Alembic migrations, write transactions, access errors.

Nothing here runs at import time. :func:`open_catalogue` is the one entry point for callers:
it picks the URL (argument, else ``PARTSEL_DB``, else the default file), makes the engine,
brings the schema up to date and, on first use of the default file, fills it from the bundled
sample catalogue.

The first fill is atomic: the catalogue is built in a temporary file next to the default one
and published with a hard link (create-if-absent), so a first run killed or interrupted at any
moment leaves either no catalogue (the next run fills it again) or the full one, and two first
runs at once both succeed with the one catalogue published first. A default file that holds no
part, maker or history row at all (left by an interrupted fill of an older partsel) is filled
again in place, in one transaction. ``PARTSEL_TEST_FILL_PAUSE`` (tests only) names a stage of
the fill at which it stops until a line arrives on standard input (:data:`FILL_STAGES`).

Two backends take the same code paths: SQLite (the default file, WAL journal) and PostgreSQL
through psycopg 3 (``postgresql+psycopg://user@host/db``; install ``partsel[postgres]``).
Every change goes through :func:`write_transaction`, which serialises writers: SQLite takes its
write lock at ``BEGIN IMMEDIATE``, PostgreSQL takes a table lock on ``part`` that conflicts with
other writers but not with readers. Readers are never blocked and see committed states only.
"""

from __future__ import annotations

import logging
import os
import re
import secrets
import sqlite3
import sys
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Literal

import platformdirs
import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine
from sqlalchemy.pool import StaticPool

from partsel.catalogue.files import CATALOGUE_SUFFIXES
from partsel.catalogue.tables import history_table, maker_table, part_table
from partsel.errors import InputError

#: Environment variable naming the database URL.
DB_ENV = "PARTSEL_DB"
#: Environment variable naming the sample catalogue folder used to fill a new default database.
SAMPLE_ENV = "PARTSEL_SAMPLE_CATALOG"
#: Environment variable (tests only): the stage of the first fill at which to pause.
FILL_PAUSE_ENV = "PARTSEL_TEST_FILL_PAUSE"
#: Stages of the first fill, in order: temporary file created; schema migrated; inside the load
#: transaction after the first part was written; sample loaded and committed; published.
FILL_STAGES = ("created", "migrated", "loading", "loaded", "published")
#: Age after which a temporary fill file left by a killed first run is removed, seconds.
STALE_FILL_SECONDS = 3600
#: SQLite busy timeout, ms: how long a writer waits for another writer's lock.
SQLITE_BUSY_TIMEOUT_MS = 5000
#: PostgreSQL lock timeout, ms: how long a writer waits for another writer before giving up.
PG_LOCK_TIMEOUT_MS = 60_000
#: Key of the PostgreSQL advisory lock that serialises schema migrations.
_PG_MIGRATION_LOCK = 0x7061_7274  # "part"
#: Execution option marking an engine opened read-only.
_READ_ONLY_OPTION = "partsel_read_only"
#: Execution option holding the URL shown in messages (password hidden).
_LABEL_OPTION = "partsel_label"
#: Execution option choosing the SQLite ``BEGIN`` mode of a connection.
_BEGIN_OPTION = "partsel_sqlite_begin"

MIGRATIONS_DIR = Path(__file__).resolve().parent / "migrations"

Backend = Literal["sqlite", "postgresql"]

log = logging.getLogger(__name__)


class ReadOnlyError(InputError):
    """A change was asked of a catalogue that may only be read (``--read-only`` or the role)."""


class BusyError(InputError):
    """Another writer held the catalogue longer than the lock timeout; nothing was changed."""


def default_db_path() -> Path:
    """The default catalogue file: ``<user data dir>/partsel/catalogue.sqlite``."""
    return Path(platformdirs.user_data_dir("partsel")) / "catalogue.sqlite"


def sqlite_url(path: Path) -> str:
    """SQLAlchemy URL of an SQLite file."""
    return f"sqlite:///{path}"


def resolve_db_url(url: str | None = None) -> str:
    """The URL to use: ``url`` if given, else ``$PARTSEL_DB``, else the default SQLite file."""
    return url or os.environ.get(DB_ENV) or sqlite_url(default_db_path())


def describe_url(url: str | sa.URL) -> str:
    """The URL for messages, with any password hidden."""
    try:
        return sa.make_url(url).render_as_string(hide_password=True)
    except sa.exc.ArgumentError:
        return str(url)


def _parse_url(url: str) -> sa.URL:
    """Parse ``url``; ``postgres://`` and ``postgresql://`` mean psycopg 3."""
    try:
        u = sa.make_url(url)
    except sa.exc.ArgumentError as exc:
        raise InputError(f"not a database URL: {url!r} ({exc})", pointer="/db") from exc
    if u.drivername in ("postgres", "postgresql"):
        u = u.set(drivername="postgresql+psycopg")
    return u


def backend(engine: Engine | Connection) -> Backend:
    """Which backend ``engine`` talks to: ``"sqlite"`` or ``"postgresql"``."""
    name = engine.dialect.name
    if name not in ("sqlite", "postgresql"):
        raise InputError(f"unsupported database backend {name!r}: use SQLite or PostgreSQL")
    return name  # type: ignore[return-value]


def engine_label(engine: Engine | Connection) -> str:
    """The catalogue's URL for messages (as given, password hidden)."""
    label = engine.get_execution_options().get(_LABEL_OPTION)
    return label if isinstance(label, str) else describe_url(engine.url)


def is_read_only(engine: Engine | Connection) -> bool:
    """True when ``engine`` was opened read-only (see :func:`make_engine`)."""
    return bool(engine.get_execution_options().get(_READ_ONLY_OPTION, False))


def _sqlite_on_connect(dbapi_conn: Any, _record: object, *, read_only: bool) -> None:
    # Transactions are begun by _sqlite_on_begin (pysqlite's own implicit BEGIN is off), so
    # that writers can take the write lock up front with BEGIN IMMEDIATE.
    dbapi_conn.isolation_level = None
    cur = dbapi_conn.cursor()
    try:
        cur.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
        if not read_only:
            _switch_to_wal(cur)
    finally:
        cur.close()


def _switch_to_wal(cur: sqlite3.Cursor) -> None:
    """Put the database file in WAL mode (a no-op when it already is).

    Switching the journal mode needs an exclusive lock, and SQLite reports ``database is
    locked`` at once, without waiting for the busy timeout, when another connection opened
    the same new file at the same moment; so the switch is retried until the busy timeout.
    """
    if str(cur.execute("PRAGMA journal_mode").fetchone()[0]).casefold() == "wal":
        return
    deadline = time.monotonic() + SQLITE_BUSY_TIMEOUT_MS / 1000
    pause = 0.005
    while True:
        try:
            cur.execute("PRAGMA journal_mode=WAL")
            return
        except sqlite3.OperationalError as exc:
            if "locked" not in str(exc) or time.monotonic() > deadline:
                raise
        time.sleep(pause)
        pause = min(2 * pause, 0.1)


def _sqlite_on_begin(conn: Connection) -> None:
    mode = conn.get_execution_options().get(_BEGIN_OPTION, "DEFERRED")
    # Straight to the driver: a BEGIN is no query, and statement hooks should not see one.
    conn.connection.driver_connection.execute(f"BEGIN {mode}")  # type: ignore[union-attr]


def make_engine(url: str, *, read_only: bool = False) -> Engine:
    """Create an engine for ``url`` (SQLite or PostgreSQL); nothing is connected yet.

    SQLite gets WAL journal mode and a busy timeout; an in-memory URL (``sqlite://``) keeps one
    shared connection (``StaticPool``), so that every session sees the same database.
    ``read_only`` opens an SQLite file with ``mode=ro`` and PostgreSQL sessions with
    ``default_transaction_read_only``, and marks the engine so that every write is refused
    with a :class:`ReadOnlyError` before it reaches the database.
    """
    u = _parse_url(url)
    options = {_READ_ONLY_OPTION: read_only, _LABEL_OPTION: describe_url(u)}
    name = u.get_backend_name()
    if name == "postgresql":
        try:
            import psycopg  # noqa: F401
        except ImportError as exc:
            raise InputError(
                "PostgreSQL catalogues need psycopg 3: pip install 'partsel[postgres]'",
                pointer="/db",
            ) from exc
        connect_args: dict[str, Any] = {}
        if read_only:
            extra = u.query.get("options", "")
            extra = extra if isinstance(extra, str) else " ".join(extra)
            connect_args["options"] = f"{extra} -c default_transaction_read_only=on".strip()
            u = u.difference_update_query(["options"])
        return sa.create_engine(
            u, connect_args=connect_args, execution_options=options, pool_pre_ping=True
        )
    if name != "sqlite":
        raise InputError(
            f"unsupported database {describe_url(u)}: use sqlite:///FILE or "
            "postgresql+psycopg://USER@HOST/DATABASE",
            pointer="/db",
        )
    if u.database in (None, "", ":memory:"):
        engine = sa.create_engine(
            u,
            poolclass=StaticPool,
            connect_args={"check_same_thread": False},
            execution_options=options,
        )
    elif read_only:
        path = Path(u.database)
        if not path.is_file():
            raise ReadOnlyError(
                f"there is no catalogue file {path}: run partsel once without --read-only to "
                "create it",
                pointer="/db",
            )
        engine = sa.create_engine(
            "sqlite://",
            creator=lambda: sqlite3.connect(
                f"{path.resolve().as_uri()}?mode=ro", uri=True, check_same_thread=False
            ),
            execution_options=options,
        )
    else:
        Path(u.database).parent.mkdir(parents=True, exist_ok=True)
        engine = sa.create_engine(u, execution_options=options)
    sa.event.listen(
        engine,
        "connect",
        lambda c, r: _sqlite_on_connect(c, r, read_only=read_only),
    )
    sa.event.listen(engine, "begin", _sqlite_on_begin)
    return engine


def alembic_config() -> Any:
    """Alembic configuration built in code; migrations live inside the package."""
    from alembic.config import Config

    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    return cfg


_REVISION = re.compile(r"^(down_revision|revision)\s*=\s*(None|\"([^\"]+)\")\s*$", re.MULTILINE)


def _revision_graph() -> dict[str, str | None]:
    """revision -> down_revision of every migration script, read from the files themselves
    (Alembic's own parser takes a third of a second to import; opening a catalogue that is
    up to date needs only these two lines of each script). A test checks it against Alembic."""
    graph: dict[str, str | None] = {}
    for path in sorted((MIGRATIONS_DIR / "versions").glob("*.py")):
        found = {m.group(1): m.group(3) for m in _REVISION.finditer(path.read_text("utf-8"))}
        if found.get("revision"):
            graph[found["revision"]] = found.get("down_revision")  # type: ignore[index]
    return graph


def head_revision() -> str:
    """The newest schema revision this version of partsel knows."""
    graph = _revision_graph()
    downs = set(graph.values())
    heads = [r for r in graph if r not in downs]
    assert len(heads) == 1, heads
    return heads[0]


def _known_revisions() -> set[str]:
    return set(_revision_graph())


def schema_revision(engine: Engine) -> str | None:
    """The schema revision the database is at (None: no partsel tables yet), read from
    Alembic's version table with one query."""
    with engine.connect() as conn:
        if not sa.inspect(conn).has_table("alembic_version"):
            return None
        row = conn.execute(sa.text("SELECT version_num FROM alembic_version")).first()
    return None if row is None else str(row[0])


def _begin_serialised(conn: Connection) -> None:
    """Begin a transaction on ``conn`` that excludes other writers (see module docstring)."""
    if backend(conn) == "sqlite":
        conn.execution_options(**{_BEGIN_OPTION: "IMMEDIATE"})
        conn.begin()
    else:
        conn.begin()
        conn.exec_driver_sql(f"SET LOCAL lock_timeout = {int(PG_LOCK_TIMEOUT_MS)}")


def migrate(engine: Engine, revision: str = "head") -> None:
    """Upgrade the database schema to ``revision`` (Alembic), one migrating process at a time."""
    if is_read_only(engine):
        raise ReadOnlyError(
            f"the catalogue {engine_label(engine)} is open read-only: its schema cannot be upgraded"
        )
    cfg = alembic_config()
    with engine.connect() as conn:
        _begin_serialised(conn)
        try:
            if backend(conn) == "postgresql":
                conn.execute(sa.select(sa.func.pg_advisory_xact_lock(_PG_MIGRATION_LOCK)))
            cfg.attributes["connection"] = conn
            from alembic import command

            command.upgrade(cfg, revision)
        except BaseException:
            conn.rollback()
            raise
        conn.commit()


def _first_line(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None) or exc
    text = str(orig).strip()
    return text.splitlines()[0] if text else type(orig).__name__


#: Errors that :func:`access_error` looks at: SQLAlchemy's wrapped driver errors, and SQLite's
#: own (the ``BEGIN`` of a transaction goes to the driver directly, unwrapped).
DatabaseErrors = (sa.exc.DBAPIError, sqlite3.Error)


def access_error(
    engine: Engine | Connection, exc: sa.exc.DBAPIError | sqlite3.Error, what: str
) -> InputError | None:
    """A clear error for a database refusal of a change (no write access, busy), else None."""
    where = engine_label(engine)
    orig = getattr(exc, "orig", None) or exc
    state = getattr(orig, "sqlstate", None)
    text = str(orig).casefold()
    if state in ("42501", "25006") or "readonly database" in text:
        return ReadOnlyError(
            f"the catalogue {where} refused {what}: {_first_line(exc)} "
            "(this connection may only read)"
        )
    if state in ("55P03", "40001", "40P01") or "database is locked" in text:
        return BusyError(
            f"the catalogue {where} is busy: another writer held it for longer than the lock "
            f"timeout, so {what} was not done; try again ({_first_line(exc)})"
        )
    return None


@contextmanager
def write_transaction(engine: Engine, what: str) -> Iterator[Connection]:
    """One transaction that may change the catalogue, with the writer lock held.

    ``what`` names the change for messages ("load", "edit QFA-2210"). Commits when the block
    ends, rolls back on any exception. Raises :class:`ReadOnlyError` at once for a read-only
    engine (and when the database refuses the change for lack of rights), :class:`BusyError`
    when another writer holds the lock longer than the timeout.
    """
    if is_read_only(engine):
        raise ReadOnlyError(
            f"the catalogue {engine_label(engine)} is open read-only (--read-only): "
            f"{what} would change it"
        )
    try:
        with engine.connect() as conn:
            _begin_serialised(conn)
            try:
                if backend(conn) == "postgresql":
                    name = conn.dialect.identifier_preparer.quote(part_table.name)
                    conn.exec_driver_sql(f"LOCK TABLE {name} IN SHARE ROW EXCLUSIVE MODE")
                yield conn
            except BaseException:
                conn.rollback()
                raise
            conn.commit()
    except DatabaseErrors as exc:
        err = access_error(engine, exc, what)
        if err is None:
            raise
        raise err from exc


def find_sample_catalogue() -> Path | None:
    """The bundled sample catalogue's parts folder, or None when there is none (or it is empty).

    ``$PARTSEL_SAMPLE_CATALOG`` wins; else the sample shipped in the package
    (:mod:`partsel.sample`, package data: the same for a checkout and an installed wheel).
    """
    env = os.environ.get(SAMPLE_ENV)
    if env:
        base = Path(env)
    else:
        from partsel.sample import sample_folder

        base = sample_folder()
    parts = base / "parts"
    folder = parts if parts.is_dir() else base
    if not any(f.suffix.lower() in CATALOGUE_SUFFIXES for f in folder.rglob("*")):
        return None
    return folder


def _remove_sqlite_file(path: Path) -> None:
    for suffix in ("", "-wal", "-shm", "-journal"):
        path.with_name(path.name + suffix).unlink(missing_ok=True)


def _fill_pause(stage: str) -> None:
    """Test hook: stop at ``stage`` until a line arrives on stdin (see FILL_PAUSE_ENV)."""
    if os.environ.get(FILL_PAUSE_ENV) == stage:
        sys.stderr.write(f"partsel: first fill paused at {stage}\n")
        sys.stderr.flush()
        sys.stdin.readline()


_PART_INSERT = re.compile(r'\s*INSERT INTO "?part"?\s*\(', re.IGNORECASE)


def _pause_inside_load(engine: Engine) -> None:
    """Test hook: pause at stage 'loading', after the first part row was written."""
    if os.environ.get(FILL_PAUSE_ENV) != "loading":
        return
    done = False

    def after_execute(_conn: Any, _cursor: Any, statement: str, *_args: Any) -> None:
        nonlocal done
        if not done and _PART_INSERT.match(statement):
            done = True
            _fill_pause("loading")

    sa.event.listen(engine, "after_cursor_execute", after_execute)


def _fill_files(path: Path) -> list[Path]:
    return sorted(path.parent.glob(f".{path.name}.fill-*"))


def _remove_stale_fills(path: Path) -> None:
    """Remove temporary fill files of first runs that were killed long ago."""
    now = time.time()
    for f in _fill_files(path):
        if f.name.endswith(("-wal", "-shm", "-journal")):
            continue
        try:
            if now - f.stat().st_mtime > STALE_FILL_SECONDS:
                _remove_sqlite_file(f)
        except OSError:
            continue


def _publish(tmp: Path, path: Path) -> None:
    """Make ``tmp`` the catalogue at ``path`` unless one is there already (then keep that)."""
    try:
        os.link(tmp, path)  # atomic create-if-absent: never replaces a published catalogue
    except FileExistsError:
        log.info("another first run published %s first; using it", path)
    except OSError:  # no hard links on this file system: rename, unless one appeared meanwhile
        if not path.exists():
            os.replace(tmp, path)
    finally:
        _remove_sqlite_file(tmp)


def _fill_default(path: Path) -> None:
    """Create the default catalogue at ``path`` from the sample catalogue, atomically."""
    path.parent.mkdir(parents=True, exist_ok=True)
    _remove_stale_fills(path)
    sample = find_sample_catalogue()
    tmp = path.with_name(f".{path.name}.fill-{os.getpid()}-{secrets.token_hex(4)}")
    engine = make_engine(sqlite_url(tmp))
    try:
        with engine.connect():
            pass  # creates the file
        _fill_pause("created")
        _bring_up_to_date(engine)
        _fill_pause("migrated")
        if sample is None:
            log.info("no sample catalogue found; new catalogue %s is empty", path)
        else:
            from partsel.catalogue.store import load_paths  # store imports this module

            _pause_inside_load(engine)
            load_paths(engine, [sample], user="partsel (sample catalogue)")
        _fill_pause("loaded")
        engine.dispose()
        # Fold the write-ahead log into the file, so that the one file is the whole catalogue.
        conn = sqlite3.connect(tmp)
        try:
            conn.execute("PRAGMA journal_mode=DELETE")
        finally:
            conn.close()
        _publish(tmp, path)
    except BaseException:
        engine.dispose()
        _remove_sqlite_file(tmp)
        raise
    _fill_pause("published")


def _never_filled(engine: Engine) -> bool:
    """True when the catalogue has no part, maker or history row at all."""
    with engine.connect() as conn:
        for table in (part_table, maker_table, history_table):
            if conn.execute(sa.select(sa.literal(1)).select_from(table).limit(1)).first():
                return False
    return True


def _bring_up_to_date(engine: Engine) -> None:
    """Check that the database answers and its schema is current; upgrade it if allowed."""
    where = engine_label(engine)
    try:
        current = schema_revision(engine)
    except DatabaseErrors as exc:
        raise InputError(
            f"cannot open the catalogue database {where}: {_first_line(exc)}", pointer="/db"
        ) from exc
    head = head_revision()
    if current == head:
        return
    if current is not None and current not in _known_revisions():
        raise InputError(
            f"the catalogue {where} has schema revision {current}, made by a newer partsel "
            f"(this one knows up to {head}): upgrade partsel",
            pointer="/db",
        )
    if is_read_only(engine):
        state = "has no partsel tables" if current is None else f"is at revision {current}"
        raise ReadOnlyError(
            f"the catalogue {where} {state} and this partsel needs revision {head}: open it "
            "once without --read-only, with a role that may change the schema, to create or "
            "upgrade it"
        )
    try:
        migrate(engine)
    except DatabaseErrors as exc:
        err = access_error(engine, exc, f"the schema upgrade to revision {head}")
        if err is None:
            raise
        raise err from exc


def open_catalogue(url: str | None = None, *, read_only: bool = False) -> Engine:
    """Engine of the catalogue database at ``url`` (see :func:`resolve_db_url`), schema current.

    The first use of the default SQLite file creates it, filled with the sample catalogue, in
    one atomic step (see the module docstring); if that catalogue does not validate no file is
    created and the InputError is raised. With ``read_only`` nothing is created, upgraded or
    changed (see :func:`make_engine`). Raises InputError when the database cannot be opened or
    its schema is not usable.
    """
    explicit = url or os.environ.get(DB_ENV)
    if explicit:
        engine = make_engine(explicit, read_only=read_only)
        try:
            _bring_up_to_date(engine)
        except BaseException:
            engine.dispose()
            raise
        return engine
    path = default_db_path()
    if not path.exists():
        if read_only:
            raise ReadOnlyError(
                f"there is no catalogue at {path} yet: run partsel once without --read-only to "
                "create it"
            )
        _fill_default(path)
    engine = make_engine(sqlite_url(path), read_only=read_only)
    try:
        _bring_up_to_date(engine)
        if not read_only and _never_filled(engine):
            sample = find_sample_catalogue()
            if sample is not None:
                from partsel.catalogue.store import load_paths  # store imports this module

                log.info("catalogue %s was never filled; loading the sample catalogue", path)
                load_paths(engine, [sample], user="partsel (sample catalogue)")
    except BaseException:
        engine.dispose()
        raise
    return engine
