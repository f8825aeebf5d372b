"""Snapshot tests of the terminal UI's main screens (pytest-textual-snapshot), at a fixed terminal
size, on the invented sample catalogue and the sample line driver.

The snapshots are SVG files in ``tests/__snapshots__/``; after an intended change of the screens,
look at the new ones and accept them with ``pytest tests/test_tui_snapshots.py
--snapshot-update``. Nothing on these screens depends on the clock, on random numbers or on the
temporary folder's name (file names only, no paths).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest
from test_tui_support import (
    SIZE,
    build_sample_db,
    copy_sample_db,
    make_app,
    paste_into,
    reference_prediction,
    settle,
)


@pytest.fixture(scope="module")
def sample_db_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_sample_db(tmp_path_factory)


@pytest.fixture
def tui_engine(sample_db_file: Path, tmp_path: Path) -> Any:
    engine = copy_sample_db(sample_db_file, tmp_path)
    yield engine
    engine.dispose()


async def _quiet(pilot: Any) -> None:
    """Let the workers finish, drop the notifications, focus the table (no blinking cursor)."""
    await settle(pilot)
    pilot.app.clear_notifications()
    await settle(pilot)


def _table_focus(pilot: Any) -> None:
    from textual.widgets import DataTable

    tables = pilot.app.screen.query(DataTable)
    if tables:
        tables.first().focus()


async def _select(pilot: Any, part_number: str) -> None:
    pane = pilot.app.screen.ranking_pane
    pane.set_show_rejected(True)
    await settle(pilot)
    table = pane.table
    table.move_cursor(row=table.get_row_index(part_number))
    table.focus()
    await settle(pilot)


def test_main_screen(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """Design form, ranking and the part pane of the top-ranked part (closed form)."""

    async def run_before(pilot: Any) -> None:
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_bad_field(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """A bad load resistance: the field marked and explained, the last ranking kept."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        await paste_into(pilot, "f-load-resistance", "2 kohmx")
        _table_focus(pilot)
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_part_screen_with_simulation(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """The part view of a class-B part that needs the fix: simulated output, handover marked."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        app = pilot.app
        # the session's simulation of the part (computed once per test session)
        app._sims[app.prediction_key(("BRQ-622",))] = reference_prediction(app, "BRQ-622")
        app.simulate = True
        await _select(pilot, "BRQ-622")
        await pilot.press("f4")
        await settle(pilot, rounds=5)
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_part_screen_margins(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """Every margin of one part as a labelled bar."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        await _select(pilot, "BRQ-622")
        await pilot.press("f4")
        await settle(pilot)
        await pilot.press("g")
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_compare_screen(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """Two parts side by side, better and worse marked."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        for pn in ("BRQ-622", "BRQ-722"):
            await _select(pilot, pn)
            await pilot.press("space")
        await pilot.press("f5")
        await settle(pilot)
        _table_focus(pilot)
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_replacement_screen(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """Candidates for the obsolete BRQ-622 with verdicts and reasons."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        await _select(pilot, "BRQ-622")
        await pilot.press("f6")
        await settle(pilot)
        _table_focus(pilot)
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_catalogue_screen(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """The catalogue, searchable, with the highlighted part's record."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        await pilot.press("f7")
        await settle(pilot)
        _table_focus(pilot)
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)


def test_help_screen(snap_compare: Any, tui_engine: Any, tmp_path: Path) -> None:
    """The help screen: panes and keys."""

    async def run_before(pilot: Any) -> None:
        await settle(pilot)
        await pilot.press("f1")
        await _quiet(pilot)

    app = make_app(tui_engine, tmp_path)
    assert snap_compare(app, terminal_size=SIZE, run_before=run_before)
