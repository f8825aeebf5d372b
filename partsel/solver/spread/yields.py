"""Monte Carlo yield: how many boards out of N meet every check of the design.

Each sample is one board (:mod:`partsel.solver.spread.model` says what is drawn and from which
distribution); all samples of all parts are evaluated as rows of the ranking's own closed form
and checks (:mod:`partsel.solver.spread.evaluate`), in bounded chunks. A board passes when no
check fails; for a part whose verdict uses the fix resistor the board has it fitted (the
recommended value, drawn within its series' tolerance), and the largest value of that series
that still reaches a target yield is searched with the same boards.

Reported per part: the yield with its confidence interval (Wilson's score interval by default,
the exact Clopper-Pearson interval too; :mod:`partsel.solver.spread.stats`), the fraction of
boards whose stage stays in one conduction mode, the fraction meeting each check, percentiles
of the THD figure and of the handover level, and the parameters most correlated with failure
(Pearson's correlation of each drawn value with the failure indicator, the point-biserial
coefficient).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

import numpy as np

from partsel.physics import eseries
from partsel.solver import checks as C
from partsel.solver.requirements import DEFAULT_YIELD_SAMPLES, DEFAULT_YIELD_SEED
from partsel.solver.spread.evaluate import AMBIENT_KEY, CHUNK_ROWS, Board, ambients, evaluate_rows
from partsel.solver.spread.model import (
    DISTRIBUTION,
    FIXED,
    PART_KEYS,
    draw_design,
    part_stream,
)
from partsel.solver.spread.stats import Interval, YieldInterval, clopper_pearson, interval

#: Samples per part and seed unless asked otherwise: the requirements' defaults (the
#: ranking's and ``partsel yield``'s; a fixed seed, so that every run gives the same answer).
DEFAULT_SAMPLES = DEFAULT_YIELD_SAMPLES
DEFAULT_SEED = DEFAULT_YIELD_SEED
#: Percentiles reported of the THD figure and of the handover level.
PERCENTILES = (1.0, 5.0, 50.0, 95.0, 99.0)
#: Parameters listed as most correlated with failure.
TOP_CORRELATED = 3
#: The fix series' values searched for the largest reaching a target yield: from this factor
#: above the recommended value down to this factor below it, largest first, at most
#: FIX_CANDIDATES of them. The yield is taken to rise as a smaller resistor keeps more boards
#: in one mode, then fall as it loads the output (an assumption that holds for the pull-down
#: and the pull-up alike; tests/test_spread.py checks the search against every value): where
#: the recommendation reaches the target, the largest value above it that does is found by
#: bisection; where it does not, smaller values are tried until one does or the yield stops
#: rising.
FIX_RANGE = 2.0
FIX_CANDIDATES = 40
#: Random variates each part draws per sample: its catalogue parameters, then its fix resistor
#: (a fixed layout, so that a part's samples are the same whatever is analysed with it).
STREAM_KEYS: tuple[str, ...] = (*PART_KEYS, "fix_resistor")


@dataclass(frozen=True)
class FixYield:
    """The fix resistor of a part on the boards: the recommendation's yield, and the largest
    preferred value of the series whose yield reaches the target."""

    rail: str
    r_ohm: float
    series: str
    tolerance: float
    yield_fraction: float
    target: float | None = None
    largest_ohm: float | None = None  #: None: no value of the series reaches the target
    largest_yield: float | None = None
    tried: tuple[tuple[float, float], ...] = ()  #: (value, yield), largest value first


@dataclass
class PartYield:
    """The yield of one part in the design (``samples`` boards)."""

    part_number: str
    samples: int
    passed: int
    interval: YieldInterval
    exact: YieldInterval  #: Clopper-Pearson
    one_mode: float | None  #: fraction of boards whose class-A/B stage stays in one mode
    check_pass: dict[str, float]  #: fraction of boards meeting each check that some fail
    checks_always_met: int  #: checks every board meets (counted ones)
    thd_percentiles: dict[float, float]
    thd_bound: bool  #: the THD figures are upper bounds (a biased stage), else estimates
    handover: float  #: fraction of boards that hand over
    handover_level_percentiles: dict[float, float]
    correlated: list[tuple[str, float]]  #: (parameter, correlation with failure), strongest first
    fixed_params: list[str]  #: catalogue parameters without a known spread
    fix: FixYield | None = None
    over_temperature: list[str] = field(default_factory=list)
    """specs given at several ambients (interpolated in the ambient)"""
    temperature_unknown: list[str] = field(default_factory=list)
    """specs given at one ambient: their spread over temperature is unknown, not modelled"""
    ambients_c: list[float] = field(default_factory=list)  #: ambients every board is judged at
    thd: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)
    handover_level: np.ndarray = field(default_factory=lambda: np.zeros(0), repr=False)

    @property
    def value(self) -> float:
        """The yield ``passed / samples``."""
        return self.passed / self.samples if self.samples else float("nan")


@dataclass(frozen=True)
class YieldAnalysis:
    """The yields of some parts in one design."""

    parts: list[PartYield]
    samples: int
    seed: int
    interval: Interval
    confidence: float
    distributions: dict[str, str]  #: spread parameter -> distribution used (for the report)


def _chunks(n_parts: int, n: int) -> Iterator[tuple[np.ndarray, np.ndarray]]:
    """(part positions, sample indices) of each chunk of at most CHUNK_ROWS rows, part-major."""
    if n >= CHUNK_ROWS:
        for p in range(n_parts):
            for s0 in range(0, n, CHUNK_ROWS):
                s = np.arange(s0, min(s0 + CHUNK_ROWS, n))
                yield np.full(s.size, p), s
        return
    per = max(1, CHUNK_ROWS // n)
    for p0 in range(0, n_parts, per):
        ps = np.arange(p0, min(p0 + per, n_parts))
        yield np.repeat(ps, n), np.tile(np.arange(n), ps.size)


class _Draws:
    """Every part's variates (drawn on first use, from its own stream) and the design's."""

    def __init__(self, b: Board, n: int, seed: int) -> None:
        self.b, self.n, self.seed = b, n, seed
        self.keys = {k: j for j, k in enumerate(STREAM_KEYS)}
        self._part: dict[int, tuple[np.ndarray, np.ndarray]] = {}
        dkeys = [s.key for s in b.circuit]
        u, z = draw_design(n, seed, dkeys)
        zeros = np.zeros(n, dtype=int)
        self.circuit = {
            s.key: s.draw(zeros, u[:, j], z[:, j])[:, 0] for j, s in enumerate(b.circuit)
        }

    def part(self, p: int) -> tuple[np.ndarray, np.ndarray]:
        if p not in self._part:
            if len(self._part) > 64:
                self._part.clear()
            rng = part_stream(self.seed, self.b.part_numbers[p])
            m = len(STREAM_KEYS)
            self._part[p] = (rng.random((self.n, m)), rng.standard_normal((self.n, m)))
        return self._part[p]

    def rows(
        self, pos: np.ndarray, samples: np.ndarray, ambient: float | None = None
    ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray], np.ndarray, np.ndarray]:
        """Part values (at ``ambient``, degC: the same variates at every ambient), circuit
        values (the junction judged at ``ambient`` when given), fix resistor values and its
        variate, of rows."""
        u = np.empty((pos.size, len(STREAM_KEYS)))
        z = np.empty_like(u)
        for p in np.unique(pos):
            sel = pos == p
            pu, pz = self.part(int(p))
            u[sel], z[sel] = pu[samples[sel]], pz[samples[sel]]
        values = {s.key: s.draw(pos, u[:, self.keys[s.key]], z[:, self.keys[s.key]], ambient)
                  for s in self.b.parts if s.varies[pos].any()}  # fmt: skip
        circuit = {k: v[samples] for k, v in self.circuit.items()}
        if ambient is not None and ambient != float(self.b.design.t_ambient_max_c):
            circuit[AMBIENT_KEY] = np.full(pos.size, float(ambient))
        jf = self.keys["fix_resistor"]
        fix = self.b.fix.spread().draw(pos, u[:, jf], z[:, jf])[:, 0]
        return values, circuit, fix, u[:, jf]


@dataclass
class _Judged:
    """Boards judged at every ambient of :func:`partsel.solver.spread.evaluate.ambients`:
    a board passes, meets a check or stays in one mode only if it does at every ambient; its
    THD and handover level are the largest over them; its drawn values are those at the
    highest ambient."""

    passed: np.ndarray
    failing: np.ndarray
    one_mode: np.ndarray
    thd: np.ndarray
    handover: np.ndarray
    level: np.ndarray
    values: dict[str, np.ndarray]
    circuit: dict[str, np.ndarray]
    fix_r: np.ndarray
    u_fix: np.ndarray


def _judge(
    draws: _Draws,
    temps: list[tuple[float, np.ndarray]],
    pos: np.ndarray,
    samples: np.ndarray,
    *,
    fix_r: np.ndarray | None = None,
    verdict_only: bool = False,
) -> _Judged:
    """Judge rows (``fix_r``: the fix resistor of each row instead of the drawn one)."""
    b = draws.b
    out: _Judged | None = None
    for t, parts in temps:
        sel = np.flatnonzero(parts[pos])
        if sel.size == 0:
            continue
        values, circuit, fix_d, u_fix = draws.rows(pos[sel], samples[sel], t)
        r = fix_d if fix_r is None else fix_r[sel]
        res = evaluate_rows(b, pos[sel], values, circuit, r, verdict_only=verdict_only)
        cf = res.closed
        thd = res.checks.value[:, C.IDX["thd"]]
        level = np.where(cf.handover, cf.handover_out_v, np.nan)
        if out is None:  # the highest ambient: every row
            assert sel.size == pos.size
            out = _Judged(res.passed.copy(), res.checks.failing.copy(),
                          cf.conduction == "one-mode", thd.copy(), cf.handover.copy(),
                          level, values, circuit, r, u_fix)  # fmt: skip
            continue
        out.passed[sel] &= res.passed
        out.failing[sel] |= res.checks.failing
        out.one_mode[sel] &= cf.conduction == "one-mode"
        with np.errstate(invalid="ignore"):
            out.thd[sel] = np.fmax(out.thd[sel], thd)
            out.level[sel] = np.fmax(out.level[sel], level)
        out.handover[sel] |= cf.handover
    assert out is not None
    return out


def _percentiles(x: np.ndarray) -> dict[float, float]:
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {}
    return dict(zip(PERCENTILES, np.percentile(x, PERCENTILES).tolist(), strict=True))


def _correlations(params: dict[str, np.ndarray], fail: np.ndarray) -> list[tuple[str, float]]:
    """Pearson correlation of each parameter with the failure indicator, strongest first."""
    if fail.all() or not fail.any():
        return []
    f = fail.astype(float)
    f = f - f.mean()
    out = []
    for key, x in params.items():
        x = x - x.mean()
        den = np.sqrt(np.sum(x * x) * np.sum(f * f))
        if den > 0:
            out.append((key, float(np.sum(x * f) / den)))
    out.sort(key=lambda kv: -abs(kv[1]))
    return out[:TOP_CORRELATED]


def part_yields(
    b: Board,
    n: int = DEFAULT_SAMPLES,
    seed: int = DEFAULT_SEED,
    *,
    detail: bool = True,
    progress: Callable[[int], None] | None = None,
) -> tuple[np.ndarray, list[dict[str, np.ndarray]] | None]:
    """Passed boards of every part of ``b`` (shape (P,)), and with ``detail`` the per-board
    records of each part: ``pass``, ``fail_checks`` (n, C), ``one_mode``, ``thd``,
    ``handover``, ``level`` and the drawn values of every spread parameter. ``progress(k)``:
    called with the boards of each chunk as they are judged."""
    draws = _Draws(b, n, seed)
    passed = np.zeros(b.n_parts, dtype=np.int64)
    records: list[dict[str, np.ndarray]] | None = None
    if detail:
        records = [
            {
                "pass": np.zeros(n, bool),
                "fail_checks": np.zeros((n, C.N_CHECKS), bool),
                "one_mode": np.zeros(n, bool),
                "thd": np.zeros(n),
                "handover": np.zeros(n, bool),
                "level": np.full(n, np.nan),
                "params": {},
            }
            for _ in range(b.n_parts)
        ]
    temps = ambients(b)
    for pos, samples in _chunks(b.n_parts, n):
        res = _judge(draws, temps, pos, samples, verdict_only=not detail)
        values, circuit, fix_r = res.values, res.circuit, res.fix_r
        np.add.at(passed, pos, res.passed.astype(np.int64))
        if progress is not None:
            progress(int(pos.size))
        if records is None:
            continue
        for p in np.unique(pos):
            sel = pos == p
            s = samples[sel]
            rec = records[int(p)]
            rec["pass"][s] = res.passed[sel]
            rec["fail_checks"][s] = res.failing[sel]
            rec["one_mode"][s] = res.one_mode[sel]
            rec["thd"][s] = res.thd[sel]
            rec["handover"][s] = res.handover[sel]
            rec["level"][s] = res.level[sel]
            params = rec["params"]
            for key, v in values.items():
                if b.spread(key).varies[p]:
                    params.setdefault(key, np.zeros(n))[s] = v[sel, 0]
            for key, v in circuit.items():
                params.setdefault(key, np.zeros(n))[s] = v[sel]
            if b.fix.fitted[p] and b.fix.tolerance > 0:
                params.setdefault("fix_resistor", np.zeros(n))[s] = fix_r[sel]
    return passed, records


def _fix_yields(b: Board, p: int, n: int, seed: int) -> Callable[[float], float]:
    """The yield of part ``p`` as a function of the nominal fix resistor (ohm), on the same
    ``n`` boards as :func:`part_yields` (drawn once here, for every value asked; the
    resistor's own variate scales each value within the series' tolerance)."""
    draws = _Draws(b, n, seed)
    pos = np.full(n, p)
    samples = np.arange(n)
    temps = ambients(b)
    _, _, _, u_fix = draws.rows(pos, samples)
    factor = 1.0 + b.fix.tolerance * (2.0 * u_fix - 1.0)  # the same draw as the recommended's

    def yield_of(r_ohm: float) -> float:
        passed = 0
        for s0 in range(0, n, CHUNK_ROWS):
            sl = slice(s0, min(s0 + CHUNK_ROWS, n))
            res = _judge(draws, temps, pos[sl], samples[sl], fix_r=r_ohm * factor[sl],
                         verdict_only=True)  # fmt: skip
            passed += int(res.passed.sum())
        return passed / n

    return yield_of


def fix_yield(b: Board, p: int, n: int, seed: int, r_ohm: float) -> float:
    """The yield of part ``p`` with the fix resistor ``r_ohm`` (nominal, ohm) fitted instead of
    the recommended one, on the same ``n`` boards as :func:`part_yields`."""
    return _fix_yields(b, p, n, seed)(r_ohm)


def _fix_search(
    b: Board, p: int, n: int, seed: int, series: str, target: float | None, base_yield: float
) -> FixYield:
    """The recommended fix of part ``p`` and the largest value of ``series`` reaching
    ``target``, on the same boards (see :data:`FIX_RANGE` for the shape of the yield assumed:
    above the recommendation it falls as the resistor grows, so the largest value reaching the
    target there is found by bisection; below it the values are tried downwards)."""
    rail = str(b.fix.rail[p])
    r_rec = float(b.fix.r_ohm[p])
    tol = b.fix.tolerance
    if target is None:
        return FixYield(rail, r_rec, series, tol, base_yield)
    cands = [float(r) for r in eseries.preferred_values(series, r_rec / FIX_RANGE,
                                                         r_rec * FIX_RANGE)[::-1]]  # fmt: skip
    cands = cands[:FIX_CANDIDATES]
    tried: dict[float, float] = {}
    yield_with = _fix_yields(b, p, n, seed)

    def y_of(r: float) -> float:
        if r not in tried:
            tried[r] = base_yield if r == r_rec else yield_with(r)
        return tried[r]

    best: float | None = None
    above = [r for r in cands if r > r_rec]  # largest first
    if y_of(r_rec) >= target:
        lo, hi = 0, len(above)  # the first of `above` reaching the target (len: none does)
        while lo < hi:
            mid = (lo + hi) // 2
            if y_of(above[mid]) >= target:
                hi = mid
            else:
                lo = mid + 1
        best = above[lo] if lo < len(above) else r_rec
    else:
        previous = tried[r_rec]
        for r in (r for r in cands if r < r_rec):
            y = y_of(r)
            if y >= target:
                best = r
                break
            if y <= previous:  # past the peak: below it the yield only falls
                break
            previous = y
    order = tuple(sorted(tried.items(), reverse=True))
    return FixYield(
        rail, r_rec, series, tol, base_yield, target,
        best, None if best is None else tried[best], order,
    )  # fmt: skip


def analyse(
    b: Board,
    n: int = DEFAULT_SAMPLES,
    seed: int = DEFAULT_SEED,
    *,
    target: float | None = None,
    series: str = "E24",
    method: Interval = "wilson",
    confidence: float = 0.95,
    progress: Callable[[int], None] | None = None,
) -> YieldAnalysis:
    """The yield of every part of ``b`` over ``n`` boards (see the module docstring);
    ``target``: the yield the fix resistor's search must reach (e.g. 0.999); ``progress(k)``:
    as :func:`part_yields`."""
    passed, records = part_yields(b, n, seed, detail=True, progress=progress)
    assert records is not None
    out = []
    temps = ambients(b)
    checked = [j for j, c in enumerate(C.CHECKS) if c.sense != "is"]
    for p, rec in enumerate(records):
        k = int(passed[p])
        fails = rec["fail_checks"]
        check_pass = {
            C.CHECKS[j].name: float(1.0 - fails[:, j].mean()) for j in checked if fails[:, j].any()
        }
        pulldown = bool(b.base.has_pulldown[p])
        fix = None
        if b.fix.fitted[p]:
            fix = _fix_search(b, p, n, seed, series, target, k / n)
        known, unknown = b.temperature_keys(p)
        out.append(
            PartYield(
                part_number=b.part_numbers[p],
                samples=n,
                passed=k,
                interval=interval(k, n, method, confidence),
                exact=clopper_pearson(k, n, confidence),
                one_mode=float(rec["one_mode"].mean()) if pulldown else None,
                check_pass=check_pass,
                checks_always_met=len(checked) - len(check_pass),
                thd_percentiles=_percentiles(rec["thd"]),
                thd_bound=not pulldown,
                handover=float(rec["handover"].mean()),
                handover_level_percentiles=_percentiles(rec["level"]),
                correlated=_correlations(rec["params"], ~rec["pass"]),
                fixed_params=[s.key for s in b.parts if s.kind[p] == FIXED],
                fix=fix,
                over_temperature=known,
                temperature_unknown=unknown,
                ambients_c=[t for t, on in temps if on[p]],
                thd=rec["thd"],
                handover_level=rec["level"][np.isfinite(rec["level"])],
            )
        )
    dist = {}
    for s in (*b.parts, *b.circuit):
        kinds = sorted({DISTRIBUTION[int(x)] for x in s.kind})
        dist[s.key] = "/".join(kinds)
    return YieldAnalysis(out, n, seed, method, confidence, dist)
