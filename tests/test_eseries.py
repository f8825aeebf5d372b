"""IEC 60063 preferred-number series and safe-direction rounding.

References: IEC 60063 (E-series tables); the `eseries` package (independent implementation of
the same tables, used as the reference for the tables, ranges and neighbours).
"""

from __future__ import annotations

import math

import eseries as es
import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from partsel.physics import eseries as pe

KEYS = {
    "E6": es.E6,
    "E12": es.E12,
    "E24": es.E24,
    "E48": es.E48,
    "E96": es.E96,
    "E192": es.E192,
}
series_names = st.sampled_from(list(KEYS))
tolerances = st.sampled_from([None, 0.0, 0.005, 0.01, 0.05, 0.1, 0.2])
values = st.floats(min_value=1e-3, max_value=1e9, allow_nan=False, allow_infinity=False)


def _tol(name: str, tolerance: float | None) -> float:
    return es.tolerance(KEYS[name]) if tolerance is None else tolerance


@pytest.mark.parametrize("name", list(KEYS))
def test_tables_equal_eseries_package(name: str) -> None:
    """IEC 60063 tables, checked against the `eseries` package's lists."""
    ref = es.series(KEYS[name])  # integer significands, 2 figures to E24, 3 above
    scale = 10 ** (len(str(ref[0])) - 1)
    ours = pe.SERIES[name]
    assert len(ours) == len(ref) == int(name[1:])
    assert [round(m * scale) for m in ours] == list(ref)
    assert list(ours) == sorted(ours)
    assert pe.series_values(name.lower()) == ours


def test_e24_historic_values_differ_from_geometric_series() -> None:
    """IEC 60063 E24 keeps historic values; the rest is round(10**(i/24), 1) (arithmetic).

    Of the values named as historic in practice, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2 are
    off the rounded geometric series; 5.1, 5.6, 6.2, 6.8 and 9.1 happen to lie on it.
    """
    geometric = [round(10 ** (i / 24), 1) for i in range(24)]
    differing = {m for m, g in zip(pe.E24, geometric, strict=True) if abs(m - g) > 1e-9}
    assert differing == {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}
    for m in (2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 8.2, 9.1):
        assert m in pe.E24


def test_e192_exception_920() -> None:
    """IEC 60063 E192 has 9.20 where the rounded geometric series gives 9.19."""
    assert round(10 ** (185 / 192), 2) == 9.19
    assert 9.20 in pe.E192 and 9.19 not in pe.E192
    geometric = [round(10 ** (i / 192), 2) for i in range(192)]
    assert [m for m, g in zip(pe.E192, geometric, strict=True) if abs(m - g) > 1e-9] == [9.2]


@pytest.mark.parametrize("name", list(KEYS))
def test_tolerance_matches_eseries_package(name: str) -> None:
    """Usual tolerance per series (common practice), as in the `eseries` package."""
    assert pe.SERIES_TOLERANCE[name] == es.tolerance(KEYS[name])


@pytest.mark.parametrize(
    ("name", "lo", "hi"),
    [
        ("E6", 1.0, 1e6),
        ("E12", 0.9, 120.0),
        ("E24", 1.0, 1e6),
        ("E24", 2.05, 2.05),
        ("E48", 0.1, 1e4),
        ("E96", 9.99e3, 1.001e5),
        ("E192", 1e-12, 1e-9),
    ],
)
def test_preferred_values_match_eseries_erange(name: str, lo: float, hi: float) -> None:
    """All values in [lo, hi] across decades, as `eseries.erange` lists them."""
    ours = pe.preferred_values(name, lo, hi)
    ref = list(es.erange(KEYS[name], lo, hi))
    np.testing.assert_allclose(ours, ref, rtol=1e-13, atol=0)
    assert len(ours) == len(ref)


def test_preferred_values_decade_edges_exact() -> None:
    """Decimal values come out as the nearest float: 1 ohm, 10 kohm, 1 Mohm, 4.7 kohm."""
    v = pe.preferred_values("E24", 1.0, 1e6)
    assert v[0] == 1.0 and v[-1] == 1e6
    assert 4700.0 in v and 10000.0 in v and 0.91 in pe.preferred_values("E24", 0.5, 1.0)
    with pytest.raises(ValueError, match="lo <= hi"):
        pe.preferred_values("E24", 10.0, 1.0)


@given(v=values, name=series_names, tolerance=tolerances)
def test_round_down_properties(v: float, name: str, tolerance: float | None) -> None:
    """Largest preferred R with R*(1+tol) <= v; neighbours from the `eseries` package."""
    t = _tol(name, tolerance)
    r = pe.round_down(v, name, tolerance)
    assert isinstance(r, float)
    assert r * (1 + t) <= v
    assert r <= v / (1 + t) * (1 + 1e-12)
    assert es.find_nearest(KEYS[name], r) == pytest.approx(r, rel=1e-13)  # in the series
    above = es.find_greater_than(KEYS[name], r * (1 + 1e-12))
    assert above * (1 + t) > v  # the next preferred value would violate the bound


@given(v=values, name=series_names, tolerance=tolerances)
def test_round_up_properties(v: float, name: str, tolerance: float | None) -> None:
    """Smallest preferred R with R*(1-tol) >= v; neighbours from the `eseries` package."""
    t = _tol(name, tolerance)
    r = pe.round_up(v, name, tolerance)
    assert r * (1 - t) >= v
    assert es.find_nearest(KEYS[name], r) == pytest.approx(r, rel=1e-13)
    below = es.find_less_than(KEYS[name], r * (1 - 1e-12))
    assert below * (1 - t) < v


@given(v=values, name=series_names)
def test_plain_rounding_matches_eseries(v: float, name: str) -> None:
    """tolerance=0 is a plain round down/up: `eseries.find_less/greater_than_or_equal`."""
    key = KEYS[name]
    assert pe.round_down(v, name, 0) == pytest.approx(es.find_less_than_or_equal(key, v), 1e-13)
    assert pe.round_up(v, name, 0) == pytest.approx(es.find_greater_than_or_equal(key, v), 1e-13)


@given(v=values, name=series_names)
def test_nearest(v: float, name: str) -> None:
    """Absolute metric as `eseries.find_nearest`; ratio metric: closest in log distance."""
    key = KEYS[name]
    assert pe.nearest(v, name, metric="absolute") == pytest.approx(
        es.find_nearest(key, v), rel=1e-13
    )
    r = pe.nearest(v, name)
    lower = es.find_less_than_or_equal(key, v)
    upper = es.find_greater_than_or_equal(key, v)
    best = min(abs(math.log(lower / v)), abs(math.log(upper / v)))
    assert abs(math.log(r / v)) <= best + 1e-12


def test_decade_handling() -> None:
    """Decade edges (IEC 60063 E24, 5 % default tolerance; arithmetic on the definition)."""
    assert pe.round_down(9.99e3, "E24", 0) == 9.1e3
    assert pe.round_down(9.99e3, "E24") == 9.1e3  # 10k * 1.05 > 9.99k
    assert pe.round_down(10e3, "E24", 0) == 10e3
    assert pe.round_down(10e3, "E24") == 9.1e3  # 10k at +5 % exceeds 10k
    assert pe.round_down(10.5e3, "E24") == 10e3  # 10k * 1.05 == 10.5k: equality allowed
    assert pe.round_down(1.0, "E24", 0) == 1.0
    assert pe.round_down(1.0, "E24") == 0.91  # wraps to the decade below
    assert pe.round_up(1.0, "E24", 0) == 1.0
    assert pe.round_up(0.999, "E24", 0) == 1.0
    assert pe.round_down(1e6, "E24", 0) == 1e6
    assert pe.round_up(1e6, "E24") == 1.1e6  # 1.0M * 0.95 < 1M
    assert pe.round_up(9.5e5, "E24") == 1e6  # 1.0M * 0.95 == 950k
    assert pe.round_down(9.2, "E192", 0) == 9.2
    assert pe.nearest(9.54e3, "E24") == 10e3  # above sqrt(9.1 * 10) = 9.539
    assert pe.nearest(9.53e3, "E24") == 9.1e3


def test_vectorised_and_invalid_values() -> None:
    """Arrays keep their shape; nan, inf, zero and negative give nan (module contract)."""
    v = np.array([[9.99e3, np.nan, -5.0], [0.0, np.inf, 1e6]])
    r = pe.round_down(v, "E24", 0)
    assert r.shape == v.shape
    np.testing.assert_array_equal(r, [[9.1e3, np.nan, np.nan], [np.nan, np.nan, 1e6]])
    u = pe.round_up(v, "E12")
    assert np.isnan(u).tolist() == [[False, True, True], [True, True, False]]
    assert math.isnan(pe.nearest(float("nan"), "E6"))
    rng = np.random.default_rng(7)
    w = 10 ** rng.uniform(-2, 8, size=500)
    scalar = [pe.round_down(float(x), "E96") for x in w]
    np.testing.assert_array_equal(pe.round_down(w, "E96"), scalar)


def test_friendly_errors() -> None:
    """Unknown series names list the valid ones; a tolerance must be a fraction in [0, 1)."""
    with pytest.raises(ValueError, match=r"E7.*E6, E12, E24, E48, E96, E192"):
        pe.round_down(1e3, "E7")
    with pytest.raises(ValueError, match="valid series"):
        pe.preferred_values("R10", 1.0, 10.0)
    with pytest.raises(ValueError, match="tolerance"):
        pe.round_down(1e3, "E24", 1.5)
    with pytest.raises(ValueError, match="metric"):
        pe.nearest(1e3, "E24", metric="linear")  # type: ignore[arg-type]
