"""What varies from one board to the next, and how: the spread model of the parts and the design.

Every *spread parameter* has a range (its two ends, which the corner search visits) and a
distribution (which the Monte Carlo draws from). The assumptions, stated once here and in the
README:

* **catalogue specs** (every parameter of :data:`partsel.params.PARAMS`, and each rail's swing
  headroom curve as one parameter whose points move together):

  - min, typ and max given: a *split normal* split at typ: below typ the lower half of a
    normal with σ_low = (typ − min) / 3, above it the upper half of one with
    σ_high = (max − typ) / 3, each half with probability 1/2 (typ is the median, and min and
    max lie at the same quantiles, Φ(∓3), as in a normal): x = typ + σ_side · z for a
    standard normal z, so a board keeps its quantile wherever σ_low, σ_high and typ move
    (with the ambient, below). Datasheet limits are often near ±3σ of production (design
    notes section 12; common practice, an assumption). When the sides differ the density
    steps at typ; the range is [min, max];
  - typ and one limit: a normal at typ with that limit at 3σ, the range mirrored about typ;
  - min and max only: *uniform* between them;
  - typ only, or one limit only: no spread is known; the value is fixed at the one given
    (:data:`FIXED`) and the report says so.

  Parameters that cannot be negative are folded at zero (their magnitude is taken), and
  parameters are independent of each other.
* **temperature**: a spec the catalogue gives at two or more ambient temperatures (its own and
  its ``temperature_points``; :attr:`partsel.solver.table.PartTable.temperature`) has its min,
  typ and max each interpolated linearly in the ambient between the given temperatures and
  held at the end values outside them (:func:`interpolate`: no slope is extrapolated beyond
  the data, which would invent a temperature coefficient where the catalogue states none);
  the distribution above is then built from the interpolated min / typ / max at each
  ambient, and a part keeps its place in it across temperature (the same variates, so the
  same normal quantile: a part that is low at 25 degC is low when hot). A spec given at one
  temperature is taken to hold over the design's ambient range: its spread over temperature
  is unknown and not modelled (no temperature coefficient is invented; the outputs list these
  specs per part, :data:`partsel.solver.spread.export.ASSUMPTIONS`). The swing headroom
  curves have no temperature points.
* **design tolerances** (:attr:`partsel.physics.circuit.Design.tolerances`): uniform between
  the ends of the tolerance or range, or, when written with ``kσ``, a (split) normal with the
  ends at k standard deviations.
* **the fix resistor** of a part whose verdict uses it: the recommended E-series value with the
  tolerance of its series (:data:`partsel.physics.eseries.SERIES_TOLERANCE`: E24 ±5 %, E96
  ±1 %, or the requirements' ``fix_tolerance``), uniform.
* **the ambient**: not drawn. A board must work over the whole ambient range of the design,
  so each board is judged at every ambient where a check can be worst and passes only if it
  passes at all of them (:func:`ambients`): the highest ambient (where the junction is
  hottest), and for a part with temperature data also the lowest ambient and every
  temperature of its data inside the range (its specs are piecewise linear in the ambient,
  with their extremes at those temperatures). The corner search takes the ambient as a
  parameter between the two ends.

Draws are reproducible: each part draws from its own stream, seeded by the seed and its part
number (so a part's samples do not depend on which other parts are analysed with it), the
design's tolerances from one stream shared by every part (common random numbers: parts are
compared on the same boards).
"""

from __future__ import annotations

import zlib
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from partsel.params import MAX_SWING_POINTS, PARAMS
from partsel.physics.circuit import FIELD_ATTR, Design
from partsel.solver.table import PartTable

#: Distribution codes.
FIXED, UNIFORM, NORMAL = 0, 1, 2
#: Distribution names for people and JSON.
DISTRIBUTION: dict[int, str] = {FIXED: "fixed", UNIFORM: "uniform", NORMAL: "normal"}
#: Standard deviations at which a catalogue spec's min and max lie (an assumption, see above).
SPEC_SIGMAS = 3.0
#: The rails whose swing headroom curve is one spread parameter.
SWING_RAILS = ("swing_pos", "swing_neg")
#: Spread parameters of a part, in drawing order (the order of its random stream).
PART_KEYS: tuple[str, ...] = (*(p.key for p in PARAMS), *SWING_RAILS)
#: Quantities that cannot be negative (folded at zero when drawn).
_SIGNED = {p.key for p in PARAMS if not p.nonnegative}
#: Stream tag of the design's draws.
_DESIGN_STREAM = 0x5EED


def interpolate(tp: np.ndarray, vp: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Piecewise-linear interpolation row by row: the values ``vp`` (R, M) given at the rising
    temperatures ``tp`` (R, M; NaN-padded at the end, at least one per row) at ``x`` (R,),
    held at the end values outside the given temperatures."""
    tp, vp = np.asarray(tp, dtype=float), np.asarray(vp, dtype=float)
    x = np.asarray(x, dtype=float)
    r = np.arange(tp.shape[0])
    n = np.sum(np.isfinite(tp), axis=1)
    last = np.maximum(n - 1, 0)
    xc = np.clip(x, tp[:, 0], tp[r, last])
    with np.errstate(invalid="ignore"):
        below = np.sum(np.where(np.isfinite(tp), tp <= xc[:, None], False), axis=1)
    i0 = np.clip(below - 1, 0, np.maximum(n - 2, 0))
    i1 = np.minimum(i0 + 1, last)
    t0, t1, v0, v1 = tp[r, i0], tp[r, i1], vp[r, i0], vp[r, i1]
    with np.errstate(invalid="ignore", divide="ignore"):
        w = np.where(t1 > t0, (xc - t0) / (t1 - t0), 0.0)
    return v0 + w * (v1 - v0)


@dataclass(frozen=True)
class TemperatureCurves:
    """The temperature data of one spread parameter of P parts: temperatures ``t`` (P, M),
    rising and NaN-padded, and the spec's ``lo`` / ``typ`` / ``hi`` there (P, M; NaN where a
    side is not given). A part without data has no finite temperature."""

    t: np.ndarray
    lo: np.ndarray
    typ: np.ndarray
    hi: np.ndarray

    @property
    def given(self) -> np.ndarray:
        """(P,) True where the part gives the spec at two or more temperatures."""
        return np.sum(np.isfinite(self.t), axis=1) >= 2

    def take(self, index: np.ndarray) -> TemperatureCurves:
        i = np.asarray(index)
        return TemperatureCurves(self.t[i], self.lo[i], self.typ[i], self.hi[i])

    def shrunk(self, factor: float) -> TemperatureCurves:
        """Each side narrowed about typ by ``factor`` at every temperature (where typ is not
        given, about the middle of min and max)."""
        k = float(factor)
        c = np.where(np.isnan(self.typ), 0.5 * (self.lo + self.hi), self.typ)
        return TemperatureCurves(self.t, c + k * (self.lo - c), self.typ, c + k * (self.hi - c))

    def at(self, rows: np.ndarray, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """min, typ, max of rows ``rows`` at the ambients ``x`` (R,), shape (R, 1) each."""
        tp = self.t[rows]
        return tuple(interpolate(tp, v[rows], x)[:, None] for v in (self.lo, self.typ, self.hi))  # type: ignore[return-value]


def temperature_curves(
    temperature: Any, part_keys: Sequence[str], key: str
) -> TemperatureCurves | None:
    """The curves of parameter ``key`` of parts ``part_keys`` (casefolded part numbers) from a
    :data:`partsel.solver.table.TemperatureData` mapping; None when no part has any."""
    curves = [temperature.get(pk, {}).get(key) for pk in part_keys]
    if not any(curves):
        return None
    m = max(len(c) for c in curves if c)
    arr = np.full((4, len(curves), m), np.nan)
    for p, c in enumerate(curves):
        if c:
            arr[:, p, : len(c)] = np.asarray(c, dtype=float).T
    return TemperatureCurves(arr[0], arr[1], arr[2], arr[3])


@dataclass(frozen=True)
class Spread:
    """One spread parameter of P parts (or of the design: P = 1); arrays of shape (P, K), K
    columns moving together (a headroom curve's points; 1 otherwise), ``kind`` of shape (P,).

    ``centre`` is the mode of a normal (typ, the nominal value), ``sigma_low`` /
    ``sigma_high`` its standard deviation on either side; ``low`` / ``high`` the ends of the
    range (the corners; a uniform's support). ``fold``: the value's magnitude is taken.
    """

    key: str
    kind: np.ndarray
    centre: np.ndarray
    sigma_low: np.ndarray
    sigma_high: np.ndarray
    low: np.ndarray
    high: np.ndarray
    fold: bool = False
    origin: str = "catalogue"  #: "catalogue", "design", "fix"
    sigmas: np.ndarray | None = None  #: (P,) at how many σ the ends lie (normal), else NaN
    temperature: TemperatureCurves | None = None  #: the spec at several ambients, if given

    @property
    def n(self) -> int:
        """Number of parts (1 for a design parameter)."""
        return int(self.kind.shape[0])

    @property
    def over_temperature(self) -> np.ndarray:
        """(P,) True where the spec is given at two or more ambient temperatures."""
        if self.temperature is None:
            return np.zeros(self.n, dtype=bool)
        return self.temperature.given

    @property
    def varies(self) -> np.ndarray:
        """(P,) True where the parameter has a spread or moves with the ambient."""
        return (self.kind != FIXED) | self.over_temperature

    def _sides_at(
        self, rows: np.ndarray, ambient: np.ndarray | float | None
    ) -> tuple[np.ndarray, ...]:
        """kind (R, 1), centre, σ_low, σ_high, low, high (R, K) of rows at ``ambient`` (R,):
        interpolated where the part gives temperature data, else as stated."""
        out = (self.kind[rows][:, None], self.centre[rows], self.sigma_low[rows],
               self.sigma_high[rows], self.low[rows], self.high[rows])  # fmt: skip
        tc = self.temperature
        if tc is None or ambient is None:
            return out
        on = tc.given[rows]
        if not on.any():
            return out
        x = np.broadcast_to(np.asarray(ambient, dtype=float), rows.shape)
        lo, typ, hi = tc.at(rows, x)
        kind_k, centre, s1, s2, e_lo, e_hi = _spec_spread(self.key, lo, typ, hi, self.fold)
        new = (kind_k.astype(np.int8), centre, s1, s2, e_lo, e_hi)
        return tuple(np.where(on[:, None], n, o) for n, o in zip(new, out, strict=True))

    def take(self, index: np.ndarray) -> Spread:
        """The parameter of some parts."""
        idx = np.asarray(index)
        return Spread(
            self.key,
            self.kind[idx],
            self.centre[idx],
            self.sigma_low[idx],
            self.sigma_high[idx],
            self.low[idx],
            self.high[idx],
            self.fold,
            self.origin,
            None if self.sigmas is None else self.sigmas[idx],
            None if self.temperature is None else self.temperature.take(idx),
        )

    def shrunk(self, factor: float) -> Spread:
        """The same distribution narrowed about its centre by ``factor`` (0: no spread left)."""
        c, k = self.centre, float(factor)
        tc = None if self.temperature is None else self.temperature.shrunk(k)
        return Spread(self.key, self.kind, c, self.sigma_low * k, self.sigma_high * k,
                      c + k * (self.low - c), c + k * (self.high - c), self.fold, self.origin,
                      self.sigmas, tc)  # fmt: skip

    def fixed(self) -> Spread:
        """The parameter without spread (every part at its centre; a spec with temperature
        data keeps its typical value's movement with the ambient)."""
        c = self.centre
        zero = np.zeros_like(c)
        tc = None if self.temperature is None else self.temperature.shrunk(0.0)
        return Spread(self.key, np.zeros_like(self.kind), c, zero, zero, c, c, self.fold,
                      self.origin, None, tc)  # fmt: skip

    def draw(
        self,
        rows: np.ndarray,
        u: np.ndarray,
        z: np.ndarray,
        ambient: np.ndarray | float | None = None,
    ) -> np.ndarray:
        """Values of rows ``rows`` (indices into the parts) from uniform ``u`` and standard
        normal ``z`` variates (one per row), at the ambient ``ambient`` (degC, one per row or
        one for all; None: each spec as stated): shape (R, K)."""
        kind, c, s1, s2, lo, hi = self._sides_at(rows, ambient)
        uu, zz = u[:, None], z[:, None]
        # split at typ (the median): each half of its own normal, so x is monotonic in z
        normal = c + np.where(zz < 0, s1, s2) * zz
        out = np.where(kind == UNIFORM, lo + uu * (hi - lo), np.where(kind == NORMAL, normal, c))
        return np.abs(out) if self.fold else out

    def at(
        self, rows: np.ndarray, t: np.ndarray, ambient: np.ndarray | float | None = None
    ) -> np.ndarray:
        """Values at the fractions ``t`` of the range (0: low end, 1: high end; one per row) at
        the ambient ``ambient`` (as :meth:`draw`), shape (R, K); a fixed parameter keeps its
        value (at that ambient)."""
        kind, c, _, _, lo, hi = self._sides_at(rows, ambient)
        tt = np.asarray(t, dtype=float)[:, None]
        out = np.where(kind != FIXED, lo + tt * (hi - lo), c)
        return np.abs(out) if self.fold else out


def _sides(table: PartTable, stem: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    return tuple(table.number(f"{stem}_{s}") for s in ("min", "typ", "max"))  # type: ignore[return-value]


def _spec_spread(
    key: str, lo: np.ndarray, typ: np.ndarray, hi: np.ndarray, fold: bool
) -> tuple[np.ndarray, ...]:
    """Kind, centre, σ_low, σ_high, low end, high end of specs given as min / typ / max
    columns (NaN where absent), shape (P, K) each (kind (P,) from the first column)."""
    has_lo, has_typ, has_hi = ~np.isnan(lo), ~np.isnan(typ), ~np.isnan(hi)
    normal = has_typ & (has_lo | has_hi)
    uniform = ~has_typ & has_lo & has_hi
    s_lo = np.where(has_lo, (typ - lo) / SPEC_SIGMAS, (hi - typ) / SPEC_SIGMAS)
    s_hi = np.where(has_hi, (hi - typ) / SPEC_SIGMAS, (typ - lo) / SPEC_SIGMAS)
    end_lo = np.where(has_lo, lo, 2.0 * typ - hi)
    end_hi = np.where(has_hi, hi, 2.0 * typ - lo)
    if fold:
        end_lo = np.maximum(end_lo, 0.0)
    # the value used where nothing spreads: typ, else the middle, else the one limit given
    one = np.where(
        has_typ, typ, np.where(has_lo & has_hi, 0.5 * (lo + hi), np.where(has_lo, lo, hi))
    )
    centre = np.where(normal, typ, np.where(uniform, 0.5 * (lo + hi), one))
    kind_k = np.where(normal, NORMAL, np.where(uniform, UNIFORM, FIXED))
    zero = normal & (s_lo == 0) & (s_hi == 0)
    kind_k = np.where(zero | np.isnan(centre), FIXED, kind_k)
    end_lo = np.where(kind_k == FIXED, centre, np.where(normal, end_lo, lo))
    end_hi = np.where(kind_k == FIXED, centre, np.where(normal, end_hi, hi))
    s_lo = np.where(normal, s_lo, 0.0)
    s_hi = np.where(normal, s_hi, 0.0)
    return kind_k, centre, s_lo, s_hi, end_lo, end_hi


def part_spreads(table: PartTable, rows: np.ndarray) -> list[Spread]:
    """The catalogue spread parameters of parts ``rows`` of ``table`` (see the module
    docstring), in :data:`PART_KEYS` order, with their temperature data where given."""
    idx = np.asarray(rows, dtype=int)
    keys = [str(k) for k in table.part_key[idx]]
    out: list[Spread] = []
    for key in PART_KEYS:
        if key in SWING_RAILS:
            cols = []
            for k in range(MAX_SWING_POINTS):
                stem = f"{key}_v{k}"
                lo, typ, hi = (a[idx] for a in _sides(table, stem))
                cols.append((lo, typ, hi))
            lo = np.stack([c[0] for c in cols], axis=1)
            typ = np.stack([c[1] for c in cols], axis=1)
            hi = np.stack([c[2] for c in cols], axis=1)
            fold = True
        else:
            lo, typ, hi = (a[idx][:, None] for a in _sides(table, key))
            fold = key not in _SIGNED
        kind_k, centre, s1, s2, e_lo, e_hi = _spec_spread(key, lo, typ, hi, fold)
        given = ~np.isnan(centre)
        # a part's kind: the first point's (a curve's points share their sides in practice)
        first = np.argmax(given, axis=1) if given.shape[1] > 1 else np.zeros(idx.size, int)
        kind = kind_k[np.arange(idx.size), first].astype(np.int8)
        kind = np.where(given.any(axis=1), kind, FIXED).astype(np.int8)
        sig = np.where(kind == NORMAL, SPEC_SIGMAS, np.nan)
        tc = None if key in SWING_RAILS else temperature_curves(table.temperature, keys, key)
        out.append(Spread(key, kind, centre, s1, s2, e_lo, e_hi, fold, "catalogue", sig, tc))
    return out


def _one(value: float) -> np.ndarray:
    return np.array([[float(value)]])


def tolerance_spread(key: str, tol: Any, origin: str = "design") -> Spread:
    """A design quantity's tolerance (:class:`partsel.units.Toleranced`) as a spread
    parameter of one 'part' (the design)."""
    nominal, low, high = float(tol.nominal), float(tol.low), float(tol.high)
    if not tol.spread:
        return Spread(key, np.array([FIXED], np.int8), _one(nominal), _one(0), _one(0),
                      _one(nominal), _one(nominal), origin=origin)  # fmt: skip
    if tol.sigmas is None:
        return Spread(key, np.array([UNIFORM], np.int8), _one(nominal), _one(0), _one(0),
                      _one(low), _one(high), origin=origin)  # fmt: skip
    k = float(tol.sigmas)
    return Spread(key, np.array([NORMAL], np.int8), _one(nominal), _one((nominal - low) / k),
                  _one((high - nominal) / k), _one(low), _one(high), origin=origin,
                  sigmas=np.array([k]))  # fmt: skip


def design_spreads(design: Design) -> list[Spread]:
    """The design's tolerances as spread parameters, keyed ``"section/key"`` (file order)."""
    out = []
    for path in FIELD_ATTR:
        tol = design.tolerances.get(path)
        if tol is not None and tol.spread:
            out.append(tolerance_spread("/".join(path), tol))
    return out


@dataclass(frozen=True)
class FixSpread:
    """The fix resistor fitted to each part that needs it (arrays of shape (P,)): its rail
    (``"negative"`` / ``"positive"``, ``""`` for none), nominal value and relative tolerance."""

    rail: np.ndarray
    r_ohm: np.ndarray
    tolerance: float

    @property
    def fitted(self) -> np.ndarray:
        """(P,) True where a resistor is fitted."""
        return (self.rail == "negative") | (self.rail == "positive")

    def spread(self) -> Spread:
        """The resistor as a uniform spread parameter of the parts (fixed where none)."""
        r = np.where(self.fitted, self.r_ohm, np.nan)[:, None]
        kind = np.where(self.fitted & (self.tolerance > 0), UNIFORM, FIXED).astype(np.int8)
        lo, hi = r * (1.0 - self.tolerance), r * (1.0 + self.tolerance)
        zero = np.zeros_like(r)
        return Spread("fix_resistor", kind, r, zero, zero, lo, hi, origin="fix")

    def shrunk(self, factor: float) -> FixSpread:
        """The same resistors with their tolerance narrowed by ``factor``."""
        return FixSpread(self.rail, self.r_ohm, self.tolerance * float(factor))

    def exact(self) -> FixSpread:
        """The same resistors without tolerance."""
        return FixSpread(self.rail, self.r_ohm, 0.0)

    def take(self, index: np.ndarray) -> FixSpread:
        idx = np.asarray(index)
        return FixSpread(self.rail[idx], self.r_ohm[idx], self.tolerance)


def part_stream(seed: int, part_number: str) -> np.random.Generator:
    """The random stream of one part: from the seed and its part number (case-insensitive)."""
    tag = zlib.crc32(part_number.strip().casefold().encode("utf-8"))
    return np.random.default_rng(np.random.SeedSequence([int(seed), tag]))


def design_stream(seed: int) -> np.random.Generator:
    """The random stream of the design's tolerances (shared by every part)."""
    return np.random.default_rng(np.random.SeedSequence([int(seed), _DESIGN_STREAM]))


@dataclass
class Draws:
    """Uniform and standard normal variates: ``u[key]`` and ``z[key]`` of shape (R,)."""

    u: dict[str, np.ndarray] = field(default_factory=dict)
    z: dict[str, np.ndarray] = field(default_factory=dict)


def draw_parts(
    part_numbers: Sequence[str], n: int, seed: int, keys: Sequence[str]
) -> tuple[np.ndarray, np.ndarray]:
    """Variates of every part: ``(u, z)`` of shape (P, n, len(keys)), each part from its own
    stream (:func:`part_stream`) in the order of ``keys``."""
    m = len(keys)
    u = np.empty((len(part_numbers), n, m))
    z = np.empty((len(part_numbers), n, m))
    for p, pn in enumerate(part_numbers):
        rng = part_stream(seed, pn)
        u[p] = rng.random((n, m))
        z[p] = rng.standard_normal((n, m))
    return u, z


def draw_design(n: int, seed: int, keys: Sequence[str]) -> tuple[np.ndarray, np.ndarray]:
    """Variates of the design's tolerances: ``(u, z)`` of shape (n, len(keys))."""
    rng = design_stream(seed)
    m = len(keys)
    return rng.random((n, m)), rng.standard_normal((n, m))
