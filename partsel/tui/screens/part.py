"""The part view on a screen of its own: the highlighted part's plots, margins and catalogue
data at full size; ``n`` / ``p`` step through the ranked parts."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.screen import Screen
from textual.widgets import Footer, TabbedContent

from partsel.api import Prediction
from partsel.tui.widgets.part_view import PartView

if TYPE_CHECKING:
    from partsel.tui.app import PartselApp


#: Footer groups of the part view's keys.
STEP = Binding.Group("Next/Previous")
TABS = Binding.Group("Waveform/Fix/Spectrum/Margins/Stage/Spread", compact=True)


class PartScreen(Screen[None]):
    """One part in the current design."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.pop_screen", "Back", tooltip="Back to the ranking"),
        Binding("n", "step(1)", "Next part", tooltip="The next part of the ranking", group=STEP),
        Binding(
            "p", "step(-1)", "Previous part", tooltip="The previous part of the ranking", group=STEP
        ),
        Binding("space", "mark", "Mark", tooltip="Mark or unmark the part for the compare view"),
        Binding("w", "tab('wave')", "Waveform", tooltip="Ideal and predicted output", group=TABS),
        Binding(
            "x", "tab('fix')", "With fix", tooltip="The output with the fix resistor", group=TABS
        ),
        Binding("h", "tab('spectrum')", "Spectrum", tooltip="Harmonic spectrum", group=TABS),
        Binding("g", "tab('margins')", "Margins", tooltip="Every check as a bar", group=TABS),
        Binding(
            "o",
            "tab('stage')",
            "Stage data",
            tooltip="The catalogue's output-stage data",
            group=TABS,
        ),
        Binding(
            "y",
            "tab('spread')",
            "Spread",
            tooltip="Monte Carlo yield, worst corners and histograms",
            group=TABS,
        ),
    ]

    app: PartselApp  # type: ignore[assignment]

    def __init__(self, part_number: str) -> None:
        super().__init__()
        self.part_number = part_number

    def compose(self) -> ComposeResult:
        pv = PartView(full=True, id="part-full")
        pv.border_title = "Part"
        yield pv
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.show()

    @property
    def view(self) -> PartView:
        return self.query_one(PartView)

    def show(self) -> None:
        app, r = self.app, self.app.ranking
        if r is None:
            self.view.show_empty("no ranking")
            return
        try:
            i = r.index(self.part_number)
        except KeyError:
            self.view.show_empty(f"{self.part_number} is not in the catalogue")
            return
        self.view.border_title = f"Part {self.part_number} in {r.design.name}"
        self.view.show_part(r, i, app.record(self.part_number))
        cached = app.cached_prediction((self.part_number,))
        if cached is not None:
            self.view.show_simulation(cached, 0, r, i)
        elif app.simulate:
            self.view.show_plot_message(f"{self.part_number}: simulating one period…")
            app.request_simulation((self.part_number,))
        else:
            self.view.show_plot_message("simulation off (closed-form figures above)")

    def show_simulation(self, part_numbers: tuple[str, ...], pred: Prediction) -> None:
        r = self.app.ranking
        if r is not None and part_numbers == (self.part_number,):
            self.view.show_simulation(pred, 0, r, r.index(self.part_number))

    def action_step(self, delta: int) -> None:
        from partsel.tui.screens.main import MainScreen

        main = next((s for s in self.app.screen_stack if isinstance(s, MainScreen)), None)
        if main is None or self.app.ranking is None:
            return
        shown = [str(self.app.ranking.table.part_number[i]) for i in main.ranking_pane.shown]
        if not shown:
            return
        k = shown.index(self.part_number) + delta if self.part_number in shown else 0
        self.part_number = shown[k % len(shown)]
        main.ranking_pane.table.move_cursor(row=k % len(shown))
        self.show()

    def action_mark(self) -> None:
        self.app.toggle_mark(self.part_number)
        self.notify(f"marked for compare: {', '.join(self.app.marked) or 'none'}", timeout=2)

    def action_tab(self, name: str) -> None:
        tabs = self.query_one(TabbedContent)
        pane = tabs.query(f".tab-{name}").first()
        if pane.id:
            tabs.active = pane.id
