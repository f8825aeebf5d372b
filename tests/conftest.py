"""Shared fixtures. Every test runs with its own user data folder and no PARTSEL_DB from the
environment, so the user's default catalogue is never touched."""

from __future__ import annotations

from collections.abc import Callable, Iterator
from pathlib import Path

import pytest
from sqlalchemy.engine import Engine
from typer.testing import CliRunner, Result

DATA = Path(__file__).parent / "data"
CATALOGUE_DATA = DATA / "catalogue"
PROJECT = Path(__file__).resolve().parents[1]
SAMPLE_PARTS = PROJECT / "sample-catalog" / "parts"


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


@pytest.fixture
def db_url(tmp_path: Path) -> str:
    """URL of a fresh SQLite file for one test."""
    return f"sqlite:///{tmp_path / 'catalogue.sqlite'}"


@pytest.fixture
def engine(db_url: str) -> Iterator[Engine]:
    """Migrated, empty catalogue engine on a temporary SQLite file."""
    from partsel.catalogue import open_catalogue

    eng = open_catalogue(db_url)
    yield eng
    eng.dispose()


@pytest.fixture
def cli(db_url: str) -> Callable[..., Result]:
    """Run ``partsel --db <temporary file> ARGS...`` in process; returns the click Result."""
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
