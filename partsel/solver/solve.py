"""Rank a catalogue for a design: feasibility, margins, binding constraint, score, Pareto set.

:func:`rank` runs, for every part at once:

1. :func:`partsel.physics.analysis.predict_closed_form` on the chosen basis (one call for all
   parts) and every check of :mod:`partsel.solver.checks` as designed;
2. on the worst-case basis, the stage current (the one parameter whose pessimistic side differs
   between checks: low for the conduction and glitch, high for the source current and the swing
   to V+) swept over its minimum, typical and maximum; each check keeps its worst corner
   (design notes section 7: "for each check, use the side of the range that is pessimistic");
3. :func:`partsel.physics.fix.size_fix` for the class-A/B parts that change mode, and the checks
   again with the fix resistor fitted (:func:`partsel.solver.checks.fix_variant`);
4. the verdict under the requirement's conduction mode, the binding constraint of each rejected
   part, the score (:mod:`partsel.solver.score`) and the Pareto set
   (:mod:`partsel.solver.pareto`) of the feasible parts, and relaxation hints
   (:mod:`partsel.solver.relax`).

Steps 2 and 3 cost more than a check, so they run only for the parts that could still end up
feasible or one requirement away from it: parts failing checks of at most one requirement other
than the three a fix can repair (conduction, glitch, THD). Every other part is rejected anyway;
its margins are those of the first corner and its fix is "not evaluated".
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from partsel.physics.analysis import one_mode_thd, predict_closed_form
from partsel.physics.circuit import Design
from partsel.physics.fix import size_fix
from partsel.solver import checks as C
from partsel.solver.pareto import pareto_mask
from partsel.solver.requirements import Conduction, Requirements
from partsel.solver.score import scores, transformed
from partsel.solver.table import CORNERS, PartTable

#: Samples per period of the fix sizing (size_fix's grid): the bound on R is a minimum of a
#: smooth periodic function; 128 samples put it within about 0.1 % (well inside an E24 step).
FIX_GRID = 128
#: Parts per call of size_fix (bounds the memory of its (parts x samples) arrays).
FIX_CHUNK = 4096

#: Group id of each check: checks sharing a requirement form one group (for relaxation).
_GROUP = np.array(
    [
        next(i for i, d in enumerate(C.CHECKS) if d.requirement == c.requirement)
        if c.requirement is not None
        else k
        for k, c in enumerate(C.CHECKS)
    ]
)


@dataclass(frozen=True)
class FixInfo:
    """The fix of every part (arrays of shape (P,)); see :func:`partsel.physics.fix.size_fix`."""

    needed: np.ndarray  #: class A/B part that changes mode (or is marginal) as designed
    sized: np.ndarray  #: size_fix was run for it
    rail: np.ndarray  #: "negative" / "positive" / "none" (no resistor works) / "" (not needed)
    r_ohm: np.ndarray  #: E-series resistor (NaN: none)
    r_max_ohm: np.ndarray  #: largest resistor that works (NaN: none)
    works: np.ndarray
    applied: np.ndarray  #: the verdict uses the part with the resistor fitted
    extra_supply_a: np.ndarray  #: per channel
    extra_dissipation_w: np.ndarray  #: in the amplifier, per channel
    reason: np.ndarray  #: why no resistor works ("" otherwise)
    series: str


@dataclass(frozen=True)
class Prediction:
    """Closed-form crossover prediction per part, as designed (worst corner on worst-case)."""

    handover: np.ndarray
    marginal: np.ndarray
    crossover_biased: np.ndarray
    glitch_v: np.ndarray
    thd_estimate: np.ndarray
    handover_out_v: np.ndarray
    flat_level_v: np.ndarray
    min_source_a: np.ndarray
    stage_current_a: np.ndarray


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


@dataclass(frozen=True)
class Ranking:
    """Result of :func:`rank` (arrays along the part axis of ``table``)."""

    design: Design
    requirements: Requirements
    table: PartTable
    checks: C.CheckArrays  #: the verdict's checks (with the fix where it is applied)
    corner: np.ndarray  #: (P, C) int8: stage-current corner that set each check (-1: basis)
    feasible: np.ndarray
    n_failing: np.ndarray
    binding: np.ndarray  #: check index of the binding constraint (-1: feasible)
    tightest: np.ndarray  #: check index of the smallest passing ratio (-1: none)
    score: np.ndarray  #: NaN for rejected parts
    utility: dict[str, np.ndarray]  #: u_k of each objective (0 best .. 1 worst)
    metrics: dict[str, np.ndarray]  #: raw metric of each objective
    pareto: np.ndarray
    pareto_costs: np.ndarray  #: (P, k) transformed costs of the Pareto objectives
    order: np.ndarray  #: part indices: feasible by score, then rejected, nearest misses first
    rank: np.ndarray  #: 1.. for feasible parts, 0 for rejected
    prediction: Prediction
    fix: FixInfo
    hints: tuple[Hint, ...]
    timing_s: dict[str, float] = field(default_factory=dict)

    @property
    def n(self) -> int:
        """Number of parts ranked."""
        return self.table.n

    @property
    def n_feasible(self) -> int:
        """Number of feasible parts."""
        return int(self.feasible.sum())

    def index(self, part_number: str) -> int:
        """Index of ``part_number`` (case-insensitive); KeyError if absent."""
        hit = np.flatnonzero(self.table.part_key == part_number.strip().casefold())
        if hit.size == 0:
            raise KeyError(part_number)
        return int(hit[0])


def _verdict(
    mode: Conduction,
    other_fail: np.ndarray,
    cond_fail: np.ndarray,
    in_fix: np.ndarray,
    fix_pass: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Feasible and fix-applied flags under a conduction mode.

    ``other_fail``: fails a check other than conduction as designed; ``cond_fail``: the
    conduction check fails as designed; ``in_fix``: the fix variant was evaluated; ``fix_pass``:
    the part passes every check with the fix (False outside ``in_fix``).
    """
    designed = ~other_fail & ((mode == "allowed") | ~cond_fail)
    if mode == "no-change":
        return designed, np.zeros_like(designed)
    use_fix = in_fix & fix_pass & ~designed
    if mode == "fix-allowed":
        use_fix = in_fix  # conduction fails as designed: judged with the fix
    return designed | (in_fix & fix_pass), use_fix


def _combine_corner(
    base: C.CheckArrays, other: C.CheckArrays, corner: np.ndarray, rows: np.ndarray, k: int
) -> None:
    """Keep, per check marked ``corner`` in :mod:`checks`, the worse of two corners (in place)."""
    for j in np.flatnonzero(C.CORNER):
        bm, om = base.margin[rows, j], other.margin[:, j]
        bv, ov = base.value[rows, j], other.value[:, j]
        with np.errstate(invalid="ignore"):
            worse_v = ov > bv if C.CHECKS[j].sense == "max" else ov < bv
            worse = (om < bm) | (np.isnan(bm) & np.isnan(om) & worse_v)
        if not worse.any():
            continue
        at = rows[worse]
        for mine, theirs in zip(base.astuple(), other.astuple(), strict=True):
            mine[at, j] = theirs[worse, j]
        corner[at, j] = k


def _binding_and_tightest(
    chk: C.CheckArrays,
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per part: number of failing checks, the binding check (smallest ratio among the failing
    ones; a failure without a ratio counts as 0), the tightest passing check and its ratio."""
    n = chk.status.shape[0]
    fail = chk.failing
    n_failing = fail.sum(axis=1)
    binding = np.full(n, -1)
    rows = np.flatnonzero(n_failing > 0)
    if rows.size:
        sev = np.where(fail[rows], np.nan_to_num(chk.ratio[rows], nan=0.0), np.inf)
        binding[rows] = np.argmin(sev, axis=1)
    tightest = np.full(n, -1)
    min_ratio = np.full(n, np.inf)
    rows = np.flatnonzero(n_failing == 0)
    if rows.size:
        r = chk.ratio[rows]
        with np.errstate(invalid="ignore"):
            passing = (chk.status[rows] == C.PASS) & np.isfinite(r)
        tr = np.where(passing, r, np.inf)
        arg = np.argmin(tr, axis=1)
        has = passing.any(axis=1)
        tightest[rows] = np.where(has, arg, -1)
        min_ratio[rows] = tr[np.arange(rows.size), arg]
    return n_failing, binding, tightest, min_ratio


def rank(
    table: PartTable,
    design: Design,
    requirements: Requirements | None = None,
) -> Ranking:
    """Evaluate every part of ``table`` in ``design`` against ``requirements``.

    ``requirements`` defaults to the design's own (``Design.requirements``, see
    :meth:`Requirements.from_mapping`).
    """
    from partsel.solver.relax import hints as make_hints

    t0 = time.perf_counter()
    req = requirements or Requirements.from_mapping(design.requirements)
    basis = req.basis
    n = table.n
    every = np.arange(n)
    stage = table.stage(basis)
    levels = C.DesignLevels.of(design)
    cf = predict_closed_form(stage, design)
    chk = C.evaluate(table, every, stage, cf, design, req, levels)
    corner = np.full((n, C.N_CHECKS), 0 if basis == "worst-case" else -1, dtype=np.int8)
    pred = {
        "handover": cf.handover.copy(),
        "marginal": cf.marginal.copy(),
        "glitch_v": cf.glitch_v.copy(),
        "thd_estimate": cf.thd_estimate.copy(),
    }
    t1 = time.perf_counter()

    # parts that can still be feasible or one requirement away from it
    unrep = chk.failing & ~C.REPAIRABLE[None, :]
    groups = np.zeros((n, C.N_CHECKS), dtype=bool)
    rows, cols = np.nonzero(unrep)
    groups[rows, _GROUP[cols]] = True
    detail = groups.sum(axis=1) <= 1

    if basis == "worst-case":
        lo = table.stage_current_corner("min")
        for k, name in enumerate(CORNERS[1:], start=1):
            alt = table.stage_current_corner(name)
            sub = np.flatnonzero(detail & stage.has_pulldown & (alt != lo) & np.isfinite(alt))
            if sub.size == 0:
                continue
            st_c = stage.take(sub).replace(stage_current_a=alt[sub])
            cf_c = predict_closed_form(st_c, design)
            chk_c = C.evaluate(table, sub, st_c, cf_c, design, req, levels)
            _combine_corner(chk, chk_c, corner, sub, k)
            pred["handover"][sub] |= cf_c.handover
            pred["marginal"][sub] |= cf_c.marginal
            pred["glitch_v"][sub] = np.fmax(pred["glitch_v"][sub], cf_c.glitch_v)
            pred["thd_estimate"][sub] = np.fmax(pred["thd_estimate"][sub], cf_c.thd_estimate)
    pred["marginal"] &= ~pred["handover"]
    t2 = time.perf_counter()

    # the fix
    jc = C.IDX["conduction"]
    frac = req.limit("min_source_fraction") or 0.0
    with np.errstate(invalid="ignore"):
        needed = stage.has_pulldown & (chk.margin[:, jc] < 0)
    in_fix = detail & needed
    fx_rows = np.flatnonzero(in_fix)
    fix = _size_fixes(stage, design, fx_rows, n, req.fix_series, frac, needed)
    rail = fix.rail[fx_rows]
    r_fx = fix.r_ohm[fx_rows]
    thd_fixed = one_mode_thd(
        stage.take(fx_rows),
        design,
        r_to_neg_ohm=np.where(rail == "negative", r_fx, np.nan),
        r_to_pos_ohm=np.where(rail == "positive", r_fx, np.nan),
    )
    fixed = C.fix_variant(
        chk.take(fx_rows),
        r_ohm=r_fx,
        thd_fixed=thd_fixed,
        works=fix.works[fx_rows],
        extra_supply_a=fix.extra_supply_a[fx_rows],
        extra_dissipation_w=fix.extra_dissipation_w[fx_rows],
        theta_ja_k_per_w=stage.theta_ja_k_per_w[fx_rows],
        design=design,
        req=req,
    )
    t3 = time.perf_counter()

    # verdict
    fail = chk.failing
    other_fail = fail[:, [j for j in range(C.N_CHECKS) if j != jc]].any(axis=1)
    cond_fail = stage.has_pulldown & ~(chk.margin[:, jc] >= 0)
    fix_pass = np.zeros(n, dtype=bool)
    fix_pass[fx_rows] = ~fixed.failing.any(axis=1)
    feasible, use_fix = _verdict(req.conduction, other_fail, cond_fail, in_fix, fix_pass)
    apply_rows = np.flatnonzero(use_fix)
    if apply_rows.size:
        pos = np.searchsorted(fx_rows, apply_rows)
        chk.put(apply_rows, fixed.take(pos))
    if req.conduction != "no-change":
        chk.status[needed & ~in_fix, C.IDX["fix_resistor"]] = C.SKIPPED
    fix = _replace(fix, applied=use_fix & fix.works)

    n_failing, binding, tightest, min_ratio = _binding_and_tightest(chk)

    # objectives
    v = chk.value
    used = float(design.channels_used)
    diss = cf.dissipation_w + np.where(use_fix, used * np.nan_to_num(fix.extra_dissipation_w), 0)
    sw = req.limit("min_swing_margin") or 0.0
    with np.errstate(invalid="ignore", divide="ignore"):
        metrics = {
            "thd": v[:, C.IDX["thd"]],
            "glitch": v[:, C.IDX["glitch"]],
            "supply_current": v[:, C.IDX["supply_current"]],
            "price": v[:, C.IDX["price"]],
            "dissipation": diss,
            "offset": v[:, C.IDX["offset"]],
            "noise": v[:, C.IDX["noise"]],
            "slew_margin": v[:, C.IDX["slew"]] / cf.slew_required_v_per_s,
            "bandwidth_margin": v[:, C.IDX["bandwidth"]] / design.signal.frequency_hz,
            "swing_margin": np.fmin(
                chk.value[:, C.IDX["swing_high"]] - chk.limit[:, C.IDX["swing_high"]],
                chk.value[:, C.IDX["swing_low"]] - chk.limit[:, C.IDX["swing_low"]],
            )
            + sw,
            "min_margin": min_ratio,
        }
    score, utility = scores(metrics, req.objectives, feasible)
    pnames = req.pareto_objectives
    costs = np.column_stack([transformed(nm, metrics[nm]) for nm in pnames])
    pareto = np.zeros(n, dtype=bool)
    feas_idx = np.flatnonzero(feasible)
    pareto[feas_idx] = pareto_mask(costs[feas_idx])

    # order: feasible by score (then part number); rejected by fewest failures, nearest miss
    key = table.key_order
    bind_ratio = np.where(
        binding >= 0, np.nan_to_num(chk.ratio[every, np.maximum(binding, 0)], nan=0.0), 0.0
    )
    order_f = feas_idx[np.lexsort((key[feas_idx], -score[feas_idx]))]
    rej = np.flatnonzero(~feasible)
    order_r = rej[np.lexsort((key[rej], -bind_ratio[rej], n_failing[rej]))]
    order = np.concatenate([order_f, order_r]).astype(int)
    ranks = np.zeros(n, dtype=int)
    ranks[order_f] = np.arange(1, order_f.size + 1)
    t4 = time.perf_counter()

    prediction = Prediction(
        handover=pred["handover"],
        marginal=pred["marginal"],
        crossover_biased=cf.crossover_biased,
        glitch_v=pred["glitch_v"],
        thd_estimate=pred["thd_estimate"],
        handover_out_v=cf.handover_out_v,
        flat_level_v=cf.flat_level_v,
        min_source_a=cf.min_source_a,
        stage_current_a=stage.stage_current_a,
    )
    result = Ranking(
        design=design,
        requirements=req,
        table=table,
        checks=chk,
        corner=corner,
        feasible=feasible,
        n_failing=n_failing,
        binding=binding,
        tightest=tightest,
        score=score,
        utility=utility,
        metrics=metrics,
        pareto=pareto,
        pareto_costs=costs,
        order=order,
        rank=ranks,
        prediction=prediction,
        fix=fix,
        hints=(),
        timing_s={},
    )
    hint_list = make_hints(
        result,
        other_fail=other_fail,
        cond_fail=cond_fail,
        in_fix=in_fix,
        fix_pass=fix_pass,
    )
    t5 = time.perf_counter()
    object.__setattr__(result, "hints", tuple(hint_list))
    result.timing_s.update(
        closed_form=t1 - t0, corners=t2 - t1, fix=t3 - t2, verdict=t4 - t3, hints=t5 - t4,
        total=t5 - t0,
    )  # fmt: skip
    return result


def _replace(fix: FixInfo, **changes: Any) -> FixInfo:
    kw = {name: getattr(fix, name) for name in fix.__dataclass_fields__}
    kw.update(changes)
    return FixInfo(**kw)


def _size_fixes(
    stage: Any,
    design: Design,
    rows: np.ndarray,
    n: int,
    series: str,
    margin: float,
    needed: np.ndarray,
) -> FixInfo:
    """Run size_fix for ``rows`` in chunks; scatter into arrays over all ``n`` parts."""
    rail = np.full(n, "", dtype=object)
    reason = np.full(n, "", dtype=object)
    r_ohm = np.full(n, np.nan)
    r_max = np.full(n, np.nan)
    works = np.zeros(n, dtype=bool)
    extra_i = np.full(n, np.nan)
    extra_p = np.full(n, np.nan)
    sized = np.zeros(n, dtype=bool)
    for start in range(0, rows.size, FIX_CHUNK):
        part = rows[start : start + FIX_CHUNK]
        fr = size_fix(stage.take(part), design, series=series, margin=margin, n_grid=FIX_GRID)
        rec = fr.recommended
        sized[part] = True
        for name, rf in (("negative", fr.negative), ("positive", fr.positive)):
            m = rec == name
            at = part[m]
            rail[at] = name
            r_ohm[at] = rf.r_ohm[m]
            r_max[at] = rf.r_max_ohm[m]
            works[at] = True
            extra_i[at] = rf.extra_supply_a[m]
            extra_p[at] = rf.extra_dissipation_amp_w[m]
        none = rec == "none"
        rail[part[none]] = "none"
        both = [
            "; ".join(x for x in (a, b) if x)
            for a, b in zip(fr.negative.reason[none], fr.positive.reason[none], strict=True)
        ]
        reason[part[none]] = np.asarray(both, dtype=object)
        # size_fix samples the period; at the very boundary it may find no need: no resistor
        edge = rec == "not-needed"
        rail[part[edge]] = "none"
        reason[part[edge]] = "at the boundary of its margin; no resistor sized"
    return FixInfo(
        needed=needed,
        sized=sized,
        rail=rail,
        r_ohm=r_ohm,
        r_max_ohm=r_max,
        works=works,
        applied=np.zeros(n, dtype=bool),
        extra_supply_a=extra_i,
        extra_dissipation_w=extra_p,
        reason=reason,
        series=series,
    )
