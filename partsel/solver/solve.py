"""Rank a catalogue for a design: feasibility, margins, binding constraint, score, Pareto set.

:func:`rank` is partsel's one evaluation of parts in a design: every command and screen reads
its verdicts, fixes and estimates (through :class:`partsel.api.Session`). It runs, for every
part at once:

1. :func:`partsel.physics.analysis.predict_closed_form` on the chosen basis (one call for all
   parts) and every check of :mod:`partsel.solver.checks` as designed;
2. on the worst-case basis, the stage current (the one parameter whose pessimistic side differs
   between checks: low for the conduction and glitch, high for the source current and the swing
   to V+) swept over its minimum, typical and maximum; each check keeps its worst corner
   (design notes section 7: "for each check, use the side of the range that is pessimistic"),
   and the crossover prediction the corner worst for it;
3. :func:`partsel.physics.fix.size_fix` for every class-A/B part that changes mode or is
   marginal (also when other checks reject it, so that the fix is always shown), and every
   check again on the circuit with the fix resistor fitted (the same evaluation as a design
   that has the resistor itself);
4. the verdict under the requirement's conduction mode, the binding constraint of each rejected
   part, the score (:mod:`partsel.solver.score`) and the Pareto set
   (:mod:`partsel.solver.pareto`) of the feasible parts, and relaxation hints
   (:mod:`partsel.solver.relax`).

A part's verdict, fix and estimates depend on that part, the design and the requirements only;
the score, the rank and the Pareto set are relative to the parts ranked together.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from typing import Any, Literal

import numpy as np

from partsel.physics.analysis import ClosedForm, predict_closed_form
from partsel.physics.circuit import Design
from partsel.physics.fix import RailFix, size_fix
from partsel.solver import checks as C
from partsel.solver.pareto import pareto_mask
from partsel.solver.relax import Hint
from partsel.solver.relax import hints as make_hints
from partsel.solver.requirements import Requirements
from partsel.solver.score import scores, transformed
from partsel.solver.table import CORNERS, PartTable
from partsel.solver.verdict import verdict_flags

#: Samples per period of the fix sizing (size_fix's grid): the bound on R is a minimum of a
#: smooth periodic function; 128 samples put it within about 0.1 % (well inside an E24 step).
FIX_GRID = 128
#: Parts per call of size_fix (bounds the memory of its (parts x samples) arrays).
FIX_CHUNK = 4096

Verdict = Literal["feasible", "feasible-with-fix", "rejected"]
#: A part's verdict in a design, best first.
VERDICTS: tuple[Verdict, ...] = ("feasible", "feasible-with-fix", "rejected")

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
class Prediction:
    """Closed-form crossover prediction per part, as designed.

    On the worst-case basis every field comes from the stage-current corner that is worst for
    the crossover (a handover before none, then the larger THD estimate, then the larger
    glitch); ``stage_current_a`` is that corner's value, the one a simulation of the part uses.
    """

    handover: np.ndarray
    marginal: np.ndarray
    crossover_biased: np.ndarray
    glitch_v: np.ndarray
    thd_estimate: np.ndarray
    handover_out_v: np.ndarray
    flat_level_v: np.ndarray
    min_source_a: np.ndarray
    held_sink: np.ndarray  #: class B held in sink mode (a pull-up): the sink device stays on
    stage_current_a: np.ndarray
    i_out_min_a: np.ndarray
    i_out_max_a: np.ndarray
    handover_time_s: np.ndarray
    slope_v_per_s: np.ndarray
    handover_phase_rad: np.ndarray
    corner: np.ndarray  #: stage-current corner used (index into CORNERS; -1 on the typical basis)
    conduction: np.ndarray
    """Conduction verdict per part, :func:`partsel.physics.analysis.conduction_verdict`'s (the
    one rule): ``one-mode``, ``marginal``, ``changes-mode`` or ``biased`` (class AB / CMOS)."""
    thd_bound: np.ndarray  #: upper bound of the THD_F (biased and one-mode stages), ratio
    clip_depth_v: np.ndarray  #: how far the ideal output goes past the swing limits, V
    limited_by: np.ndarray  #: "", "clipping", "slew" or "bandwidth": what limits the output

    @classmethod
    def of(cls, cf: ClosedForm, stage_current_a: np.ndarray, corner: int) -> Prediction:
        """The prediction fields of a closed form (one corner)."""
        n = stage_current_a.shape[0]
        return cls(
            handover=cf.handover.copy(),
            marginal=cf.marginal & ~cf.handover,
            crossover_biased=cf.crossover_biased.copy(),
            glitch_v=cf.glitch_v.copy(),
            thd_estimate=cf.thd_estimate.copy(),
            handover_out_v=cf.handover_out_v.copy(),
            flat_level_v=cf.flat_level_v.copy(),
            min_source_a=cf.min_source_a.copy(),
            held_sink=np.asarray(cf.held_sink, dtype=bool).copy(),
            stage_current_a=np.asarray(stage_current_a, dtype=float).copy(),
            i_out_min_a=np.broadcast_to(cf.i_out_min_a, (n,)).astype(float),
            i_out_max_a=np.broadcast_to(cf.i_out_max_a, (n,)).astype(float),
            handover_time_s=cf.handover_time_s.copy(),
            slope_v_per_s=cf.slope_v_per_s.copy(),
            handover_phase_rad=cf.handover_phase_rad.copy(),
            corner=np.full(n, corner, dtype=np.int8),
            conduction=np.asarray(cf.conduction, dtype=object).copy(),
            thd_bound=np.asarray(cf.thd_bound, dtype=float).copy(),
            clip_depth_v=np.asarray(cf.clip_depth_v, dtype=float).copy(),
            limited_by=np.asarray(cf.limited_by, dtype=object).copy(),
        )

    def take(self, index: np.ndarray) -> Prediction:
        """The prediction of a subset of parts."""
        idx = np.asarray(index)
        return Prediction(**{n: getattr(self, n)[idx] for n in self.__dataclass_fields__})

    def worse_of(self, rows: np.ndarray, other: Prediction) -> None:
        """Keep, for parts ``rows``, ``other``'s fields where it is worse for the crossover
        (in place; ``other`` holds the parts ``rows`` in that order)."""
        mine = (self.handover[rows], self.thd_estimate[rows], self.glitch_v[rows])
        theirs = (other.handover, other.thd_estimate, other.glitch_v)
        with np.errstate(invalid="ignore"):
            worse = (theirs[0] & ~mine[0]) | (
                (theirs[0] == mine[0])
                & (
                    (np.nan_to_num(theirs[1], nan=-1.0) > np.nan_to_num(mine[1], nan=-1.0))
                    | (
                        (np.nan_to_num(theirs[1], nan=-1.0) == np.nan_to_num(mine[1], nan=-1.0))
                        & (theirs[2] > mine[2])
                    )
                )
            )
        at = rows[worse]
        for name in self.__dataclass_fields__:
            getattr(self, name)[at] = getattr(other, name)[worse]


@dataclass(frozen=True)
class FixInfo:
    """The fix of every part (arrays of shape (P,)): the one fix decision per part and design
    (:func:`partsel.physics.fix.size_fix`: which rail, which value). Every door (rank,
    predict, explain, waveform, vet, bom-check, the terminal UI) reads the fix from here.

    ``negative`` / ``positive`` hold both remedies over all parts (NaN / False where not
    sized); ``rail`` is the recommended one.
    """

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
    tolerance: float  #: the series' tolerance the value was rounded down for (IEC 60063)
    margin: float  #: fraction of its stage current the device kept on must still carry
    negative: RailFix  #: the pull-down remedy of every part (a resistor to V-)
    positive: RailFix  #: the pull-up remedy of every part (a resistor to V+)
    thd_with_fix: np.ndarray
    """THD_F estimate with the recommended resistor fitted: the closed form of the circuit with
    it, as for a design that has that resistor itself (NaN where no resistor works)."""

    @property
    def recommended(self) -> np.ndarray:
        """The recommendation per part as :class:`partsel.physics.fix.FixResult` names it:
        ``negative`` / ``positive``, ``none`` (no resistor works) or ``not-needed``."""
        return np.where(self.rail == "", "not-needed", self.rail).astype(object)

    def take(self, index: np.ndarray) -> FixInfo:
        """The fix of a subset of parts (fancy indexing along the part axis)."""
        idx = np.asarray(index)
        kw: dict[str, Any] = {}
        for name in self.__dataclass_fields__:
            val = getattr(self, name)
            if isinstance(val, np.ndarray):
                kw[name] = val[idx]
            elif isinstance(val, RailFix):
                kw[name] = _take_rail(val, idx)
            else:
                kw[name] = val
        return FixInfo(**kw)

    @property
    def r_neg_ohm(self) -> np.ndarray:
        """The recommended resistor where it goes to the negative rail, ohm (NaN elsewhere)."""
        return np.where(self.rail == "negative", self.r_ohm, np.nan)

    @property
    def r_pos_ohm(self) -> np.ndarray:
        """The recommended resistor where it goes to the positive rail, ohm (NaN elsewhere)."""
        return np.where(self.rail == "positive", self.r_ohm, np.nan)


@dataclass(frozen=True)
class YieldSummary:
    """Yields of a ranking: boards passed per part (-1 where not evaluated), of ``samples``
    boards drawn with ``seed`` (:mod:`partsel.solver.spread`)."""

    passed: np.ndarray
    samples: int
    seed: int

    @property
    def evaluated(self) -> np.ndarray:
        """(P,) True where a yield was computed."""
        return self.passed >= 0

    @property
    def fraction(self) -> np.ndarray:
        """(P,) the yield ``passed / samples`` (NaN where not evaluated)."""
        return np.where(self.evaluated, self.passed / self.samples, np.nan)

    def take(self, index: np.ndarray) -> YieldSummary:
        return YieldSummary(self.passed[np.asarray(index)], self.samples, self.seed)


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
    verdict: np.ndarray  #: per part, one of VERDICTS
    prediction: Prediction
    fix: FixInfo
    hints: tuple[Hint, ...]
    timing_s: dict[str, float] = field(default_factory=dict)
    yields: YieldSummary | None = None
    """The Monte Carlo yields of the parts feasible on the basis, when the requirements ask for
    one (``min_yield`` or the ``yield`` objective)."""

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


def _evaluate(
    table: PartTable,
    rows: np.ndarray,
    stage: Any,
    design: Design,
    req: Requirements,
    levels: C.DesignLevels,
    *,
    inputs: dict[str, np.ndarray] | None = None,
    device_law: np.ndarray | None = None,
) -> tuple[C.CheckArrays, np.ndarray, Prediction, ClosedForm]:
    """Every check of parts ``rows`` of ``table`` (``stage``: those parts, in that order) in
    ``design``: the closed form on the requirement's basis and, on the worst-case basis, the
    stage current swept over its corners, each check keeping its worst corner and the crossover
    prediction the corner worst for it. Returns the checks, the corner of each check, the
    prediction and the closed form of the basis's own values. The one evaluation of a circuit:
    the parts as designed, the parts with the fix fitted and the boards of the spread analysis
    (:mod:`partsel.solver.spread`: ``design`` a batch, ``inputs`` the drawn input parameters,
    ``device_law`` the rows whose marginal stages are simulated, see
    :func:`partsel.physics.analysis.predict_closed_form`) all go through it."""
    worst = req.basis == "worst-case"
    cf = predict_closed_form(stage, design, device_law=device_law)
    chk = C.evaluate(table, rows, stage, cf, design, req, levels, inputs=inputs)
    corner = np.full((rows.size, C.N_CHECKS), 0 if worst else -1, dtype=np.int8)
    pred = Prediction.of(cf, stage.stage_current_a, 0 if worst else -1)
    if worst:
        lo = table.stage_current_corner("min")[rows]
        for k, name in enumerate(CORNERS[1:], start=1):
            alt = table.stage_current_corner(name)[rows]
            sub = np.flatnonzero(stage.has_pulldown & (alt != lo) & np.isfinite(alt))
            if sub.size == 0:
                continue
            st_c = stage.take(sub).replace(stage_current_a=alt[sub])
            cf_c = predict_closed_form(st_c, design)
            chk_c = C.evaluate(table, rows[sub], st_c, cf_c, design, req, levels)
            _combine_corner(chk, chk_c, corner, sub, k)
            pred.worse_of(sub, Prediction.of(cf_c, alt[sub], k))
    return chk, corner, pred, cf


def with_resistor(design: Design, rail: str, r_ohm: float | np.ndarray) -> Design:
    """``design`` with a resistor ``r_ohm`` from the output to ``rail`` ("negative" /
    "positive") added in parallel with any the design has there: the circuit of a fix.
    ``r_ohm`` may hold one value per row (a batch design, :attr:`Design.rows`; NaN: no
    resistor added on that row)."""
    ld = design.load
    key = "r_to_neg_ohm" if rail == "negative" else "r_to_pos_ohm"
    have = getattr(ld, key)
    if np.ndim(r_ohm) == 0 and np.ndim(have) == 0:
        r = r_ohm if have is None or not np.isfinite(have) else 1.0 / (1.0 / have + 1.0 / r_ohm)
        return replace(design, load=replace(ld, **{key: float(r)}))
    new = np.asarray(r_ohm, dtype=float)
    own = np.asarray(np.nan if have is None else have, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        both = 1.0 / (1.0 / own + 1.0 / new)
    r = np.where(np.isfinite(new), np.where(np.isfinite(own), both, new), own)
    return replace(design, load=replace(ld, **{key: r}))


def _fixed_checks(
    table: PartTable,
    rows: np.ndarray,
    stage: Any,
    design: Design,
    req: Requirements,
    levels: C.DesignLevels,
    fix: FixInfo,
    base: C.CheckArrays,
    base_corner: np.ndarray,
) -> tuple[C.CheckArrays, np.ndarray, np.ndarray]:
    """The checks of parts ``rows`` (those that need the fix) with their fix resistor fitted:
    every check evaluated by :func:`_evaluate` on the circuit with the resistor (the same rule
    as a design that has that resistor itself: swing and limits at the new currents, supply
    current and junction temperature with the resistor's share, the THD estimate of the stage
    kept in one mode), grouped by rail and value. The conduction check reads ``fixed`` where it
    passes so; parts whose fix does not work keep their checks as designed, with the
    conduction and fix-resistor checks failing (see :func:`partsel.solver.checks.fix_variant`).
    Also returns the corner of each check and the package dissipation, W."""
    out = C.fix_variant(base, r_ohm=fix.r_ohm[rows], works=fix.works[rows], req=req)
    corner = base_corner.copy()
    diss = np.full(rows.size, np.nan)
    works = fix.works[rows] & np.isfinite(fix.r_ohm[rows])
    rail = fix.rail[rows]
    r = fix.r_ohm[rows]
    for name in ("negative", "positive"):
        on = works & (rail == name)
        for value in np.unique(r[on]):
            loc = np.flatnonzero(on & (r == value))
            d_fix = with_resistor(design, name, float(value))
            chk_f, corner_f, _, cf_f = _evaluate(
                table, rows[loc], stage.take(rows[loc]), d_fix, req, levels
            )
            out.put(loc, C.with_fix_resistor(chk_f, float(value), req))
            corner[loc] = corner_f
            diss[loc] = cf_f.dissipation_w
    return out, corner, diss


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
    *,
    hints: bool = True,
) -> Ranking:
    """Evaluate every part of ``table`` in ``design`` against ``requirements``.

    ``requirements`` defaults to the design's own (``Design.requirements``, see
    :meth:`Requirements.from_mapping`). ``hints``: compute the relaxation hints (they need the
    whole catalogue; a ranking of a few parts for a prediction skips them).
    """
    t0 = time.perf_counter()
    req = requirements or Requirements.from_mapping(design.requirements)
    basis = req.basis
    n = table.n
    every = np.arange(n)
    stage = table.stage(basis)
    levels = C.DesignLevels.of(design)
    chk, corner, pred, cf = _evaluate(table, every, stage, design, req, levels)
    t1 = time.perf_counter()

    # the fix: sized for every class-A/B part that needs it, whatever else it fails
    jc = C.IDX["conduction"]
    frac = req.limit("min_source_fraction") or 0.0
    with np.errstate(invalid="ignore"):
        needed = stage.has_pulldown & (chk.margin[:, jc] < 0)
    fx_rows = np.flatnonzero(needed)
    fix = _size_fixes(stage, design, fx_rows, n, req.fix_series, frac, needed, req.fix_tolerance)
    fixed, fixed_corner, fixed_diss = _fixed_checks(
        table, fx_rows, stage, design, req, levels, fix, chk.take(fx_rows), corner[fx_rows]
    )
    thd_fix = fix.thd_with_fix.copy()
    thd_fix[fx_rows] = np.where(fix.works[fx_rows], fixed.value[:, C.IDX["thd"]], np.nan)
    fix = _replace(fix, thd_with_fix=thd_fix)
    t3 = time.perf_counter()

    # verdict
    fail = chk.failing
    other_fail = fail[:, [j for j in range(C.N_CHECKS) if j != jc]].any(axis=1)
    cond_fail = stage.has_pulldown & ~(chk.margin[:, jc] >= 0)
    fix_pass = np.zeros(n, dtype=bool)
    fix_pass[fx_rows] = ~fixed.failing.any(axis=1)
    feasible, use_fix = verdict_flags(req.conduction, other_fail, cond_fail, needed, fix_pass)
    apply_rows = np.flatnonzero(use_fix)
    dissipation = cf.dissipation_w.copy()
    if apply_rows.size:
        pos = np.searchsorted(fx_rows, apply_rows)
        chk.put(apply_rows, fixed.take(pos))
        corner[apply_rows] = fixed_corner[pos]
        dissipation[apply_rows] = fixed_diss[pos]
    fix = _replace(fix, applied=use_fix & fix.works)
    t_y = time.perf_counter()
    yields = None
    if req.needs_yield:
        # the Monte Carlo yield of the parts feasible so far, on boards built as the verdict
        # says (with the fix fitted where it is applied): a rule of its own, after the others
        from partsel.solver.spread.evaluate import yields_of

        rows_y = np.flatnonzero(feasible)
        passed = np.full(n, -1, dtype=np.int64)
        passed[rows_y] = yields_of(table, rows_y, design, req, fix)
        yields = YieldSummary(passed, req.yield_samples, req.yield_seed)
        C.put_yield(chk, rows_y, yields.fraction[rows_y], req)
        low_yield = chk.failing[:, C.IDX["yield"]]
        feasible = feasible & ~low_yield
        other_fail = other_fail | low_yield  # (for the hints: no other mode admits them)
    t_y = time.perf_counter() - t_y
    verdict = np.full(n, "rejected", dtype=object)
    verdict[feasible] = "feasible"
    verdict[feasible & fix.applied] = "feasible-with-fix"

    n_failing, binding, tightest, min_ratio = _binding_and_tightest(chk)

    # objectives
    v = chk.value
    diss = dissipation
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
            "yield": v[:, C.IDX["yield"]],
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
        verdict=verdict,
        prediction=pred,
        fix=fix,
        hints=(),
        timing_s={},
        yields=yields,
    )
    hint_list = (
        make_hints(
            result,
            other_fail=other_fail,
            cond_fail=cond_fail,
            in_fix=needed,
            fix_pass=fix_pass,
        )
        if hints
        else []
    )
    t5 = time.perf_counter()
    object.__setattr__(result, "hints", tuple(hint_list))
    result.timing_s.update(
        closed_form=t1 - t0, fix=t3 - t1, verdict=t4 - t3, hints=t5 - t4, yields=t_y,
        total=t5 - t0,
    )  # fmt: skip
    return result


def _replace(fix: FixInfo, **changes: Any) -> FixInfo:
    kw = {name: getattr(fix, name) for name in fix.__dataclass_fields__}
    kw.update(changes)
    return FixInfo(**kw)


def _take_rail(rf: RailFix, idx: np.ndarray) -> RailFix:
    kw = {n: getattr(rf, n) for n in rf.__dataclass_fields__}
    return RailFix(**{n: (v[idx] if isinstance(v, np.ndarray) else v) for n, v in kw.items()})


def _empty_rail(rail: str, n: int) -> RailFix:
    nan = np.full(n, np.nan)
    no = np.zeros(n, dtype=bool)
    return RailFix(
        rail=rail,
        r_max_ohm=nan.copy(),
        r_ohm=nan.copy(),
        extra_supply_a=nan.copy(),
        extra_dissipation_amp_w=nan.copy(),
        dissipation_resistor_w=nan.copy(),
        device_peak_a=nan.copy(),
        limit_ok=no.copy(),
        swing_ok=no.copy(),
        ok=no.copy(),
        reason=np.full(n, "", dtype=object),
    )


def _size_fixes(
    stage: Any,
    design: Design,
    rows: np.ndarray,
    n: int,
    series: str,
    margin: float,
    needed: np.ndarray,
    tolerance: float | None = None,
) -> FixInfo:
    """Run size_fix for ``rows`` in chunks; scatter into arrays over all ``n`` parts
    (``thd_with_fix`` is filled by :func:`rank` from the checks with the fix fitted)."""
    rail = np.full(n, "", dtype=object)
    reason = np.full(n, "", dtype=object)
    r_ohm = np.full(n, np.nan)
    r_max = np.full(n, np.nan)
    works = np.zeros(n, dtype=bool)
    extra_i = np.full(n, np.nan)
    extra_p = np.full(n, np.nan)
    sized = np.zeros(n, dtype=bool)
    thd_fix = np.full(n, np.nan)
    rails = {"negative": _empty_rail("negative", n), "positive": _empty_rail("positive", n)}
    tol = None
    for start in range(0, rows.size, FIX_CHUNK):
        part = rows[start : start + FIX_CHUNK]
        fr = size_fix(
            stage.take(part), design, series=series, tolerance=tolerance, margin=margin,
            n_grid=FIX_GRID,
        )  # fmt: skip
        tol = fr.tolerance
        rec = fr.recommended
        sized[part] = True
        for name, rf in (("negative", fr.negative), ("positive", fr.positive)):
            dest = rails[name]
            for fname in dest.__dataclass_fields__:
                if fname != "rail":
                    getattr(dest, fname)[part] = getattr(rf, fname)
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
    if tol is None:
        from partsel.physics.eseries import SERIES_TOLERANCE

        tol = SERIES_TOLERANCE[series.upper()] if tolerance is None else tolerance
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
        series=series.upper(),
        tolerance=float(tol),
        margin=float(margin),
        negative=rails["negative"],
        positive=rails["positive"],
        thd_with_fix=thd_fix,
    )
