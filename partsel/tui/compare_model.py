"""Side-by-side comparison of two to four parts of a ranking: one row per figure, the better and
the worse value of each row marked (no textual here).

Directions: a check margin is better when larger; glitch, THD, supply current and price when
smaller; a value that fails its check in the design is marked ``fail``, never ``better`` (not
even when every compared part fails it); the catalogue rows take their direction from
:func:`partsel.solver.substitute.compare_parts` (which follows :data:`partsel.params.PARAMS`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from partsel import present as P
from partsel.solver import Ranking
from partsel.solver import checks as C
from partsel.solver.substitute import Comparison
from partsel.tui import fmt

Better = Literal["max", "min"] | None
Mark = Literal["better", "worse", "same", "fail", ""]


@dataclass(frozen=True)
class CompareRow:
    """One figure for every compared part."""

    label: str
    texts: tuple[str, ...]
    values: tuple[float, ...] = ()  #: numbers compared (NaN: missing); empty: not compared
    better: Better = None
    group: str = ""
    marks: tuple[Mark, ...] = field(default=())


def mark_values(values: tuple[float, ...], better: Better) -> tuple[Mark, ...]:
    """Mark the best and the worst of ``values`` (NaN is not compared).

    All equal: every value ``same``. Otherwise the best ``better``, the worst ``worse``, the
    others unmarked.
    """
    n = len(values)
    if better is None or n < 2:
        return ("",) * n
    v = np.array(values, dtype=float)
    ok = ~np.isnan(v)
    if ok.sum() < 2:
        return ("",) * n
    hi, lo = np.max(v[ok]), np.min(v[ok])
    if hi == lo:
        return tuple("same" if o else "" for o in ok)
    best, worst = (hi, lo) if better == "max" else (lo, hi)
    out: list[Mark] = []
    for x, o in zip(v, ok, strict=True):
        out.append("better" if o and x == best else "worse" if o and x == worst else "")
    return tuple(out)


def fail_marks(marks: tuple[Mark, ...], fails: list[bool]) -> tuple[Mark, ...]:
    """``marks`` with every value that fails its check marked ``fail`` instead: a failing
    value is never the better one, even when every part fails."""
    return tuple("fail" if f else m for m, f in zip(marks, fails, strict=True))


def _row(
    label: str,
    texts: list[str],
    values: list[float],
    better: Better,
    group: str,
    fails: list[bool] | None = None,
) -> CompareRow:
    vals = tuple(float(x) for x in values)
    marks = mark_values(vals, better)
    if fails is not None:
        marks = fail_marks(marks, fails)
    return CompareRow(label, tuple(texts), vals, better, group, marks)


def _fails(r: Ranking, parts: list[int], name: str) -> list[bool]:
    """Whether each part fails check ``name`` in the ranking's design."""
    j = C.IDX[name]
    return [int(r.checks.status[i, j]) == C.FAIL for i in parts]


def compare_rows(r: Ranking, parts: list[int]) -> list[CompareRow]:
    """Rows comparing parts ``parts`` (indices into ``r``) of one ranking."""
    p, fx, ch, t = r.prediction, r.fix, r.checks, r.table
    rows: list[CompareRow] = []
    g = "Verdict"
    rows.append(
        CompareRow(
            "maker / stage",
            tuple(f"{t.text('maker')[i]} · {t.topology[i]}" for i in parts),
            group=g,
        )
    )
    verdicts = []
    for i in parts:
        if r.feasible[i]:
            verdicts.append(f"{fmt.OK} feasible" + (" (fix)" if fx.applied[i] else ""))
        else:
            j = int(r.binding[i])
            verdicts.append(f"{fmt.BAD} {fmt.check_label(C.CHECKS[j].name)}")
    rows.append(_row("verdict", verdicts, [1.0 if r.feasible[i] else 0.0 for i in parts], "max", g))
    rows.append(
        _row(
            "rank",
            [str(r.rank[i]) if r.rank[i] else "–" for i in parts],
            [float(r.rank[i]) if r.rank[i] else math.nan for i in parts],
            "min",
            g,
        )
    )
    rows.append(
        _row(
            "score",
            [fmt.quantity(r.score[i], "1") for i in parts],
            [float(r.score[i]) for i in parts],
            "max",
            g,
        )
    )

    g = "Crossover (closed form)"
    rows.append(
        CompareRow(
            "conduction",
            tuple(fmt.CONDUCTION_LABEL[str(r.prediction.conduction[i])] for i in parts),
            group=g,
        )
    )
    glitch = [float(p.glitch_v[i]) if p.handover[i] else 0.0 for i in parts]
    rows.append(_row("glitch", [fmt.quantity(x, "V") for x in glitch], glitch, "min", g))
    thd = [float(p.thd_estimate[i]) for i in parts]
    rows.append(_row("THD estimate, as designed", [fmt.thd(x) for x in thd], thd, "min", g))
    thd_v = [float(ch.value[i, C.IDX["thd"]]) for i in parts]
    rows.append(
        _row(
            "THD estimate, verdict",
            [fmt.thd(x) for x in thd_v],
            thd_v,
            "min",
            g,
            _fails(r, parts, "thd"),
        )
    )
    src = [float(p.min_source_a[i]) for i in parts]
    rows.append(_row("least source current", [fmt.quantity(x, "A") for x in src], src, "max", g))
    fix_text, fix_val = [], []
    for i in parts:
        if not fx.needed[i]:
            fix_text.append("not needed")
            fix_val.append(math.inf)
        elif fx.works[i]:
            fix_text.append(f"{fmt.quantity(fx.r_ohm[i], 'ohm')} to {fmt.rail_label(fx.rail[i])}")
            fix_val.append(float(fx.r_ohm[i]))
        else:
            fix_text.append("none works")
            fix_val.append(0.0)
    rows.append(_row("fix resistor", fix_text, fix_val, "max", g))

    g = "Cost"
    for name, label in (("supply_current", "supply current"), ("price", "price")):
        j = C.IDX[name]
        vals = [float(ch.value[i, j]) for i in parts]
        texts = [fmt.quantity(v, C.CHECKS[j].unit) for v in vals]
        rows.append(_row(label, texts, vals, "min", g, _fails(r, parts, name)))

    g = "Margins (≥ ×1 passes)"
    for j, c in enumerate(C.CHECKS):
        if c.sense == "is":
            continue
        vals = [float(ch.margin[i, j]) for i in parts]
        if all(math.isnan(v) for v in vals):
            continue
        texts = [
            f"{fmt.quantity(ch.margin[i, j], P.difference_unit(c.display_unit))} "
            f"{fmt.ratio(ch.ratio[i, j])}".strip()
            for i in parts
        ]
        fails = [int(ch.status[i, j]) == C.FAIL for i in parts]
        rows.append(_row(fmt.check_label(c.name), texts, vals, "max", g, fails))

    return rows


def catalogue_rows(comparison: Comparison) -> list[CompareRow]:
    """The identity, fit and function rows of :func:`partsel.solver.substitute.compare_parts`
    (catalogue values on its basis; the side of each range used in brackets)."""
    out: list[CompareRow] = []
    for row in comparison.rows:
        if row.group == "circuit":  # the ranking's checks show the circuit
            continue
        texts = []
        for k, v in enumerate(row.values):
            if isinstance(v, float | int) and not isinstance(v, bool):
                if row.key == "price":  # the unit is a currency code
                    text = f"{float(v):.2f} {row.unit}".strip()
                else:
                    text = fmt.quantity(v, row.unit) if row.unit else f"{v:g}"
                if row.sides is not None and row.sides[k] not in ("none", "value"):
                    text += f" ({row.sides[k]})"
                if row.sides is not None and row.sides[k] == "none":
                    text = "—"
            else:
                text = str(v)
            texts.append(text)
        better: Better = {"high": "max", "low": "min"}.get(row.better or "")  # type: ignore[assignment]
        if better is None:
            out.append(
                CompareRow(row.key.replace("_", " "), tuple(texts), group=f"Catalogue: {row.group}")
            )
        else:
            values = [float(v) if v is not None else math.nan for v in row.values]
            out.append(
                _row(
                    row.key.replace("_", " "),
                    texts,
                    values,
                    better,
                    f"Catalogue: {row.group} ({comparison.basis})",
                )
            )
    return out


def row_changes(row: CompareRow) -> bool:
    """True when the row's values change from one compared part to another."""
    return len(set(row.texts)) > 1
