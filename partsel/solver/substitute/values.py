"""Parameter values of the incumbent and the candidates on a basis, compared like with like:
the side of each range used, better / equal / worse with a tolerance, and the footprint pool."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from partsel.params import PARAMS, Topology
from partsel.physics.stage import Basis
from partsel.solver.substitute.model import (
    EQUAL_RTOL,
    SPREAD_FRACTION,
    ParamComparison,
    _num,
    _txt,
    parse_packages,
)

# ---- parameter values on a basis ---------------------------------------------------------------


@dataclass(frozen=True)
class _Sides:
    """min / typ / max arrays of one parameter (NaN where absent)."""

    vmin: np.ndarray
    vtyp: np.ndarray
    vmax: np.ndarray

    def side(self, name: str) -> np.ndarray:
        return {"min": self.vmin, "typ": self.vtyp, "max": self.vmax}[name]


def _sides(frame: pd.DataFrame, key: str) -> _Sides:
    s = _Sides(_num(frame, f"{key}_min"), _num(frame, f"{key}_typ"), _num(frame, f"{key}_max"))
    if key == "dead_band":
        # Only a class-B stage has a dead band; a biased or class-A stage has none (stage.py).
        zero = np.array([t != Topology.CLASS_B_PULLDOWN.value for t in _txt(frame, "topology")])
        s = _Sides(*(np.where(zero, 0.0, a) for a in (s.vmin, s.vtyp, s.vmax)))
    return s


class _Cols:
    """The columns of a frame, each converted once (vetting reads them per candidate)."""

    def __init__(self, frame: pd.DataFrame) -> None:
        self.frame = frame
        self._num: dict[str, np.ndarray] = {}
        self._sides: dict[str, _Sides] = {}

    def num(self, name: str) -> np.ndarray:
        if name not in self._num:
            self._num[name] = _num(self.frame, name)
        return self._num[name]

    def sides(self, key: str) -> _Sides:
        if key not in self._sides:
            self._sides[key] = _sides(self.frame, key)
        return self._sides[key]


def _resolve_one(s: _Sides, k: int, order: Sequence[str]) -> tuple[float, str]:
    for side in order:
        v = float(s.side(side)[k])
        if not math.isnan(v):
            return v, side
    return math.nan, "none"


def _form_pool(frame: pd.DataFrame, inc: int) -> np.ndarray:
    """Rows that could fit the incumbent's footprint: same channels, a shared code:pinout."""
    ch = _num(frame, "channels")
    texts = np.array(_txt(frame, "packages"), dtype=object)
    uniq, inverse = np.unique(texts.astype(str), return_inverse=True)
    mine = {(c.upper(), p.upper()) for c, p in parse_packages(str(texts[inc]))}
    shares_u = np.array(
        [bool(mine & {(c.upper(), p.upper()) for c, p in parse_packages(str(u))}) for u in uniq],
        dtype=bool,
    )
    pool = (ch == ch[inc]) & shares_u[inverse]
    pool[inc] = False
    return np.flatnonzero(pool)


@dataclass
class _ParamArrays:
    """One parameter compared for every part against part 0 (arrays of shape (P,))."""

    key: str
    unit: str
    worse: Literal["low", "high"]
    inc: np.ndarray
    cand: np.ndarray
    side_inc: np.ndarray
    side_cand: np.ndarray
    change: np.ndarray
    note: np.ndarray
    at_current_a: np.ndarray | None = None

    def comparison(self, j: int) -> ParamComparison:
        at = None if self.at_current_a is None else float(self.at_current_a[j])
        return ParamComparison(
            self.key,
            self.unit,
            self.worse,
            float(self.inc[j]),
            float(self.cand[j]),
            str(self.side_inc[j]),
            str(self.side_cand[j]),
            self.change[j],
            str(self.note[j]),
            at,
        )


def _pair_all(s: _Sides, worst: str, basis: Basis) -> tuple[np.ndarray, ...]:
    """Part 0's and every part's value on a common side where possible (see :func:`_pair_all`)."""
    p = s.vtyp.shape[0]
    other = "max" if worst == "min" else "min"
    first, second = (worst, "typ") if basis == "worst-case" else ("typ", worst)
    a, b = np.full(p, np.nan), np.full(p, np.nan)
    sa, sb = np.full(p, "none", dtype=object), np.full(p, "none", dtype=object)
    note = np.full(p, "", dtype=object)
    done = np.zeros(p, dtype=bool)
    for side in (first, second):
        ai, bc = float(s.side(side)[0]), s.side(side)
        ok = ~done & ~np.isnan(bc) & (not math.isnan(ai))
        a[ok], b[ok], sa[ok], sb[ok] = ai, bc[ok], side, side
        if basis == "worst-case" and side == "typ":
            inc_has = not math.isnan(float(s.side(worst)[0]))
            cand_has = ~np.isnan(s.side(worst))
            note[ok] = np.where(inc_has & ~cand_has[ok], "no-guarantee", "typical")
        done |= ok
    rest = ~done
    if rest.any():
        order = (first, second, other)
        ai, sai = _resolve_one(s, 0, order)
        bv, sbv = np.full(p, np.nan), np.full(p, "none", dtype=object)
        for side in order:
            arr = s.side(side)
            take = np.isnan(bv) & ~np.isnan(arr)
            bv[take], sbv[take] = arr[take], side
        a[rest], sa[rest], b[rest], sb[rest], note[rest] = ai, sai, bv[rest], sbv[rest], "mixed"
    return a, sa, b, sb, note


def spread_tolerance(s: _Sides, worst: str) -> float:
    """The incumbent's (row 0) tolerance for a parameter: :data:`SPREAD_FRACTION` of the
    distance between its typical and its guaranteed value (0 when it gives only one)."""
    typ, guar = float(s.vtyp[0]), float(s.side(worst)[0])
    if math.isnan(typ) or math.isnan(guar):
        return 0.0
    return SPREAD_FRACTION * abs(typ - guar)


def _change_all(a: np.ndarray, b: np.ndarray, worse: str, tol: float = 0.0) -> np.ndarray:
    """better / equal / worse / unknown / n/a of ``b`` against ``a``, direction-aware; a
    difference within ``tol`` (SI, see :func:`spread_tolerance`) counts as equal."""
    out = np.full(a.shape, "better", dtype=object)
    with np.errstate(invalid="ignore"):
        eq = np.abs(b - a) <= EQUAL_RTOL * np.maximum(np.abs(a), np.abs(b)) + 1e-18 + tol
        w = b < a if worse == "low" else b > a
    out[w] = "worse"
    out[eq] = "equal"
    out[np.isnan(b)] = "unknown"
    out[np.isnan(a)] = "n/a"
    return out


def _like_with_like(sub: pd.DataFrame, basis: Basis) -> pd.DataFrame:
    """``sub`` with the candidates' guaranteed values dropped where the incumbent (row 0) has
    none (worst-case basis only), so that both fall back to their typicals.

    An incumbent without a guaranteed minimum GBW, say, is otherwise judged on its typical
    while a candidate is judged on its guarantee: the candidate would look worse only because
    its datasheet says more.
    """
    if basis != "worst-case" or len(sub) < 2:
        return sub
    out = sub.copy()
    for pdef in PARAMS:
        col = f"{pdef.key}_{pdef.worst_side}"
        typ = f"{pdef.key}_typ"
        if col in out.columns and typ in out.columns and math.isnan(_num(out, col)[0]):
            vals = _num(out, col)
            has_typ = ~np.isnan(_num(out, typ))
            vals[1:] = np.where(has_typ[1:], np.nan, vals[1:])
            out[col] = vals
    for rail in ("swing_pos", "swing_neg"):
        cols = [c for c in out.columns if c.startswith(f"{rail}_v") and c.endswith("_max")]
        if cols and all(math.isnan(_num(out, c)[0]) for c in cols):
            for c in cols:
                typ = c[: -len("_max")] + "_typ"
                vals = _num(out, c)
                has_typ = ~np.isnan(_num(out, typ))
                vals[1:] = np.where(has_typ[1:], np.nan, vals[1:])
                out[c] = vals
    return out
