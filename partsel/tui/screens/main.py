"""The main screen: the design on the left, the ranked parts and the highlighted part on the
right. Describe the circuit first, then read the parts."""

from __future__ import annotations

import re
from collections.abc import Iterable
from functools import partial
from pathlib import Path
from typing import TYPE_CHECKING, ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult, SystemCommand
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Footer, Input, Static

from partsel.api import Prediction
from partsel.design import design_from_mapping, design_to_mapping, load_design, save_design
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.tui import fmt
from partsel.tui.fields import FIELD_BY_PATH
from partsel.tui.rows import COLUMN_BY_KEY, SORTABLE, RankingView
from partsel.tui.widgets.design_form import LIMITS_GROUP, DesignForm
from partsel.tui.widgets.part_view import PartView
from partsel.tui.widgets.ranking_pane import RankingPane

if TYPE_CHECKING:
    from partsel.tui.app import PartselApp


#: Seconds after the screen's mount at which the design form is mounted even when no ranking
#: has arrived (it is mounted as soon as the first ranking is drawn, or has failed).
FORM_AFTER_S = 1.0


def file_stem(name: str) -> str:
    """A file name proposed for a design called ``name``: its words in lower case joined by
    dashes ("5 V line driver, AC-coupled" -> "5-v-line-driver-ac-coupled")."""
    words = re.findall(r"[A-Za-z0-9]+", name.lower())
    return "-".join(words)[:60].strip("-") or "design"


BASIS_FIELD = FIELD_BY_PATH[("requirements", "basis")].id
NAME_FIELD = FIELD_BY_PATH[("name",)].id
#: Field focused by F2 when no field was focused before.
FIRST_FIELD = FIELD_BY_PATH[("load", "resistance")].id


#: Footer groups: related keys shown together under one label.
NAV = Binding.Group("Design/Ranking")
FILES = Binding.Group("New/Open/Save")
VIEW = Binding.Group("Basis/Rejected")

#: Pane titles: each names the key that goes to it.
DESIGN_TITLE = "Design · F2"
RANKING_TITLE = "Ranked parts · F3"
PART_TITLE = "Part · F4 full view"
#: Name of a design started with "new design".
NEW_DESIGN_NAME = "new design"


class MainScreen(Screen[None]):
    """Design form, ranking and part view."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding(
            "f2",
            "focus_design",
            "Design",
            id="focus-design",
            priority=True,
            group=NAV,
            tooltip="Go to the design form (the field last edited)",
        ),
        Binding(
            "f3",
            "focus_ranking",
            "Ranking",
            id="focus-ranking",
            priority=True,
            group=NAV,
            tooltip="Go to the ranked parts",
        ),
        Binding(
            "f4",
            "part_view",
            "Part",
            id="part-view",
            priority=True,
            tooltip="Open the part view of the highlighted part (also: enter)",
        ),
        Binding(
            "f5",
            "compare",
            "Compare",
            id="compare",
            priority=True,
            tooltip="Compare the marked parts (2 to 4; mark with space)",
        ),
        Binding(
            "f6",
            "replace",
            "Replace",
            id="replace",
            priority=True,
            tooltip="Find replacements for the highlighted part",
        ),
        Binding(
            "f7",
            "catalogue",
            "Catalogue",
            id="catalogue",
            priority=True,
            tooltip="Browse, search and edit the catalogue",
        ),
        Binding(
            "ctrl+n",
            "new_design",
            "New",
            id="new-design",
            priority=True,
            group=FILES,
            tooltip="Start a new design: this circuit, blank requirements (every limit at its "
            "default)",
        ),
        Binding(
            "ctrl+o",
            "open_design",
            "Open",
            id="open-design",
            priority=True,
            group=FILES,
            tooltip="Open a design file (or a sample design)",
        ),
        Binding(
            "ctrl+s",
            "save_design",
            "Save",
            id="save-design",
            priority=True,
            group=FILES,
            tooltip="Save the design to a file (.toml, .yaml, .json)",
        ),
        Binding(
            "ctrl+t",
            "export",
            "Export",
            id="export",
            priority=True,
            show=False,
            tooltip="Export the ranking to CSV or JSON",
        ),
        Binding(
            "ctrl+b",
            "toggle_basis",
            "Basis",
            id="toggle-basis",
            priority=True,
            show=False,
            group=VIEW,
            tooltip="Toggle worst-case / typical basis",
        ),
        Binding(
            "ctrl+r",
            "toggle_rejected",
            "Rejected",
            id="toggle-rejected",
            priority=True,
            show=False,
            group=VIEW,
            tooltip="Show or hide the rejected parts (with their binding constraint)",
        ),
        Binding(
            "ctrl+f",
            "filter",
            "Filter",
            id="filter",
            priority=True,
            show=False,
            tooltip="Filter the ranking by text",
        ),
    ]

    app: PartselApp  # type: ignore[assignment]

    def __init__(self) -> None:
        super().__init__()
        self.last_field = FIRST_FIELD
        self.form_ok = True
        self.form_started = False
        self.form_mounted = False
        self._read: tuple[Path, Design] | None = None

    def compose(self) -> ComposeResult:
        yield Static("", id="topbar")
        with Horizontal(id="main"):
            with Vertical(id="design-pane") as pane:
                pane.border_title = DESIGN_TITLE
                yield Static("reading the design…", id="form-wait", classes="form-status")
            with Vertical(id="right"):
                ranking = RankingPane(id="ranking-pane")
                ranking.border_title = RANKING_TITLE
                yield ranking
                part = PartView(id="part-pane")
                part.border_title = PART_TITLE
                yield part
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.query_one(PartView).show_empty("ranking…")
        # The ranking first (prefetched by the app), the form's many fields right after the
        # first table is drawn: the user sees the ranked parts sooner.
        self.app.set_design(self.app.initial_design)
        self.query_one(RankingPane).table.focus()
        self.set_timer(FORM_AFTER_S, self._mount_form)

    async def _mount_form(self) -> None:
        """Mount the design form (once) and fill it from the first design."""
        if self.form_started:
            return
        self.form_started = True
        wait = self.query_one("#form-wait", Static)
        form = DesignForm(id="design-form")
        await self.query_one("#design-pane").mount(form, before=wait)
        await wait.remove()
        form.load_design(self.app.initial_design)
        self.form_mounted = True
        self.update_topbar()

    @property
    def form(self) -> DesignForm:
        return self.query_one(DesignForm)

    @property
    def ranking_pane(self) -> RankingPane:
        return self.query_one(RankingPane)

    @property
    def part_view(self) -> PartView:
        return self.query_one(PartView)

    # ---- top bar ------------------------------------------------------------------------------
    def update_topbar(self) -> None:
        app = self.app
        d = app.design
        text = Text()
        text.append("partsel", style="bold")
        if d is not None:
            text.append(f"  design: {d.name}")
            if d.source:
                text.append(f" [{Path(d.source).name}]", style="dim")
        if self.form_mounted and self.form.modified:
            text.append("  ● unsaved changes", style="bold")
        if not self.form_ok:
            text.append(
                f"  ·  {fmt.BAD} design has problems: ranking is for the last valid one",
                style="bold red",
            )
        text.append(f"  ·  catalogue: {app.table.n} parts")
        self.query_one("#topbar", Static).update(text)

    # ---- messages from the widgets -------------------------------------------------------------
    @on(DesignForm.Valid)
    def _design_valid(self, event: DesignForm.Valid) -> None:
        self.form_ok = True
        self.app.set_design(event.design)
        self.update_topbar()

    @on(DesignForm.Invalid)
    def _design_invalid(self, event: DesignForm.Invalid) -> None:
        self.form_ok = False
        self.update_topbar()

    @on(Input.Changed, ".field-input")
    def _field_edited(self, event: Input.Changed) -> None:
        if event.input.id:
            self.last_field = event.input.id

    @on(RankingPane.PartHighlighted)
    def _part_highlighted(self, event: RankingPane.PartHighlighted) -> None:
        self.show_part(event.part_number)

    def ranking_failed(self) -> None:
        """The ranking failed (the app has said why): the form comes up to correct the design."""
        if not self.form_mounted:
            self.call_after_refresh(self._mount_form)

    def show_ranking(self, view: RankingView) -> None:
        """A new ranking from the app."""
        self.ranking_pane.show(view)
        self.update_topbar()
        if not self.form_mounted:
            self.call_after_refresh(self._mount_form)

    def show_part(self, part_number: str | None) -> None:
        """Show ``part_number`` of the current ranking in the part pane."""
        app, pv = self.app, self.part_view
        r = app.ranking
        if part_number is None or r is None:
            pv.show_empty("no part highlighted" if r is not None else "ranking…")
            return
        try:
            i = r.index(part_number)
        except KeyError:
            pv.show_empty(f"{part_number} is not in the catalogue")
            return
        pv.show_part(r, i, app.record(part_number))
        cached = app.cached_prediction((part_number,))
        if cached is not None:
            pv.show_simulation(cached, 0, r, i)
        elif app.simulate:
            pv.show_plot_message(f"{part_number}: simulating one period…")
            app.request_simulation((part_number,))
        else:
            pv.show_plot_message("simulation off (closed-form figures above)")

    def show_simulation(self, part_numbers: tuple[str, ...], pred: Prediction) -> None:
        """A simulation from the app: shown if it is the highlighted part's."""
        pv, r = self.part_view, self.app.ranking
        if r is None or len(part_numbers) != 1 or part_numbers[0] != pv.part_number:
            return
        pv.show_simulation(pred, 0, r, r.index(part_numbers[0]))

    # ---- actions ------------------------------------------------------------------------------
    def action_focus_design(self) -> None:
        self.query_one(f"#{self.last_field}").focus()

    def action_focus_ranking(self) -> None:
        self.ranking_pane.table.focus()

    def action_filter(self) -> None:
        self.query_one("#rank-filter", Input).focus()

    def action_part_view(self) -> None:
        pn = self.ranking_pane.current_part
        if pn is None:
            self.notify("no part highlighted", severity="warning")
            return
        from partsel.tui.screens.part import PartScreen

        self.app.push_screen(PartScreen(pn))

    def action_toggle_mark(self) -> None:
        pn = self.ranking_pane.current_part
        if pn is None:
            return
        self.app.toggle_mark(pn)
        self.ranking_pane.set_marked(self.app.marked)
        n = len(self.app.marked)
        self.notify(
            f"marked for compare: {', '.join(self.app.marked) or 'none'} ({n} of 2–4)", timeout=2
        )

    def action_compare(self) -> None:
        marked = list(self.app.marked)
        if len(marked) < 2:
            pn = self.ranking_pane.current_part
            self.notify(
                "mark 2 to 4 parts with space first"
                + (f" (marked: {', '.join(marked)})" if marked else "")
                + ("" if pn is None else f"; {pn} is highlighted"),
                severity="warning",
            )
            return
        from partsel.tui.screens.compare import CompareScreen

        self.app.push_screen(CompareScreen(tuple(marked)))

    def action_replace(self) -> None:
        pn = self.ranking_pane.current_part
        from partsel.tui.screens.replace import ReplacementScreen

        self.app.push_screen(ReplacementScreen(pn))

    def action_catalogue(self) -> None:
        from partsel.tui.screens.catalogue import CatalogueScreen

        self.app.push_screen(CatalogueScreen())

    def action_toggle_basis(self) -> None:
        from textual.widgets import Select

        sel = self.query_one(f"#{BASIS_FIELD}", Select)
        sel.value = "typical" if sel.value == "worst-case" else "worst-case"
        self.notify(f"basis: {sel.value}", timeout=2)

    def action_toggle_rejected(self) -> None:
        pane = self.ranking_pane
        pane.set_show_rejected(not pane.show_rejected)

    def action_open_design(self) -> None:
        from partsel.tui.screens.dialogs import PathDialog

        samples = [(f"sample: {p.name}", str(p)) for p in self.app.samples]
        self.app.push_screen(
            PathDialog(
                "Open a design file",
                "",
                suggestions=samples,
                must_exist=True,
                base=self.app.work_dir,
                check=self._readable_design,
                purpose="open",
            ),
            self.open_design,
        )

    def _readable_design(self, path: Path) -> str | None:
        """The design reader's message when ``path`` is not a good design file, else None
        (the design read is kept for :meth:`open_design`)."""
        try:
            self._read = (path, load_design(path))
        except InputError as exc:
            return str(exc)
        return None

    def open_design(self, path: str | None) -> bool:
        """Open the design file at ``path`` (asking first when the form has unsaved changes).
        False and a message when the file is not a good design."""
        if not path:
            return False
        target = self.app._resolve(Path(path))
        read, self._read = self._read, None
        try:
            design = read[1] if read is not None and read[0] == target else load_design(target)
        except InputError as exc:
            self.notify(
                str(exc), title="design not opened", severity="error", timeout=10, markup=False
            )
            return False
        self.replace_design(design, f"opened {target.name}")
        return True

    def new_design(self) -> Design | None:
        """A new design: the circuit of the last valid design, its own name, no file, and blank
        requirements (the solver's defaults)."""
        base = self.app.design
        if base is None:
            return None
        data = design_to_mapping(base)
        for key in ("requirements", "name", "description"):
            data.pop(key, None)
        data["name"] = NEW_DESIGN_NAME
        return design_from_mapping(data)

    def action_new_design(self) -> None:
        design = self.new_design()
        if design is None:
            self.notify("no valid design yet to take the circuit from", severity="warning")
            return
        base = self.app.design.name if self.app.design is not None else ""
        note = (
            f"New design: the circuit of '{base}', blank requirements: every limit at its "
            "default (see Limits)."
        )
        self.replace_design(design, "new design", note=note, open_limits=True)

    def replace_design(
        self, design: Design, done: str, *, note: str = "", open_limits: bool = False
    ) -> None:
        """Put ``design`` in the form; when the form has unsaved changes, ask first."""

        def go(yes: bool | None) -> None:
            if not yes:
                return
            self.form.load_design(design, note=note)
            if open_limits:
                self.call_later(self.form.open_group, LIMITS_GROUP)
            self.update_topbar()
            self.notify(done, timeout=2, markup=False)

        if not self.form.modified:
            go(True)
            return
        from partsel.tui.screens.dialogs import ConfirmDialog

        current = self.form.values().get(NAME_FIELD, "").strip() or "this design"
        self.app.push_screen(
            ConfirmDialog(
                f"'{current}' has unsaved changes. Replace it with '{design.name}'?",
                "Replace",
                "Keep editing",
            ),
            go,
        )

    def action_save_design(self) -> None:
        from partsel.tui.screens.dialogs import PathDialog

        if not self.form_ok or self.app.design is None:
            self.notify("the design has problems: fix them before saving", severity="error")
            return
        source = self.app.design.source
        samples = {str(p) for p in self.app.samples}
        if source and source not in samples:
            default = source
        else:
            default = str(self.app.work_dir / f"{file_stem(self.app.design.name)}.toml")
        self.app.push_screen(PathDialog("Save the design", default), self.save_design)

    def save_design(self, path: str | None) -> bool:
        """Write the current design to ``path`` (False and a message on failure)."""
        design = self.app.design
        if not path or design is None:
            return False
        target = self.app._resolve(Path(path))
        base = design.source if design.source and Path(design.source).is_file() else None
        try:
            save_design(design, target, base=base)
        except (InputError, OSError) as exc:
            self.notify(
                str(exc), title="design not saved", severity="error", timeout=10, markup=False
            )
            return False
        self.form.mark_saved(str(target))
        self.update_topbar()
        self.notify(f"saved {target.name}", timeout=2, markup=False)
        return True

    def action_export(self) -> None:
        from partsel.tui.screens.dialogs import PathDialog

        default = str(self.app.work_dir / "ranking.csv")
        self.app.push_screen(PathDialog("Export the ranking (.csv or .json)", default), self.export)

    def export(self, path: str | None) -> Path | None:
        """Export the ranking to ``path`` (None and a message on failure)."""
        if not path:
            return None
        try:
            out = self.app.export_ranking(Path(path))
        except (InputError, OSError) as exc:
            self.notify(str(exc), title="not exported", severity="error", timeout=10, markup=False)
            return None
        n = self.app.ranking.n if self.app.ranking is not None else 0
        self.notify(f"exported {n} parts to {out.name}", timeout=3, markup=False)
        return out

    # ---- command palette ----------------------------------------------------------------------
    def palette_commands(self) -> Iterable[SystemCommand]:
        """Commands beyond the key bindings: sort by a column, open a sample design."""
        pane = self.ranking_pane
        for key in SORTABLE:
            label = COLUMN_BY_KEY[key].label
            yield SystemCommand(
                f"Sort ranking by {label}", COLUMN_BY_KEY[key].help, partial(pane.set_sort, key)
            )
        yield SystemCommand(
            "Sort ranking: reverse order",
            "Reverse the sort order (S)",
            lambda: pane.set_sort(pane.sort, not pane.descending),
        )
        if self.focused is not pane.table:  # there, space is listed with the table's keys
            yield SystemCommand(
                "Mark highlighted part for compare (space in the ranking)",
                "Mark or unmark the highlighted part",
                self.action_toggle_mark,
            )
        for p in self.app.samples:
            yield SystemCommand(
                f"Open sample design {p.name}", str(p.name), partial(self.open_design, str(p))
            )
