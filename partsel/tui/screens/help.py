"""The help screen: what each pane shows and every key, read from the bindings themselves (so
the help cannot drift from the keys)."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Markdown

from partsel.api import CAUTION

PANES = """\
# partsel — help

**1 · Design** (left): the circuit and its requirements. Values take units (`4.7 uF`,
`10 kohm`, `0.5 V/us`). Every change is checked at once: a bad field is marked ✗ and its
problem shown under it, and the ranking stays that of the last valid design. *Limits* and
*Objectives* fold open with enter or a click.

**2 · Ranked parts** (top right): feasible parts by score (✓), or with `ctrl+r` also the
rejected ones with their binding constraint (✗). *Fix R* is the resistor that keeps the output
stage in one conduction mode (✓ when the verdict is with it fitted). Sort with `s` / `S` or by
clicking a column header; filter with `ctrl+f` (words that must all occur).

**3 · Part** (bottom right): the highlighted part: verdict, handover, glitch, THD estimate, fix;
tabs with the simulated output over one period (handover marked), the same with the fix,
the harmonic spectrum, every margin as a bar, and the catalogue's output-stage data.

**Compare** (`F5`): the marked parts side by side (▲ better, ▼ worse, = equal), waveforms
overlaid. **Replace** (`F6`): candidates for the highlighted part with verdicts and reasons.
**Catalogue** (`F7`): browse, search, add and edit parts; write the catalogue to files.

The command palette (`ctrl+p`) offers every action, and more (sort by any column, open a
sample design).
"""


def _rows(bindings: list[BindingType]) -> list[str]:
    out = []
    for b in bindings:
        if not isinstance(b, Binding) or not b.description:
            continue
        keys = " / ".join(f"`{k.strip()}`" for k in b.key.split(","))
        out.append(f"| {keys} | {b.description} | {b.tooltip or ''} |")
    return out


def help_markdown() -> str:
    """The help text: panes, then the keys of every screen."""
    from partsel.tui.app import PartselApp
    from partsel.tui.screens.catalogue import CatalogueScreen, PartEditorScreen
    from partsel.tui.screens.compare import CompareScreen
    from partsel.tui.screens.main import MainScreen
    from partsel.tui.screens.part import PartScreen
    from partsel.tui.screens.replace import ReplacementScreen
    from partsel.tui.widgets.ranking_pane import RankingTable

    sections = [
        ("Everywhere", PartselApp.BINDINGS),
        ("Main screen", MainScreen.BINDINGS),
        ("Ranked parts (table focused)", RankingTable.BINDINGS),
        ("Part view", PartScreen.BINDINGS),
        ("Compare", CompareScreen.BINDINGS),
        ("Replace", ReplacementScreen.BINDINGS),
        ("Catalogue", CatalogueScreen.BINDINGS),
        ("Part editor", PartEditorScreen.BINDINGS),
    ]
    lines = [PANES, "## Keys", ""]
    for title, bindings in sections:
        lines += [f"### {title}", "", "| key | action | what it does |", "|---|---|---|"]
        lines += _rows(list(bindings))
        lines.append("")
    lines += ["`ctrl+p`: command palette · `escape`: back · `tab`: next field", "", f"*{CAUTION}*"]
    return "\n".join(lines)


class HelpScreen(ModalScreen[None]):
    """Keys and panes."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape,f1,q", "dismiss", "Close", tooltip="Close the help")
    ]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help"):
            yield Markdown(help_markdown())
