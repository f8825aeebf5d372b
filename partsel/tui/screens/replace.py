"""The replacement view: an incumbent part and its candidate substitutes, vetted in the current
design by :func:`partsel.solver.substitute.vet_substitutes` (form, fit, function and the
behaviour in the circuit), each with its verdict and reasons."""

from __future__ import annotations

from typing import TYPE_CHECKING, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Input, Label, Static
from textual.worker import get_current_worker

from partsel.api import CAUTION
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.solver.substitute import Candidate, Vetting
from partsel.tui import fmt

if TYPE_CHECKING:
    from partsel.tui.app import PartselApp

#: Verdict classes for people, with a symbol (reads without colour) and a colour.
VERDICT_LOOK: dict[str, tuple[str, str, str]] = {
    "drop-in": (fmt.OK, "drop-in", "bold green"),
    "fits-this-circuit": (fmt.OK, "fits this circuit", "green"),
    "review": (fmt.WARN, "review", "yellow"),
    "unsuitable": (fmt.BAD, "unsuitable", "red"),
}
_SEVERITY_LOOK: dict[str, tuple[str, str]] = {
    "fail": (fmt.BAD, "red"),
    "review": (fmt.WARN, "yellow"),
    "circuit-ok": (fmt.OK, "green"),
    "info": ("·", "dim"),
}


def verdict_cell(verdict: str) -> Text:
    sym, label, style = VERDICT_LOOK.get(verdict, ("?", verdict, ""))
    return Text(f"{sym} {label}", style=style)


def first_reason(c: Candidate) -> str:
    """The most severe reason, for the table."""
    for sev in ("fail", "review", "circuit-ok"):
        for r in c.reasons:
            if r.severity == sev:
                return r.message
    return "all parameters equal or better" if not c.reasons else c.reasons[0].message


def candidate_text(c: Candidate) -> str:
    """Lower-case words the candidate filter searches: part number, maker, verdict, reasons."""
    p = c.part
    words = [c.part_number, p.maker, p.topology, VERDICT_LOOK.get(c.verdict, ("", c.verdict))[1]]
    words += [r.message for r in c.reasons]
    return " ".join(str(w) for w in words).lower()


#: Columns of the candidates table before the main reason: key, label, width.
FIXED_COLUMNS: tuple[tuple[str, str, int], ...] = (
    ("n", "#", 3),
    ("part", "Candidate", 10),
    ("verdict", "Verdict", 19),
    ("counts", "▲ = ▼", 9),
    ("price", "Price", 6),
)
#: Narrowest the main reason is made (the table scrolls sideways below that).
MIN_REASON_WIDTH = 30


def reasons_text(v: Vetting, c: Candidate) -> Text:
    """Every reason of candidate ``c``, most severe first."""
    out = Text()
    sym, label, style = VERDICT_LOOK.get(c.verdict, ("?", c.verdict, ""))
    out.append(f"{c.part_number}", style="bold")
    out.append(f" for {v.incumbent.part_number}: ")
    out.append(f"{sym} {label}\n", style=style)
    n = c.counts()
    out.append(
        f"parameters: {n['better']} better, {n['equal']} equal, {n['worse']} worse, "
        f"{n['unknown']} unknown · packages in common: {', '.join(c.common_packages) or 'none'}\n"
    )
    order = {"fail": 0, "review": 1, "circuit-ok": 2, "info": 3}
    for r in sorted(c.reasons, key=lambda r: order.get(r.severity, 9)):
        s, st = _SEVERITY_LOOK.get(r.severity, ("?", ""))
        out.append(f"{s} [{r.aspect}] ", style=st)
        out.append(f"{r.message}\n", style="dim" if r.severity == "info" else "")
    worse = [p for p in c.function if p.change == "worse"]
    if worse:
        out.append("worse parameters: ", style="bold")
        out.append("; ".join(p.text() for p in worse) + "\n")
    return out


class ReplacementScreen(Screen[None]):
    """Incumbent -> candidates with verdicts and reasons."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.pop_screen", "Back", tooltip="Back to the ranking"),
        Binding(
            "ctrl+u",
            "toggle_unsuitable",
            "Unsuitable",
            priority=True,
            tooltip="Show or hide the unsuitable candidates",
        ),
        Binding(
            "ctrl+n",
            "focus_incumbent",
            "Incumbent",
            priority=True,
            tooltip="Type another incumbent part number",
        ),
        Binding(
            "ctrl+f",
            "focus_filter",
            "Filter",
            priority=True,
            tooltip="Filter the candidates by words (kept for another incumbent)",
        ),
        Binding(
            "f5",
            "compare",
            "Compare",
            priority=True,
            tooltip="Compare the incumbent with the highlighted candidate",
        ),
    ]

    app: PartselApp  # type: ignore[assignment]

    def __init__(self, incumbent: str | None) -> None:
        super().__init__()
        self.incumbent = incumbent or ""
        self.include_unsuitable = False
        self.vetting: Vetting | None = None
        self._filled_width = 0

    def compose(self) -> ComposeResult:
        with Vertical(id="replace") as box:
            box.border_title = "Replace a part"
            with Horizontal(classes="rank-bar"):
                yield Label("incumbent ", classes="bar-label")
                yield Input(
                    value=self.incumbent,
                    placeholder="part number to replace",
                    id="incumbent",
                    compact=True,
                )
                yield Label("  filter ", classes="bar-label")
                yield Input(
                    placeholder="words in part, maker, verdict, reasons…",
                    id="candidate-filter",
                    compact=True,
                )
            yield Static("", id="replace-status")
            yield DataTable(id="candidates", cursor_type="row", zebra_stripes=True)
            with VerticalScroll(id="replace-detail"):
                yield Static("", id="reasons")
            yield Static(Text(CAUTION, style="italic"), classes="caution")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.query_one("#candidates", DataTable).focus()
        self.run_vetting()

    def run_vetting(self) -> None:
        pn = self.query_one("#incumbent", Input).value.strip()
        status = self.query_one("#replace-status", Static)
        if not pn:
            status.update("type the part number to replace")
            return
        r = self.app.ranking
        basis = r.requirements.basis if r is not None else "worst-case"
        status.update(Text(f"vetting candidates for {pn}…", style="dim"))
        self._vet(pn, self.app.design, basis, self.include_unsuitable)

    @work(thread=True, exclusive=True, group="vet", exit_on_error=False)
    def _vet(self, pn: str, design: Design | None, basis: str, unsuitable: bool) -> None:
        worker = get_current_worker()
        try:
            v = self.app.session.vet(
                pn,
                design,
                basis=basis,  # type: ignore[arg-type]
                include_unsuitable=unsuitable,
            )
        except InputError as exc:
            if not worker.is_cancelled:
                self.app.call_from_thread(self._failed, str(exc))
            return
        if not worker.is_cancelled:
            self.app.call_from_thread(self._vetted, v)

    def _failed(self, message: str) -> None:
        self.vetting = None
        self.query_one("#candidates", DataTable).clear()
        self.query_one("#replace-status", Static).update(Text(f"{fmt.BAD} {message}", style="red"))
        self.query_one("#reasons", Static).update("")

    def _vetted(self, v: Vetting) -> None:
        self.vetting = v
        self.fill()

    @property
    def filter_text(self) -> str:
        return self.query_one("#candidate-filter", Input).value

    def shown_candidates(self) -> list[tuple[int, Candidate]]:
        """(rank in the vetting, candidate) of the candidates that match the filter words."""
        if self.vetting is None:
            return []
        words = self.filter_text.lower().split()
        out = []
        for k, c in enumerate(self.vetting.candidates, 1):
            if all(w in candidate_text(c) for w in words):
                out.append((k, c))
        return out

    def _status(self, v: Vetting, shown: int) -> Text:
        inc = v.incumbent
        status = Text()
        status.append(f"{inc.part_number}", style="bold")
        status.append(f" ({inc.maker}, {inc.topology}, {inc.channels} ch, {inc.lifecycle}) · ")
        status.append(f"{len(v.candidates)} candidates of {v.considered} considered · ")
        status.append(f"in {v.design_name} · " if v.design_name else "no design · ")
        status.append(f"{v.basis} basis")
        if self.filter_text.strip():
            status.append(f" · filter: {shown} match")
        if not self.include_unsuitable:
            status.append(" · unsuitable hidden (ctrl+u)", style="dim")
        return status

    def reason_width(self) -> int:
        """Cells left for the main reason: the table's width less the other columns."""
        table = self.query_one("#candidates", DataTable)
        width = table.size.width or self.app.size.width - 4
        fixed = sum(w for _key, _label, w in FIXED_COLUMNS)
        gaps = 2 * (len(FIXED_COLUMNS) + 1)
        scrollbar = int(table.styles.scrollbar_size_vertical or 0)
        return max(MIN_REASON_WIDTH, width - fixed - gaps - scrollbar)

    def fill(self) -> None:
        """The candidates that match the filter, the reason column as wide as the table allows."""
        v = self.vetting
        table = self.query_one("#candidates", DataTable)
        self._filled_width = table.size.width
        table.clear(columns=True)
        why = self.reason_width()
        for key, label, width in FIXED_COLUMNS:
            table.add_column(label, key=key, width=width)
        table.add_column("Main reason", key="why", width=why)
        if v is None:
            return
        shown = self.shown_candidates()
        self.query_one("#replace-status", Static).update(self._status(v, len(shown)))
        for k, c in shown:
            n = c.counts()
            price = c.part.price
            reason = Text(first_reason(c))
            reason.truncate(why, overflow="ellipsis")
            table.add_row(
                str(k),
                c.part_number,
                verdict_cell(c.verdict),
                f"{n['better']} {n['equal']} {n['worse']}",
                f"{price:.2f}" if fmt.finite(price) else "—",
                reason,
                key=c.part_number,
            )
        if shown:
            self.show_reasons(shown[0][1])
        elif v.candidates:
            self.query_one("#reasons", Static).update("no candidate matches the filter")
        else:
            self.query_one("#reasons", Static).update("no candidate with this footprint")

    def on_resize(self) -> None:
        self.call_after_refresh(self._refit)

    def _refit(self) -> None:
        table = self.query_one("#candidates", DataTable)
        if self.vetting is not None and table.size.width != self._filled_width:
            self.fill()

    @on(Input.Changed, "#candidate-filter")
    def _filter_changed(self, event: Input.Changed) -> None:
        event.stop()
        self.fill()

    @on(Input.Submitted, "#candidate-filter")
    def _filter_done(self, event: Input.Submitted) -> None:
        event.stop()
        self.query_one("#candidates", DataTable).focus()

    def action_focus_filter(self) -> None:
        self.query_one("#candidate-filter", Input).focus()

    def show_reasons(self, c: Candidate) -> None:
        if self.vetting is not None:
            self.query_one("#reasons", Static).update(reasons_text(self.vetting, c))

    def _candidate(self, part_number: str | None) -> Candidate | None:
        if self.vetting is None or part_number is None:
            return None
        return next((c for c in self.vetting.candidates if c.part_number == part_number), None)

    @on(DataTable.RowHighlighted, "#candidates")
    def _highlighted(self, event: DataTable.RowHighlighted) -> None:
        c = self._candidate(event.row_key.value if event.row_key is not None else None)
        if c is not None:
            self.show_reasons(c)

    @on(DataTable.RowSelected, "#candidates")
    def _selected(self) -> None:
        self.action_compare()

    @on(Input.Submitted, "#incumbent")
    def _incumbent(self, event: Input.Submitted) -> None:
        event.stop()
        self.run_vetting()
        self.query_one("#candidates", DataTable).focus()

    def action_toggle_unsuitable(self) -> None:
        self.include_unsuitable = not self.include_unsuitable
        self.run_vetting()

    def action_focus_incumbent(self) -> None:
        """Type another incumbent; the candidate filter and the unsuitable toggle stay."""
        self.query_one("#incumbent", Input).focus()

    def action_compare(self) -> None:
        table = self.query_one("#candidates", DataTable)
        if self.vetting is None or not self.vetting.candidates or table.row_count == 0:
            return
        row = table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
        from partsel.tui.screens.compare import CompareScreen

        self.app.push_screen(CompareScreen((self.vetting.incumbent.part_number, str(row))))
