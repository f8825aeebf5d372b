"""Catalogue database: engine from a URL, Alembic migrations, the default SQLite file.

Nothing here runs at import time. :func:`open_catalogue` is the one entry point for callers:
it picks the URL (argument, else ``PARTSEL_DB``, else the default file), makes the engine,
brings the schema up to date and, on first use of the default file, fills it from the bundled
sample catalogue.
"""

from __future__ import annotations

import logging
import os
from pathlib import Path

import platformdirs
import sqlalchemy as sa
from alembic import command
from alembic.config import Config
from sqlalchemy.engine import Engine
from sqlalchemy.pool import StaticPool

from partsel.catalogue.files import CATALOGUE_SUFFIXES

#: Environment variable naming the database URL.
DB_ENV = "PARTSEL_DB"
#: Environment variable naming the sample catalogue folder used to fill a new default database.
SAMPLE_ENV = "PARTSEL_SAMPLE_CATALOG"
#: SQLite busy timeout, ms: how long a writer waits for another writer's lock.
SQLITE_BUSY_TIMEOUT_MS = 5000

MIGRATIONS_DIR = Path(__file__).resolve().parent / "migrations"

log = logging.getLogger(__name__)


def default_db_path() -> Path:
    """The default catalogue file: ``<user data dir>/partsel/catalogue.sqlite``."""
    return Path(platformdirs.user_data_dir("partsel")) / "catalogue.sqlite"


def sqlite_url(path: Path) -> str:
    """SQLAlchemy URL of an SQLite file."""
    return f"sqlite:///{path}"


def resolve_db_url(url: str | None = None) -> str:
    """The URL to use: ``url`` if given, else ``$PARTSEL_DB``, else the default SQLite file."""
    return url or os.environ.get(DB_ENV) or sqlite_url(default_db_path())


def _sqlite_on_connect(dbapi_conn: object, _record: object) -> None:
    cur = dbapi_conn.cursor()  # type: ignore[attr-defined]
    cur.execute("PRAGMA journal_mode=WAL")
    cur.execute(f"PRAGMA busy_timeout={SQLITE_BUSY_TIMEOUT_MS}")
    cur.close()


def make_engine(url: str) -> Engine:
    """Create an engine for ``url`` (SQLite gets WAL journal mode and a busy timeout).

    An in-memory SQLite URL (``sqlite://``) keeps one shared connection (``StaticPool``), so
    that every session sees the same database.
    """
    u = sa.make_url(url)
    if u.get_backend_name() != "sqlite":
        return sa.create_engine(u)
    if u.database in (None, "", ":memory:"):
        engine = sa.create_engine(
            u, poolclass=StaticPool, connect_args={"check_same_thread": False}
        )
    else:
        Path(u.database).parent.mkdir(parents=True, exist_ok=True)
        engine = sa.create_engine(u)
    sa.event.listen(engine, "connect", _sqlite_on_connect)
    return engine


def alembic_config() -> Config:
    """Alembic configuration built in code; migrations live inside the package."""
    cfg = Config()
    cfg.set_main_option("script_location", str(MIGRATIONS_DIR))
    return cfg


def migrate(engine: Engine, revision: str = "head") -> None:
    """Upgrade the database schema to ``revision`` (Alembic)."""
    cfg = alembic_config()
    with engine.begin() as conn:
        cfg.attributes["connection"] = conn
        command.upgrade(cfg, revision)


def find_sample_catalogue() -> Path | None:
    """The bundled sample catalogue's parts folder, or None when there is none (or it is empty).

    ``$PARTSEL_SAMPLE_CATALOG`` wins; else walk up from the package to the project folder
    holding both ``pyproject.toml`` and ``sample-catalog/``.
    """
    env = os.environ.get(SAMPLE_ENV)
    if env:
        base = Path(env)
    else:
        for parent in Path(__file__).resolve().parents:
            if (parent / "pyproject.toml").is_file() and (parent / "sample-catalog").is_dir():
                base = parent / "sample-catalog"
                break
        else:
            return None
    parts = base / "parts"
    folder = parts if parts.is_dir() else base
    if not any(f.suffix.lower() in CATALOGUE_SUFFIXES for f in folder.rglob("*")):
        return None
    return folder


def _remove_sqlite_file(path: Path) -> None:
    for p in (path, path.with_name(path.name + "-wal"), path.with_name(path.name + "-shm")):
        p.unlink(missing_ok=True)


def open_catalogue(url: str | None = None) -> Engine:
    """Engine of the catalogue database at ``url`` (see :func:`resolve_db_url`), schema current.

    The first use of the default SQLite file creates it and loads the sample catalogue into it;
    if that catalogue does not validate the new file is removed again and the InputError raised.
    """
    explicit = url or os.environ.get(DB_ENV)
    if explicit:
        engine = make_engine(explicit)
        migrate(engine)
        return engine
    path = default_db_path()
    fresh = not path.exists()
    engine = make_engine(sqlite_url(path))
    migrate(engine)
    if fresh:
        sample = find_sample_catalogue()
        if sample is None:
            log.info("no sample catalogue found; new catalogue %s is empty", path)
            return engine
        from partsel.catalogue.store import load_paths  # store imports this module

        try:
            load_paths(engine, [sample])
        except Exception:
            engine.dispose()
            _remove_sqlite_file(path)
            raise
    return engine
