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
from partsel.solver.messages import check_message
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
    Column(
        "rank",
        "#",
        f"Rank among the feasible parts (–: rejected, nearest misses first); {fmt.MARK}: marked "
        "for the compare view",
    ),
    Column("part", "Part", "Part number", numeric=False),
    Column(
        "verdict",
        "Verdict",
        "✓ feasible, ✓ with fix (the fix resistor fitted), or ✗ fails N: rejected, N checks fail",
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
    Column(
        "margin",
        "Key margin",
        "The tightest check a feasible part passes, or the check a rejected part is furthest "
        "from passing: its ratio (×1 or more passes) and signed margin (+ to spare, - short)",
    ),
    Column("stage", "Stage", "Output-stage topology", numeric=False),
    Column("maker", "Maker", "Maker", numeric=False),
)
COLUMN_BY_KEY: dict[str, Column] = {c.key: c for c in COLUMNS}
#: Columns the table can be sorted by.
SORTABLE: tuple[str, ...] = tuple(c.key for c in COLUMNS)

#: Display order of the columns: what a changed load changes comes first, then the key
#: margin, the stage and the maker.
ORDER: tuple[str, ...] = (
    "rank",
    "part",
    "verdict",
    "fix",
    "glitch",
    "thd",
    "handover",
    "supply",
    "price",
    "score",
    "margin",
    "stage",
    "maker",
)
#: Columns shown at every width (the narrow ones cut with "…" when they must be).
CORE: tuple[str, ...] = ("rank", "part", "verdict", "margin", "stage", "maker")
#: The other columns, most wanted first: each is shown when the width allows.
OPTIONAL: tuple[str, ...] = ("fix", "thd", "glitch", "handover", "supply", "price", "score")
#: Widest a column is made (longer cells end in "…").
WIDEST: dict[str, int] = {"part": 16, "margin": 34, "maker": 22}
#: Width the cut-able columns keep while room is sought for the optional ones.
COMFORTABLE: dict[str, int] = {"part": 12, "margin": 26, "maker": 14}
#: Narrowest the cut-able columns are made.
NARROWEST: dict[str, int] = {"part": 8, "margin": 16, "maker": 8}
#: Order in which the cut-able columns are narrowed when the core does not fit.
NARROWED_FIRST: tuple[str, ...] = ("maker", "margin", "part")
#: Cells between two columns (the table's padding, one cell on each side).
GAP = 2


def fit_columns(natural: dict[str, int], available: int, gap: int = GAP) -> dict[str, int]:
    """Columns to show and their widths, in :data:`ORDER`, for ``available`` cells.

    ``natural``: the width each column needs for its header and cells. The :data:`CORE`
    columns are always shown: first at most :data:`COMFORTABLE` wide (and, when even that does
    not fit, narrowed in :data:`NARROWED_FIRST` order down to :data:`NARROWEST`); then each of
    :data:`OPTIONAL` in turn is added at its natural width if it still fits; what is left over
    widens the cut-able columns back towards their natural width (at most :data:`WIDEST`).
    """
    full = {k: min(natural[k], WIDEST.get(k, natural[k])) for k in CORE}
    widths = {k: min(full[k], COMFORTABLE.get(k, full[k])) for k in CORE}
    total = sum(w + gap for w in widths.values())
    for k in NARROWED_FIRST:
        over = total - available
        if over <= 0:
            break
        cut = min(over, max(0, widths[k] - NARROWEST[k]))
        widths[k] -= cut
        total -= cut
    for k in OPTIONAL:
        cost = natural[k] + gap
        if total + cost <= available:
            widths[k] = natural[k]
            total += cost
    for k in reversed(NARROWED_FIRST):
        grow = min(available - total, full[k] - widths[k])
        if grow > 0:
            widths[k] += grow
            total += grow
    return {k: widths[k] for k in ORDER if k in widths}


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
        """✓ feasible, ✓ with fix, or ✗ fails N (N checks fail; the key margin names the one
        furthest from passing), with symbol and colour."""
        r = self.r
        if r.feasible[i]:
            if r.fix.applied[i]:
                return Text(f"{fmt.OK} with fix", style="bold green")
            return Text(f"{fmt.OK} feasible", style="green")
        n = int(r.n_failing[i])
        return Text(f"{fmt.BAD} fails {n}" if n > 0 else f"{fmt.BAD} rejected", style="red")

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

    def key_check(self, i: int) -> int:
        """Index of the key-margin check of part ``i``: the tightest check a feasible part
        passes, the check a rejected part is furthest from passing (-1: none)."""
        r = self.r
        return int(r.tightest[i] if r.feasible[i] else r.binding[i])

    def margin_cell(self, i: int) -> Text:
        """The key-margin check, its ratio (×1 or more passes) and its signed margin (+ to
        spare, - short): "swing to V+ ×0.982 -27.5 mV"."""
        r = self.r
        feasible = bool(r.feasible[i])
        j = self.key_check(i)
        if j < 0:
            return Text("—")
        c = C.CHECKS[j]
        m, q = r.checks.margin[i, j], r.checks.ratio[i, j]
        if int(r.checks.status[i, j]) == C.UNKNOWN:
            return Text(f"{fmt.check_label(c.name)}: no data", style="red")
        if c.sense == "is" or not math.isfinite(m):
            what = str(r.fix.reason[i]) if c.name == "fix_resistor" else "not accepted"
            return Text(f"{fmt.check_label(c.name)}: {what or 'fails'}", style="red")
        amount = fmt.quantity(m, P.difference_unit(c.display_unit))
        sign = "+" if m > 0 else ""
        text = " ".join(t for t in (fmt.check_label(c.name), fmt.ratio(q), sign + amount) if t)
        return Text(text, style="" if feasible else "red")

    def margin_words(self, i: int) -> str:
        """The key-margin cell of part ``i`` in words: which check, how much to spare or short,
        and what its ratio means (the check itself worded by
        :func:`partsel.solver.messages.check_message`); "" for a rejected part whose binding
        check has no margin (a yes/no check, or no data), which its verdict line words."""
        r = self.r
        feasible = bool(r.feasible[i])
        j = self.key_check(i)
        which = "the tightest check it passes" if feasible else "the check furthest from passing"
        if j < 0:
            return "key margin: none (no check with a margin applies)"
        c = C.CHECKS[j]
        label = fmt.check_label(c.name)
        m, q = float(r.checks.margin[i, j]), float(r.checks.ratio[i, j])
        if int(r.checks.status[i, j]) == C.UNKNOWN or c.sense == "is" or not math.isfinite(m):
            if not feasible:
                return ""  # no margin: the verdict line has the check's words already
            return f"key margin, {which}: {check_message(r, i, c.name)} (no margin to give)"
        amount = fmt.quantity(abs(m), P.difference_unit(c.display_unit))
        head = (
            f"key margin, {which}: {check_message(r, i, c.name)}; {amount} to spare"
            if feasible
            else f"key margin, {which}: {label}, short by {amount}"
        )
        return f"{head}{ratio_words(q, c.sense)}"

    def cells(self, i: int, marked: bool = False) -> dict[str, Text]:
        """The cells of part ``i``'s row, by column key."""
        r, p, ch = self.r, self.r.prediction, self.r.checks
        handover = bool(p.handover[i])
        rank = str(int(r.rank[i])) if r.rank[i] > 0 else "–"
        thd_v = ch.value[i, C.IDX["thd"]]
        return {
            "rank": Text.assemble((fmt.MARK, "bold magenta") if marked else " ", rank),
            "part": Text(str(r.table.part_number[i])),
            "verdict": self.verdict_cell(i),
            "score": Text(f"{r.score[i]:.1f}" if fmt.finite(r.score[i]) else "—"),
            "handover": self.handover_cell(i),
            "glitch": Text(fmt.quantity(p.glitch_v[i], "V") if handover else "—"),
            "thd": Text(fmt.thd(thd_v) if thd_v > 0 else "—"),
            "fix": self.fix_cell(i),
            "supply": Text(fmt.quantity(ch.value[i, C.IDX["supply_current"]], "A")),
            "price": Text(fmt.quantity(ch.value[i, C.IDX["price"]], "currency unit")),
            "margin": self.margin_cell(i),
            "stage": Text(
                fmt.TOPOLOGY_SHORT.get(str(r.table.topology[i]), str(r.table.topology[i]))
            ),
            "maker": Text(str(self.maker[i])),
        }


def ratio_words(ratio: float, sense: str) -> str:
    """What a margin ratio of a check with ``sense`` ("min" / "max") says, for people ("" when
    the check has none): the part's figure over the limit for a minimum, the limit over the
    part's figure for a maximum; ×1 or more passes; ×0 when the figure that is divided is zero
    or negative (:mod:`partsel.solver.checks`)."""
    if math.isnan(ratio):
        return ""
    if ratio == 0:
        why = "the part's figure is zero or negative" if sense == "min" else "the limit is zero"
        return f"; {fmt.ratio(ratio)}: {why}"
    what = (
        "the part's figure over the limit" if sense == "min" else "the limit over the part's figure"
    )
    return f"; {fmt.ratio(ratio)}: {what} (×1 or more passes)"
