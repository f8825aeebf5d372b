"""The help screen: what each pane shows and every key, read from the bindings themselves (so
the help cannot drift from the keys)."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Markdown

from partsel import present as P
from partsel.api import CAUTION
from partsel.tui import fmt

PANES = """\
# partsel — help

**Design · F2** (left): the circuit and its requirements. Values take units (`4.7 uF`,
`10 kohm`, `0.5 V/us`). Every change is checked at once: a bad field is marked ✗ and its
problem shown under it, and the ranking stays that of the last valid design. *Limits* and
*Objectives* fold open with enter or a click; the *Limits* title counts the limits set and
those at their default, and an empty limit shows the default that applies (*no limit*: not
checked). `ctrl+n` starts a new design from this circuit with blank requirements; `ctrl+o`
opens a design file, `ctrl+s` saves it (comments and fields the form does not edit are kept).
A design with unsaved changes is not replaced without asking.

**Ranked parts · F3** (top right): feasible parts by score, or with `ctrl+r` also the
rejected ones. The rank, part, verdict, key margin, stage and maker are shown at every width;
the other columns as the width allows (the status line says which are left out; the part pane
has every figure). Sort with `s` / `S` or by clicking a column header; filter with `ctrl+f`
(words that must all occur).

**Part · F4 full view** (bottom right): the highlighted part: verdict, the key margin in
words, handover, glitch, THD estimate, fix; tabs with the simulated output over one period
(handover marked), the same with the fix, the harmonic spectrum, every margin as a bar, and
the catalogue's output-stage data.

**Compare** (`F5`): the marked parts side by side (▲ better, ▼ worse, = equal, ✗ fails its
check: a failing value is never marked better), waveforms overlaid; `c` shows only the changed
rows. **Replace** (`F6`): candidates for the highlighted part with verdicts and reasons; a
filter (`ctrl+f`) that stays when `ctrl+n` takes another incumbent. **Catalogue** (`F7`):
browse, search, add and edit parts; write the catalogue to files.

`F8` saves a screenshot of the screen as it was when pressed. The actions list (`ctrl+p`)
offers every action of the screen by name, and more (sort by any column, open a sample
design).
"""


def codes_markdown() -> str:
    """What the codes in the ranking table mean."""
    stages = ", ".join(
        f"`{short}` {P.TOPOLOGY_LABEL.get(key, key)}" for key, short in P.TOPOLOGY_SHORT.items()
    )
    handover = ", ".join(
        f"`{short}` {P.CONDUCTION_TEXT[key]}"
        for key, short in P.CONDUCTION_SHORT.items()
        if key != "changes-mode"
    )
    return f"""\
## Codes in the ranking

- **#**: the rank among the feasible parts; `–` a rejected part (nearest misses first);
  `{fmt.MARK}` marked for the compare view (`space`).
- **Verdict**: `{fmt.OK} feasible` passes every check; `{fmt.OK} with fix` passes with the fix
  resistor fitted; `{fmt.BAD} fails 3` rejected, three checks fail (the key margin names the
  one furthest from passing; the part pane lists them all).
- **Key margin**, e.g. `swing to V+ ×0.982 -27.5 mV`: the check, its ratio and its signed
  margin. For a feasible part it is the tightest check it passes, for a rejected one the check
  furthest from passing. The ratio is the part's figure over the limit (for a maximum, such
  as THD, the limit over the part's figure): `×1` or more passes, `×0.982` falls 1.8 % short,
  `×0` means the part's figure is zero or negative (for a maximum: the limit is zero). The
  margin is in the check's unit: `+` to spare, `-` short by. `lifecycle: not accepted` is a
  yes/no check that fails; `no data`: the catalogue lacks the values the check needs.
- **Fix R**, e.g. `1.8 kΩ→V+ ✓`: the fix resistor, to V+ (pull-up) or V− (pull-down), from the
  design's E series; `✓` when the verdict counts it; `✗ none works`; `—` not needed.
- **Handover**: `{fmt.WARN} at 2.4 V` the output level where the stage hands over from its
  source to its sink device (a crossover glitch there); {handover}.
- **THD est.**: the closed-form THD_F estimate (with the fix where the verdict has it).
- **Stage**: {stages}.
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
    lines = [PANES, codes_markdown(), "## Keys", ""]
    for title, bindings in sections:
        lines += [f"### {title}", "", "| key | action | what it does |", "|---|---|---|"]
        lines += _rows(list(bindings))
        lines.append("")
    lines += ["`ctrl+p`: actions list · `escape`: back · `tab`: next field", "", f"*{CAUTION}*"]
    return "\n".join(lines)


class HelpScreen(ModalScreen[None]):
    """Keys and panes."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape,f1,q", "dismiss", "Close", tooltip="Close the help")
    ]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help"):
            yield Markdown(help_markdown())
