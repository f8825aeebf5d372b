"""Every check of a part as a labelled bar: the margin ratio on a log scale around 1 (the limit),
with the signed margin and the ratio as figures, and a symbol for the status."""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

from rich.text import Text
from textual.widgets import Static

from partsel import present as P
from partsel.solver import checks as C
from partsel.tui import fmt

#: Decades of margin ratio shown on each side of the limit (0.1x .. 10x).
DECADES = 1.0

_STATUS_SYMBOL = {
    "pass": (fmt.OK, "green"),
    "fixed": (fmt.OK, "green"),
    "fail": (fmt.BAD, "red"),
    "unknown": (fmt.BAD, "red"),
    "warning": (fmt.WARN, "yellow"),
    "n/a": ("·", "dim"),
    "not-required": ("·", "dim"),
    "not-evaluated": ("·", "dim"),
}


def bar(ratio: float | None, width: int) -> Text:
    """A bar of ``width`` cells: the left half is below the limit, the right half above it."""
    half = width // 2
    cells = [" "] * (2 * half)
    style = "dim"
    if ratio is not None and not math.isnan(ratio):
        if ratio <= 0:
            x = -1.0
        elif math.isinf(ratio):
            x = 1.0
        else:
            x = max(-1.0, min(1.0, math.log10(ratio) / DECADES))
        n = round(abs(x) * half)
        if x >= 0:
            for k in range(half, half + n):
                cells[k] = "█"
            style = "green"
        else:
            for k in range(half - n, half):
                cells[k] = "█"
            style = "red"
    out = Text()
    out.append("".join(cells[:half]), style=style if style == "red" else "")
    out.append("│", style="bold")
    out.append("".join(cells[half:]), style=style if style == "green" else "")
    return out


def margin_text(rows: Sequence[dict[str, Any]], width: int = 24) -> Text:
    """Lines of :func:`partsel.solver.export.part_checks` rows, one per check."""
    out = Text()
    defs = {c.name: c for c in C.CHECKS}
    label_w = max(len(fmt.check_label(r["check"])) for r in rows) if rows else 10
    for row in rows:
        c = defs[row["check"]]
        sym, style = _STATUS_SYMBOL.get(row["status"], ("?", ""))
        out.append(f"{sym} ", style=style)
        out.append(f"{fmt.check_label(row['check']):<{label_w}} ", style=style if sym else "")
        if c.sense == "is":
            lim = row["limit"]
            accepted = "any" if lim is None else ", ".join(map(str, lim))
            value = row["value"]
            if isinstance(value, float):
                value = f"{value:g}"
            out.append(f"{value}  (accepted: {accepted})", style="dim" if sym == "·" else "")
        elif row["status"] in ("not-required", "n/a", "not-evaluated"):
            out.append(row["status"], style="dim")
        else:
            out.append_text(bar(row["ratio"], width))
            u = c.display_unit
            margin = fmt.quantity(row["margin"], P.difference_unit(u))
            out.append(f" {margin:>10} {fmt.ratio(row['ratio']):>7}")
            out.append(
                f"  value {fmt.quantity(row['value'], u)}, limit {fmt.quantity(row['limit'], u)}",
                style="dim",
            )
        out.append("\n")
    out.append(
        "bar: margin ratio on a log scale, 0.1× … │ limit … 10×; "
        f"{fmt.OK} pass  {fmt.BAD} fail  {fmt.WARN} warning  · not required",
        style="dim",
    )
    return out


class MarginBars(Static):
    """The margins of one part (set with :meth:`show`)."""

    def show(self, rows: Sequence[dict[str, Any]]) -> None:
        """Show the check rows of one part."""
        self.update(margin_text(rows))
