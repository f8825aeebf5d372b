"""What varies from one board to the next, and how: the spread model of the parts and the design.

Every *spread parameter* has a range (its two ends, which the corner search visits) and a
distribution (which the Monte Carlo draws from). The assumptions, stated once here and in the
README:

* **catalogue specs** (every parameter of :data:`partsel.params.PARAMS`, and each rail's swing
  headroom curve as one parameter whose points move together):

  - min, typ and max given: a *split normal* with its mode at typ and min / max at ±3σ on
    their own side (σ_low = (typ − min) / 3, σ_high = (max − typ) / 3; K. F. Wallis, "The
    two-piece normal, binormal, or double Gaussian distribution", *Statistical Science* 29,
    2014): datasheet limits are often near ±3σ of production (design notes section 12;
    common practice, an assumption). The range is [min, max];
  - typ and one limit: a normal at typ with that limit at 3σ, the range mirrored about typ;
  - min and max only: *uniform* between them;
  - typ only, or one limit only: no spread is known; the value is fixed at the one given
    (:data:`FIXED`) and the report says so.

  Parameters that cannot be negative are folded at zero (their magnitude is taken), parameters
  are independent of each other, and a part's spec is taken to hold over the design's ambient
  range (the catalogue states each spec at one set of conditions, so its spread over temperature
  is unknown and not modelled: no temperature coefficient is invented; the outputs say so,
  :data:`partsel.solver.spread.export.ASSUMPTIONS`).
* **design tolerances** (:attr:`partsel.physics.circuit.Design.tolerances`): uniform between
  the ends of the tolerance or range, or, when written with ``kσ``, a (split) normal with the
  ends at k standard deviations.
* **the fix resistor** of a part whose verdict uses it: the recommended E-series value with the
  tolerance of its series (:data:`partsel.physics.eseries.SERIES_TOLERANCE`: E24 ±5 %, E96
  ±1 %, or the requirements' ``fix_tolerance``), uniform.
* **the ambient**: not drawn. A board must work over the whole ambient range; of partsel's
  checks only the junction temperature depends on the ambient, and it is highest at the
  highest ambient, so every sample is judged there (the corner search takes both ends).

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

    @property
    def n(self) -> int:
        """Number of parts (1 for a design parameter)."""
        return int(self.kind.shape[0])

    @property
    def varies(self) -> np.ndarray:
        """(P,) True where the parameter has a spread."""
        return self.kind != FIXED

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
        )

    def shrunk(self, factor: float) -> Spread:
        """The same distribution narrowed about its centre by ``factor`` (0: no spread left)."""
        c, k = self.centre, float(factor)
        return Spread(self.key, self.kind, c, self.sigma_low * k, self.sigma_high * k,
                      c + k * (self.low - c), c + k * (self.high - c), self.fold, self.origin,
                      self.sigmas)  # fmt: skip

    def fixed(self) -> Spread:
        """The parameter without spread (every part at its centre)."""
        c = self.centre
        zero = np.zeros_like(c)
        return Spread(self.key, np.zeros_like(self.kind), c, zero, zero, c, c, self.fold,
                      self.origin)  # fmt: skip

    def draw(self, rows: np.ndarray, u: np.ndarray, z: np.ndarray) -> np.ndarray:
        """Values of rows ``rows`` (indices into the parts) from uniform ``u`` and standard
        normal ``z`` variates (one per row): shape (R, K)."""
        kind = self.kind[rows][:, None]
        lo, hi = self.low[rows], self.high[rows]
        c, s1, s2 = self.centre[rows], self.sigma_low[rows], self.sigma_high[rows]
        uu, zz = u[:, None], np.abs(z)[:, None]
        with np.errstate(invalid="ignore", divide="ignore"):
            # split normal: the lower half with probability s1 / (s1 + s2) (Wallis 2014)
            p_low = np.where(s1 + s2 > 0, s1 / (s1 + s2), 0.5)
            normal = np.where(uu < p_low, c - s1 * zz, c + s2 * zz)
        out = np.where(kind == UNIFORM, lo + uu * (hi - lo), np.where(kind == NORMAL, normal, c))
        return np.abs(out) if self.fold else out

    def at(self, rows: np.ndarray, t: np.ndarray) -> np.ndarray:
        """Values at the fractions ``t`` of the range (0: low end, 1: high end; one per row),
        shape (R, K); a fixed parameter keeps its value."""
        lo, hi = self.low[rows], self.high[rows]
        tt = np.asarray(t, dtype=float)[:, None]
        out = np.where(self.varies[rows][:, None], lo + tt * (hi - lo), self.centre[rows])
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
    docstring), in :data:`PART_KEYS` order."""
    idx = np.asarray(rows, dtype=int)
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
        out.append(Spread(key, kind, centre, s1, s2, e_lo, e_hi, fold, "catalogue", sig))
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
