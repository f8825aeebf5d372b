"""Shared helpers of the terminal-UI tests (no tests here): a temporary catalogue filled from the
invented sample catalogue, the app on it, and a way to wait until the workers are done."""

from __future__ import annotations

import asyncio
import shutil
from collections.abc import Awaitable, Callable
from pathlib import Path
from typing import Any

import pytest

PROJECT = Path(__file__).resolve().parents[1]
SAMPLE_PARTS = PROJECT / "sample-catalog" / "parts"
SAMPLE_DESIGNS = PROJECT / "sample-catalog" / "designs"
LINE_DRIVER = SAMPLE_DESIGNS / "line-driver-5v.toml"
#: Terminal size of every UI test and snapshot (columns, rows).
SIZE = (120, 40)


def build_sample_db(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """An SQLite catalogue filled from sample-catalog/parts (made once, copied per test)."""
    from partsel.catalogue import load_paths, open_catalogue

    path = tmp_path_factory.mktemp("tui-db") / "catalogue.sqlite"
    engine = open_catalogue(f"sqlite:///{path}")
    load_paths(engine, [SAMPLE_PARTS])
    with engine.connect() as conn:  # fold the WAL into the file before copying it
        conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    engine.dispose()
    return path


def copy_sample_db(sample_db_file: Path, tmp_path: Path) -> Any:
    """A catalogue engine on a test's own copy of the sample catalogue."""
    from partsel.catalogue import open_catalogue

    path = tmp_path / "catalogue.sqlite"
    shutil.copy(sample_db_file, path)
    return open_catalogue(f"sqlite:///{path}")


def make_app(engine: Any, tmp_path: Path, *, simulate: bool = False, **kw: Any) -> Any:
    """The app on ``engine`` with the sample line driver (or ``design=``), files going to
    ``tmp_path``."""
    from partsel.tui.app import PartselApp

    kw.setdefault("design", LINE_DRIVER)
    return PartselApp(
        engine,
        simulate=simulate,
        sample_dir=SAMPLE_DESIGNS,
        work_dir=tmp_path,
        **kw,
    )


async def settle(pilot: Any, rounds: int = 3) -> None:
    """Wait until no worker runs and the screen has caught up with the messages."""
    from textual.worker import WorkerCancelled

    for _ in range(rounds):
        await pilot.pause()
        try:
            await pilot.app.workers.wait_for_complete()
        except WorkerCancelled:  # an exclusive worker replaced by a newer one: wait again
            await pilot.pause()
            await pilot.app.workers.wait_for_complete()
    await pilot.pause()


def drive(
    app: Any, scenario: Callable[[Any], Awaitable[None]], size: tuple[int, int] = SIZE
) -> None:
    """Run ``scenario(pilot)`` against ``app`` headless at ``size`` (default :data:`SIZE`)."""

    async def main() -> None:
        async with app.run_test(size=size) as pilot:
            await settle(pilot)
            await scenario(pilot)

    asyncio.run(main())


def screen_text(app: Any) -> str:
    """The screen as the user sees it, as plain text (one line per terminal row): the
    compositor's full update printed on a recording console, as Textual does for its
    screenshots."""
    import io

    from rich.console import Console

    width, height = app.size
    console = Console(
        width=width,
        height=height,
        file=io.StringIO(),
        force_terminal=True,
        color_system=None,
        record=True,
        legacy_windows=False,
        safe_box=False,
    )
    console.print(
        app.screen._compositor.render_update(full=True, screen_stack=app._background_screens)
    )
    return console.export_text()


async def type_into(pilot: Any, widget_id: str, text: str) -> None:
    """Clear the input ``widget_id`` and type ``text`` key by key (validated as typed)."""
    inp = pilot.app.screen.query_one(f"#{widget_id}")
    inp.focus()
    await pilot.pause()
    inp.value = ""
    await pilot.pause()
    await pilot.press(*[{" ": "space"}.get(c, c) for c in text])
    await settle(pilot)


async def paste_into(pilot: Any, widget_id: str, text: str) -> None:
    """Replace the text of input ``widget_id`` at once (as a paste does)."""
    inp = pilot.app.screen.query_one(f"#{widget_id}")
    inp.focus()
    inp.value = text
    await settle(pilot)


_PREDICTIONS: list[tuple[tuple[Any, ...], Any]] = []


def _prediction_key(app: Any, part_number: str) -> tuple[Any, ...]:
    req = app.ranking.requirements
    return (part_number, app.design, req.basis, req.fix_series, req.limit("min_source_fraction"))


def remember_prediction(app: Any, part_number: str, pred: Any) -> None:
    """Keep a simulation made in one test for the others (it is the slow part)."""
    _PREDICTIONS.append((_prediction_key(app, part_number), pred))


def reference_prediction(app: Any, part_number: str) -> Any:
    """The session's prediction (:meth:`partsel.api.Session.predict`) of one part in the app's
    current ranking (once per test session: the time-domain simulation is the slow part)."""
    key = _prediction_key(app, part_number)
    for k, pred in _PREDICTIONS:
        if k == key:
            return pred
    pred = app.session.predict(app.design, [part_number], ranking=app.ranking)
    _PREDICTIONS.append((key, pred))
    return pred


def widget_text(app: Any, widget: Any) -> str:
    """The text a widget shows on screen, its rows joined by spaces (what fits in its region;
    anything cut off is not there)."""
    region = widget.region
    rows = screen_text(app).splitlines()[region.y : region.bottom]
    return " ".join(row[region.x : region.right].strip() for row in rows)
