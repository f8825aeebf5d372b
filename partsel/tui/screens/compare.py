"""The compare view: two to four parts side by side in the current design, the better value of
each row marked ▲ (green), the worse ▼ (red), equal values =, a value that fails its check ✗
(red); ``c`` shows only the changed rows (those whose values change from part to part); their
simulated waveforms overlaid."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

import numpy as np
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from partsel.api import CAUTION, Prediction
from partsel.errors import InputError
from partsel.tui import fmt, theme
from partsel.tui.compare_model import CompareRow, catalogue_rows, compare_rows, row_changes
from partsel.tui.widgets.plots import WavePlot

if TYPE_CHECKING:
    from partsel.tui.app import PartselApp

_MARK_STYLE = {
    "better": (fmt.BETTER, "green"),
    "worse": (fmt.WORSE, "red"),
    "same": (fmt.SAME, "dim"),
    "fail": (fmt.BAD, "red"),
    "": ("", ""),
}


def cell(text: str, mark: str) -> Text:
    """A value with its mark: symbol and colour."""
    sym, style = _MARK_STYLE.get(mark, ("", ""))
    return Text(f"{text} {sym}".rstrip(), style=style)


class CompareScreen(Screen[None]):
    """Parts side by side."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.pop_screen", "Back", tooltip="Back to the ranking"),
        Binding(
            "c",
            "toggle_changed",
            "Changed rows",
            tooltip="Show only the rows whose values change from part to part (again: every row)",
        ),
    ]

    app: PartselApp  # type: ignore[assignment]

    def __init__(self, part_numbers: tuple[str, ...]) -> None:
        super().__init__()
        self.part_numbers = part_numbers
        self.rows: list[CompareRow] = []
        self.changed_only = False

    def compose(self) -> ComposeResult:
        with Vertical(id="compare") as box:
            box.border_title = "Compare: " + " · ".join(self.part_numbers)
            yield Static("", id="compare-head")
            yield DataTable(id="compare-table", cursor_type="row", zebra_stripes=True)
            yield WavePlot(id="compare-plot")
            yield Static(Text(CAUTION, style="italic"), classes="caution")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        app, r = self.app, self.app.ranking
        head = self.query_one("#compare-head", Static)
        if r is None:
            head.update("no ranking")
            return
        try:
            idx = [r.index(pn) for pn in self.part_numbers]
            cat = app.session.compare(list(self.part_numbers), None, basis=r.requirements.basis)
        except (KeyError, InputError) as exc:
            head.update(Text(f"cannot compare: {exc}", style="red"))
            return
        self.rows = compare_rows(r, idx) + catalogue_rows(cat)
        head.update(self.head_text())
        self.fill()
        plot = self.query_one(WavePlot)
        key = app.prediction_key(self.part_numbers)
        cached = app._sims.get(key)
        if cached is not None:
            self.show_simulation(self.part_numbers, cached)
        elif app.simulate:
            plot.show_message("simulating the parts over one period…")
            app.request_simulation(self.part_numbers, group="compare")
        else:
            plot.show_message("simulation off")

    def head_text(self) -> Text:
        """The design, the basis, what the marks mean and which rows are shown."""
        r = self.app.ranking
        name = r.design.name if r is not None else ""
        basis = r.requirements.basis if r is not None else ""
        shown = (
            "changed rows only (c: every row)"
            if self.changed_only
            else "every row (c: changed rows)"
        )
        return Text.assemble(
            (name, "bold"),
            f" · {basis} basis · ",
            (f"{fmt.BETTER} better", "green"),
            " ",
            (f"{fmt.WORSE} worse", "red"),
            f" {fmt.SAME} equal ",
            (f"{fmt.BAD} fails its check", "red"),
            f" (per row, among these parts) · {shown}",
        )

    def fill(self) -> None:
        table = self.query_one("#compare-table", DataTable)
        table.clear(columns=True)
        label_w = min(30, max([25, *(len(row.label) for row in self.rows)]) + 1)
        table.add_column("", key="label", width=label_w)
        n = len(self.part_numbers)
        room = (table.size.width or self.app.size.width - 4) - label_w - 2 * (n + 1) - 2
        width = max(16, min(40, room // n))
        for pn in self.part_numbers:
            table.add_column(pn, key=pn, width=width)
        group = None
        for k, row in enumerate(self.rows):
            if self.changed_only and not row_changes(row):
                continue
            if row.group != group:
                group = row.group
                table.add_row(
                    Text(group, style="bold underline"),
                    *([""] * len(self.part_numbers)),
                    key=f"group-{k}",
                )
            marks = row.marks or ("",) * len(row.texts)
            table.add_row(
                row.label,
                *(cell(t, m) for t, m in zip(row.texts, marks, strict=True)),
                key=f"row-{k}",
            )

    def action_toggle_changed(self) -> None:
        self.changed_only = not self.changed_only
        self.fill()
        self.query_one("#compare-head", Static).update(self.head_text())

    def show_simulation(self, part_numbers: tuple[str, ...], pred: Prediction) -> None:
        if part_numbers != self.part_numbers or pred.sim is None:
            return
        sim = pred.sim
        t_ms = (sim.t_s - sim.t_s[0]) * 1e3
        series = [
            (sim.v_out[k], pn, theme.PLOT_SERIES[k % len(theme.PLOT_SERIES)])
            for k, pn in enumerate(part_numbers)
        ]
        thd = ", ".join(f"{pn} {fmt.percent(sim.thd_f[k], 3)}" for k, pn in enumerate(part_numbers))
        markers = [
            (float((sim.handover_time_s[k] - sim.t_s[0]) * 1e3), "")
            for k in range(len(part_numbers))
            if bool(sim.handover[k]) and np.isfinite(sim.handover_time_s[k])
        ]
        self.query_one(WavePlot).draw(
            t_ms, sim.v_ideal, series, title=f"as designed, THD_F: {thd}", markers_ms=markers
        )
