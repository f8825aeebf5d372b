"""The ranking pane: a text filter, a status line and the ranked parts.

The app sets the ranking (:meth:`RankingPane.show`); the pane sorts, filters and fills the
table from the ranking's arrays (at most :data:`partsel.tui.rows.MAX_ROWS` rows), keeping the
highlighted part highlighted. It posts :class:`RankingPane.PartHighlighted` when the highlight
moves to another part.

The columns fit the pane's width (:func:`partsel.tui.rows.fit_columns`): the rank, part,
verdict, key margin, stage and maker always, the others as the width allows; the status line
names the columns left out (every figure is also in the part pane).
"""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.message import Message
from textual.widgets import DataTable, Input, Static

from partsel.tui.rows import COLUMN_BY_KEY, MAX_ROWS, ORDER, SORTABLE, RankingView, fit_columns

SORT = Binding.Group("Sort/Reverse", compact=True)


class RankingTable(DataTable):
    """The table of ranked parts (keys: space marks, s / S sort)."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("space", "mark", "Mark", tooltip="Mark or unmark the part for the compare view"),
        Binding(
            "s", "sort_next", "Sort", tooltip="Sort by the next column", group=SORT, show=False
        ),
        Binding(
            "S", "sort_reverse", "Reverse", tooltip="Reverse the sort order", group=SORT, show=False
        ),
        Binding(
            "slash", "filter", "Filter", show=False, tooltip="Filter the ranking by text (ctrl+f)"
        ),
    ]

    async def action_mark(self) -> None:
        await self.run_action("screen.toggle_mark")

    def action_sort_next(self) -> None:
        pane = self.query_ancestor(RankingPane)
        pane.sort_next()

    def action_sort_reverse(self) -> None:
        pane = self.query_ancestor(RankingPane)
        pane.set_sort(pane.sort, not pane.descending)

    async def action_filter(self) -> None:
        await self.run_action("screen.filter")


class RankingPane(Vertical):
    """Filter box, status line and table of the ranking."""

    class PartHighlighted(Message):
        """The highlight moved to ``part_number`` (None: no rows)."""

        def __init__(self, part_number: str | None) -> None:
            super().__init__()
            self.part_number = part_number

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.view: RankingView | None = None
        self.sort: str | None = None
        self.descending = False
        self.show_rejected = False
        self.marked: list[str] = []
        self.shown: list[int] = []
        self.n_matching = 0
        self._current: str | None = None
        #: Columns shown and their widths (see fit_columns).
        self.widths: dict[str, int] = {}
        self._fitted_for = 0

    def compose(self) -> ComposeResult:
        with Horizontal(classes="rank-bar"):
            yield Input(
                placeholder="filter: words in part, maker, stage, verdict…",
                id="rank-filter",
                compact=True,
            )
        yield Static("", id="rank-status", classes="rank-status")
        yield RankingTable(id="ranking", cursor_type="row", zebra_stripes=True)

    @property
    def table(self) -> RankingTable:
        return self.query_one(RankingTable)

    @property
    def filter_text(self) -> str:
        return self.query_one("#rank-filter", Input).value

    # ---- state ------------------------------------------------------------------------------
    def show(self, view: RankingView | None) -> None:
        """Show a new ranking (None: none yet), keeping sort, filter and highlighted part."""
        self.view = view
        self.refill()

    def set_sort(self, column: str | None, descending: bool = False) -> None:
        """Sort by ``column`` (None: ranking order)."""
        self.sort = column
        self.descending = descending
        self.refill()

    def sort_next(self) -> None:
        """Sort by the next sortable column (after the last one: back to the ranking order)."""
        cols = list(SORTABLE)
        k = cols.index(self.sort) + 1 if self.sort in cols else 0
        self.set_sort(cols[k] if k < len(cols) else None)

    def set_show_rejected(self, show: bool) -> None:
        self.show_rejected = show
        self.refill()

    def set_marked(self, marked: list[str]) -> None:
        self.marked = list(marked)
        self.refill()

    @property
    def current_part(self) -> str | None:
        """Part number of the highlighted row."""
        return self._current

    # ---- filling ----------------------------------------------------------------------------
    def _status(self) -> Text:
        view = self.view
        if view is None:
            return Text("ranking…", style="dim")
        r = view.r
        text = Text()
        text.append(f"{r.n_feasible} of {r.n} feasible", style="bold")
        text.append(f" · {r.requirements.basis} (ctrl+b)")
        text.append(f" · conduction {r.requirements.conduction}")
        shown = len(self.shown)
        what = "parts" if self.show_rejected else "feasible parts"
        if self.filter_text.strip():
            text.append(f" · filter: {self.n_matching} {what} match")
        if shown < self.n_matching:
            text.append(f" · top {shown} shown", style="yellow")
        if self.sort:
            arrow = "↓" if self.descending else "↑"
            text.append(f" · sorted by {COLUMN_BY_KEY[self.sort].label} {arrow}")
        if not self.show_rejected:
            n_rej = r.n - r.n_feasible
            text.append(f" · {n_rej} rejected hidden (ctrl+r)", style="dim")
        hidden = self.hidden_columns
        if len(hidden) > 3:
            text.append(f" · {len(hidden)} columns left out at this width", style="dim")
        elif hidden:
            names = ", ".join(COLUMN_BY_KEY[k].label for k in hidden)
            text.append(f" · left out at this width: {names}", style="dim")
        return text

    @property
    def hidden_columns(self) -> list[str]:
        """Keys of the columns left out at the pane's width."""
        return [k for k in ORDER if self.widths and k not in self.widths]

    def available_width(self) -> int:
        """Cells the table's columns may take (the vertical scrollbar kept free)."""
        table = self.table
        width = table.size.width
        if width <= 0:  # not laid out yet: the screen less the design pane
            width = max(40, self.app.size.width - 50)
        return width - int(table.styles.scrollbar_size_vertical or 0)

    def refill(self, announce: bool = True) -> None:
        """Rebuild the rows from the ranking (at most MAX_ROWS), with the columns that fit;
        ``announce``: post :class:`PartHighlighted` (also when the part did not change)."""
        table = self.table
        view = self.view
        keep = self._current
        rows: list[tuple[str, dict[str, Text]]] = []
        if view is None:
            self.shown = []
            self.n_matching = 0
        else:
            found = view.rows(
                sort=self.sort,
                descending=self.descending,
                text=self.filter_text,
                show_rejected=self.show_rejected,
            )
            self.n_matching = int(found.size)
            self.shown = [int(i) for i in found[:MAX_ROWS]]
            marked = set(self.marked)
            pn = view.r.table.part_number
            rows = [(str(pn[i]), view.cells(i, marked=str(pn[i]) in marked)) for i in self.shown]
        labels = {}
        for key in ORDER:
            label = COLUMN_BY_KEY[key].label
            if key == self.sort:
                label += " ↓" if self.descending else " ↑"
            labels[key] = label
        natural = {k: len(labels[k]) for k in ORDER}
        for _, cells in rows:
            for k in ORDER:
                natural[k] = max(natural[k], cells[k].cell_len)
        self._fitted_for = self.available_width()
        self.widths = fit_columns(natural, self._fitted_for)
        with self.prevent(DataTable.RowHighlighted):
            table.clear(columns=True)
            for key, width in self.widths.items():
                table.add_column(Text(labels[key]), key=key, width=width)
            for part_number, cells in rows:
                out = []
                for key, width in self.widths.items():
                    cell = cells[key]
                    if cell.cell_len > width:
                        cell = cell.copy()
                        cell.truncate(width, overflow="ellipsis")
                    out.append(cell)
                table.add_row(*out, key=part_number)
        self.query_one("#rank-status", Static).update(self._status())
        row = 0
        if keep is not None and view is not None and keep in table.rows:
            row = table.get_row_index(keep)
        if self.shown:
            with self.prevent(DataTable.RowHighlighted):
                table.move_cursor(row=row, animate=False)
        new = str(view.r.table.part_number[self.shown[row]]) if view and self.shown else None
        changed = new != self._current
        self._current = new
        if announce or changed:
            self.post_message(self.PartHighlighted(new))

    def on_resize(self) -> None:
        """A new width: fit the columns again once the table has its new size."""
        self.call_after_refresh(self._refit)

    def _refit(self) -> None:
        if self.view is not None and self.available_width() != self._fitted_for:
            self.refill(announce=False)

    @on(Input.Changed, "#rank-filter")
    def _filter_changed(self, event: Input.Changed) -> None:
        event.stop()
        self.refill()

    @on(Input.Submitted, "#rank-filter")
    def _filter_done(self, event: Input.Submitted) -> None:
        event.stop()
        self.table.focus()

    @on(DataTable.RowHighlighted, "#ranking")
    def _highlighted(self, event: DataTable.RowHighlighted) -> None:
        event.stop()
        pn = event.row_key.value if event.row_key is not None else None
        if pn != self._current:
            self._current = pn
            self.post_message(self.PartHighlighted(pn))

    @on(DataTable.RowSelected, "#ranking")
    async def _selected(self, event: DataTable.RowSelected) -> None:
        event.stop()
        await self.run_action("screen.part_view")

    @on(DataTable.HeaderSelected, "#ranking")
    def _header(self, event: DataTable.HeaderSelected) -> None:
        event.stop()
        key = str(event.column_key.value)
        if key not in SORTABLE:
            return
        if key == self.sort:
            self.set_sort(key, not self.descending)
        else:
            self.set_sort(key)
