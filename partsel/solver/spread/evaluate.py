"""Boards as rows: a part with drawn (or corner) values, in a circuit with drawn tolerances and
its fix resistor, judged by the ranking's own closed form and checks.

The spread analysis adds no physics and no check of its own. Each row is one board: the part's
typical-basis stage parameters (:meth:`partsel.solver.table.PartTable.stage`) with its spread
parameters replaced, the design as a batch (:attr:`partsel.physics.circuit.Design.rows`: one
circuit per row) with its tolerances drawn and the recommended fix resistor fitted, then
the ranking's own evaluation of a circuit (:func:`partsel.solver.solve._evaluate`: the closed
form and every check, on the typical basis since every value is drawn), the fix resistor added
in parallel by the ranking's :func:`partsel.solver.solve.with_resistor` and the checks marked by
:func:`partsel.solver.checks.with_fix_resistor`, as the ranking judges a part with its fix.
Rows are evaluated in chunks of :data:`CHUNK_ROWS`, so that memory stays bounded whatever the
number of samples.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from partsel.physics.analysis import ClosedForm, source_demand
from partsel.physics.circuit import Design
from partsel.physics.stage import CLASS_B, StageParams
from partsel.solver import checks as C
from partsel.solver.requirements import Requirements
from partsel.solver.spread.model import FixSpread, Spread, design_spreads, part_spreads
from partsel.solver.table import PartTable

#: Rows per evaluation: bounds the memory of the closed form's (rows x harmonics) arrays
#: (about 100 MB at this size) while keeping numpy's per-call overhead small.
CHUNK_ROWS = 16_384

#: Stage fields set by each catalogue spread parameter.
STAGE_FIELDS: dict[str, tuple[str, ...]] = {
    "supply_current": ("supply_current_a",),
    "cm_headroom_neg": ("cm_headroom_neg_v",),
    "cm_headroom_pos": ("cm_headroom_pos_v",),
    "gbw": ("gbw_hz",),
    "slew_rise": ("slew_rise_v_per_s",),
    "slew_fall": ("slew_fall_v_per_s",),
    "cap_load_limit": ("cap_load_limit_f",),
    "dead_band": ("dead_band_v",),
    "stage_current": ("stage_current_a", "stage_current_high_a"),
    "source_limit": ("source_limit_a",),
    "sink_limit": ("sink_limit_a",),
    "swing_pos": ("swing_pos_v",),
    "swing_neg": ("swing_neg_v",),
}
#: Input parameters the checks read besides the stage (:func:`partsel.solver.checks.evaluate`).
INPUT_KEYS = ("offset_voltage", "bias_current", "noise_density")


@dataclass(frozen=True)
class Board:
    """What the spread analysis varies for some parts of a table in one design.

    ``rows``: the parts' indices in ``table``; every array of ``parts`` and ``fix`` follows
    that order. ``base``: their typical-basis stage parameters.
    """

    table: PartTable
    rows: np.ndarray
    design: Design
    req: Requirements
    parts: tuple[Spread, ...]
    circuit: tuple[Spread, ...]
    fix: FixSpread
    base: StageParams

    @property
    def n_parts(self) -> int:
        return int(self.rows.size)

    @property
    def part_numbers(self) -> list[str]:
        return [str(p) for p in self.table.part_number[self.rows]]

    def only(self, keys: set[str] | frozenset[str]) -> Board:
        """The same boards with only the parameters ``keys`` spread (the others at their
        nominal values; the fix resistor at its value unless ``"fix_resistor"`` is kept)."""
        parts = tuple(s if s.key in keys else s.fixed() for s in self.parts)
        circuit = tuple(s for s in self.circuit if s.key in keys)
        fix = self.fix if "fix_resistor" in keys else self.fix.exact()
        return dataclasses.replace(self, parts=parts, circuit=circuit, fix=fix)

    def shrunk(self, factor: float) -> Board:
        """The same boards with every spread narrowed about its centre by ``factor`` (the
        limit of a vanishing spread is the nominal board: typical values, nominal parts)."""
        return dataclasses.replace(
            self,
            parts=tuple(s.shrunk(factor) for s in self.parts),
            circuit=tuple(s.shrunk(factor) for s in self.circuit),
            fix=self.fix.shrunk(factor),
        )

    @property
    def over_temperature(self) -> np.ndarray:
        """(P,) True where a part gives some spec at two or more ambient temperatures."""
        out = np.zeros(self.n_parts, dtype=bool)
        for s in self.parts:
            out |= s.over_temperature
        return out

    def temperature_keys(self, p: int) -> tuple[list[str], list[str]]:
        """The specs part ``p`` gives (or that have a range) at two or more ambients, and
        those it gives at one (their spread over temperature unknown), in PART_KEYS order."""
        known, unknown = [], []
        for s in self.parts:
            if s.over_temperature[p]:
                known.append(s.key)
            elif np.isfinite(s.centre[p]).any():
                unknown.append(s.key)
        return known, unknown

    def spread(self, key: str) -> Spread:
        """A spread parameter by key (catalogue, ``"section/key"`` of the design, or
        ``"fix_resistor"``)."""
        for s in (*self.parts, *self.circuit):
            if s.key == key:
                return s
        if key == "fix_resistor":
            return self.fix.spread()
        raise KeyError(key)


#: The design-file key the ambient a board is judged at is set through.
AMBIENT_KEY = "environment/ambient_max"


def ambients(b: Board) -> list[tuple[float, np.ndarray]]:
    """The ambients every board is judged at, each with the parts (P,) judged there: the
    design's highest ambient for every part; for parts with temperature data also the lowest
    and every temperature of their data strictly inside the range (a check monotonic in a
    piecewise-linear spec is worst at one of them). Highest first."""
    t_lo, t_hi = float(b.design.t_ambient_min_c), float(b.design.t_ambient_max_c)
    out = [(t_hi, np.ones(b.n_parts, dtype=bool))]
    on = b.over_temperature
    if not on.any() or not t_hi > t_lo:
        return out
    inner: dict[float, np.ndarray] = {}
    for s in b.parts:
        tc = s.temperature
        if tc is None:
            continue
        for p in np.flatnonzero(tc.given):
            for t in tc.t[p][np.isfinite(tc.t[p])]:
                if t_lo < t < t_hi:
                    inner.setdefault(float(t), np.zeros(b.n_parts, dtype=bool))[p] = True
    out += [(t, inner[t]) for t in sorted(inner, reverse=True)]
    out.append((t_lo, on.copy()))
    return out


def board(
    table: PartTable,
    rows: np.ndarray,
    design: Design,
    req: Requirements,
    fix: FixSpread | None = None,
) -> Board:
    """The spread model of parts ``rows`` of ``table`` in ``design`` (``fix``: the resistor
    fitted to each of them; none by default)."""
    idx = np.asarray(rows, dtype=int)
    if fix is None:
        fix = FixSpread(np.full(idx.size, "", dtype=object), np.full(idx.size, np.nan), 0.0)
    return Board(
        table=table,
        rows=idx,
        design=design,
        req=req,
        parts=tuple(part_spreads(table, idx)),
        circuit=tuple(design_spreads(design)),
        fix=fix,
        base=table.stage("typical").take(idx),
    )


@dataclass(frozen=True)
class Rows:
    """The evaluation of R boards: the checks (as the ranking's), the closed form, and which
    rows have the fix resistor fitted and pass every check."""

    checks: C.CheckArrays
    closed: ClosedForm
    fitted: np.ndarray
    passed: np.ndarray


def stage_rows(b: Board, pos: np.ndarray, values: Mapping[str, np.ndarray]) -> StageParams:
    """Stage parameters of rows of parts ``pos`` (positions in ``b.rows``) with the catalogue
    spread parameters ``values`` (key -> (R, K) values; absent keys keep the typical value)."""
    st = b.base.take(pos)
    changes: dict[str, np.ndarray] = {}
    for s in b.parts:
        vals = values.get(s.key)
        if vals is None:
            continue
        vary = s.varies[pos]
        if not vary.any():
            continue
        for name in STAGE_FIELDS.get(s.key, ()):
            cur = getattr(st, name)
            if cur.ndim == 2:  # a headroom curve: the points given, never falling with current
                new = np.where(vary[:, None] & ~np.isnan(vals), vals, cur)
                filled = np.where(np.isnan(new), -np.inf, new)
                new = np.where(np.isnan(new), np.nan, np.maximum.accumulate(filled, axis=1))
            else:
                new = np.where(vary, vals[:, 0], cur)
                if s.key == "dead_band":  # only a class-B stage has one
                    new = np.where(st.topology == CLASS_B, new, 0.0)
            changes[name] = new
    if "slew_fall" in values or "slew_rise" in values:
        # a part that gives one slew rate has the same on both edges (StageParams' rule)
        fall = b.spread("slew_fall")
        same = ~fall.varies[pos] & np.isnan(fall.centre[pos, 0])
        rise = changes.get("slew_rise_v_per_s", st.slew_rise_v_per_s)
        changes["slew_fall_v_per_s"] = np.where(
            same, rise, changes.get("slew_fall_v_per_s", st.slew_fall_v_per_s)
        )
    return st.replace(**changes) if changes else st


def circuit_rows(
    b: Board,
    pos: np.ndarray,
    values: Mapping[str, np.ndarray],
    fix_r: np.ndarray | None,
) -> Design:
    """The design of rows of parts ``pos``: the drawn tolerances ``values`` (``"section/key"``
    of the design file -> (R,): a tolerance, or ``environment/ambient_max`` for the ambient the
    junction is judged at), and the fix resistor ``fix_r`` (R,) added on each part's rail where
    it is fitted (in parallel with the design's own, by the ranking's
    :func:`partsel.solver.solve.with_resistor`); one design when nothing varies."""
    from partsel.solver.solve import with_resistor

    n = pos.size
    changes = {
        tuple(name.split("/")): np.broadcast_to(np.asarray(v, dtype=float), (n,)).astype(float)
        for name, v in values.items()
    }
    d = b.design.with_values(changes) if changes else b.design
    if fix_r is not None:
        rail = b.fix.rail[pos]
        for name in ("negative", "positive"):
            on = rail == name
            if on.any():
                d = with_resistor(d, name, np.where(on, np.asarray(fix_r, dtype=float), np.nan))
    return d


def evaluate_rows(
    b: Board,
    pos: np.ndarray,
    part_values: Mapping[str, np.ndarray],
    circuit_values: Mapping[str, np.ndarray],
    fix_r: np.ndarray | None,
    *,
    verdict_only: bool = False,
) -> Rows:
    """Judge R boards: parts ``pos`` with ``part_values`` (key -> (R, K)), the circuit with
    ``circuit_values`` (key -> (R,)) and the fix resistor ``fix_r`` (R,).

    ``verdict_only``: only whether each board passes counts, so a marginal stage whose
    conduction check fails anyway (:func:`partsel.solver.checks.conduction_fails`) is not
    simulated (its THD and glitch are then NaN, and the board fails as it would)."""
    from partsel.solver.solve import _evaluate

    st = stage_rows(b, pos, part_values)
    d = circuit_rows(b, pos, circuit_values, fix_r)
    device_law = None
    if verdict_only:
        d0, swing = source_demand(st, d)
        device_law = ~C.conduction_fails(st, d0 - swing, d0 + swing, b.req)
    inputs = {}
    for key in INPUT_KEYS:  # the typical basis' value where nothing is drawn, as the stage's
        base = b.table.param(key, "typical")[0][b.rows[pos]]
        vals = part_values.get(key)
        inputs[key] = (
            base if vals is None else np.where(b.spread(key).varies[pos], vals[:, 0], base)
        )
    idx = b.rows[pos]
    req = b.req if b.req.basis == "typical" else b.req.replace(basis="typical")
    chk, _, _, cf = _evaluate(
        b.table, idx, st, d, req, C.DesignLevels.of(d), inputs=inputs, device_law=device_law
    )
    fitted = b.fix.fitted[pos] if fix_r is not None else np.zeros(pos.size, dtype=bool)
    on = np.flatnonzero(fitted)
    if on.size:  # marked as the ranking marks a part with its fix fitted
        chk.put(on, C.with_fix_resistor(chk.take(on), np.asarray(fix_r)[on], b.req))
    return Rows(chk, cf, fitted, ~chk.failing.any(axis=1))


def yields_of(
    table: PartTable,
    rows: np.ndarray,
    design: Design,
    req: Requirements,
    fix: Any,
) -> np.ndarray:
    """Boards passed of each of parts ``rows`` out of ``req.yield_samples`` drawn with
    ``req.yield_seed``: the ranking's yield check (``fix``: the ranking's
    :class:`partsel.solver.solve.FixInfo`; its resistor is fitted where it is applied)."""
    from partsel.solver.spread.yields import part_yields

    idx = np.asarray(rows, dtype=int)
    if idx.size == 0:
        return np.zeros(0, dtype=np.int64)
    b = board(table, idx, design, req, fix_of(fix, idx, req))
    passed, _ = part_yields(b, req.yield_samples, req.yield_seed, detail=False)
    return passed


def fix_of(fix: Any, rows: np.ndarray, req: Requirements) -> FixSpread:
    """The fix resistor fitted to parts ``rows``, from a ranking's FixInfo: the recommended
    value where the verdict applies it, with the fix tolerance of ``req``."""
    rail = np.where(fix.applied[rows], fix.rail[rows], "").astype(object)
    return FixSpread(rail, np.asarray(fix.r_ohm[rows], dtype=float), req.fix_tolerance_used)
