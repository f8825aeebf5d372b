"""Everyday use of the terminal UI (issue 14): opening a given or a new design, the open and
save dialogs, screenshots, the ranking table at 120 and 160 columns and the words for its codes,
the limits form, compare, replace, the actions list and the pane titles.

Driven with Textual's Pilot on a temporary copy of the invented sample catalogue. What the UI
shows is checked against the solver called directly (the UI is a shell over it), against the
files written, against the screen as rendered (plain text of every terminal row) and against
the widgets' geometry.
"""

from __future__ import annotations

import datetime as dt
import math
import re
import shutil
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from test_tui_support import (
    LINE_DRIVER,
    SAMPLE_DESIGNS,
    build_sample_db,
    copy_sample_db,
    drive,
    make_app,
    paste_into,
    screen_text,
    settle,
    type_into,
    widget_text,
)

from partsel import present as P
from partsel.catalogue import parts_frame
from partsel.design import design_from_mapping, load_design
from partsel.solver import PartTable, Requirements, rank
from partsel.solver import checks as C
from partsel.solver import requirements as req_mod

R_LOAD = "f-load-resistance"
WIDTHS = (120, 160)


@pytest.fixture(scope="module")
def sample_db_file(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_sample_db(tmp_path_factory)


@pytest.fixture
def tui_engine(sample_db_file: Path, tmp_path: Path) -> Any:
    engine = copy_sample_db(sample_db_file, tmp_path)
    yield engine
    engine.dispose()


def direct_ranking(engine: Any, design: Any) -> Any:
    """The solver's ranking of ``design``, computed without the UI."""
    req = Requirements.from_mapping(design.requirements)
    return rank(PartTable(parts_frame(engine)), design, req)


def stack_types(app: Any) -> list[str]:
    return [type(s).__name__ for s in app.screen_stack]


def table_parts(screen: Any) -> list[str]:
    table = screen.ranking_pane.table
    return [str(table.coordinate_to_cell_key((k, 0)).row_key.value) for k in range(table.row_count)]


# ---- opening a design ---------------------------------------------------------------------------


def test_app_opens_on_the_given_design(tui_engine: Any, tmp_path: Path) -> None:
    """Given a design (what ``partsel ui DESIGN`` passes on), the form, the top bar and the
    ranking are those of that design: the table holds the solver's feasible parts of it."""
    other = SAMPLE_DESIGNS / "adc-buffer-3v3.toml"
    app = make_app(tui_engine, tmp_path, design=other)
    design = load_design(other)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        assert screen.form.values()["f-name"] == design.name
        assert app.ranking.design.name == design.name
        assert "adc-buffer-3v3.toml" in str(screen.query_one("#topbar").render())
        expected = direct_ranking(tui_engine, design)
        assert table_parts(screen) == [
            str(expected.table.part_number[i]) for i in expected.order[: expected.n_feasible]
        ]

    drive(app, scenario)


def test_new_design_blank_requirements_says_which_limits_are_defaults(
    tui_engine: Any, tmp_path: Path
) -> None:
    """ctrl+n: a new design with the circuit on screen and blank requirements. Every limit is
    empty and names its default (the solver's LIMITS table) or 'no limit'; the Limits group is
    open and its title counts the defaults; the ranking is the solver's for the same circuit
    with default requirements; nothing of the old requirements survives."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        old = app.design
        await pilot.press("ctrl+n")
        await settle(pilot)
        assert stack_types(app)[-1] == "MainScreen"
        form = screen.form
        assert app.design.name == "new design"
        # blank requirements: what the form sends is the solver's defaults, spelled out
        got = Requirements.from_mapping(app.design.requirements).to_mapping()
        assert got == Requirements().to_mapping()
        assert app.design.load == old.load and app.design.supply == old.supply
        assert not screen.query_one("#group-limits").collapsed
        n_defaults = 0
        for d in req_mod.LIMITS:
            inp = screen.query_one(f"#f-requirements-limits-{d.key.replace('_', '-')}")
            assert inp.value == ""
            if d.default is None:
                assert inp.placeholder == "no limit"
            else:
                n_defaults += 1
                assert inp.placeholder.startswith("default ")
        for c in req_mod.CHOICES:
            assert screen.query_one(f"#f-requirements-limits-{c.key}").value == ""
        title = screen.query_one("#group-limits").title
        assert title == f"Limits · none set · {n_defaults} at their default"
        status = str(screen.query_one("#form-status").render())
        assert "blank requirements" in status and "every limit at its default" in status
        expected = direct_ranking(tui_engine, app.design)
        np.testing.assert_array_equal(app.ranking.feasible, expected.feasible)
        np.testing.assert_allclose(app.ranking.score, expected.score, equal_nan=True)
        # the rendered form shows the defaults in the fields
        text = screen_text(app)
        assert "default 0.5" in text and "no limit" in text
        assert not form.modified

    drive(app, scenario)


def test_replacing_an_edited_design_asks_first(tui_engine: Any, tmp_path: Path) -> None:
    """With unsaved changes, ctrl+n asks before the design is replaced: 'n' keeps the edit,
    'y' replaces it. The top bar says there are unsaved changes."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        await type_into(pilot, R_LOAD, "600 ohm")
        assert screen.form.modified
        assert "unsaved changes" in str(screen.query_one("#topbar").render())
        await pilot.press("ctrl+n")
        await settle(pilot)
        assert stack_types(app)[-1] == "ConfirmDialog"
        question = str(app.screen.query_one("#confirm-question").render())
        assert "unsaved changes" in question and "new design" in question
        await pilot.press("n")
        await settle(pilot)
        assert stack_types(app)[-1] == "MainScreen"
        assert app.design.load.r_load_ohm == 600.0 and app.design.name != "new design"
        await pilot.press("ctrl+n")
        await settle(pilot)
        await pilot.press("y")
        await settle(pilot)
        assert app.design.name == "new design" and app.design.load.r_load_ohm == 600.0
        assert "unsaved changes" not in str(screen.query_one("#topbar").render())

    drive(app, scenario)


def test_open_dialog_focus_typed_path_and_unsaved_changes(tui_engine: Any, tmp_path: Path) -> None:
    """ctrl+o: the path field has the focus; a relative path typed key by key and enter open
    that file (relative to the work folder). A bad file keeps the dialog open with the design
    reader's message naming the file; an edited design asks before it is replaced."""
    app = make_app(tui_engine, tmp_path)
    shutil.copy(SAMPLE_DESIGNS / "adc-buffer-3v3.toml", tmp_path / "buf.toml")
    (tmp_path / "bad[old].toml").write_text('name = "bad"\n[supply]\npositive = "5 kg"\n')
    wanted = load_design(tmp_path / "buf.toml")

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        await pilot.press("ctrl+o")
        await settle(pilot)
        dialog = app.screen
        assert stack_types(app)[-1] == "PathDialog"
        assert app.focused is dialog.query_one("#dialog-path")
        await paste_into(pilot, "dialog-path", "bad[old].toml")  # brackets: not markup
        await pilot.press("enter")
        await settle(pilot)
        assert app.screen is dialog
        err = str(dialog.query_one("#dialog-error").render())
        assert "bad[old].toml" in err and dialog.query_one("#dialog-error").has_class("shown")
        dialog.query_one("#dialog-path").value = ""
        await pilot.press(*"buf.toml")
        await pilot.press("enter")
        await settle(pilot)
        assert stack_types(app)[-1] == "MainScreen"
        assert app.design.name == wanted.name
        assert app.design.source == str(tmp_path / "buf.toml")
        # an edit, then another file: asked first
        await type_into(pilot, R_LOAD, "3.3 kohm")
        await pilot.press("ctrl+o")
        await settle(pilot)
        await pilot.press(*"buf.toml")
        await pilot.press("enter")
        await settle(pilot)
        assert stack_types(app)[-1] == "ConfirmDialog"
        await pilot.press("n")
        await settle(pilot)
        assert math.isclose(app.design.load.r_load_ohm, 3300.0)
        assert screen.form.modified

    drive(app, scenario)


def test_open_dialog_down_picks_a_sample(tui_engine: Any, tmp_path: Path) -> None:
    """From the path field, down moves to the sample designs; enter opens the one highlighted
    (the first sample file by name)."""
    app = make_app(tui_engine, tmp_path)
    first = sorted(SAMPLE_DESIGNS.glob("*.toml"))[0]

    async def scenario(pilot: Any) -> None:
        await pilot.press("ctrl+o")
        await settle(pilot)
        await pilot.press("down")
        await settle(pilot)
        assert app.focused is app.screen.query_one("#dialog-options")
        await pilot.press("enter")
        await settle(pilot)
        assert stack_types(app)[-1] == "MainScreen"
        assert app.design.name == load_design(first).name

    drive(app, scenario)


def test_save_proposes_a_name_and_keeps_comments(tui_engine: Any, tmp_path: Path) -> None:
    """ctrl+s proposes the design's own file, or for a new design a name made from its name;
    saving an edited copy of the sample keeps its comments and writes the new value; after
    saving, the form has no unsaved changes."""
    mine = tmp_path / "driver.toml"
    shutil.copy(LINE_DRIVER, mine)
    app = make_app(tui_engine, tmp_path, design=mine)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        await type_into(pilot, R_LOAD, "600 ohm")
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.screen.query_one("#dialog-path").value == str(mine)
        await pilot.press("enter")
        await settle(pilot)
        assert not screen.form.modified
        await pilot.press("ctrl+n")
        await settle(pilot)
        await pilot.press("ctrl+s")
        await settle(pilot)
        assert app.screen.query_one("#dialog-path").value == str(tmp_path / "new-design.toml")
        await pilot.press("escape")

    drive(app, scenario)
    text = mine.read_text(encoding="utf-8")
    original = LINE_DRIVER.read_text(encoding="utf-8")
    comments = [line for line in original.splitlines() if line.startswith("#")]
    assert comments and all(line in text.splitlines() for line in comments)
    assert load_design(mine).load.r_load_ohm == 600.0


# ---- screenshot ------------------------------------------------------------------------------


def test_screenshot_without_its_dialog_and_a_plain_title_bar(
    tui_engine: Any, tmp_path: Path
) -> None:
    """F8 takes the screen as it was (the file dialog is not in the picture); a second F8 while
    the dialog is open does not stack another; the SVG's title bar names partsel, the design
    and today's date, without window-control dots."""
    app = make_app(tui_engine, tmp_path)
    out = tmp_path / "shot.svg"

    async def scenario(pilot: Any) -> None:
        await pilot.press("f8")
        await settle(pilot)
        await pilot.press("f8")
        await settle(pilot)
        assert stack_types(app).count("PathDialog") == 1
        await paste_into(pilot, "dialog-path", str(out))
        await pilot.press("enter")
        await settle(pilot)
        assert stack_types(app)[-1] == "MainScreen"

    drive(app, scenario)
    svg = out.read_text(encoding="utf-8")
    shown = svg.replace("&#160;", " ")
    assert "Ranked parts · F3" in shown  # the screen is in the picture
    assert "screenshot" not in shown.split("-->", 1)[1].lower()  # its dialog is not
    title = f"partsel · 5 V line driver, AC-coupled into 2 kohm · {dt.date.today().isoformat()}"
    assert re.search(r'-title" fill="[^"]+" x="12" y="23">' + re.escape(title) + "</text>", svg)
    assert "<circle" not in svg and "#ff5f57" not in svg and 'rx="8"' not in svg


# ---- ranking table ----------------------------------------------------------------------------


@pytest.mark.parametrize("width", WIDTHS)
def test_ranking_table_fits_its_pane(tui_engine: Any, tmp_path: Path, width: int) -> None:
    """At 120 and 160 columns the table needs no sideways scrolling: the rank, part, verdict,
    key margin, stage and maker columns are on screen with their full headers, every shown
    cell is whole or visibly cut ('…'), and the status line names what is left out."""
    from partsel.tui.rows import COLUMN_BY_KEY, CORE, ORDER

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        pane = screen.ranking_pane
        pane.set_show_rejected(True)
        await settle(pilot)
        table = pane.table
        keys = [str(k.value) for k in table.columns]
        assert {"rank", "part", "verdict", "margin", "stage", "maker"} <= set(keys)
        assert table.virtual_size.width <= table.size.width
        assert table.max_scroll_x == 0
        text = screen_text(app)
        header = next(line for line in text.splitlines() if " Part " in line and "Verdict" in line)
        for label in ("Part", "Verdict", "Key margin", "Stage", "Maker"):
            assert label in header
        view, r = app.view, app.ranking
        for pn in table_parts(screen)[:12]:
            full = view.cells(r.index(pn))
            for key in keys:
                shown = str(table.get_cell(pn, key))
                whole = full[key].plain
                assert shown == whole or (shown.endswith("…") and whole.startswith(shown[:-1]))
        hidden = pane.hidden_columns
        assert set(hidden) == set(ORDER) - set(keys)
        widget = screen.query_one("#rank-status")
        status = widget_text(app, widget)
        assert " ".join(status.split()) == " ".join(str(widget.render()).split())  # not cut
        if 0 < len(hidden) <= 3:
            names = ", ".join(COLUMN_BY_KEY[k].label for k in hidden)
            assert f"left out at this width: {names}" in status
        elif hidden:
            assert f"{len(hidden)} columns left out at this width" in status
        seen.extend(keys)

    seen: list[str] = []
    drive(app, scenario, size=(width, 40))
    if width == 120:  # the README says: only the core columns at 120 (sample catalogue)
        assert set(seen) == set(CORE)
    if width == 160:  # room for the fix resistor and the THD estimate as well
        assert {"fix", "thd"} <= set(seen)


def test_ranking_codes_explained_in_help_and_part_pane(tui_engine: Any, tmp_path: Path) -> None:
    """The F1 help explains every code of the ranking table (verdict counts, key-margin ratio
    and sign, ×0, fix, stage); the part pane says the key margin in words with the solver's
    figures: to spare for a feasible part, short by for a rejected one, ×0 explained."""
    from partsel.tui.screens.help import help_markdown

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        pane = screen.ranking_pane
        pane.set_show_rejected(True)
        await settle(pilot)
        r = app.ranking
        # a feasible part: the tightest passing check, to spare
        i = int(r.order[0])
        j = int(r.tightest[i])
        head = str(screen.part_view.query_one(".part-head").render())
        assert "key margin, the tightest check it passes" in head
        spare = P.quantity(
            abs(float(r.checks.margin[i, j])),
            P.difference_unit(C.CHECKS[j].display_unit),
            symbols=True,
        )
        assert f"{spare} to spare" in head and P.ratio(r.checks.ratio[i, j]) in head
        # BRQ-812 fails conduction outright: its stage current turns negative (ratio ×0)
        pn = "BRQ-812"
        i = r.index(pn)
        assert C.CHECKS[int(r.binding[i])].name == "conduction"
        pane.table.move_cursor(row=table_parts(screen).index(pn))
        await settle(pilot)
        head = str(screen.part_view.query_one(".part-head").render())
        assert f"fails {int(r.n_failing[i])} checks" in head
        assert "the check furthest from passing: conduction mode, short by" in head
        assert "×0: the part's figure is zero or negative" in head
        assert str(pane.table.get_cell(pn, "verdict")) == f"✗ fails {int(r.n_failing[i])}"
        await pilot.press("f1")
        await settle(pilot)
        assert stack_types(app)[-1] == "HelpScreen"

    drive(app, scenario)
    text = help_markdown()
    for code in ("✗ fails 3", "✓ with fix", "Key margin", "`×0`", "`+` to spare", "1.8 kΩ→V+ ✓"):
        assert code in text, code
    for short in P.TOPOLOGY_SHORT.values():
        assert f"`{short}`" in text


@pytest.mark.parametrize("width", WIDTHS)
def test_footer_groups_are_separated(tui_engine: Any, tmp_path: Path, width: int) -> None:
    """Each footer group's label is followed by a space before the next key."""
    from textual.widgets._footer import FooterLabel

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        footer = app.screen.query_one("Footer")
        labels = list(footer.query(FooterLabel))
        assert labels
        widgets = [w for w in footer.children if w.display]
        for label in labels:
            k = widgets.index(label)
            if k + 1 < len(widgets) and widgets[k + 1].region.width:
                assert widgets[k + 1].region.x > label.region.right
        bottom = screen_text(app).splitlines()[-1]
        assert "Design/Ranking f4" in bottom

    drive(app, scenario, size=(width, 40))


# ---- limits form ----------------------------------------------------------------------------


@pytest.mark.parametrize("width", WIDTHS)
def test_form_labels_never_touch_their_field(tui_engine: Any, tmp_path: Path, width: int) -> None:
    """Every label of the form (Limits and Objectives unfolded, one field marked bad) ends at
    least one cell before its input, and every unit fits its column: no 'ratiodefault', no
    'V/rt'."""
    from partsel.tui.fields import FIELDS

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        form = screen.form
        await form.open_group("Limits")
        await form.open_group("Objectives (weights)")
        form.set_field("f-requirements-limits-min-bandwidth-ratio", "x")
        await settle(pilot)
        assert screen.query_one("#f-requirements-limits-min-bandwidth-ratio-row").has_class("bad")
        for spec in FIELDS:
            label = screen.query_one(f"#{spec.id}-label")
            widget = screen.query_one(f"#{spec.id}")
            unit = screen.query_one(f"#{spec.id}-unit")
            text = str(label.render())
            assert len(text.rstrip()) < label.content_size.width, spec.label
            assert label.region.right <= widget.region.x, spec.label
            assert len(spec.unit) <= unit.content_size.width, spec.unit
        noise = screen.query_one("#f-requirements-limits-max-noise")
        form.scroll_to_widget(noise, animate=False)
        await settle(pilot)
        text = screen_text(app)
        assert "V/√Hz" in text
        assert not re.search(r"[a-z≥≤]default", text)

    drive(app, scenario, size=(width, 40))


# ---- compare --------------------------------------------------------------------------------


def test_compare_margin_failing_on_both_is_not_better(tui_engine: Any, tmp_path: Path) -> None:
    """BRQ-722 and VSR-52 both fail the swing to V+ in the line driver (the solver says so): the
    compare row marks both ✗ in red, neither ▲ nor green. Against QLN-102, which passes, the
    passing one is the better and the failing one ✗."""
    app = make_app(tui_engine, tmp_path)
    j = C.IDX["swing_high"]

    async def scenario(pilot: Any) -> None:
        from partsel.tui.screens.compare import CompareScreen

        r = app.ranking
        for pair, want in (
            (("BRQ-722", "VSR-52"), ("fail", "fail")),
            (("QLN-102", "BRQ-722"), ("better", "fail")),
        ):
            status = [int(r.checks.status[r.index(pn), j]) for pn in pair]
            assert status == [C.PASS if m == "better" else C.FAIL for m in want]
            app.push_screen(CompareScreen(pair))
            await settle(pilot)
            cmp = app.screen
            k = next(
                n for n, row in enumerate(cmp.rows) if row.label == P.check_label("swing_high")
            )
            assert cmp.rows[k].marks == want
            cells = cmp.query_one("#compare-table").get_row(f"row-{k}")
            for cell, mark in zip(cells[1:], want, strict=True):
                assert ("✗" in cell.plain) == (mark == "fail")
                assert ("▲" in cell.plain) == (mark == "better")
                assert "green" not in str(cell.style) or mark == "better"
            await pilot.press("escape")
            await settle(pilot)

    drive(app, scenario)


def test_compare_changed_rows(tui_engine: Any, tmp_path: Path) -> None:
    """'c' shows only the rows whose values change between the parts (and again every row);
    the key, the footer and the help call it 'changed rows'."""
    from partsel.tui.screens.compare import CompareScreen
    from partsel.tui.screens.help import help_markdown

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        app.push_screen(CompareScreen(("BRQ-622", "BRQ-722")))
        await settle(pilot)
        cmp = app.screen
        table = cmp.query_one("#compare-table")
        every = [k for k in table.rows if str(k.value).startswith("row-")]
        await pilot.press("c")
        await settle(pilot)
        changed = [k for k in table.rows if str(k.value).startswith("row-")]
        want = [n for n, row in enumerate(cmp.rows) if len(set(row.texts)) > 1]
        assert [int(str(k.value)[4:]) for k in changed] == want
        assert 0 < len(changed) < len(every)
        assert "changed rows only" in str(cmp.query_one("#compare-head").render())
        assert "c Changed rows" in screen_text(app).splitlines()[-1]
        await pilot.press("c")
        await settle(pilot)
        assert len([k for k in table.rows if str(k.value).startswith("row-")]) == len(every)

    drive(app, scenario)
    text = help_markdown()
    assert "| `c` | Changed rows |" in text and "ifferences only" not in text


# ---- replace --------------------------------------------------------------------------------


@pytest.mark.parametrize("width", WIDTHS)
def test_replace_reason_uses_the_width_and_summary_is_whole(
    tui_engine: Any, tmp_path: Path, width: int
) -> None:
    """The main-reason column takes the width the other columns leave; the summary line is
    shown whole (it wraps instead of being cut)."""
    from partsel.tui.screens.replace import FIXED_COLUMNS, ReplacementScreen

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        app.push_screen(ReplacementScreen("BRQ-622"))
        await settle(pilot)
        rep = app.screen
        table = rep.query_one("#candidates")
        why = table.columns[next(k for k in table.columns if k.value == "why")]
        fixed = sum(w for _k, _l, w in FIXED_COLUMNS) + 2 * (len(FIXED_COLUMNS) + 1)
        assert why.width == table.size.width - fixed - 1
        assert table.max_scroll_x == 0
        widget = rep.query_one("#replace-status")
        summary = " ".join(str(widget.render()).split())
        shown = " ".join(widget_text(app, widget).split())
        assert shown == summary and summary.endswith("unsuitable hidden (ctrl+u)")

    drive(app, scenario, size=(width, 40))


def test_replace_ctrl_n_keeps_the_candidate_filter(tui_engine: Any, tmp_path: Path) -> None:
    """A filter typed over the candidates, and the unsuitable ones shown, stay when ctrl+n takes
    another incumbent: the new candidates are filtered the same way."""
    from partsel.tui.screens.replace import ReplacementScreen, candidate_text

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        app.push_screen(ReplacementScreen("BRQ-622"))
        await settle(pilot)
        rep = app.screen
        await pilot.press("ctrl+u")
        await settle(pilot)
        await pilot.press("ctrl+f")
        await pilot.press(*"review")
        await settle(pilot)
        first = [pn for pn in rep.query_one("#candidates").rows]
        assert first
        await pilot.press("ctrl+n")
        await pilot.press(*"HKE-262")
        await pilot.press("enter")
        await settle(pilot)
        assert rep.vetting.incumbent.part_number == "HKE-262"
        assert rep.query_one("#candidate-filter").value == "review"
        assert rep.include_unsuitable
        shown = [str(k.value) for k in rep.query_one("#candidates").rows]
        want = [c.part_number for c in rep.vetting.candidates if "review" in candidate_text(c)]
        assert shown == want and shown
        assert any(c.verdict == "unsuitable" for c in rep.vetting.candidates)

    drive(app, scenario)


# ---- look and names -------------------------------------------------------------------------


def test_actions_list_has_partsel_entries_only(tui_engine: Any, tmp_path: Path) -> None:
    """ctrl+p opens the 'Actions' list (once, however often pressed) with partsel's actions and
    none of the framework's generic entries, also when a text field has the focus."""
    from partsel.tui.palette import PLACEHOLDER, ActionPalette

    app = make_app(tui_engine, tmp_path)
    generic = ("Theme", "Keys", "Maximize", "Screenshot", "Quit", "palette")
    editing = ("Cursor", "Delete", "Select", "Paste", "Cut", "Copy", "Focus", "Scroll", "Move")

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        for focus in ("ranking", R_LOAD):
            screen.query_one(f"#{focus}").focus()
            await settle(pilot)
            titles = [c.title for c in app.get_system_commands(screen)]
            assert "New (^n)" in titles and "Help (f1)" in titles and "Quit (^q)" in titles
            assert not any(t in generic for t in titles)
            assert not any(t.startswith(editing) for t in titles), titles
        await pilot.press("ctrl+p")
        await settle(pilot)
        await pilot.press("ctrl+p")
        await settle(pilot)
        assert stack_types(app).count("ActionPalette") == 1
        palette = app.screen
        assert isinstance(palette, ActionPalette)
        assert str(palette.query_one("#palette-title").render()) == "Actions"
        assert palette.query_one("CommandInput").placeholder == PLACEHOLDER
        assert not palette.query("SearchIcon")
        await pilot.press("escape")

    drive(app, scenario)


def test_pane_titles_show_their_keys(tui_engine: Any, tmp_path: Path) -> None:
    """Each pane's title names the key that goes to it, and that key does."""
    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        screen = app.screen
        assert screen.query_one("#design-pane").border_title == "Design · F2"
        assert screen.query_one("#ranking-pane").border_title == "Ranked parts · F3"
        assert screen.query_one("#part-pane").border_title == "Part · F4 full view"
        await pilot.press("f2")
        await settle(pilot)
        assert screen.query_one("#design-pane") in app.focused.ancestors
        await pilot.press("f3")
        await settle(pilot)
        assert app.focused is screen.ranking_pane.table
        await pilot.press("f4")
        await settle(pilot)
        assert stack_types(app)[-1] == "PartScreen"
        text = screen_text(app)
        assert "Part " in text

    drive(app, scenario)


def test_fit_columns_keeps_the_core_and_fills_the_width() -> None:
    """The column fit (no UI): the core columns always, optional ones in their order while they
    fit, never wider than the available cells unless even the narrowest core does not fit."""
    from partsel.tui.rows import CORE, GAP, NARROWEST, OPTIONAL, ORDER, fit_columns

    natural = dict.fromkeys(ORDER, 10) | {"margin": 30, "maker": 21, "rank": 3, "part": 8}
    for available in range(40, 200, 7):
        widths = fit_columns(natural, available)
        assert list(widths) == [k for k in ORDER if k in widths]
        assert set(CORE) <= set(widths)
        used = sum(w + GAP for w in widths.values())
        narrowest = sum(min(natural[k], NARROWEST.get(k, natural[k])) + GAP for k in CORE)
        assert used <= max(available, narrowest)
        for k in OPTIONAL:
            if k not in widths:  # left out only when it did not fit
                assert used + natural[k] + GAP > available
        assert all(widths[k] == natural[k] for k in OPTIONAL if k in widths)
    assert set(fit_columns(natural, 400)) == set(ORDER)


def test_new_design_mapping_matches_reader(tui_engine: Any, tmp_path: Path) -> None:
    """The new design is what the design reader makes of the old one's circuit without its
    requirements, name and description."""
    from partsel.design import design_to_mapping

    app = make_app(tui_engine, tmp_path)

    async def scenario(pilot: Any) -> None:
        made = app.screen.new_design()
        data = design_to_mapping(load_design(LINE_DRIVER))
        for key in ("requirements", "description"):
            data.pop(key, None)
        data["name"] = "new design"
        assert made == design_from_mapping(data)

    drive(app, scenario)


def _notices(app: Any) -> list[str]:
    return [n.message for n in app._notifications]


def test_first_compile_is_announced(tui_engine: Any, tmp_path: Path) -> None:
    """Before a simulation compiles the stepper (numba, once per machine) the UI says so in the
    command line's words (``present.COMPILE_NOTICE``): heard before the app is up, it is shown
    when it mounts; heard later in a worker thread, at once; the listener goes with the app."""
    import threading

    from partsel.physics import stepper, stepper_layout

    # the stepper loaded first (a real compile, on a cold cache, is then heard by no app):
    # the notices below are the test's own
    assert stepper.run is not None
    app = make_app(tui_engine, tmp_path)
    assert app._heard_compile in stepper_layout.COMPILE_LISTENERS
    app._heard_compile()  # what stepper_layout.before_stepper_import calls on a cold cache

    async def scenario(pilot: Any) -> None:
        await pilot.pause()
        assert _notices(app).count(P.COMPILE_NOTICE) == 1
        app.clear_notifications()
        worker = threading.Thread(target=app._heard_compile)
        worker.start()
        worker.join()
        await pilot.pause()
        assert _notices(app) == [P.COMPILE_NOTICE]

    drive(app, scenario)
    assert app._heard_compile not in stepper_layout.COMPILE_LISTENERS
