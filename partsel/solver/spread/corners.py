"""Corners: every parameter that affects a check taken to the ends of its range, and for each
check the combination that is worst for it, found without visiting all 2^N vertices.

Parameters (:mod:`partsel.solver.spread.model`): the part's catalogue specs with a range, the
design's tolerances, the fix resistor within its series' tolerance (where the verdict fits
it), and the ambient between the design's two limits (the junction temperature is judged at
it). Each parameter ``i`` is placed by a fraction ``t_i`` of its range (0: low end, 1: high
end); the margin of a check (:mod:`partsel.solver.checks`, in the check's own unit; negative
fails) is a function ``m(t)`` of all of them.

Method, for every check at once (all evaluations are rows of one vectorised call):

1. **monotonicity, checked numerically**: each parameter alone is moved to 0, ¼, ½, ¾ and 1 of
   its range with the others at their nominal place; a check whose five margins never rise
   and never fall by more than :data:`TOLERANCE` (relative) in the same sweep is monotonic
   in that parameter, and its worse end is the one with the lower margin;
2. **the vertex**: every parameter that moves the check goes to its worse end (the others stay
   nominal);
3. **the neighbours**: from that vertex each parameter in turn is flipped to its other end (or
   to it, for one that did not move the check alone); while a flip lowers the margin, the worst
   flip is taken and the neighbours are tried again (interactions between parameters are
   found this way);
4. **sampling where it is not monotonic**: a check that is not monotonic in some parameter is
   also evaluated at :data:`SAMPLES` uniform random points of the whole range and at the
   interior points of step 1; the worst of all is its corner, and the method says "sampled".

Reported per check: the worst margin, the check's value and limit there, the corner, and the
parameters that set it: those whose flip back to their other end raises the margin, by how
much, largest first.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from partsel.params import PARAM_BY_KEY
from partsel.solver import checks as C
from partsel.solver.spread.evaluate import CHUNK_ROWS, Board, evaluate_rows
from partsel.solver.spread.model import FIXED, SWING_RAILS, Spread
from partsel.units import SI_UNIT

#: Relative size of a margin change taken as numerical noise (the closed form's iterative parts
#: converge far below it).
TOLERANCE = 1e-9
#: Uniform random points of the whole range for a check that is not monotonic.
SAMPLES = 256
#: Fractions of its range at which each parameter is probed alone.
PROBES = (0.0, 0.25, 0.5, 0.75, 1.0)
#: Rounds of the neighbour search (each flips the worst parameter once more).
MAX_ROUNDS = 12


@dataclass(frozen=True)
class Param:
    """One corner parameter of a part: its key, its range (the two ends, SI; a headroom
    curve's first point), where its nominal value lies in it, and where it comes from."""

    key: str
    origin: str  #: "catalogue", "design", "fix", "ambient"
    low: float
    high: float
    nominal_t: float
    unit: str = ""
    over_temperature: bool = False
    """A catalogue spec given at several ambients: its range moves with the ambient (``low`` /
    ``high`` here are at its own temperature) and its place is the fraction of the range there."""


@dataclass(frozen=True)
class Corner:
    """The worst corner of one check."""

    check: str
    margin: float
    value: float
    limit: float
    status: str
    t: np.ndarray  #: place of every parameter in its range at the corner (0 low, 1 high end)
    setters: tuple[tuple[str, float, float], ...]
    """(parameter, its place 0 / 1, how much it moves the margin: the rise when it goes to its
    other end, or, where another parameter hides that, its own effect from the nominal)"""
    method: str  #: "vertex" or "sampled"
    non_monotonic: tuple[str, ...] = ()  #: parameters the check is not monotonic in


@dataclass(frozen=True)
class CornerAnalysis:
    """The corners of one part in a design."""

    part_number: str
    params: tuple[Param, ...]
    corners: tuple[Corner, ...]
    evaluations: int  #: rows evaluated
    fixed_failures: tuple[str, ...] = ()
    """Checks that fail whatever the spread: categorical ones (lifecycle, package, channels)
    and those the catalogue lacks the values for."""
    over_temperature: tuple[str, ...] = ()  #: specs given at several ambients (interpolated)
    temperature_unknown: tuple[str, ...] = ()  #: specs given at one: spread over T unknown

    @property
    def failing(self) -> tuple[Corner, ...]:
        """The checks that fail at their worst corner (a warning does not fail)."""
        return tuple(c for c in self.corners if c.status in ("fail", "unknown"))

    @property
    def passes(self) -> bool:
        """Every check passes at its worst corner."""
        return not self.failing and not self.fixed_failures


def corner_params(b: Board, p: int) -> tuple[list[Param], list[Spread | None]]:
    """The parameters of part ``p`` of ``b`` that have a range, and their spreads (None for
    the ambient)."""
    params: list[Param] = []
    spreads: list[Spread | None] = []
    for s in b.parts:
        if s.kind[p] == FIXED:
            continue
        lo, hi, c = float(s.low[p, 0]), float(s.high[p, 0]), float(s.centre[p, 0])
        if not np.isfinite(lo):  # a curve whose first point has no value: the first that has
            k = int(np.argmax(np.isfinite(s.low[p])))
            lo, hi, c = float(s.low[p, k]), float(s.high[p, k]), float(s.centre[p, k])
        if not hi > lo:
            continue
        unit = "V" if s.key in SWING_RAILS else SI_UNIT[PARAM_BY_KEY[s.key].dimension]
        params.append(Param(s.key, "catalogue", lo, hi, (c - lo) / (hi - lo), unit,
                            bool(s.over_temperature[p])))  # fmt: skip
        spreads.append(s)
    for s in b.circuit:
        lo, hi, c = float(s.low[0, 0]), float(s.high[0, 0]), float(s.centre[0, 0])
        params.append(Param(s.key, "design", lo, hi, (c - lo) / (hi - lo)))
        spreads.append(s)
    if b.fix.fitted[p] and b.fix.tolerance > 0:
        s = b.fix.spread()
        lo, hi = float(s.low[p, 0]), float(s.high[p, 0])
        params.append(Param("fix_resistor", "fix", lo, hi, 0.5, "ohm"))
        spreads.append(s)
    t_lo, t_hi = b.design.t_ambient_min_c, b.design.t_ambient_max_c
    if t_hi > t_lo:
        params.append(Param("environment/ambient_max", "ambient", t_lo, t_hi, 1.0, "degC"))
        spreads.append(None)
    return params, spreads


def _evaluate(
    b: Board, p: int, params: list[Param], spreads: list[Spread | None], t: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Margins, values, limits and statuses (M, C) of part ``p`` at the places ``t`` (M, K)."""
    m = t.shape[0]
    out = [np.empty((m, C.N_CHECKS)) for _ in range(3)] + [np.empty((m, C.N_CHECKS), np.int8)]
    for r0 in range(0, m, CHUNK_ROWS):
        rows = slice(r0, min(r0 + CHUNK_ROWS, m))
        tt = t[rows]
        pos = np.full(tt.shape[0], p)
        part_values: dict[str, np.ndarray] = {}
        circuit: dict[str, np.ndarray] = {}
        fix_r = None
        # the ambient of each row: the junction's, and where specs move with temperature theirs
        ambient = np.full(tt.shape[0], float(b.design.t_ambient_max_c))
        for i, prm in enumerate(params):
            if prm.origin == "ambient":
                ambient = prm.low + tt[:, i] * (prm.high - prm.low)
        for s in b.parts:  # specs without a range that move with the ambient
            if s.kind[p] == FIXED and s.over_temperature[p]:
                part_values[s.key] = s.at(pos, np.zeros(pos.size), ambient)
        for i, (prm, s) in enumerate(zip(params, spreads, strict=True)):
            if prm.origin == "catalogue":
                assert s is not None
                part_values[prm.key] = s.at(pos, tt[:, i], ambient)
            elif prm.origin == "fix":
                fix_r = prm.low + tt[:, i] * (prm.high - prm.low)
            else:
                circuit[prm.key] = prm.low + tt[:, i] * (prm.high - prm.low)
        if fix_r is None and b.fix.fitted[p]:
            fix_r = np.full(tt.shape[0], float(b.fix.r_ohm[p]))
        res = evaluate_rows(b, pos, part_values, circuit, fix_r)
        ch = res.checks
        for a, src in zip(out, (ch.margin, ch.value, ch.limit, ch.status), strict=True):
            a[rows] = src
    return tuple(out)  # type: ignore[return-value]


def _scale(m: np.ndarray) -> np.ndarray:
    """Per check, the size below which a margin change is noise."""
    a = np.abs(m)
    return TOLERANCE * np.max(np.where(np.isfinite(a), a, 0.0), axis=0) + 1e-300


def corners(b: Board, p: int = 0, *, seed: int = 1) -> CornerAnalysis:
    """The worst corner of every counted check of part ``p`` of ``b`` (see the module
    docstring). ``seed``: of the sampling for checks that are not monotonic."""
    params, spreads = corner_params(b, p)
    k = len(params)
    t0 = np.array([prm.nominal_t for prm in params])
    evaluations = 0

    def run(t: np.ndarray) -> tuple[np.ndarray, ...]:
        nonlocal evaluations
        evaluations += t.shape[0]
        return _evaluate(b, p, params, spreads, t)

    base = run(t0[None, :])
    counted = [
        j
        for j, c in enumerate(C.CHECKS)
        if c.sense != "is" and int(base[3][0, j]) not in (C.IGNORED, C.NA)
        and np.isfinite(base[0][0, j])
    ]  # fmt: skip
    # 1. probes along each axis
    probes = np.repeat(t0[None, :], max(k, 1) * len(PROBES), axis=0)
    for i in range(k):
        probes[i * len(PROBES) : (i + 1) * len(PROBES), i] = PROBES
    pm = run(probes)[0] if k else np.zeros((0, C.N_CHECKS))
    seq = pm.reshape(max(k, 1), len(PROBES), C.N_CHECKS) if k else pm
    tol = _scale(np.vstack([pm, base[0]]))
    monotone = np.ones((k, C.N_CHECKS), dtype=bool)
    worse_end = np.zeros((k, C.N_CHECKS))
    moves = np.zeros((k, C.N_CHECKS), dtype=bool)
    for i in range(k):
        d = np.diff(seq[i], axis=0)
        with np.errstate(invalid="ignore"):
            up = (d > tol).any(axis=0)
            down = (d < -tol).any(axis=0)
        monotone[i] = ~(up & down)
        worse_end[i] = np.where(seq[i, -1] < seq[i, 0], 1.0, 0.0)
        with np.errstate(invalid="ignore"):
            moves[i] = np.abs(seq[i, -1] - seq[i, 0]) > tol
    # 2. the vertex of each check
    js = np.array(counted, dtype=int)
    verts = np.repeat(t0[None, :], js.size, axis=0)
    for r, j in enumerate(js):
        for i in range(k):
            if moves[i, j]:
                verts[r, i] = worse_end[i, j]
    vm = run(verts)[0] if js.size else np.zeros((0, C.N_CHECKS))
    best_t = verts.copy()
    best_m = np.array([vm[r, j] for r, j in enumerate(js)]) if js.size else np.zeros(0)
    # 3. neighbours: flip each parameter to the other end (an unmoved one to either end)
    for _ in range(MAX_ROUNDS if k else 0):
        cand = []
        owner = []
        for r in range(js.size):
            for i in range(k):
                for end in (0.0, 1.0):
                    if best_t[r, i] == end:
                        continue
                    tt = best_t[r].copy()
                    tt[i] = end
                    cand.append(tt)
                    owner.append(r)
        if not cand:
            break
        cm = run(np.array(cand))[0]
        improved = False
        owner_a = np.array(owner)
        for r, j in enumerate(js):
            sel = np.flatnonzero(owner_a == r)
            vals = cm[sel, j]
            if vals.size == 0 or np.all(np.isnan(vals)):
                continue
            q = int(np.nanargmin(vals))
            if vals[q] < best_m[r] - tol[j]:
                best_m[r] = vals[q]
                best_t[r] = cand[sel[q]]
                improved = True
        if not improved:
            break
    # 4. sampling for checks that are not monotonic in some parameter
    method = ["vertex"] * js.size
    nonmono = [tuple(params[i].key for i in range(k) if not monotone[i, j]) for j in js]
    if any(nonmono):
        rng = np.random.default_rng(seed)
        pts = np.vstack([rng.random((SAMPLES, k)), probes])
        sm = run(pts)[0]
        for r, j in enumerate(js):
            if not nonmono[r]:
                continue
            q = int(np.nanargmin(sm[:, j])) if np.isfinite(sm[:, j]).any() else -1
            method[r] = "sampled"
            if q >= 0 and sm[q, j] < best_m[r] - tol[j]:
                best_m[r] = sm[q, j]
                best_t[r] = pts[q]
    # the corners, and which parameters set each one
    final = run(best_t) if js.size else tuple(np.zeros((0, C.N_CHECKS)) for _ in range(4))
    flips = []
    for r in range(js.size):
        for i in range(k):
            tt = best_t[r].copy()
            tt[i] = 1.0 - round(tt[i]) if tt[i] in (0.0, 1.0) else t0[i]
            flips.append(tt)
    fm = run(np.array(flips))[0] if flips else np.zeros((0, C.N_CHECKS))
    out = []
    for r, j in enumerate(js):
        setters = []
        for i in range(k):
            at_end = best_t[r, i] in (0.0, 1.0)
            with np.errstate(invalid="ignore"):
                rise = fm[r * k + i, j] - final[0][r, j]
                alone = abs(seq[i, -1, j] - seq[i, 0, j]) if k else 0.0
            rise, alone = float(np.nan_to_num(rise)), float(np.nan_to_num(alone))
            # set by it: its flip raises the margin, or (at its worse end) it moves the check
            # alone while another parameter hides the flip (the slower of two slew rates)
            if rise > tol[j] or (at_end and moves[i, j] and best_t[r, i] == worse_end[i, j]):
                setters.append((params[i].key, float(best_t[r, i]), float(max(rise, alone))))
        setters.sort(key=lambda x: -x[2])
        out.append(
            Corner(
                check=C.CHECKS[j].name,
                margin=float(final[0][r, j]),
                value=float(final[1][r, j]),
                limit=float(final[2][r, j]),
                status=C.STATUS_NAMES[int(final[3][r, j])],
                t=best_t[r].copy(),
                setters=tuple(setters),
                method=method[r],
                non_monotonic=nonmono[r],
            )
        )
    fixed = tuple(
        C.CHECKS[j].name
        for j in range(C.N_CHECKS)
        if j not in counted and int(base[3][0, j]) in C.FAILING
    )
    known, unknown = b.temperature_keys(p)
    return CornerAnalysis(b.part_numbers[p], tuple(params), tuple(out), evaluations, fixed,
                          tuple(known), tuple(unknown))  # fmt: skip
