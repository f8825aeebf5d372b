"""Statistics of the spread analysis, numpy and the standard library only: the normal
distribution's quantiles, the regularized incomplete beta function and its inverse, and the two
confidence intervals of a yield (a binomial proportion).

References
----------
* E. B. Wilson, "Probable inference, the law of succession, and statistical inference",
  *Journal of the American Statistical Association* 22 (1927): the score interval.
* C. J. Clopper and E. S. Pearson, "The use of confidence or fiducial limits illustrated in the
  case of the binomial", *Biometrika* 26 (1934): the exact interval, from beta quantiles.
* P. J. Acklam's rational approximation of the normal quantile (relative error below 1.2e-9),
  refined by one Halley step on ``math.erfc`` (both from memory of the published algorithm).
* The continued fraction of the incomplete beta function (DLMF 8.17.22), evaluated by the
  modified Lentz method (W. H. Press et al., *Numerical Recipes*, section 6.4; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

Interval = Literal["wilson", "clopper-pearson"]
#: The intervals partsel computes, by name.
INTERVALS: tuple[Interval, ...] = ("wilson", "clopper-pearson")

_A = (
    -3.969683028665376e01,
    2.209460984245205e02,
    -2.759285104469687e02,
    1.383577518672690e02,
    -3.066479806614716e01,
    2.506628277459239e00,
)
_B = (
    -5.447609879822406e01,
    1.615858368580409e02,
    -1.556989798598866e02,
    6.680131188771972e01,
    -1.328068155288572e01,
)
_C = (
    -7.784894002430293e-03,
    -3.223964580411365e-01,
    -2.400758277161838e00,
    -2.549732539343734e00,
    4.374664141464968e00,
    2.938163982698783e00,
)
_D = (7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e00,
      3.754408661907416e00)  # fmt: skip


def normal_cdf(x: float) -> float:
    """The standard normal distribution function Φ(x)."""
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


def normal_ppf(p: float) -> float:
    """The standard normal quantile Φ⁻¹(p), 0 < p < 1 (±inf at 0 and 1)."""
    if p <= 0.0:
        return -math.inf
    if p >= 1.0:
        return math.inf
    lo = 0.02425
    if p < lo:
        q = math.sqrt(-2.0 * math.log(p))
        x = (((((_C[0] * q + _C[1]) * q + _C[2]) * q + _C[3]) * q + _C[4]) * q + _C[5]) / (
            (((_D[0] * q + _D[1]) * q + _D[2]) * q + _D[3]) * q + 1.0
        )
    elif p <= 1.0 - lo:
        q = p - 0.5
        r = q * q
        x = (
            (((((_A[0] * r + _A[1]) * r + _A[2]) * r + _A[3]) * r + _A[4]) * r + _A[5])
            * q
            / (((((_B[0] * r + _B[1]) * r + _B[2]) * r + _B[3]) * r + _B[4]) * r + 1.0)
        )
    else:
        q = math.sqrt(-2.0 * math.log1p(-p))
        x = -(((((_C[0] * q + _C[1]) * q + _C[2]) * q + _C[3]) * q + _C[4]) * q + _C[5]) / (
            (((_D[0] * q + _D[1]) * q + _D[2]) * q + _D[3]) * q + 1.0
        )
    # one Halley step on the exact distribution function (its upper tail above the median,
    # where 1 - p is exact and the tail is computed without cancellation)
    e = normal_cdf(x) - p if p <= 0.5 else (1.0 - p) - 0.5 * math.erfc(x / math.sqrt(2.0))
    u = e * math.sqrt(2.0 * math.pi) * math.exp(0.5 * x * x)
    return x - u / (1.0 + 0.5 * x * u)


def _beta_cf(a: float, b: float, x: float) -> float:
    """Continued fraction of the incomplete beta function (modified Lentz)."""
    tiny = 1e-300
    qab, qap, qam = a + b, a + 1.0, a - 1.0
    c, d = 1.0, 1.0 - qab * x / qap
    d = 1.0 / (d if abs(d) > tiny else tiny)
    h = d
    for m in range(1, 10_000):
        m2 = 2 * m
        aa = m * (b - m) * x / ((qam + m2) * (a + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > tiny else tiny)
        c = 1.0 + aa / c
        c = c if abs(c) > tiny else tiny
        h *= d * c
        aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2))
        d = 1.0 + aa * d
        d = 1.0 / (d if abs(d) > tiny else tiny)
        c = 1.0 + aa / c
        c = c if abs(c) > tiny else tiny
        delta = d * c
        h *= delta
        if abs(delta - 1.0) < 1e-15:
            break
    return h


def beta_cdf(x: float, a: float, b: float) -> float:
    """The regularized incomplete beta function I_x(a, b), a, b > 0."""
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    ln_front = (
        math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b) + a * math.log(x) + b * math.log1p(-x)
    )
    front = math.exp(ln_front)
    if x < (a + 1.0) / (a + b + 2.0):
        return front * _beta_cf(a, b, x) / a
    return 1.0 - front * _beta_cf(b, a, 1.0 - x) / b


def beta_ppf(p: float, a: float, b: float) -> float:
    """The quantile of the beta distribution B(a, b): x with I_x(a, b) = p (bisection to the
    last bit; the distribution function is monotonic)."""
    lo, hi = 0.0, 1.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if mid in (lo, hi):
            break
        if beta_cdf(mid, a, b) < p:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


@dataclass(frozen=True)
class YieldInterval:
    """A yield ``k / n`` with its confidence interval."""

    passed: int
    samples: int
    low: float
    high: float
    method: Interval
    confidence: float

    @property
    def value(self) -> float:
        """The estimate ``k / n`` (NaN without samples)."""
        return self.passed / self.samples if self.samples else math.nan


def wilson(passed: int, samples: int, confidence: float = 0.95) -> YieldInterval:
    """Wilson's score interval of a proportion (Wilson 1927)."""
    n, k = samples, passed
    if n <= 0:
        return YieldInterval(k, n, math.nan, math.nan, "wilson", confidence)
    z = normal_ppf(0.5 + 0.5 * confidence)
    p = k / n
    den = 1.0 + z * z / n
    centre = (p + z * z / (2.0 * n)) / den
    half = z * math.sqrt(p * (1.0 - p) / n + z * z / (4.0 * n * n)) / den
    # the ends are exactly 0 at k = 0 and 1 at k = n (rounding would leave 1e-19)
    low = 0.0 if k == 0 else max(0.0, centre - half)
    high = 1.0 if k == n else min(1.0, centre + half)
    return YieldInterval(k, n, low, high, "wilson", confidence)


def clopper_pearson(passed: int, samples: int, confidence: float = 0.95) -> YieldInterval:
    """The exact (Clopper-Pearson) interval of a proportion, from beta quantiles."""
    n, k = samples, passed
    if n <= 0:
        return YieldInterval(k, n, math.nan, math.nan, "clopper-pearson", confidence)
    alpha = 1.0 - confidence
    low = 0.0 if k == 0 else beta_ppf(0.5 * alpha, k, n - k + 1)
    high = 1.0 if k == n else beta_ppf(1.0 - 0.5 * alpha, k + 1, n - k)
    return YieldInterval(k, n, low, high, "clopper-pearson", confidence)


def interval(
    passed: int, samples: int, method: Interval = "wilson", confidence: float = 0.95
) -> YieldInterval:
    """The confidence interval ``method`` of a yield of ``passed`` out of ``samples``."""
    if method == "wilson":
        return wilson(passed, samples, confidence)
    if method == "clopper-pearson":
        return clopper_pearson(passed, samples, confidence)
    raise ValueError(f"unknown interval {method!r}; use {' or '.join(INTERVALS)}")
