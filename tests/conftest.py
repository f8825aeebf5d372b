"""Shared fixtures. Every test runs with its own user data folder and no PARTSEL_DB from the
environment, so the user's default catalogue is never touched.

Database fixtures (``db_url``, ``engine``, ``cli``) run each test on SQLite and, when
``PARTSEL_TEST_PG_URL`` names a PostgreSQL database the tests may use as an administrator
(``.ci/run`` starts a throw-away server and sets it), again on PostgreSQL, each time in a fresh
empty database: test ids end in ``[sqlite]`` / ``[postgresql]``. ``PARTSEL_REQUIRE_PG=1``
makes a missing server an error instead of a silently smaller run.

Hypothesis: under CI (``CI=true``, or ``PARTSEL_HYPOTHESIS_PROFILE=ci`` as ``.ci/run`` sets)
the property tests run with the ``ci`` profile, derandomised: the examples follow from each
test's source, so a run is repeatable and a pass is not luck of the draw. Elsewhere they draw
fresh examples each run and keep failures in the local example database, which is where new
counterexamples are found.
"""

from __future__ import annotations

import os
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
import sqlalchemy as sa
from hypothesis import settings
from sqlalchemy.engine import Engine
from typer.testing import CliRunner, Result

DATA = Path(__file__).parent / "data"
CATALOGUE_DATA = DATA / "catalogue"
PROJECT = Path(__file__).resolve().parents[1]
SAMPLE_PARTS = PROJECT / "sample-catalog" / "parts"

settings.register_profile("ci", derandomize=True, database=None, print_blob=True)
_profile = os.environ.get("PARTSEL_HYPOTHESIS_PROFILE") or (
    "ci" if os.environ.get("CI", "").lower() in ("true", "1") else None
)
if _profile:
    settings.load_profile(_profile)

#: Environment variable: SQLAlchemy URL of a PostgreSQL database with rights to create
#: databases and roles (e.g. postgresql+psycopg://partsel@/partsel_test?host=/tmp/x&port=5432).
PG_ENV = "PARTSEL_TEST_PG_URL"
PG_URL = os.environ.get(PG_ENV) or None
#: Backends every database test runs on.
BACKENDS = ["sqlite", "postgresql"] if PG_URL else ["sqlite"]


def pytest_configure(config: pytest.Config) -> None:
    if os.environ.get("PARTSEL_REQUIRE_PG") and not PG_URL:
        raise pytest.UsageError(f"PARTSEL_REQUIRE_PG is set but {PG_ENV} is not")


@pytest.fixture(autouse=True)
def _isolated_user_dirs(
    tmp_path_factory: pytest.TempPathFactory, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Point the user data folder (platformdirs, XDG) at a fresh temporary folder."""
    home = tmp_path_factory.mktemp("home")
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    monkeypatch.setenv("HOME", str(home))
    monkeypatch.delenv("PARTSEL_DB", raising=False)
    monkeypatch.delenv("PARTSEL_SAMPLE_CATALOG", raising=False)
    monkeypatch.delenv("PARTSEL_USER", raising=False)
    monkeypatch.delenv("PARTSEL_READ_ONLY", raising=False)


class PgServer:
    """The test PostgreSQL server: makes fresh databases and roles, drops them at the end."""

    def __init__(self, url: str) -> None:
        self.url = sa.make_url(url)
        self.admin = sa.create_engine(self.url, isolation_level="AUTOCOMMIT")
        self.databases: list[str] = []
        self.roles: list[str] = []

    def _quote(self, name: str) -> str:
        return self.admin.dialect.identifier_preparer.quote(name)

    def new_database(self) -> str:
        """URL of a new empty database."""
        name = f"partsel_t_{uuid.uuid4().hex[:12]}"
        with self.admin.connect() as conn:
            conn.exec_driver_sql(f"CREATE DATABASE {self._quote(name)}")
        self.databases.append(name)
        return self.url.set(database=name).render_as_string(hide_password=False)

    def drop_database(self, url: str) -> None:
        name = sa.make_url(url).database
        with self.admin.connect() as conn:
            conn.exec_driver_sql(f"DROP DATABASE IF EXISTS {self._quote(name)} WITH (FORCE)")
        self.databases.remove(name)

    def select_only_role(self, url: str) -> str:
        """URL of ``url``'s database as a new login role that may only SELECT its tables."""
        role = f"partsel_ro_{uuid.uuid4().hex[:8]}"
        db_url = sa.make_url(url)
        with self.admin.connect() as conn:
            conn.exec_driver_sql(f"CREATE ROLE {self._quote(role)} LOGIN")
        self.roles.append(role)
        owner = sa.create_engine(db_url, isolation_level="AUTOCOMMIT")
        with owner.connect() as conn:
            q = self._quote(role)
            conn.exec_driver_sql(f"GRANT USAGE ON SCHEMA public TO {q}")
            conn.exec_driver_sql(f"GRANT SELECT ON ALL TABLES IN SCHEMA public TO {q}")
        owner.dispose()
        return db_url.set(username=role).render_as_string(hide_password=False)

    def close(self) -> None:
        for name in list(self.databases):
            self.drop_database(self.url.set(database=name).render_as_string(False))
        with self.admin.connect() as conn:
            for role in self.roles:
                conn.exec_driver_sql(f"DROP ROLE IF EXISTS {self._quote(role)}")
        self.admin.dispose()


@pytest.fixture(scope="session")
def pg_server() -> Iterator[PgServer | None]:
    """The PostgreSQL test server (None when ``PARTSEL_TEST_PG_URL`` is not set)."""
    if not PG_URL:
        yield None
        return
    server = PgServer(PG_URL)
    yield server
    server.close()


@pytest.fixture(scope="session")
def make_db_url(
    tmp_path_factory: pytest.TempPathFactory, pg_server: PgServer | None
) -> Callable[[str], str]:
    """Factory: URL of a new, empty database on ``backend`` ("sqlite" or "postgresql").

    Usable from fixtures of any scope; PostgreSQL databases are dropped at the end of the run.
    """

    def make(backend: str) -> str:
        if backend == "sqlite":
            return f"sqlite:///{tmp_path_factory.mktemp('db') / 'catalogue.sqlite'}"
        if pg_server is None:
            pytest.skip(f"{PG_ENV} is not set")
        return pg_server.new_database()

    return make


@pytest.fixture(params=BACKENDS)
def backend_name(request: pytest.FixtureRequest) -> str:
    """The backend of this test run: "sqlite" or "postgresql"."""
    return request.param


@pytest.fixture
def db_url(backend_name: str, tmp_path: Path, pg_server: PgServer | None) -> Iterator[str]:
    """URL of a fresh database for one test (a file under tmp_path, or a new PG database)."""
    if backend_name == "sqlite":
        yield f"sqlite:///{tmp_path / 'catalogue.sqlite'}"
        return
    assert pg_server is not None
    url = pg_server.new_database()
    yield url
    pg_server.drop_database(url)


@pytest.fixture(scope="module", params=BACKENDS)
def module_db_url(request: pytest.FixtureRequest, make_db_url: Callable[[str], str]) -> str:
    """Like ``db_url``, shared by the tests of one module (for module-scoped catalogues)."""
    return make_db_url(request.param)


@pytest.fixture
def engine(db_url: str) -> Iterator[Engine]:
    """Migrated, empty catalogue engine on a fresh database."""
    from partsel.catalogue import open_catalogue

    eng = open_catalogue(db_url)
    yield eng
    eng.dispose()


@pytest.fixture
def cli(db_url: str) -> Callable[..., Result]:
    """Run ``partsel --db <fresh database> ARGS...`` in process; returns the click Result."""
    from partsel.cli.main import app

    runner = CliRunner()

    def invoke(*args: str | Path) -> Result:
        return runner.invoke(app, ["--db", db_url, *map(str, args)])

    return invoke


@pytest.fixture
def quill_doc() -> dict:
    """A fresh copy of the invented test catalogue tests/data/catalogue/quill.yaml."""
    import yaml

    return yaml.safe_load((CATALOGUE_DATA / "quill.yaml").read_text(encoding="utf-8"))


def _ngspice_required() -> bool:
    return (
        os.environ.get("CI", "").lower() in ("true", "1")
        or os.environ.get("PARTSEL_REQUIRE_NGSPICE") == "1"
    )


@pytest.fixture(scope="session")
def need_ngspice() -> None:
    """Skip without ngspice, or fail where it is required (CI, PARTSEL_REQUIRE_NGSPICE=1)."""
    from partsel.spice_run import ngspice_path

    if ngspice_path() is None:
        msg = "ngspice is not installed (Debian package 'ngspice')"
        if _ngspice_required():
            pytest.fail(msg + ", but CI / PARTSEL_REQUIRE_NGSPICE=1 requires it")
        pytest.skip(msg)


@pytest.fixture(scope="session")
def sample_frame(tmp_path_factory: pytest.TempPathFactory) -> object:
    """The bundled sample catalogue as the parts frame, read back from a temporary SQLite file
    (once per run; tests that change parts take a fresh database instead)."""
    from partsel.catalogue import load_paths, open_catalogue, parts_frame

    eng = open_catalogue(f"sqlite:///{tmp_path_factory.mktemp('sample') / 'c.sqlite'}")
    load_paths(eng, [SAMPLE_PARTS])
    frame = parts_frame(eng)
    eng.dispose()
    return frame


@pytest.fixture
def sample_table(sample_frame: object) -> object:
    """A fresh :class:`partsel.solver.PartTable` over :func:`sample_frame`."""
    from partsel.solver import PartTable

    return PartTable(sample_frame)  # type: ignore[arg-type]
