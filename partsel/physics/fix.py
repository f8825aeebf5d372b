"""The fix: an extra DC load that keeps the output stage in one conduction mode.

Two remedies for a class-A or class-B stage (design notes section 5):

* a resistor to the **negative rail** so that the source device stays on all period:
  ``min_t [i(t) + (v(t) - V-)/R] >= -(1 - m) I_stage``, with ``m`` the margin fraction (the
  source device keeps at least ``m * I_stage`` at the worst instant);
* a resistor to the **positive rail** (class B only) so that the sink device stays on:
  ``max_t [i(t) - (V+ - v(t))/R] <= -(1 + m) I_stage`` (with the stage current on its high side
  on the worst-case basis: the resistor must also carry the pull-down's current).

Both give an upper bound on R. It is rounded *down* to a preferred value of an IEC 60063
series so that even at the top of its tolerance the resistor stays below the bound; the costs
(extra supply current, dissipation) and the re-checks (source or sink limit, swing headroom at
the new current) use the bottom of the tolerance, which draws the most current.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from partsel.physics import eseries
from partsel.physics.analysis import MARGIN, conduction_verdict, ideal_grid, source_demand
from partsel.physics.circuit import Design
from partsel.physics.stage import CLASS_B, StageParams

#: Default margin: the device kept on must still carry half its stage current (partsel's
#: choice; a stage barely in one mode still distorts, design notes section 4). The same band
#: decides the "marginal" verdict (partsel.physics.analysis.MARGIN).
DEFAULT_MARGIN = MARGIN


@dataclass(frozen=True)
class RailFix:
    """One remedy (a resistor to one rail) for every part; arrays of shape (P,)."""

    rail: str  #: "negative" or "positive"
    r_max_ohm: np.ndarray  #: largest resistor that works (NaN: none works / not needed)
    r_ohm: np.ndarray  #: preferred value chosen (NaN: none)
    extra_supply_a: np.ndarray  #: mean extra current drawn from the supply
    extra_dissipation_amp_w: np.ndarray  #: extra dissipation in the amplifier
    dissipation_resistor_w: np.ndarray  #: mean dissipation in the resistor
    device_peak_a: np.ndarray  #: peak current of the device kept on, with the resistor
    limit_ok: np.ndarray
    swing_ok: np.ndarray
    ok: np.ndarray
    reason: np.ndarray  #: object array of strings, "" when ok


@dataclass(frozen=True)
class FixResult:
    """Both remedies and the recommendation per part."""

    needed: np.ndarray  #: bool
    negative: RailFix
    positive: RailFix
    recommended: np.ndarray  #: "negative", "positive", "none" (no resistor works), "not-needed"
    series: str
    tolerance: float
    margin: float

    @property
    def r_neg_ohm(self) -> np.ndarray:
        """Recommended resistor to the negative rail, ohm (NaN where not recommended)."""
        return np.where(self.recommended == "negative", self.negative.r_ohm, np.nan)

    @property
    def r_pos_ohm(self) -> np.ndarray:
        """Recommended resistor to the positive rail, ohm (NaN where not recommended)."""
        return np.where(self.recommended == "positive", self.positive.r_ohm, np.nan)


def _bound(num: np.ndarray, need: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Largest R with num/R >= need wherever need > 0; second value: impossible (num <= 0)."""
    active = need > 0
    with np.errstate(divide="ignore", invalid="ignore"):
        r = np.where(active, num / need, np.inf)
    impossible = (active & (num <= 0)).any(axis=1)
    r = np.where(active & (num <= 0), np.nan, r)
    return np.min(np.where(np.isnan(r), np.inf, r), axis=1), impossible


def size_fix(
    stage: StageParams,
    design: Design,
    *,
    series: str = "E24",
    tolerance: float | None = None,
    margin: float = DEFAULT_MARGIN,
    n_grid: int = 512,
) -> FixResult:
    """Size the resistor to either rail for every part of ``stage`` in ``design``."""
    p = stage.n
    series = series.upper()
    eseries.series_values(series)  # raises a clear ValueError for an unknown series
    tol = eseries.SERIES_TOLERANCE[series] if tolerance is None else float(tolerance)
    vpos, vneg = design.supply.v_pos_v, design.supply.v_neg_v
    _, v, i = ideal_grid(design, n_grid)
    i_st = stage.stage_current_a[:, None]
    i_hi = stage.stage_current_high_a[:, None]
    pulldown = stage.has_pulldown
    # Needed where the stage does not stay in one mode with the margin (the conduction verdict).
    d0, b = source_demand(stage, design)
    needed = pulldown & (conduction_verdict(stage, d0 - b, d0 + b, margin) != "one-mode")

    def finish(rail: str, r_max: np.ndarray, impossible: np.ndarray) -> RailFix:
        r_max = np.where(needed & ~impossible & np.isfinite(r_max) & (r_max > 0), r_max, np.nan)
        r_nom = np.asarray(eseries.round_down(r_max, series, tol), dtype=float)
        r_lo = r_nom * (1.0 - tol)
        with np.errstate(invalid="ignore", divide="ignore"):
            if rail == "negative":
                i_r = (v[None, :] - vneg) / r_lo[:, None]  # current into the resistor
                i_new = i[None, :] + i_r
                # Source device current; the pull-down adds to it (pessimistic: its high side).
                dev = np.maximum(i_new + i_hi, 0.0)
                peak = dev.max(axis=1)
                limit_ok = peak <= stage.source_limit_a
                swing_ok = np.all(vpos - v[None, :] >= stage.headroom_pos(dev), axis=1)
                extra = i_r.mean(axis=1)
                amp_w = np.mean(i_r * (vpos - v[None, :]), axis=1)
                res_w = np.mean(i_r * (v[None, :] - vneg), axis=1)
            else:
                i_r = (vpos - v[None, :]) / r_lo[:, None]  # current from the resistor
                i_new = i[None, :] - i_r
                dev = np.maximum(-i_new - i_st, 0.0)  # sink device current
                peak = dev.max(axis=1)
                limit_ok = peak <= stage.sink_limit_a
                swing_ok = np.all(v[None, :] - vneg >= stage.headroom_neg(-i_new), axis=1)
                # The resistor's current passes through the amplifier to the negative rail.
                extra = i_r.mean(axis=1)
                amp_w = np.mean(i_r * (v[None, :] - vneg), axis=1)
                res_w = np.mean(i_r * (vpos - v[None, :]), axis=1)
        has = ~np.isnan(r_nom)
        ok = has & limit_ok & swing_ok
        reason = np.full(p, "", dtype=object)
        reason[needed & impossible] = (
            f"the output must be held near the {rail} rail while the current is needed, "
            "so a resistor to it cannot supply that current"
        )
        reason[needed & ~impossible & ~has] = "no preferred value below the bound"
        reason[has & ~limit_ok] = (
            "device current with the resistor exceeds the part's "
            f"{'source' if rail == 'negative' else 'sink'} limit"
        )
        reason[has & limit_ok & ~swing_ok] = "swing headroom at the higher current is too small"
        if rail == "positive":
            reason[needed & (stage.topology != CLASS_B)] = "only a class-B stage has a sink device"
        nan = np.full(p, np.nan)
        return RailFix(
            rail=rail,
            r_max_ohm=r_max,
            r_ohm=r_nom,
            extra_supply_a=np.where(has, extra, nan),
            extra_dissipation_amp_w=np.where(has, amp_w, nan),
            dissipation_resistor_w=np.where(has, res_w, nan),
            device_peak_a=np.where(has, peak, nan),
            limit_ok=limit_ok & has,
            swing_ok=swing_ok & has,
            ok=ok,
            reason=reason,
        )

    # Negative rail: (v - V-)/R >= -(1 - m) I_stage - i(t).
    need_n = -(1.0 - margin) * i_st - i[None, :]
    r_n, imp_n = _bound(np.broadcast_to(v[None, :] - vneg, need_n.shape), need_n)
    neg = finish("negative", r_n, imp_n)
    # Positive rail: (V+ - v)/R >= i(t) + (1 + m) I_stage. The resistor must take the
    # pull-down's current as well, so its pessimistic side here is the high one.
    need_p = i[None, :] + (1.0 + margin) * i_hi
    r_p, imp_p = _bound(np.broadcast_to(vpos - v[None, :], need_p.shape), need_p)
    r_p = np.where(stage.topology == CLASS_B, r_p, np.nan)
    pos = finish("positive", r_p, imp_p)

    # The rail rule (stated with every recommendation, see partsel.present.fix_rule): the
    # pull-down to V- unless only the pull-up works, or both work and the pull-up draws less
    # extra supply current.
    rec = np.full(p, "not-needed", dtype=object)
    both = neg.ok & pos.ok
    rec[needed] = "none"
    rec[needed & neg.ok] = "negative"
    rec[needed & pos.ok & ~neg.ok] = "positive"
    prefer_pos = both & (pos.extra_supply_a < neg.extra_supply_a)
    rec[needed & prefer_pos] = "positive"
    return FixResult(
        needed=needed,
        negative=neg,
        positive=pos,
        recommended=rec,
        series=series.upper(),
        tolerance=tol,
        margin=margin,
    )
