"""The ranking table's view of a :class:`~partsel.solver.Ranking`: columns, sort keys, the text
filter and the cells of each row (rich text; no textual here).

The full ranking stays in numpy arrays; only the rows shown (at most :data:`MAX_ROWS`) are
turned into cells, so that a ranking of 100,000 parts updates the table quickly.
"""

from __future__ import annotations

import math
import weakref
from dataclasses import dataclass
from functools import cached_property

import numpy as np
from rich.text import Text

from partsel import present as P
from partsel.solver import PartTable, Ranking
from partsel.solver import checks as C
from partsel.tui import fmt

#: Largest number of rows put into the table (the rest stay in the ranking; filter to narrow).
MAX_ROWS = 100


@dataclass(frozen=True)
class Column:
    """One column of the ranking table."""

    key: str
    label: str
    help: str
    numeric: bool = True


COLUMNS: tuple[Column, ...] = (
    Column("mark", fmt.MARK, "Marked for the compare view", numeric=False),
    Column("rank", "#", "Rank among the feasible parts (rejected parts: nearest misses first)"),
    Column("part", "Part", "Part number", numeric=False),
    Column(
        "verdict",
        "Verdict",
        "Feasible (✓), with the fix fitted, or the binding constraint of a rejected part (✗)",
        numeric=False,
    ),
    Column("score", "Score", "Weighted score of the objectives, 0..100"),
    Column("handover", "Handover", "Predicted handover of the output stage (closed form)"),
    Column("glitch", "Glitch", "Predicted crossover glitch (closed form)"),
    Column(
        "thd",
        "THD est.",
        "THD_F estimate of the output stage (closed form; with the fix where the verdict has it)",
    ),
    Column("fix", "Fix R", "Fix resistor that keeps the stage in one mode (✓: verdict with it)"),
    Column("supply", "Supply I", "Supply current for the design's channels"),
    Column("price", "Price", "Price for the design's channels"),
    Column("margin", "Key margin", "Tightest passing check (feasible) or the binding miss"),
    Column("stage", "Stage", "Output-stage topology", numeric=False),
    Column("maker", "Maker", "Maker", numeric=False),
)
COLUMN_BY_KEY: dict[str, Column] = {c.key: c for c in COLUMNS}
#: Columns the table can be sorted by.
SORTABLE: tuple[str, ...] = tuple(c.key for c in COLUMNS if c.key != "mark")


_HAYSTACKS: weakref.WeakKeyDictionary[PartTable, np.ndarray] = weakref.WeakKeyDictionary()


def table_haystack(table: PartTable) -> np.ndarray:
    """Lower-case part number, maker, family, topology and lifecycle of every part (cached per
    table, so that filtering a new ranking of the same catalogue costs only the search)."""
    hay = _HAYSTACKS.get(table)
    if hay is None:
        cols = [
            table.part_number,
            table.text("maker"),
            table.text("family"),
            table.topology,
            table.lifecycle,
        ]
        joined = cols[0].astype(str)
        for c in cols[1:]:
            joined = np.char.add(np.char.add(joined, " "), c.astype(str))
        hay = np.char.lower(joined)
        _HAYSTACKS[table] = hay
    return hay


class RankingView:
    """Sorting, filtering and cell text of one ranking."""

    def __init__(self, r: Ranking) -> None:
        self.r = r

    # ---- arrays along the part axis ---------------------------------------------------------
    @cached_property
    def maker(self) -> np.ndarray:
        """Maker of each part."""
        return self.r.table.text("maker")

    @cached_property
    def position(self) -> np.ndarray:
        """Position of each part in the ranking order."""
        pos = np.empty(self.r.n, dtype=np.int64)
        pos[self.r.order] = np.arange(self.r.n)
        return pos

    @cached_property
    def key_margin_ratio(self) -> np.ndarray:
        """Ratio of the tightest passing check (feasible) or of the binding miss."""
        r = self.r
        j = np.where(r.feasible, r.tightest, r.binding)
        rows = np.arange(r.n)
        out = r.checks.ratio[rows, np.maximum(j, 0)].astype(float)
        return np.where(j >= 0, out, np.nan)

    @cached_property
    def verdict_haystack(self) -> np.ndarray:
        """Lower-case verdict words of each part: feasible / rejected and the binding check."""
        r = self.r
        names = np.array([c.name for c in C.CHECKS] + [""], dtype=str)
        bind = names[np.where(r.binding >= 0, r.binding, len(C.CHECKS))]
        return np.char.add(np.where(r.feasible, "feasible ok ", "rejected "), bind)

    def matches(self, rows: np.ndarray, word: str) -> np.ndarray:
        """True where ``word`` occurs in the part's text or verdict."""
        hay = table_haystack(self.r.table)[rows]
        return (np.char.find(hay, word) >= 0) | (
            np.char.find(self.verdict_haystack[rows], word) >= 0
        )

    def sort_key(self, column: str) -> np.ndarray:
        """Values the table is sorted by for ``column`` (ascending; NaN last)."""
        r, p, fx, ch = self.r, self.r.prediction, self.r.fix, self.r.checks
        if column == "rank":
            return self.position.astype(float)
        if column == "part":
            return r.table.part_key
        if column == "verdict":
            return np.where(r.feasible, 0, 1 + r.n_failing).astype(float)
        if column == "score":
            return r.score
        if column == "handover":
            return np.where(p.handover, p.handover_out_v, np.nan)
        if column == "glitch":
            return np.where(p.handover, p.glitch_v, 0.0)
        if column == "thd":
            return ch.value[:, C.IDX["thd"]]
        if column == "fix":
            return np.where(fx.needed, fx.r_ohm, np.inf)
        if column == "supply":
            return ch.value[:, C.IDX["supply_current"]]
        if column == "price":
            return ch.value[:, C.IDX["price"]]
        if column == "margin":
            return self.key_margin_ratio
        if column == "stage":
            return r.table.topology
        if column == "maker":
            return self.maker
        raise KeyError(column)

    def rows(
        self,
        *,
        sort: str | None = None,
        descending: bool = False,
        text: str = "",
        show_rejected: bool = False,
    ) -> np.ndarray:
        """Indices of the parts shown, in table order.

        ``sort`` None keeps the ranking order (feasible by score, then the rejected parts,
        nearest misses first). ``text``: whitespace-separated words that must all occur
        (case-insensitive) in a part's number, maker, family, topology, lifecycle or verdict.
        """
        r = self.r
        base = r.order if show_rejected else r.order[: r.n_feasible]
        words = text.lower().split()
        if words and base.size:
            keep = np.ones(base.size, dtype=bool)
            for w in words:
                keep &= self.matches(base, w)
            base = base[keep]
        if sort is None or sort == "rank":
            return base[::-1] if descending else base
        key = self.sort_key(sort)[base]
        if COLUMN_BY_KEY[sort].numeric:
            k = np.asarray(key, dtype=float)
            k = -k if descending else k
            k = np.where(np.isnan(k), np.inf, k)
            idx = np.argsort(k, kind="stable")
        else:
            idx = np.argsort(key.astype(str), kind="stable")
            if descending:
                idx = idx[::-1]
        return base[idx]

    # ---- cells ------------------------------------------------------------------------------
    def verdict_cell(self, i: int) -> Text:
        """Feasible / with fix / binding constraint, with symbol and colour."""
        r = self.r
        if r.feasible[i]:
            if r.fix.applied[i]:
                return Text(f"{fmt.OK} with fix", style="bold green")
            return Text(f"{fmt.OK} feasible", style="green")
        j = int(r.binding[i])
        name = fmt.check_label(C.CHECKS[j].name) if j >= 0 else "rejected"
        more = int(r.n_failing[i]) - 1
        return Text(f"{fmt.BAD} {name}" + (f" +{more}" if more > 0 else ""), style="red")

    def handover_cell(self, i: int) -> Text:
        """The output level of the handover, or the stage's state."""
        v = str(self.r.prediction.conduction[i])
        if v == "changes-mode":
            lvl = self.r.prediction.handover_out_v[i]
            label = f"{fmt.WARN} at {fmt.quantity(lvl, 'V')}" if fmt.finite(lvl) else "yes"
            return Text(label, style="yellow")
        if v == "marginal":
            return Text(f"{fmt.WARN} marginal", style="yellow")
        return Text(fmt.CONDUCTION_LABEL[v])

    def fix_cell(self, i: int) -> Text:
        """The fix resistor and rail (✓ when the verdict is with it)."""
        fx = self.r.fix
        if not fx.needed[i]:
            return Text("—")
        if not fx.works[i]:
            return Text(f"{fmt.BAD} none works", style="red")
        mark = f" {fmt.OK}" if fx.applied[i] else ""
        return Text(f"{fmt.quantity(fx.r_ohm[i], 'ohm')}→{fmt.rail_label(str(fx.rail[i]))}{mark}")

    def margin_cell(self, i: int) -> Text:
        """Tightest passing check of a feasible part, or the binding miss of a rejected one."""
        r = self.r
        feasible = bool(r.feasible[i])
        j = int(r.tightest[i] if feasible else r.binding[i])
        if j < 0:
            return Text("—")
        c = C.CHECKS[j]
        m, q = r.checks.margin[i, j], r.checks.ratio[i, j]
        if int(r.checks.status[i, j]) == C.UNKNOWN:
            return Text(f"{fmt.check_label(c.name)}: no data", style="red")
        if c.sense == "is" or not math.isfinite(m):
            what = str(r.fix.reason[i]) if c.name == "fix_resistor" else "not accepted"
            return Text(f"{fmt.check_label(c.name)}: {what or 'fails'}", style="red")
        du = P.difference_unit(c.display_unit)
        text = f"{fmt.check_label(c.name)} {fmt.quantity(m, du)} {fmt.ratio(q)}".rstrip()
        return Text(text, style="" if feasible else "red")

    def cells(self, i: int, marked: bool = False) -> tuple[Text | str, ...]:
        """The cells of part ``i``'s row, in :data:`COLUMNS` order."""
        r, p, ch = self.r, self.r.prediction, self.r.checks
        handover = bool(p.handover[i])
        return (
            Text(fmt.MARK, style="bold magenta") if marked else "",
            str(int(r.rank[i])) if r.rank[i] > 0 else "–",
            str(r.table.part_number[i]),
            self.verdict_cell(i),
            f"{r.score[i]:.1f}" if fmt.finite(r.score[i]) else "—",
            self.handover_cell(i),
            fmt.quantity(p.glitch_v[i], "V") if handover else "—",
            fmt.thd(ch.value[i, C.IDX["thd"]]) if ch.value[i, C.IDX["thd"]] > 0 else "—",
            self.fix_cell(i),
            fmt.quantity(ch.value[i, C.IDX["supply_current"]], "A"),
            fmt.quantity(ch.value[i, C.IDX["price"]], "currency unit"),
            self.margin_cell(i),
            fmt.TOPOLOGY_SHORT.get(str(r.table.topology[i]), str(r.table.topology[i])),
            str(self.maker[i]),
        )
