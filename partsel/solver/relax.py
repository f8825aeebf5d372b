"""Relaxation hints: which single requirement, relaxed by how much, admits how many more parts.

For a numeric limit ``L`` of requirement ``r`` (checks ``G_r``), a rejected part is admitted by
relaxing ``r`` alone exactly when every check it fails belongs to ``G_r``. The value of ``r`` at
which it passes follows from how ``r`` enters its checks (:class:`partsel.solver.checks.CheckDef`
``relax``):

* ``add`` (limit = base + r):  threshold = r + margin;
* ``scale`` (limit = base * r): threshold = r * value / limit (the conduction check: the
  smallest source current over the stage current);
* ``direct`` (limit = r): threshold = the part's value.

Thresholds beyond a limit's physical floor (``LimitDef.floor``: e.g. a slew ratio below 1) admit
nothing. Each hint lists up to three steps: the smallest relaxation that admits a part, the
median and the one that admits every such part, rounded outwards to three significant digits.
Lists (lifecycle, packages, channels) are relaxed one value at a time; the conduction mode one
step along ``no-change -> fix-allowed -> allowed`` (the whole verdict is redone for that).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from partsel.errors import json_pointer
from partsel.solver import checks as C
from partsel.solver.requirements import CONDUCTION_MODES, LIMIT_BY_KEY, LIMITS
from partsel.solver.verdict import verdict_flags

if TYPE_CHECKING:
    from partsel.solver.solve import Ranking


@dataclass(frozen=True)
class HintStep:
    """Relaxing the requirement to ``value`` admits ``admits`` more parts (``parts``: a few)."""

    value: Any
    admits: int
    parts: tuple[str, ...]


@dataclass(frozen=True)
class Hint:
    """One requirement that, relaxed alone, admits more parts."""

    requirement: str  #: key in ``[requirements.limits]``, or "conduction"
    pointer: str  #: JSON pointer in the design file
    unit: str
    current: Any
    steps: tuple[HintStep, ...]
    change: float  #: relative change of the first step (NaN for a list or mode)


#: Part numbers listed per hint step.
LIST_PARTS = 5


def _round_out(x: float, up: bool, exact: bool = False) -> float:
    """``x`` rounded to three significant digits, strictly up or down (so that a part whose
    threshold is exactly ``x`` still passes at the rounded value despite float rounding);
    with ``exact``, a threshold that already has three digits is kept as it is (the limit is
    then compared with that very value)."""
    if x == 0 or not math.isfinite(x):
        return x
    if exact and float(f"{x:.3g}") == x:
        return x
    e = math.floor(math.log10(abs(x))) - 2
    scale = 10.0**e
    q = x / scale
    r = math.ceil(q + abs(q) * 1e-9) if up else math.floor(q - abs(q) * 1e-9)
    return float(f"{r * scale:.3g}")


def hints(
    result: Ranking,
    *,
    other_fail: np.ndarray,
    cond_fail: np.ndarray,
    in_fix: np.ndarray,
    fix_pass: np.ndarray,
) -> list[Hint]:
    """Relaxation hints of a ranking (see the module docstring)."""

    req = result.requirements
    chk = result.checks
    feasible = result.feasible
    fail = chk.failing
    pn = result.table.part_number
    key = result.table.key_order
    out: list[Hint] = []
    rejected = ~feasible

    def step_list(
        idx: np.ndarray,
        thr: np.ndarray,
        loosen_up: bool,
        current: float,
        floor: float,
        exact: bool,
    ) -> list:
        order = np.lexsort((key[idx], thr if loosen_up else -thr))
        idx, thr = idx[order], thr[order]
        picks = sorted({0, (idx.size - 1) // 2, idx.size - 1})
        steps = []
        for p in picks:
            value = _round_out(float(thr[p]), up=loosen_up, exact=exact)
            if loosen_up:
                value = max(value, current)
                admitted = thr <= value
            else:
                value = max(min(value, current), floor)
                admitted = thr >= value
            steps.append(
                HintStep(value, int(admitted.sum()), tuple(pn[idx[admitted]][:LIST_PARTS]))
            )
        uniq: dict[float, HintStep] = {}
        for s in steps:
            uniq.setdefault(s.value, s)
        return list(uniq.values())

    for d in LIMITS:
        current = req.limit(d.key)
        if current is None:
            continue
        if d.key == "min_source_fraction" and req.conduction != "no-change":
            continue  # in the other modes the fix takes care of conduction
        cols = [j for j, c in enumerate(C.CHECKS) if c.requirement == d.key]
        in_group = np.zeros(C.N_CHECKS, dtype=bool)
        in_group[cols] = True
        cand = rejected & fail[:, in_group].any(axis=1) & ~fail[:, ~in_group].any(axis=1)
        idx = np.flatnonzero(cand)
        if idx.size == 0:
            continue
        idx, thr = _thresholds(result, d.key, idx, current)
        if idx.size == 0:
            continue
        exact = all(C.CHECKS[j].relax == "direct" for j in cols)
        steps = step_list(idx, thr, d.sense == "max", current, d.floor, exact)
        first = steps[0].value
        change = abs(first - current) / abs(current) if current else math.inf
        out.append(
            Hint(
                requirement=d.key,
                pointer=json_pointer("requirements", "limits", d.key),
                unit=d.unit,
                current=current,
                steps=tuple(steps),
                change=change,
            )
        )
    out.sort(key=lambda h: (h.change, -h.steps[0].admits, h.requirement))

    # lists: one more accepted value
    choice_hints: list[Hint] = []
    for ck, value_of in (
        ("lifecycle", lambda i: [result.table.lifecycle[i]]),
        ("packages", lambda i: _codes(result, i)),
        ("channels", lambda i: [int(result.table.channels[i])]),
    ):
        accepted = req.choice(ck)
        if accepted is None:
            continue
        j = next(k for k, c in enumerate(C.CHECKS) if c.requirement == ck)
        only = rejected & fail[:, j] & (fail.sum(axis=1) == 1)
        counts: dict[object, list[int]] = {}
        for i in np.flatnonzero(only):
            for val in value_of(i):
                counts.setdefault(val, []).append(int(i))
        for val, rows in sorted(counts.items(), key=lambda kv: (-len(kv[1]), str(kv[0]))):
            rows_sorted = sorted(rows, key=lambda i: key[i])
            choice_hints.append(
                Hint(
                    requirement=ck,
                    pointer=json_pointer("requirements", "limits", ck),
                    unit="",
                    current=list(accepted),
                    steps=(
                        HintStep(
                            [*accepted, val],
                            len(rows),
                            tuple(pn[rows_sorted][:LIST_PARTS]),
                        ),
                    ),
                    change=math.nan,
                )
            )

    # conduction mode: one step looser (the verdict redone with the other checks as designed)
    k = CONDUCTION_MODES.index(req.conduction)
    if k + 1 < len(CONDUCTION_MODES):
        looser = CONDUCTION_MODES[k + 1]
        new_feasible, _ = verdict_flags(looser, other_fail, cond_fail, in_fix, fix_pass)
        gained = np.flatnonzero(new_feasible & ~feasible)
        if gained.size:
            gained = gained[np.argsort(key[gained], kind="stable")]
            choice_hints.insert(
                0,
                Hint(
                    requirement="conduction",
                    pointer="/requirements/conduction",
                    unit="",
                    current=req.conduction,
                    steps=(HintStep(looser, int(gained.size), tuple(pn[gained][:LIST_PARTS])),),
                    change=math.nan,
                ),
            )
    return out + choice_hints


def _thresholds(
    result: Ranking, key: str, idx: np.ndarray, current: float
) -> tuple[np.ndarray, np.ndarray]:
    """Value of limit ``key`` at which each part ``idx`` passes every check of that limit
    (see the module docstring); only the parts a relaxation within the limit's floor admits."""
    d = LIMIT_BY_KEY[key]
    chk = result.checks
    fail = chk.failing
    cols = [j for j, c in enumerate(C.CHECKS) if c.requirement == key]
    loosen_up = d.sense == "max"
    thr = np.full(idx.size, -np.inf if loosen_up else np.inf)
    for j in cols:
        c = C.CHECKS[j]
        f = fail[idx, j]
        with np.errstate(invalid="ignore", divide="ignore"):
            if c.name == "conduction":
                t = chk.value[idx, j] / result.prediction.stage_current_a[idx]
            elif c.relax == "add":
                t = current + chk.margin[idx, j]
            elif c.relax == "scale":
                t = current * chk.value[idx, j] / chk.limit[idx, j]
            else:
                t = chk.value[idx, j]
        thr = np.where(f, np.fmax(thr, t), thr) if loosen_up else np.where(f, np.fmin(thr, t), thr)
    ok = np.isfinite(thr)
    if loosen_up:
        ok &= thr > 0
    else:
        ok &= thr >= d.floor if d.floor_inclusive else thr > d.floor
    if key == "min_source_fraction":
        ok &= thr < 1.0
    return idx[ok], thr[ok]


def part_relaxation(result: Ranking, i: int) -> list[tuple[str, str, float, float]]:
    """For a rejected part: the single numeric limit whose relaxation admits it, if any, as
    ``(key, unit, current, value)`` (value rounded outwards to three digits)."""
    if result.feasible[i]:
        return []
    req = result.requirements
    fail = result.checks.failing[i]
    out = []
    for d in LIMITS:
        current = req.limit(d.key)
        if current is None or (d.key == "min_source_fraction" and req.conduction != "no-change"):
            continue
        in_group = np.array([c.requirement == d.key for c in C.CHECKS])
        if not fail[in_group].any() or fail[~in_group].any():
            continue
        idx, thr = _thresholds(result, d.key, np.array([i]), current)
        if idx.size:
            exact = all(c.relax == "direct" for c in C.CHECKS if c.requirement == d.key)
            value = _round_out(float(thr[0]), up=d.sense == "max", exact=exact)
            value = max(value, current) if d.sense == "max" else max(min(value, current), d.floor)
            out.append((d.key, d.unit, current, value))
    return out


def _codes(result: Ranking, i: int) -> list[str]:
    return [code for code, rows in result.table.package_codes.items() if rows[i]]
