"""Harmonic amplitudes and THD of coherently sampled waveforms.

References named beside each check: closed-form Fourier series of finite sums of sinusoids;
the THD definitions of IEC 61000-2-2 (THD_F) and the total-RMS variant THD_R (from memory);
the describing function of a dead zone (nonlinear control texts, e.g. Slotine & Li, Applied
Nonlinear Control, ch. 5, from memory) and python-control's `describing_function`; the Fourier
coefficients of the dead-zone output derived below and cross-checked with scipy's `quad`.
"""

from __future__ import annotations

import math

import control
import numpy as np
import pytest
from scipy.integrate import quad

from partsel.physics import spectrum as sp

# --------------------------------------------------------------------------- synthetic signal

DC = 0.35
# order: (peak amplitude, phase of cos(h*w*t + phase)) -- chosen values
COMPONENTS = {1: (2.0, 0.3), 2: (0.1, -1.1), 3: (0.25, 2.0), 5: (0.04, 0.0), 7: (0.013, -2.5)}


def _synthetic(n_samples: int, n_periods: int) -> np.ndarray:
    theta = 2 * np.pi * n_periods * np.arange(n_samples) / n_samples
    x = np.full(n_samples, DC)
    for h, (a, phi) in COMPONENTS.items():
        x += a * np.cos(h * theta + phi)
    return x


def test_amplitudes_and_phasors_of_known_sum() -> None:
    """Exact amplitudes and phases of a finite sum of sinusoids (closed form)."""
    x = _synthetic(600, 3)
    amp = sp.harmonic_amplitudes(x, 3, 9)
    expected = np.zeros(10)
    expected[0] = DC
    for h, (a, _) in COMPONENTS.items():
        expected[h] = a
    np.testing.assert_allclose(amp, expected, rtol=0, atol=1e-13)
    ph = sp.harmonic_phasors(x, 3, 9)
    for h, (a, phi) in COMPONENTS.items():
        assert ph[h] == pytest.approx(a * np.exp(1j * phi), abs=1e-13)
    # a*sin(w t) = a*cos(w t - pi/2): phasor -1j*a (module's phase convention)
    s = 0.7 * np.sin(2 * np.pi * np.arange(64) / 64)
    assert sp.harmonic_phasors(s, 1, 3)[1] == pytest.approx(-0.7j, abs=1e-14)


def test_negative_dc_is_signed_mean() -> None:
    """Element 0 is the signed mean (definition of the DC component)."""
    x = -1.5 + np.cos(2 * np.pi * np.arange(32) / 32)
    assert sp.harmonic_amplitudes(x, 1, 4)[0] == pytest.approx(-1.5, abs=1e-14)


def test_thd_f_and_thd_r_closed_form() -> None:
    """THD_F = sqrt(sum a_h^2, h>=2)/a_1 (IEC 61000-2-2); THD_R over total RMS (h>=1)."""
    x = _synthetic(600, 3)
    harm2 = sum(a**2 for h, (a, _) in COMPONENTS.items() if h >= 2)
    a1 = COMPONENTS[1][0]
    thd_f = math.sqrt(harm2) / a1
    thd_r = math.sqrt(harm2) / math.sqrt(harm2 + a1**2)
    assert float(sp.thd(x, 3)) == pytest.approx(thd_f, rel=1e-12)
    assert float(sp.thd(x, 3, definition="R")) == pytest.approx(thd_r, rel=1e-12)
    assert thd_r == pytest.approx(thd_f / math.sqrt(1 + thd_f**2), rel=1e-14)
    # truncation at H = 5 leaves out the 7th harmonic
    harm2_5 = harm2 - COMPONENTS[7][0] ** 2
    assert float(sp.thd(x, 3, n_harmonics=5)) == pytest.approx(math.sqrt(harm2_5) / a1, 1e-12)
    assert sp.DEFAULT_HARMONICS == 40


def test_spectrum_db_levels() -> None:
    """dBc = 20*log10(a_h/a_1) (definition); absent harmonics at the floor."""
    x = _synthetic(600, 3)
    db = sp.spectrum_db(x, 3, 8, floor_dbc=-250.0)
    a1 = COMPONENTS[1][0]
    assert db[1] == pytest.approx(0.0, abs=1e-12)
    assert db[0] == pytest.approx(20 * math.log10(DC / a1), abs=1e-9)
    for h, (a, _) in COMPONENTS.items():
        assert db[h] == pytest.approx(20 * math.log10(a / a1), abs=1e-9)
    assert db[4] < -200 and db[6] < -200 and db[8] < -200
    assert db.min() >= -250.0


def test_vectorised_over_leading_axes() -> None:
    """Parts along axis 0 (and more axes) give the same result as one waveform at a time."""
    base = _synthetic(400, 2)
    scale = np.array([[1.0, 0.5, 2.0], [0.1, 3.0, 1.5]])
    shift = np.array([[0.0, 0.2, -0.4], [1.0, 0.0, 0.3]])
    x = scale[..., None] * base + shift[..., None] * base**2
    amp = sp.harmonic_amplitudes(x, 2, 12)
    t = sp.thd(x, 2, n_harmonics=12, definition="R")
    db = sp.spectrum_db(x, 2, 12)
    assert amp.shape == (2, 3, 13) and t.shape == (2, 3) and db.shape == (2, 3, 13)
    for i in range(2):
        for j in range(3):
            np.testing.assert_allclose(amp[i, j], sp.harmonic_amplitudes(x[i, j], 2, 12))
            assert t[i, j] == pytest.approx(float(sp.thd(x[i, j], 2, 12, "R")), rel=1e-12)


def test_nyquist_limit_and_bad_arguments() -> None:
    """Harmonic h needs bin h*n_periods below N/2 (sampling theorem)."""
    x = np.zeros(20)
    assert sp.max_harmonic(20, 1) == 9
    assert sp.max_harmonic(21, 1) == 10
    assert sp.max_harmonic(2000, 3) == 333
    sp.harmonic_amplitudes(x, 1, 9)
    with pytest.raises(ValueError, match="Nyquist"):
        sp.harmonic_amplitudes(x, 1, 10)
    with pytest.raises(ValueError, match="Nyquist"):
        sp.thd(np.zeros(100), 3)  # 40 harmonics over 3 periods need > 240 samples
    with pytest.raises(ValueError, match="n_periods"):
        sp.harmonic_amplitudes(x, 0, 2)
    with pytest.raises(ValueError, match="definition"):
        sp.thd(_synthetic(600, 3), 3, definition="X")  # type: ignore[arg-type]


def test_thd_without_fundamental() -> None:
    """No fundamental: THD_F unbounded, THD_R -> 1 (definitions); all zero: nan."""
    n = np.arange(128)
    only_h2 = np.cos(2 * 2 * np.pi * n / 128)  # fundamental is FFT round-off only
    assert float(sp.thd(only_h2, 1)) > 1e12
    assert float(sp.thd(only_h2, 1, definition="R")) == pytest.approx(1.0, abs=1e-12)
    assert np.isnan(sp.thd(np.zeros((2, 128)), 1)).all()


# --------------------------------------------------------------------------- dead zone
#
# Dead zone of half-width d: f(u) = 0 for |u| < d, u - d*sign(u) outside. For u = A*sin(theta),
# A > d, beta = asin(d/A), f is odd and half-wave symmetric, so only odd sine terms b_n appear:
#   b_n = (2/pi) * int_0^pi f(A sin t) sin(n t) dt
#       = (4/pi) * int_beta^(pi/2) (A sin t - d) sin(n t) dt
#   b_1 = A * (1 - (2/pi) * (beta + (d/A) * cos(beta)))                 (describing function)
#   b_n = (4/pi) * (d*cos(n*beta)/(n*(n^2-1)) - A*cos(beta)*sin(n*beta)/(n^2-1)),  n = 3, 5, ...
# (integrating sin(t)sin(nt) = (cos((n-1)t) - cos((n+1)t))/2 and sin(nt); terms at pi/2 vanish
# for odd n). The mean square of the output follows from int_beta^(pi/2) (A sin t - d)^2 dt:
#   <f^2> = (2/pi) * (A^2*((pi/2-beta)/2 + sin(2 beta)/4) - 2*A*d*cos(beta) + d^2*(pi/2-beta)).

A_V = 1.0
N_SAMPLES = 2**14


def _dead_zone(u: np.ndarray, d: float) -> np.ndarray:
    return np.where(np.abs(u) < d, 0.0, u - d * np.sign(u))


def _b1(a: float, d: float) -> float:
    r = d / a
    return a * (1 - (2 / math.pi) * (math.asin(r) + r * math.sqrt(1 - r * r)))


def _bn(a: float, d: float, n: np.ndarray) -> np.ndarray:
    beta = math.asin(d / a)
    return (4 / math.pi) * (
        d * np.cos(n * beta) / (n * (n * n - 1))
        - a * math.cos(beta) * np.sin(n * beta) / (n * n - 1)
    )


def _mean_square(a: float, d: float) -> float:
    beta = math.asin(d / a)
    rest = math.pi / 2 - beta
    return (2 / math.pi) * (
        a * a * (rest / 2 + math.sin(2 * beta) / 4) - 2 * a * d * math.cos(beta) + d * d * rest
    )


def _thd_analytic(a: float, d: float, h_max: int) -> float:
    n = np.arange(3, h_max + 1, 2, dtype=float)
    return math.sqrt(float(np.sum(_bn(a, d, n) ** 2))) / _b1(a, d)


def _thd_infinite(a: float, d: float) -> float:
    b1 = _b1(a, d)
    return math.sqrt(_mean_square(a, d) - b1 * b1 / 2) / (b1 / math.sqrt(2))


def _envelope(a: float, d: float) -> float:
    """C with |b_n| <= C/n^2 for odd n >= 3, from the closed form (h^2/(h^2-1) <= 9/8)."""
    return 9 / (2 * math.pi) * (a * math.cos(math.asin(d / a)) + d / 3)


def _alias_atol(d: float, samples_per_period: int) -> float:
    """Bound of the aliasing error in one FFT bin h << M: sum_k |b_(kM+-h)| <= 4 C / M^2."""
    return 4 * _envelope(A_V, d) / samples_per_period**2


def _dead_zone_wave(d: float, n_periods: int = 1) -> np.ndarray:
    theta = 2 * np.pi * n_periods * np.arange(N_SAMPLES) / N_SAMPLES
    return _dead_zone(A_V * np.sin(theta), d)


DEAD_ZONES = [0.01, 0.05, 0.3, 0.7]


@pytest.mark.parametrize("d", DEAD_ZONES)
def test_closed_form_coefficients_against_quadrature(d: float) -> None:
    """The derived b_n against scipy.integrate.quad of the Fourier integral (and <f^2>)."""
    beta = math.asin(d / A_V)

    def integrand(t: float, n: int) -> float:
        return float(_dead_zone(np.asarray(A_V * math.sin(t)), d)) * math.sin(n * t)

    for n in (1, 3, 5, 9, 21, 41):
        ref = (2 / math.pi) * quad(integrand, 0, math.pi, args=(n,), points=[beta, math.pi - beta])[
            0
        ]
        ours = _b1(A_V, d) if n == 1 else float(_bn(A_V, d, np.array(float(n))))
        assert ours == pytest.approx(ref, abs=1e-11)
    ms = quad(
        lambda t: float(_dead_zone(np.asarray(A_V * math.sin(t)), d)) ** 2,
        0,
        2 * math.pi,
        points=[beta, math.pi - beta, math.pi + beta, 2 * math.pi - beta],
    )[0] / (2 * math.pi)
    assert _mean_square(A_V, d) == pytest.approx(ms, rel=1e-10)


@pytest.mark.parametrize("d", DEAD_ZONES)
def test_dead_zone_fundamental_is_describing_function(d: float) -> None:
    """Fundamental = A*N(A), N(A) = 1 - (2/pi)(asin(d/A) + (d/A)sqrt(1-(d/A)^2)) (Slotine & Li,
    ch. 5, from memory), and python-control's describing_function of u - saturation(u)."""
    x = _dead_zone_wave(d)
    phasor = sp.harmonic_phasors(x, 1, 3)[1]
    n_ours = 1j * phasor / A_V  # input A*sin: describing function = b_1/A + j*a_1/A
    r = d / A_V
    n_formula = 1 - (2 / math.pi) * (math.asin(r) + r * math.sqrt(1 - r * r))
    assert n_ours.real == pytest.approx(n_formula, rel=1e-7)
    assert abs(n_ours.imag) < 1e-12  # static odd nonlinearity: no phase shift

    sat = control.saturation_nonlinearity(d)
    n_ctrl_analytic = 1 - control.describing_function(sat, A_V)  # dead zone = u - sat(u)
    n_ctrl_numeric = control.describing_function(lambda u: u - sat(u), A_V, num_points=4000)
    assert n_ours.real == pytest.approx(np.asarray(n_ctrl_analytic).real.item(), rel=1e-7)
    # python-control's rectangle rule has an O(1/num_points^2) error at the kinks
    assert n_ours == pytest.approx(np.asarray(n_ctrl_numeric).item(), abs=1e-6)


@pytest.mark.parametrize("d", DEAD_ZONES)
@pytest.mark.parametrize("n_periods", [1, 2])
def test_dead_zone_harmonics_match_fourier_series(d: float, n_periods: int) -> None:
    """Odd harmonics = |b_n| (derived closed form); even harmonics and DC vanish (symmetry)."""
    h_max = 201
    x = _dead_zone_wave(d, n_periods)
    amp = sp.harmonic_amplitudes(x, n_periods, h_max)
    odd = np.arange(3, h_max + 1, 2)
    atol = _alias_atol(d, N_SAMPLES // n_periods)
    np.testing.assert_allclose(amp[odd], np.abs(_bn(A_V, d, odd.astype(float))), atol=atol)
    assert amp[1] == pytest.approx(_b1(A_V, d), abs=atol)
    np.testing.assert_allclose(amp[0 : h_max + 1 : 2], 0.0, atol=1e-12)


@pytest.mark.parametrize("d", DEAD_ZONES)
def test_dead_zone_thd_against_series(d: float) -> None:
    """THD_F and THD_R of the FFT against the analytic series summed to the same H."""
    x = _dead_zone_wave(d)
    b1 = _b1(A_V, d)
    for h in (9, sp.DEFAULT_HARMONICS, 400):
        ref = _thd_analytic(A_V, d, h)
        # each of the ~h/2 odd bins may carry the aliasing error; the fundamental too
        atol = (
            _alias_atol(d, N_SAMPLES) * (math.sqrt(h / 2) + ref) / (b1 - _alias_atol(d, N_SAMPLES))
        )
        assert float(sp.thd(x, 1, n_harmonics=h)) == pytest.approx(ref, abs=atol)
        ref_r = ref / math.sqrt(1 + ref * ref)
        assert float(sp.thd(x, 1, n_harmonics=h, definition="R")) == pytest.approx(ref_r, abs=atol)


@pytest.mark.parametrize("d", DEAD_ZONES)
def test_dead_zone_thd_truncation(d: float) -> None:
    """Truncated THD against the full THD from Parseval's theorem (closed form <f^2>).

    The full sum lies between THD_F,H and sqrt(THD_F,H^2 + bound^2), with the bound from
    |b_n| <= 9/(2 pi) (A cos(beta) + d/3) / n^2 for n >= 3 (from the closed form).
    """
    full = _thd_infinite(A_V, d)
    assert _thd_analytic(A_V, d, 200_001) == pytest.approx(full, rel=1e-9)
    envelope = _envelope(A_V, d)
    n = np.arange(3, 100_001, 2, dtype=float)
    assert np.all(np.abs(_bn(A_V, d, n)) * n**2 <= envelope * (1 + 1e-12))

    for h in (sp.DEFAULT_HARMONICS, 400, sp.max_harmonic(N_SAMPLES, 1)):
        truncated = _thd_analytic(A_V, d, h)
        bound = float(sp.thd_truncation_bound(envelope, _b1(A_V, d), h))
        assert truncated < full <= math.hypot(truncated, bound) * (1 + 1e-12)
    # the truncation effect: with H = 40 a small dead zone loses a visible part of its THD
    x = _dead_zone_wave(d)
    thd_40 = float(sp.thd(x, 1))
    if d <= 0.01:
        assert thd_40 < 0.99 * full
    # up to Nyquist the FFT recovers nearly all of it (the rest is aliasing and the far tail)
    assert float(sp.thd(x, 1, n_harmonics=sp.max_harmonic(N_SAMPLES, 1))) == pytest.approx(
        full, rel=1e-4
    )


def test_documented_truncation_figures() -> None:
    """The H = 40 shortfalls stated in the module docstring, from the analytic series."""
    for d, shortfall in ((0.001, 0.026), (0.01, 0.017), (0.1, 0.0005)):
        ratio = _thd_analytic(A_V, d, sp.DEFAULT_HARMONICS) / _thd_infinite(A_V, d)
        assert 1 - ratio == pytest.approx(shortfall, rel=0.1)


def test_truncation_bound_on_power_law() -> None:
    """sum_{h>H} h^-2p <= H^(1-2p)/(2p-1) (integral test); tight within 10 % at H = 40."""
    h = np.arange(41, 2_000_001, dtype=float)
    for p in (1.0, 2.0, 3.0):
        tail = math.sqrt(float(np.sum(h ** (-2 * p))))
        bound = float(sp.thd_truncation_bound(1.0, 1.0, 40, decay_exponent=p))
        assert tail <= bound
        assert tail >= 0.9 * bound
    b = sp.thd_truncation_bound(np.array([1.0, 2.0]), np.array([2.0, 2.0]), 40)
    np.testing.assert_allclose(b, np.array([0.5, 1.0]) * float(sp.thd_truncation_bound(1, 1, 40)))
    with pytest.raises(ValueError, match="decay_exponent"):
        sp.thd_truncation_bound(1.0, 1.0, 40, decay_exponent=0.5)


def test_dead_zone_parts_along_axis_0() -> None:
    """Several dead zones at once (parts along axis 0) match the analytic THD each."""
    x = np.stack([_dead_zone_wave(d) for d in DEAD_ZONES])
    t = sp.thd(x, 1)
    assert t.shape == (len(DEAD_ZONES),)
    ref = [_thd_analytic(A_V, d, sp.DEFAULT_HARMONICS) for d in DEAD_ZONES]
    np.testing.assert_allclose(t, ref, rtol=2e-6)
