"""Flows through the terminal UI, driven with Textual's Pilot on a temporary catalogue filled from
the invented sample catalogue.

What the UI shows is checked against partsel's API called directly (the UI is a shell over it:
``partsel.solver.rank`` for the same design, the solver's CSV/JSON writer and the committed JSON
Schema), against the catalogue files themselves, and against the direction physics gives
(Ohm's law: a heavier load needs more current from the fix resistor, so a smaller one).
"""

from __future__ import annotations

import csv
import functools
import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import yaml
from jsonschema import Draft202012Validator
from test_tui_support import (
    LINE_DRIVER,
    PROJECT,
    SAMPLE_DESIGNS,
    SAMPLE_PARTS,
    build_sample_db,
    copy_sample_db,
    drive,
    make_app,
    paste_into,
    remember_prediction,
    settle,
    type_into,
)

from partsel.catalogue import get_part, parts_frame, read_and_validate
from partsel.design import design_from_mapping, design_to_mapping, load_design
from partsel.present import check_label
from partsel.solver import PartTable, rank
from partsel.solver.export import ranking_frame

R_LOAD = "f-load-resistance"


@pytest.fixture(scope="module")
def sample_db_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_sample_db(tmp_path_factory)


@pytest.fixture
def tui_engine(sample_db_file: Path, tmp_path: Path) -> Any:
    engine = copy_sample_db(sample_db_file, tmp_path)
    yield engine
    engine.dispose()


@functools.cache
def _sample_records() -> dict[str, dict[str, Any]]:
    out = {}
    for path in sorted(SAMPLE_PARTS.glob("*.yaml")):
        doc = yaml.safe_load(path.read_text(encoding="utf-8"))
        for part in doc.get("parts", []):
            out[part["part_number"]] = part
    return out


def sample_record(part_number: str) -> dict[str, Any]:
    """A part record read straight from the sample catalogue files."""
    return _sample_records()[part_number]


def direct_ranking(engine: Any, design: Any, basis: str | None = None) -> Any:
    """The solver's ranking of ``design``, computed without the UI."""
    from partsel.solver import Requirements

    req = Requirements.from_mapping(design.requirements)
    if basis:
        req = req.replace(basis=basis)
    return rank(PartTable(parts_frame(engine)), design, req)


def table_parts(screen: Any) -> list[str]:
    """Part numbers of the ranking table, top to bottom."""
    table = screen.ranking_pane.table
    return [str(table.coordinate_to_cell_key((k, 0)).row_key.value) for k in range(table.row_count)]


def head_text(screen: Any) -> str:
    return str(screen.part_view.query_one(".part-head").render())


def test_edit_load_changes_ranking_and_part_view(tui_engine: Any, tmp_path: Path) -> None:
    """Changing R load from 2 kohm to 600 ohm re-ranks the design and updates the part view; the
    table then holds exactly the solver's ranking of the edited design, and the fix resistor
    of a part that needs one is smaller for the heavier load (Ohm's law: the load draws more
    current, so the resistor must supply more)."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        before = app.ranking
        assert before is not None and screen.ranking_pane.current_part is not None
        expected = direct_ranking(tui_engine, load_design(LINE_DRIVER))
        assert table_parts(screen) == [str(expected.table.part_number[i])
                                       for i in expected.order[: expected.n_feasible]]  # fmt: skip
        pn = next(str(before.table.part_number[i]) for i in before.order if before.fix.works[i])
        r_fix_before = float(before.fix.r_ohm[before.index(pn)])
        screen.ranking_pane.set_show_rejected(True)
        await settle(pilot)
        screen.ranking_pane.table.move_cursor(row=table_parts(screen).index(pn))
        await settle(pilot)
        head_before = head_text(screen)
        assert pn in head_before

        await type_into(pilot, R_LOAD, "600 ohm")
        after = app.ranking
        assert after is not before and app.design is not None
        assert app.design.load.r_load_ohm == 600.0
        mapping = design_to_mapping(load_design(LINE_DRIVER))
        mapping["load"]["resistance"] = "600 ohm"
        expected = direct_ranking(tui_engine, design_from_mapping(mapping))
        assert table_parts(screen) == [str(expected.table.part_number[i]) for i in expected.order]
        i1 = after.index(pn)
        np.testing.assert_allclose(after.fix.r_ohm, expected.fix.r_ohm)
        assert after.fix.works[i1] and float(after.fix.r_ohm[i1]) < r_fix_before
        # the part view follows: same part, new figures
        assert screen.part_view.part_number == pn
        head_after = head_text(screen)
        assert head_after != head_before
        assert "600" not in head_before

    drive(app, scenario)


def test_bad_value_refused_last_ranking_stays(tui_engine: Any, tmp_path: Path) -> None:
    """A value with an unknown unit, then a negative resistance, is refused with its reason under
    the field; the ranking on screen stays that of the last valid design; fixing the field
    ranks again. Typed key by key, the last valid text on the way is the one ranked."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        good, count, rows = app.ranking, app.rank_count, table_parts(screen)
        for text, reason in (("2 kohmx", "kohmx"), ("-5 kohm", "must be > 0")):
            await paste_into(pilot, R_LOAD, text)
            row = screen.query_one(f"#{R_LOAD}-row")
            err = str(screen.query_one(f"#{R_LOAD}-error").render())
            assert row.has_class("bad")
            assert reason in err
            assert app.ranking is good and app.rank_count == count
            assert table_parts(screen) == rows
            assert not screen.form_ok
            assert "problems" in str(screen.query_one("#topbar").render())
        await type_into(pilot, R_LOAD, "3.3 kohm")
        assert not screen.query_one(f"#{R_LOAD}-row").has_class("bad")
        assert app.ranking is not good and app.design is not None
        assert math.isclose(app.design.load.r_load_ohm, 3300.0)
        await type_into(pilot, R_LOAD, "1.5 kohmz")
        assert screen.query_one(f"#{R_LOAD}-row").has_class("bad")
        assert app.ranking.design is app.design
        assert math.isclose(app.design.load.r_load_ohm, 1500.0)  # "1.5 kohm", on the way

    drive(app, scenario)


def test_compare_and_replacement_views(tui_engine: Any, tmp_path: Path) -> None:
    """Mark two parts, open the compare view: the cheaper part's price is marked better (▲) and
    the dearer one's worse (▼), prices as in the catalogue files. Then the replacement view
    for the obsolete BRQ-622 lists BRQ-622A (its replacement by the catalogue's own note on
    BRQ-622) first, as the drop-in: with the fix both need, it passes where BRQ-622 clips."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        screen.ranking_pane.set_show_rejected(True)
        await settle(pilot)
        table = screen.ranking_pane.table
        table.focus()
        parts = table_parts(screen)
        for pn in ("BRQ-622", "BRQ-722"):
            table.move_cursor(row=parts.index(pn))
            await pilot.press("space")
            await settle(pilot)
        assert app.marked == ["BRQ-622", "BRQ-722"]
        await pilot.press("f5")
        await settle(pilot)
        from partsel.tui.screens.compare import CompareScreen

        cmp_screen = app.screen
        assert isinstance(cmp_screen, CompareScreen)
        price = next(r for r in cmp_screen.rows if r.label == "price" and "Catalogue" in r.group)
        cheap = min(("BRQ-622", "BRQ-722"), key=lambda p: sample_record(p)["price"]["unit"])
        k = ["BRQ-622", "BRQ-722"].index(cheap)
        assert price.marks[k] == "better" and price.marks[1 - k] == "worse"
        ctable = cmp_screen.query_one("#compare-table")
        cells = [str(c) for c in ctable.get_row(f"row-{cmp_screen.rows.index(price)}")]
        assert "▲" in cells[1 + k] and "▼" in cells[2 - k]
        await pilot.press("escape")
        await settle(pilot)

        table.move_cursor(row=parts.index("BRQ-622"))
        await settle(pilot)
        await pilot.press("f6")
        await settle(pilot)
        from partsel.tui.screens.replace import ReplacementScreen

        rep = app.screen
        assert isinstance(rep, ReplacementScreen) and rep.vetting is not None
        assert "BRQ-622A" in sample_record("BRQ-622")["notes"]
        cand = {c.part_number: c for c in rep.vetting.candidates}
        # In the sample design BRQ-622 with its 2 kohm pull-up still clips at V+ (its 1.6 V
        # guaranteed headroom, at the current flowing with the fix, against 1.5 V of room);
        # BRQ-622A, with its better swing, passes the circuit with the same fix: the drop-in,
        # listed first, with the tick the replacement view gives a drop-in.
        c = cand["BRQ-622A"]
        assert c.verdict == "drop-in" and rep.vetting.candidates[0] is c
        assert not any(r.severity == "review" for r in c.reasons)
        rtable = rep.query_one("#candidates")
        row = [str(c) for c in rtable.get_row("BRQ-622A")]
        assert "drop-in" in row[2] and "✓" in row[2]
        await pilot.press("escape")

    drive(app, scenario)


def test_add_part_in_catalogue_view_is_ranked(tui_engine: Any, tmp_path: Path) -> None:
    """In the catalogue view, add a part: a bad value is refused with its field pointer and
    nothing is stored; the corrected record is stored and the new part is ranked like the part
    it was copied from (the same data gives the same verdict)."""
    app = make_app(tui_engine, tmp_path)
    new_pn = "PSL-T901"

    async def scenario(pilot: Any) -> None:
        main = app.screen
        source = table_parts(main)[0]
        await pilot.press("f7")
        await settle(pilot)
        from partsel.tui.screens.catalogue import CatalogueScreen, PartEditorScreen

        cat = app.screen
        assert isinstance(cat, CatalogueScreen)
        await type_into(pilot, "cat-search", source.lower())
        assert cat.current == source
        await pilot.press("ctrl+n")
        await settle(pilot)
        editor = app.screen
        assert isinstance(editor, PartEditorScreen)
        record = yaml.safe_load(editor.text)
        record["part_number"] = new_pn
        record["output"]["stage_current"] = {"min": "80 uA", "typ": "banana"}
        area = editor.query_one("#record")
        area.text = yaml.safe_dump(record, sort_keys=False)
        await settle(pilot)
        problems = str(editor.query_one("#problems").render())
        assert "/output/stage_current/typ" in problems
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.screen is editor and get_part(tui_engine, new_pn) is None
        base = sample_record(source)
        record["output"]["stage_current"] = base["output"]["stage_current"]
        area.text = yaml.safe_dump(record, sort_keys=False)
        await settle(pilot)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.screen is cat
        assert get_part(tui_engine, new_pn) is not None
        await pilot.press("escape")
        await settle(pilot)
        r = app.ranking
        i_new, i_src = r.index(new_pn), r.index(source)
        assert r.feasible[i_new] == r.feasible[i_src]
        assert r.score[i_new] == r.score[i_src]
        await type_into(pilot, "rank-filter", new_pn.lower())
        assert table_parts(app.screen) == [new_pn]

    drive(app, scenario)


def test_export_csv_and_json(tui_engine: Any, tmp_path: Path) -> None:
    """Export from the UI writes the solver's CSV (same rows and values as ``ranking_frame`` of
    the same design) and JSON that validates against data-schema/ranking.schema.json."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        for name in ("ranking.csv", "ranking.json"):
            await pilot.press("ctrl+t")
            await settle(pilot)
            await paste_into(pilot, "dialog-path", str(tmp_path / name))
            await pilot.press("enter")
            await settle(pilot)

    drive(app, scenario)
    expected = ranking_frame(direct_ranking(tui_engine, load_design(LINE_DRIVER)))
    with (tmp_path / "ranking.csv").open(newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == list(expected.columns)
    assert [r["part_number"] for r in rows] == list(expected["part_number"])
    for row, (_, exp) in zip(rows, expected.iterrows(), strict=True):
        assert row["verdict"] == exp["verdict"]
        assert row["feasible"] == str(exp["feasible"])
        if isinstance(exp["fix_r_ohm"], float) and math.isfinite(exp["fix_r_ohm"]):
            assert float(row["fix_r_ohm"]) == exp["fix_r_ohm"]
    data = json.loads((tmp_path / "ranking.json").read_text(encoding="utf-8"))
    schema = json.loads((PROJECT / "data-schema" / "ranking.schema.json").read_text())
    Draft202012Validator(schema).validate(data)
    assert data["summary"]["parts"] == len(expected)


def test_write_catalogue_files_round_trip(tui_engine: Any, tmp_path: Path) -> None:
    """The catalogue view writes the catalogue to files that validate and hold every part."""
    app = make_app(tui_engine, tmp_path)
    out = tmp_path / "written"

    async def scenario(pilot: Any) -> None:
        await pilot.press("f7")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await settle(pilot)
        await paste_into(pilot, "export-folder", str(out))
        await pilot.press("enter")
        await settle(pilot)

    drive(app, scenario)
    docs = read_and_validate([out])
    written = sorted(p["part_number"] for d in docs for p in d.parts)
    source = sorted(p["part_number"] for d in read_and_validate([SAMPLE_PARTS]) for p in d.parts)
    assert written == source


def test_sort_filter_basis_and_rejected(tui_engine: Any, tmp_path: Path) -> None:
    """Sorting by price orders the rows by the catalogue's price; the text filter keeps only the
    parts that match; ctrl+b switches to the typical basis (the solver's typical ranking);
    ctrl+r shows the rejected parts with the solver's count of failing checks and, in the key
    margin, its binding constraint."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        pane = screen.ranking_pane
        await pilot.press("ctrl+r")
        await settle(pilot)
        r = app.ranking
        assert len(table_parts(screen)) == r.n
        from partsel.solver import checks as C

        for pn in table_parts(screen):
            i = r.index(pn)
            if not r.feasible[i]:
                verdict = str(pane.table.get_cell(pn, "verdict"))
                assert verdict == f"✗ fails {int(r.n_failing[i])}"
                key = str(pane.table.get_cell(pn, "margin"))
                assert key.startswith(check_label(C.CHECKS[int(r.binding[i])].name))
        pane.set_sort("price")
        await settle(pilot)
        prices = [sample_record(pn)["price"]["unit"] * math.ceil(2 / sample_record(pn)["channels"])
                  for pn in table_parts(screen)]  # fmt: skip
        assert prices == sorted(prices)
        await type_into(pilot, "rank-filter", "brindle")
        shown = table_parts(screen)
        assert shown and all(sample_record(pn)["maker"] == "Brindle Semiconductor" for pn in shown)
        await type_into(pilot, "rank-filter", "")
        await pilot.press("ctrl+b")
        await settle(pilot)
        assert app.ranking.requirements.basis == "typical"
        typical = direct_ranking(tui_engine, load_design(LINE_DRIVER), basis="typical")
        assert app.ranking.n_feasible == typical.n_feasible
        np.testing.assert_array_equal(app.ranking.feasible, typical.feasible)

    drive(app, scenario)


def test_open_and_save_design(tui_engine: Any, tmp_path: Path) -> None:
    """ctrl+s saves the design as TOML that reads back as the same design; ctrl+o opens a
    sample design, and the ranking follows it."""
    app = make_app(tui_engine, tmp_path)
    target = tmp_path / "my-driver.toml"

    async def scenario(pilot: Any) -> None:
        await pilot.press("ctrl+s")
        await settle(pilot)
        await paste_into(pilot, "dialog-path", str(target))
        await pilot.press("enter")
        await settle(pilot)
        assert load_design(target) == design_from_mapping(
            design_to_mapping(app.design), source=str(target)
        )
        await pilot.press("ctrl+o")
        await settle(pilot)
        other = SAMPLE_DESIGNS / "adc-buffer-3v3.toml"
        await paste_into(pilot, "dialog-path", str(other))
        await pilot.press("enter")
        await settle(pilot)
        assert app.design is not None and app.design.name == load_design(other).name
        assert app.ranking.design.name == app.design.name

    drive(app, scenario)


def test_keys_help_and_palette(tui_engine: Any, tmp_path: Path) -> None:
    """Every key binding of the main screen is in the help screen and in the command palette."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        from partsel.tui.screens.help import HelpScreen, help_markdown
        from partsel.tui.screens.main import MainScreen

        screen = app.screen
        titles = [c.title for c in app.get_system_commands(screen)]
        text = help_markdown()
        for b in MainScreen.BINDINGS:
            assert f"`{b.key}`" in text
            assert any(t.startswith(b.description) for t in titles), b.description
        assert any(t.startswith("Sort ranking by Price") for t in titles)
        await pilot.press("f1")
        await settle(pilot)
        assert isinstance(app.screen, HelpScreen)
        await pilot.press("escape")
        await settle(pilot)
        assert isinstance(app.screen, MainScreen)

    drive(app, scenario)


def test_part_view_simulation(tui_engine: Any, tmp_path: Path) -> None:
    """With the simulation on, the part view plots the highlighted part's simulated output and
    the output with the fix, with the figures of the simulation. BRQ-622 hands over in the
    line driver, and the fix resistor keeps its stage in one mode, so the simulated handover
    goes and the distortion falls with the fix (design notes, section 5)."""
    from partsel.tui.fmt import percent

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        app.simulate = True  # from here on: only the part chosen below is simulated
        pn = "BRQ-622"
        await _show_part(pilot, pn)
        await settle(pilot, rounds=4)
        assert screen.part_view.part_number == pn
        pred = app.cached_prediction((pn,))
        assert pred is not None and pred.sim is not None and pred.sim_fixed is not None
        assert str(pred.frame["part_number"].iloc[0]) == pn
        assert pred.stage.basis == app.ranking.requirements.basis
        assert bool(pred.sim.handover[0]) and not bool(pred.sim_fixed.handover[0])
        assert pred.sim_fixed.thd_f[0] < pred.sim.thd_f[0]
        wave = screen.part_view.query_one(".plot-wave")
        assert percent(pred.sim.thd_f[0], 3) in wave.title_text and "handover" in wave.title_text
        fix = screen.part_view.query_one(".plot-fix")
        assert percent(pred.sim_fixed.thd_f[0], 3) in fix.title_text
        assert "to V" in fix.title_text
        remember_prediction(app, pn, pred)

    drive(app, scenario)


async def _show_part(pilot: Any, part_number: str) -> None:
    """Highlight ``part_number`` in the ranking (rejected parts shown)."""
    pane = pilot.app.screen.ranking_pane
    pane.set_show_rejected(True)
    await settle(pilot)
    pane.table.move_cursor(row=table_parts(pilot.app.screen).index(part_number))
    await settle(pilot)


def test_folded_limits_edit_and_bad_value(tui_engine: Any, tmp_path: Path) -> None:
    """A limit in the folded Limits group counts like any field: a tighter supply-current limit
    gives the solver's ranking with that limit; a value in the wrong unit unfolds the group and
    marks the field."""
    app = make_app(tui_engine, tmp_path)
    field = "f-requirements-limits-max-supply-current"

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        screen.form.set_field(field, "2 mA")
        await settle(pilot)
        mapping = design_to_mapping(load_design(LINE_DRIVER))
        mapping["requirements"]["limits"]["max_supply_current"] = "2 mA"
        expected = direct_ranking(tui_engine, design_from_mapping(mapping))
        np.testing.assert_array_equal(app.ranking.feasible, expected.feasible)
        screen.form.set_field(field, "2 mV")
        await settle(pilot)
        row = screen.query_one(f"#{field}-row")
        assert row.has_class("bad")
        assert "current" in str(screen.query_one(f"#{field}-error").render())
        assert not screen.query_one("#group-limits").collapsed
        np.testing.assert_array_equal(app.ranking.feasible, expected.feasible)

    drive(app, scenario)


def test_edit_part_refused_when_changed_meanwhile(tui_engine: Any, tmp_path: Path) -> None:
    """An edit made in the UI against a version that another writer has replaced meanwhile is
    refused; the catalogue keeps the other writer's record, nothing of the refused edit."""
    from partsel.catalogue import load_documents, validate_document

    app = make_app(tui_engine, tmp_path)
    pn = "BRQ-622A"

    async def scenario(pilot: Any) -> None:
        await pilot.press("f7")
        await settle(pilot)
        await paste_into(pilot, "cat-search", pn.lower())
        await pilot.press("ctrl+o")
        await settle(pilot)
        from partsel.tui.screens.catalogue import PartEditorScreen

        editor = app.screen
        assert isinstance(editor, PartEditorScreen)
        before = get_part(tui_engine, pn)
        # another writer stores a change first
        theirs = {**before.record, "notes": "changed by another writer"}
        doc, problems = validate_document({"parts": [theirs]}, file="other.yaml")
        assert not problems
        load_documents(tui_engine, [doc])
        mine = yaml.safe_load(editor.text)
        mine["description"] = "changed in the UI"
        editor.query_one("#record").text = yaml.safe_dump(mine, sort_keys=False)
        await settle(pilot)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.screen is editor  # refused: the editor stays open
        stored = get_part(tui_engine, pn)
        assert stored.record["notes"] == "changed by another writer"
        assert stored.record["description"] == before.record["description"]
        assert stored.version == before.version + 1

    drive(app, scenario)


def test_part_view_spread_tab(tui_engine: Any, tmp_path: Path) -> None:
    """The Spread tab of the full part view (key y) draws the highlighted part's boards: the
    yield and its Wilson interval, the worst corners and the THD histogram, the same figures as
    the API's spread_yield and corners with the same boards (seed of the design, 2,000 boards:
    partsel.tui.widgets.part_view.SPREAD_SAMPLES). HKE-262 is fitted with its fix resistor in
    the line driver, so its boards carry the resistor within its E24 tolerance."""
    from partsel.present import percent
    from partsel.tui.widgets.part_view import SPREAD_SAMPLES

    app = make_app(tui_engine, tmp_path)
    pn = "HKE-262"

    async def scenario(pilot: Any) -> None:
        await _show_part(pilot, pn)
        await pilot.press("f4")
        await settle(pilot)
        view = app.screen.view
        assert view.part_number == pn
        await pilot.press("y")
        await settle(pilot, rounds=6)
        text = str(view.query_one(".spread-text").render())
        y = app.session.spread_yield(app.ranking.design, [pn], samples=SPREAD_SAMPLES)
        c = app.session.corners(app.ranking.design, pn)
        p = y.parts[0]
        assert f"yield {percent(p.value, 4)}" in text
        assert f"({percent(p.interval.low, 4)} .. {percent(p.interval.high, 4)})" in text
        assert f"Worst corners of {pn}" in text
        assert "fix resistor" in text  # a corner parameter: the fix within its tolerance
        worst_thd = next(k for k in c.corners if k.check == "thd")
        # the worst corner's THD is at least the 95th percentile of the random boards (the
        # normal draws may pass the corner box by their tails, so not always the largest)
        assert worst_thd.value >= p.thd_percentiles[95.0]
        hist = view.query_one(".plot-thd-hist")
        assert f"over {SPREAD_SAMPLES:,} boards" in hist.title_text

    drive(app, scenario)
