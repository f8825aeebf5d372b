"""The harmonic series of partsel.physics.distortion against numerical Fourier transforms, and
the closed form's clipping and biased-stage figures against them.

References named beside each check: the Fourier series of ln(1 + c cos t) (Gradshteyn and
Ryzhik, series 1.514, from memory); the clipped sine as a sine minus cosine-cap pulses (the
conduction-angle series of tuned power-amplifier texts); slew-induced distortion of a
differential input stage (W. G. Jung, M. L. Stephens and C. C. Todd, "An overview of SID and
TIM", Audio 1979; the pair's tanh law in Gray, Hurst, Lewis and Meyer, Analysis and Design of
Analog Integrated Circuits; both from memory). The numerical references are numpy FFTs of the
functions themselves, sampled at 8192 points per period (the functions are smooth or, for the
clipped sine, have kinks only: aliasing below 1e-7 of the amplitude at harmonic 40).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from physics_helpers import line_design, make_stage
from scipy.optimize import brentq

from partsel.physics.analysis import predict_closed_form, thd_bound
from partsel.physics.distortion import (
    clipped_sine_harmonics,
    input_stage_harmonics,
    log_cos_coefficients,
    translinear_harmonics,
)

N = 8192
THETA = 2 * np.pi * np.arange(N) / N
ORDERS = np.arange(2, 41)


def _cos_coefficients(x: np.ndarray) -> np.ndarray:
    """Real cosine coefficients b_n (n = 2..40) of a sampled period, t = 0 first (FFT)."""
    return (np.fft.rfft(x) * (2.0 / N)).real[ORDERS]


def _amplitudes(x: np.ndarray) -> np.ndarray:
    return (np.abs(np.fft.rfft(x)) * (2.0 / N))[ORDERS]


@pytest.mark.parametrize("c", [0.3, -0.6, 0.95])
def test_log_cos_series_against_fft(c: float) -> None:
    """ln(1 + c cos t): the analytic coefficients equal the FFT's to 1e-9 (absolute)."""
    got = log_cos_coefficients(np.array([c]))[0]
    np.testing.assert_allclose(got, _cos_coefficients(np.log1p(c * np.cos(THETA))), atol=1e-9)


@pytest.mark.parametrize(("top", "bottom"), [(0.7, 1.0), (1.0, 0.4), (0.8, 0.6), (0.2, 0.9)])
def test_clipped_sine_against_fft(top: float, bottom: float) -> None:
    """sin t clipped at +top and -bottom (fractions of the amplitude): fundamental and the
    harmonic amplitudes 2..40 against the FFT of the clipped waveform (absolute 1e-6)."""
    a1, an = clipped_sine_harmonics(np.array([top]), np.array([bottom]))
    x = np.clip(np.sin(THETA), -bottom, top)
    np.testing.assert_allclose(an[0], _amplitudes(x), atol=1e-6)
    assert a1[0] == pytest.approx(float(np.abs(np.fft.rfft(x)[1]) * 2 / N), abs=1e-6)


@settings(max_examples=30, deadline=None)
@given(
    k=st.floats(min_value=0.01, max_value=0.9),
    gamma=st.floats(min_value=-0.5, max_value=0.5),
    a=st.floats(min_value=0.01, max_value=0.06),
)
def test_input_stage_series_against_the_law_inverted_numerically(
    k: float, gamma: float, a: float
) -> None:
    """Slew-induced distortion (Jung, Stephens and Todd 1979): the drive must move at
    r = k SR_0 cos t; the stage law r = SR_0 t / (1 + gamma t), e = a atanh(t) + b t /
    (1 + gamma t) is inverted numerically (brentq) at every sample and the error's harmonics
    taken by FFT: they equal the two-logarithm series times the noise gain (rtol 1e-6 of the
    largest harmonic), while the output stays below the slower slew rate, k (1 + |gamma|) < 1."""
    if k * (1 + abs(gamma)) >= 0.999:
        return
    sr0, b, gain = 1e6, 0.02, 2.0
    r = k * sr0 * np.cos(THETA[::8])

    def frac(rate: float) -> float:
        return brentq(lambda t: sr0 * t / (1 + gamma * t) - rate, -1 + 1e-15, 1 - 1e-15, xtol=1e-15)

    t = np.array([frac(float(v)) for v in r])
    e = a * np.arctanh(t) + b * t / (1 + gamma * t)
    n = e.size
    want = gain * (np.abs(np.fft.rfft(e)) * (2.0 / n))[ORDERS]
    got = input_stage_harmonics(np.array([a]), np.array([gamma]), np.array([sr0]), k * sr0, gain)[0]
    np.testing.assert_allclose(got, want, atol=1e-6 * float(want.max()) + 1e-15)


def test_translinear_drop_against_fft() -> None:
    """asinh(i / 2 I_q) of a biased pair at a heavy and a light load: the 64-point transform
    keeps the distortion power of the 8192-point one within 2 % (aliasing folds what lies
    above harmonic 31 into the lower ones)."""
    for mean, swing in ((0.0, 1.3e-3), (2e-5, 8e-5)):
        got = translinear_harmonics(
            np.array([0.026]), np.array([36e-6]), np.array([mean]), np.array([swing]), 40
        )[0]
        x = 0.026 * np.arcsinh((mean + swing * np.cos(THETA)) / (2 * 36e-6))
        want = _amplitudes(x)
        assert np.sqrt(np.sum(got**2)) == pytest.approx(np.sqrt(np.sum(want**2)), rel=0.02)


def test_closed_form_clipping_against_the_clipped_sine_series() -> None:
    """A class-AB part (no crossover) driven 1.4 V around 2.5 V on 5 V into 10 kohm, with a
    headroom to V+ of 1.5 V at any current: the top clips at 3.5 V, 0.4 V deep, the bottom not
    at all; the THD estimate adds the clipped sine's THD (the FFT of the clipped sine here,
    harmonics 2..40, 1 %), and the output is labelled "clipping"."""
    part = make_stage(
        "class-ab",
        swing_pos_i0=0.0,
        swing_pos_v0_typ=1.5,
        swing_pos_i1=10e-3,
        swing_pos_v1_typ=1.5,
        stage_current=200e-6,
        gbw=10e6,
        slew_rise=10e6,
        slew_fall=10e6,
    )
    d = line_design(out_amplitude_v=1.4, r_load_ohm=10e3)
    cf = predict_closed_form(part, d)
    assert cf.clip_top_v[0] == pytest.approx(0.4, abs=1e-9)
    assert cf.clip_bottom_v[0] == 0.0
    assert cf.limited_by[0] == "clipping"
    x = np.clip(np.sin(THETA), -1.0, 1.0 - 0.4 / 1.4)
    spec = np.abs(np.fft.rfft(x))
    thd_clip = math.sqrt(float(np.sum(spec[ORDERS] ** 2))) / float(spec[1])
    assert cf.thd_clipping[0] == pytest.approx(thd_clip, rel=1e-3)
    assert cf.thd_estimate[0] >= thd_clip
    assert cf.thd_estimate[0] == pytest.approx(thd_clip, rel=0.01)


def test_biased_bound_is_never_zero_with_a_resistor_keeping_one_sign() -> None:
    """A class-AB stage whose output current never changes sign (a resistor to V- draws more
    than the load returns) still gets a bound, above zero, from its devices' gm variation and
    its input stage; so does a one-mode class-B stage; a stage that changes mode gets none."""
    stage = make_stage(["class-ab", "class-b-pulldown", "class-b-pulldown"])
    d = line_design(r_load_ohm=10e3, r_to_neg_ohm=5e3)
    cf = predict_closed_form(stage, d)
    assert not cf.crossover_biased[0]
    assert list(cf.conduction[:2]) == ["biased", "one-mode"]
    assert cf.thd_bound[0] > 0 and cf.thd_estimate[0] == cf.thd_bound[0]
    assert cf.thd_bound[1] > cf.thd_estimate[1] > 0
    d2 = line_design(r_load_ohm=2e3)
    b2 = thd_bound(stage, d2)
    assert np.isfinite(b2[0]) and np.isnan(b2[1])
