"""The statistics of the spread analysis against scipy (a general-purpose reference library):
normal and beta quantiles, the Wilson and Clopper-Pearson intervals, and the distributions the
spread model draws from (means, standard deviations and quantiles within their sampling error;
a Kolmogorov-Smirnov test against the exact distribution function).

Sampling errors: a mean of n draws is within 4 σ/√n (the chance of a larger deviation of a
correct sampler is about 6e-5), a standard deviation within 4 σ/√(2n) (normal approximation),
an empirical distribution function within 4 √(q (1 - q) / n) at quantile q. Fixed seeds, so a
run is repeatable; the bounds are not fitted to the draws.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from partsel.solver.spread.model import NORMAL, UNIFORM, Spread, tolerance_spread
from partsel.solver.spread.stats import (
    beta_cdf,
    beta_ppf,
    clopper_pearson,
    normal_cdf,
    normal_ppf,
    wilson,
)
from partsel.units import parse_toleranced


@pytest.mark.parametrize("p", [1e-12, 1e-6, 0.001, 0.02425, 0.1, 0.3, 0.5, 0.77, 0.975, 0.999999])
def test_normal_quantile_and_distribution(p: float) -> None:
    assert normal_ppf(p) == pytest.approx(stats.norm.ppf(p), rel=1e-12, abs=1e-13)
    x = stats.norm.ppf(p)
    assert normal_cdf(x) == pytest.approx(p, rel=1e-12)


@pytest.mark.parametrize(
    ("a", "b"), [(1.0, 1.0), (0.5, 2.0), (3.0, 998.0), (9990.0, 11.0), (2.0, 7.5)]
)
def test_beta_against_scipy(a: float, b: float) -> None:
    for x in (1e-4, 0.01, 0.3, 0.5, 0.9, 0.999):
        assert beta_cdf(x, a, b) == pytest.approx(stats.beta.cdf(x, a, b), rel=1e-9, abs=1e-14)
    for q in (0.025, 0.5, 0.975):
        assert beta_ppf(q, a, b) == pytest.approx(stats.beta.ppf(q, a, b), rel=1e-9, abs=1e-14)


@pytest.mark.parametrize(("k", "n"), [(0, 50), (3, 100), (97, 100), (100, 100), (9990, 10_000)])
@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
def test_intervals_against_scipy(k: int, n: int, confidence: float) -> None:
    """Wilson's score interval and the exact Clopper-Pearson interval, as scipy computes
    them (scipy.stats.binomtest(...).proportion_ci)."""
    ref_w = stats.binomtest(k, n).proportion_ci(confidence, method="wilson")
    ref_e = stats.binomtest(k, n).proportion_ci(confidence, method="exact")
    w, e = wilson(k, n, confidence), clopper_pearson(k, n, confidence)
    assert (w.low, w.high) == pytest.approx((ref_w.low, ref_w.high), rel=1e-9, abs=1e-12)
    assert (e.low, e.high) == pytest.approx((ref_e.low, ref_e.high), rel=1e-9, abs=1e-12)
    assert w.value == e.value == k / n


def _spread(kind: int, centre: float, s1: float, s2: float, lo: float, hi: float) -> Spread:
    one = lambda v: np.array([[v]])  # noqa: E731
    return Spread("x", np.array([kind], np.int8), one(centre), one(s1), one(s2), one(lo), one(hi))


def _draw(s: Spread, n: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return s.draw(np.zeros(n, dtype=int), rng.random(n), rng.standard_normal(n))[:, 0]


N = 200_000


def _within_sampling_error(x: np.ndarray, mean: float, sd: float, ppf) -> None:
    n = x.size
    assert abs(x.mean() - mean) < 4 * sd / math.sqrt(n)
    assert abs(x.std() / sd - 1.0) < 4 / math.sqrt(2 * n)
    for q in (0.00135, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99865):
        f = float(np.mean(x <= ppf(q)))
        assert abs(f - q) < 4 * math.sqrt(q * (1 - q) / n) + 1e-9


def test_symmetric_normal_spec_is_scipy_norm() -> None:
    """min / typ / max = 30 / 50 / 70 uA: a normal with the limits at ±3σ."""
    s = _spread(NORMAL, 50e-6, 20e-6 / 3, 20e-6 / 3, 30e-6, 70e-6)
    x = _draw(s, N, 1)
    ref = stats.norm(50e-6, 20e-6 / 3)
    _within_sampling_error(x, ref.mean(), ref.std(), ref.ppf)
    assert stats.kstest(x, ref.cdf).pvalue > 1e-4


def test_split_normal_spec() -> None:
    """min / typ / max = 30 / 50 / 80 uA: split at typ, the lower half of a normal with σ 20/3
    below and the upper half of one with σ 30/3 above, each with probability 1/2 (the model's
    rule): an equal mixture of two half-normals (scipy.stats.halfnorm), mean
    μ + (σ2 - σ1)/√(2π), second moment about μ (σ1² + σ2²)/2, median μ, and min and max at
    the normal quantiles Φ(∓3)."""
    mu, s1, s2 = 50e-6, 20e-6 / 3, 30e-6 / 3
    s = _spread(NORMAL, mu, s1, s2, 30e-6, 80e-6)
    x = _draw(s, N, 2)
    lower, upper = stats.halfnorm(scale=s1), stats.halfnorm(scale=s2)
    mean = mu + 0.5 * (upper.mean() - lower.mean())
    sd = math.sqrt(0.5 * (s1**2 + s2**2) - (mean - mu) ** 2)
    assert mean == pytest.approx(mu + (s2 - s1) / math.sqrt(2 * math.pi), rel=1e-12)

    def cdf(v: np.ndarray) -> np.ndarray:
        v = np.asarray(v, dtype=float)
        return np.where(v < mu, 0.5 * lower.sf(mu - v), 0.5 + 0.5 * upper.cdf(v - mu))

    def ppf(q: float) -> float:
        return mu - lower.isf(2 * q) if q < 0.5 else mu + upper.ppf(2 * q - 1)

    _within_sampling_error(x, mean, sd, ppf)
    assert stats.kstest(x, cdf).pvalue > 1e-4
    p = stats.norm.cdf(-3)
    assert ppf(p) == pytest.approx(30e-6, rel=1e-9) and ppf(1 - p) == pytest.approx(80e-6)


def test_min_max_only_is_uniform() -> None:
    s = _spread(UNIFORM, 2.0, 0, 0, 1.0, 3.0)
    x = _draw(s, N, 3)
    ref = stats.uniform(1.0, 2.0)
    _within_sampling_error(x, ref.mean(), ref.std(), ref.ppf)
    assert stats.kstest(x, ref.cdf).pvalue > 1e-4


def test_folded_magnitude() -> None:
    """A magnitude (offset typ 2 mV, max 7 mV: normal with σ = 5/3 mV) is folded at zero:
    scipy's folded normal foldnorm(μ/σ, scale=σ)."""
    mu, sd = 2e-3, 5e-3 / 3
    s = _spread(NORMAL, mu, sd, sd, 0.0, 7e-3)
    s = Spread(s.key, s.kind, s.centre, s.sigma_low, s.sigma_high, s.low, s.high, fold=True)
    x = _draw(s, N, 4)
    ref = stats.foldnorm(mu / sd, scale=sd)
    _within_sampling_error(x, ref.mean(), ref.std(), ref.ppf)


@pytest.mark.parametrize(
    ("text", "ref"),
    [
        ("2 kohm ±10 %", stats.uniform(1800.0, 400.0)),
        ("10 uF -20/+80 %", stats.uniform(8e-6, 10e-6)),
        ("2 kohm ±3 % 3σ", stats.norm(2000.0, 20.0)),
    ],
)
def test_design_tolerances(text: str, ref: object) -> None:
    """A tolerance is uniform between its ends, or normal with its ends at kσ."""
    dim = "capacitance" if "uF" in text else "resistance"
    s = tolerance_spread("load/x", parse_toleranced(text, dim))
    x = _draw(s, N, 5)
    _within_sampling_error(x, ref.mean(), ref.std(), ref.ppf)  # type: ignore[attr-defined]
    assert stats.kstest(x, ref.cdf).pvalue > 1e-4  # type: ignore[attr-defined]
