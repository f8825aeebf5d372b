"""IEC 60063 preferred-number series (E6 ... E192) and rounding to them (numpy only).

The tables hold the significands in one decade, ``1.0 <= m < 10``. Preferred values are
``m * 10**k`` for any integer ``k``; they are computed from integer significands so that decimal
values come out as the nearest float (``4.7e3`` is exactly ``4700.0``, ``0.91`` is
``float("0.91")``).

E6, E12 and E24 keep the historic values of IEC 60063 that differ from the rounded geometric
series ``10**(i/n)``: 2.7, 3.3, 4.7 in E6/E12 (geometric 2.6, 3.2, 4.6), 3.9 and 8.2 in E12/E24
(3.8, 8.3), and in E24 also 3.0, 3.6 and 4.3 (2.9, 3.5, 4.2). E48 and E96 are the geometric series
rounded to three figures; E192 too, except 9.20 (geometric 9.19).

The rounding functions keep a component safe at the edge of its tolerance band: a resistor that
must not exceed a computed maximum is rounded with :func:`round_down`, one that must not fall
below a computed minimum with :func:`round_up`.
"""

from __future__ import annotations

from typing import Literal, overload

import numpy as np
from numpy.typing import ArrayLike

__all__ = [
    "E6",
    "E12",
    "E24",
    "E48",
    "E96",
    "E192",
    "SERIES",
    "SERIES_TOLERANCE",
    "SeriesName",
    "nearest",
    "preferred_values",
    "round_down",
    "round_up",
    "series_values",
]

SeriesName = Literal["E6", "E12", "E24", "E48", "E96", "E192"]

# IEC 60063 significands, one decade (written out; not generated at import).
# fmt: off
E6: tuple[float, ...] = (
    1.0, 1.5, 2.2, 3.3, 4.7, 6.8,
)

E12: tuple[float, ...] = (
    1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2,
)

E24: tuple[float, ...] = (
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1,
    5.6, 6.2, 6.8, 7.5, 8.2, 9.1,
)

E48: tuple[float, ...] = (
    1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69, 1.78, 1.87, 1.96,
    2.05, 2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01, 3.16, 3.32, 3.48, 3.65, 3.83, 4.02,
    4.22, 4.42, 4.64, 4.87, 5.11, 5.36, 5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25,
    8.66, 9.09, 9.53,
)

E96: tuple[float, ...] = (
    1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30, 1.33, 1.37, 1.40,
    1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74, 1.78, 1.82, 1.87, 1.91, 1.96, 2.00,
    2.05, 2.10, 2.15, 2.21, 2.26, 2.32, 2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87,
    2.94, 3.01, 3.09, 3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
    4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49, 5.62, 5.76, 5.90,
    6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32, 7.50, 7.68, 7.87, 8.06, 8.25, 8.45,
    8.66, 8.87, 9.09, 9.31, 9.53, 9.76,
)

E192: tuple[float, ...] = (
    1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14, 1.15, 1.17, 1.18,
    1.20, 1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32, 1.33, 1.35, 1.37, 1.38, 1.40, 1.42,
    1.43, 1.45, 1.47, 1.49, 1.50, 1.52, 1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69,
    1.72, 1.74, 1.76, 1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03,
    2.05, 2.08, 2.10, 2.13, 2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34, 2.37, 2.40, 2.43,
    2.46, 2.49, 2.52, 2.55, 2.58, 2.61, 2.64, 2.67, 2.71, 2.74, 2.77, 2.80, 2.84, 2.87, 2.91,
    2.94, 2.98, 3.01, 3.05, 3.09, 3.12, 3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48,
    3.52, 3.57, 3.61, 3.65, 3.70, 3.74, 3.79, 3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17,
    4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59, 4.64, 4.70, 4.75, 4.81, 4.87, 4.93, 4.99,
    5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56, 5.62, 5.69, 5.76, 5.83, 5.90, 5.97,
    6.04, 6.12, 6.19, 6.26, 6.34, 6.42, 6.49, 6.57, 6.65, 6.73, 6.81, 6.90, 6.98, 7.06, 7.15,
    7.23, 7.32, 7.41, 7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16, 8.25, 8.35, 8.45, 8.56,
    8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88,
)
# fmt: on

SERIES: dict[str, tuple[float, ...]] = {
    "E6": E6,
    "E12": E12,
    "E24": E24,
    "E48": E48,
    "E96": E96,
    "E192": E192,
}
"""Series name -> significands of one decade."""

SERIES_TOLERANCE: dict[str, float] = {
    "E6": 0.20,
    "E12": 0.10,
    "E24": 0.05,
    "E48": 0.02,
    "E96": 0.01,
    "E192": 0.005,
}
"""Usual component tolerance for each series, as a fraction (common practice)."""


def _integer_table(table: tuple[float, ...]) -> tuple[np.ndarray, int]:
    figures = 2 if len(table) <= 24 else 3  # IEC 60063: two figures up to E24, three above
    scale = 10 ** (figures - 1)
    return np.array([round(m * scale) for m in table], dtype=np.int64), figures


_INTEGER_TABLES = {name: _integer_table(table) for name, table in SERIES.items()}


def _significands(series: str) -> tuple[str, np.ndarray, int]:
    """Normalised name, integer significands and their number of figures for a series."""
    name = str(series).strip().upper()
    if name not in SERIES:
        valid = ", ".join(SERIES)
        raise ValueError(f"unknown E-series {series!r}; valid series are {valid}")
    ints, figures = _INTEGER_TABLES[name]
    return name, ints, figures


def series_values(series: SeriesName | str) -> tuple[float, ...]:
    """Significands of one decade of an E-series, ``1.0 <= m < 10``.

    Parameters
    ----------
    series : str
        "E6", "E12", "E24", "E48", "E96" or "E192" (case-insensitive).

    Returns
    -------
    tuple of float
        The IEC 60063 table.

    Raises
    ------
    ValueError
        For an unknown series name; the message lists the valid ones.
    """
    name, _, _ = _significands(series)
    return SERIES[name]


def _value_at(ints: np.ndarray, figures: int, index: np.ndarray) -> np.ndarray:
    """Preferred value number ``index`` (0 -> 1.0, len(series) -> 10.0, -1 -> last below 1)."""
    decade, pos = np.divmod(index, len(ints))
    exponent = decade - (figures - 1)
    significand = ints[pos].astype(float)
    up = np.power(10.0, np.maximum(exponent, 0))
    down = np.power(10.0, np.maximum(-exponent, 0))
    return significand * up / down


def _index_estimate(ints: np.ndarray, figures: int, target: np.ndarray) -> np.ndarray:
    """Index of the largest preferred value <= target, possibly off by one (float rounding)."""
    log_mantissa = np.log10(ints / 10.0 ** (figures - 1))
    log_target = np.log10(target)
    decade = np.floor(log_target)
    pos = np.searchsorted(log_mantissa, log_target - decade, side="right") - 1
    return decade.astype(np.int64) * len(ints) + pos


def _prepare(value: ArrayLike) -> tuple[np.ndarray, np.ndarray]:
    v = np.asarray(value, dtype=float)
    valid = np.isfinite(v) & (v > 0)
    return np.where(valid, v, 1.0), valid


def _tolerance(name: str, tolerance: float | None) -> float:
    tol = SERIES_TOLERANCE[name] if tolerance is None else float(tolerance)
    if not 0.0 <= tol < 1.0:
        raise ValueError(f"tolerance must be a fraction in [0, 1), got {tolerance!r}")
    return tol


def _finish(result: np.ndarray, valid: np.ndarray, value: ArrayLike) -> float | np.ndarray:
    out = np.where(valid, result, np.nan)
    return float(out) if np.ndim(value) == 0 else out


def _largest_index(ints: np.ndarray, figures: int, v: np.ndarray, factor: float) -> np.ndarray:
    """Largest index g with value(g) * factor <= v, exactly as written (factor > 0)."""
    g = _index_estimate(ints, figures, v / factor)
    for _ in range(3):
        too_big = _value_at(ints, figures, g) * factor > v
        g = np.where(too_big, g - 1, g)
    for _ in range(3):
        next_fits = _value_at(ints, figures, g + 1) * factor <= v
        g = np.where(next_fits, g + 1, g)
    return g


def _smallest_index(ints: np.ndarray, figures: int, v: np.ndarray, factor: float) -> np.ndarray:
    """Smallest index g with value(g) * factor >= v, exactly as written (factor > 0)."""
    g = _index_estimate(ints, figures, v / factor)
    for _ in range(3):
        too_small = _value_at(ints, figures, g) * factor < v
        g = np.where(too_small, g + 1, g)
    for _ in range(3):
        prev_fits = _value_at(ints, figures, g - 1) * factor >= v
        g = np.where(prev_fits, g - 1, g)
    return g


@overload
def round_down(
    value_ohm: float, series: SeriesName | str = ..., tolerance: float | None = ...
) -> float: ...
@overload
def round_down(
    value_ohm: np.ndarray, series: SeriesName | str = ..., tolerance: float | None = ...
) -> np.ndarray: ...
def round_down(
    value_ohm: ArrayLike, series: SeriesName | str = "E24", tolerance: float | None = None
) -> float | np.ndarray:
    """Largest preferred value ``R`` with ``R * (1 + tol) <= value`` (safe upper bound).

    Use it for a component whose computed value is a maximum, e.g. a pull-down resistor that must
    not exceed ``value`` even at the top of its tolerance band.

    Parameters
    ----------
    value_ohm : float or array_like
        Computed maximum (ohm, or any unit; the result has the same unit).
    series : str, optional
        E-series name (default "E24").
    tolerance : float or None, optional
        Fractional tolerance; ``None`` uses :data:`SERIES_TOLERANCE` of the series, ``0`` gives a
        plain round-down to the largest preferred value ``<= value``.

    Returns
    -------
    float or numpy.ndarray
        Float for a scalar input, array of the input's shape otherwise. ``nan`` where the input
        is ``nan``, infinite, zero or negative.

    References
    ----------
    IEC 60063, preferred number series for resistors and capacitors.
    """
    name, ints, figures = _significands(series)
    tol = _tolerance(name, tolerance)
    v, valid = _prepare(value_ohm)
    g = _largest_index(ints, figures, v, 1.0 + tol)
    return _finish(_value_at(ints, figures, g), valid, value_ohm)


@overload
def round_up(
    value_ohm: float, series: SeriesName | str = ..., tolerance: float | None = ...
) -> float: ...
@overload
def round_up(
    value_ohm: np.ndarray, series: SeriesName | str = ..., tolerance: float | None = ...
) -> np.ndarray: ...
def round_up(
    value_ohm: ArrayLike, series: SeriesName | str = "E24", tolerance: float | None = None
) -> float | np.ndarray:
    """Smallest preferred value ``R`` with ``R * (1 - tol) >= value`` (safe lower bound).

    Use it for a component whose computed value is a minimum, so that it stays above ``value``
    even at the bottom of its tolerance band.

    Parameters
    ----------
    value_ohm : float or array_like
        Computed minimum (ohm, or any unit).
    series : str, optional
        E-series name (default "E24").
    tolerance : float or None, optional
        Fractional tolerance; ``None`` uses the series default, ``0`` a plain round-up.

    Returns
    -------
    float or numpy.ndarray
        As for :func:`round_down`.

    References
    ----------
    IEC 60063, preferred number series for resistors and capacitors.
    """
    name, ints, figures = _significands(series)
    tol = _tolerance(name, tolerance)
    v, valid = _prepare(value_ohm)
    g = _smallest_index(ints, figures, v, 1.0 - tol)
    return _finish(_value_at(ints, figures, g), valid, value_ohm)


@overload
def nearest(
    value_ohm: float,
    series: SeriesName | str = ...,
    metric: Literal["ratio", "absolute"] = ...,
) -> float: ...
@overload
def nearest(
    value_ohm: np.ndarray,
    series: SeriesName | str = ...,
    metric: Literal["ratio", "absolute"] = ...,
) -> np.ndarray: ...
def nearest(
    value_ohm: ArrayLike,
    series: SeriesName | str = "E24",
    metric: Literal["ratio", "absolute"] = "ratio",
) -> float | np.ndarray:
    """Preferred value nearest to ``value`` (no tolerance margin).

    Parameters
    ----------
    value_ohm : float or array_like
        Value to round (ohm, or any unit).
    series : str, optional
        E-series name (default "E24").
    metric : {"ratio", "absolute"}, optional
        ``"ratio"`` (default): smallest ``|log(R / value)|``, the natural distance for a
        geometric series (the split between neighbours is their geometric mean).
        ``"absolute"``: smallest ``|R - value|``. Ties go to the lower value.

    Returns
    -------
    float or numpy.ndarray
        As for :func:`round_down`.
    """
    if metric not in ("ratio", "absolute"):
        raise ValueError(f"metric must be 'ratio' or 'absolute', got {metric!r}")
    _, ints, figures = _significands(series)
    v, valid = _prepare(value_ohm)
    g = _largest_index(ints, figures, v, 1.0)
    lower = _value_at(ints, figures, g)
    upper = _value_at(ints, figures, g + 1)
    # ratio: the split between neighbours is their geometric mean; absolute: arithmetic mean
    take_lower = v * v <= lower * upper if metric == "ratio" else v - lower <= upper - v
    return _finish(np.where(take_lower, lower, upper), valid, value_ohm)


def preferred_values(series: SeriesName | str, lo: float, hi: float) -> np.ndarray:
    """All preferred values of a series in the closed range ``[lo, hi]``, ascending.

    Parameters
    ----------
    series : str
        E-series name.
    lo, hi : float
        Range limits (same unit as the result), ``0 < lo <= hi``, finite.

    Returns
    -------
    numpy.ndarray
        1-D, possibly empty.

    References
    ----------
    IEC 60063, preferred number series for resistors and capacitors.
    """
    _, ints, figures = _significands(series)
    lo_f, hi_f = float(lo), float(hi)
    if not (np.isfinite(lo_f) and np.isfinite(hi_f) and 0.0 < lo_f <= hi_f):
        raise ValueError(f"need finite 0 < lo <= hi, got lo={lo!r}, hi={hi!r}")
    first = int(_smallest_index(ints, figures, np.asarray(lo_f), 1.0))
    last = int(_largest_index(ints, figures, np.asarray(hi_f), 1.0))
    return _value_at(ints, figures, np.arange(first, last + 1, dtype=np.int64))
