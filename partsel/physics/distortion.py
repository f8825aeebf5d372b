"""Harmonic series of the distortion mechanisms of the macro-model (numpy only, many parts).

Each function returns peak amplitudes of harmonics ``2..H`` as an array of shape (P, H - 1)
(column ``n - 2`` holds harmonic ``n``), in volts at the amplifier output, for a sine of output
amplitude ``A`` and angular frequency ``omega``. :mod:`partsel.physics.analysis` combines them
into THD estimates and bounds.

References
----------
* ``ln(1 + c cos t) = ln((1 + sqrt(1 - c^2)) / 2) + 2 sum_n (-1)^(n+1) r^n / n cos(n t)`` with
  ``r = c / (1 + sqrt(1 - c^2))`` for ``|c| < 1``: the Fourier series of the logarithm of a
  biased cosine (e.g. Gradshteyn and Ryzhik, *Table of Integrals*, series 1.514; from memory).
* the clipped sine as a sine minus cosine-cap pulses: the classic conduction-angle series of
  tuned power-amplifier texts (see :func:`clipped_sine_harmonics`).
* slew-induced distortion of a differential input stage: the error voltage a tanh-law pair needs
  to deliver a sinusoidal current grows as ``atanh`` of the fraction ``k = 2 pi f A / SR`` of
  its tail current (W. G. Jung, M. L. Stephens and C. C. Todd, "An overview of SID and TIM",
  *Audio*, 1979; the pair's tanh law in Gray, Hurst, Lewis and Meyer, *Analysis and Design of
  Analog Integrated Circuits*; both from memory).
"""

from __future__ import annotations

import numpy as np

from partsel.physics.spectrum import DEFAULT_HARMONICS


def _orders(n_harmonics: int) -> np.ndarray:
    return np.arange(2, n_harmonics + 1, dtype=float)[None, :]


def log_cos_coefficients(c: np.ndarray, n_harmonics: int = DEFAULT_HARMONICS) -> np.ndarray:
    """Cosine coefficients ``b_n`` (n = 2..H) of ``ln(1 + c cos t) = b_0 + sum b_n cos(n t)``,
    ``|c| < 1`` (NaN elsewhere); shape (P, H - 1)."""
    c = np.asarray(c, dtype=float)[:, None]
    with np.errstate(invalid="ignore"):
        r = c / (1.0 + np.sqrt(1.0 - c * c))
    n = _orders(n_harmonics)
    sign = np.where(n % 2 == 0, -1.0, 1.0)
    # r^2 .. r^H by running products (signed; no pow)
    r_pow = np.cumprod(np.broadcast_to(r, (r.shape[0], n_harmonics)), axis=1)[:, 1:]
    with np.errstate(invalid="ignore", over="ignore"):
        out = 2.0 * sign * r_pow / n
    return np.where(np.abs(c) < 1.0, out, np.nan)


def loop_residue(
    omega: float | np.ndarray, k_loop: np.ndarray, n_harmonics: int = DEFAULT_HARMONICS
) -> np.ndarray:
    """Fraction ``n omega / sqrt((n omega)^2 + K^2)`` of an output-stage drop at harmonic ``n``
    that a single-pole loop (integrator at ``K = omega_t beta``) leaves at the output
    (``omega`` one value, or one per part)."""
    wn = _orders(n_harmonics) * np.asarray(omega, dtype=float)[..., None]
    k = np.asarray(k_loop, dtype=float)[:, None]
    return wn / np.sqrt(wn * wn + k * k)


def device_law_harmonics(
    scale_v: np.ndarray, mean_a: np.ndarray, swing_a: np.ndarray, n_harmonics: int
) -> np.ndarray:
    """Harmonic amplitudes (V) of the stage drop ``x = V_S ln(i / I)`` of a device carrying
    ``i = D0 + B cos`` (``mean_a = D0 > swing_a = B >= 0``): ``V_S |b_n(B / D0)|``."""
    with np.errstate(divide="ignore", invalid="ignore"):
        c = np.where(mean_a > 0, swing_a / mean_a, np.nan)
    return np.abs(log_cos_coefficients(c, n_harmonics)) * np.asarray(scale_v)[:, None]


def translinear_harmonics(
    scale_v: np.ndarray,
    i_q: np.ndarray,
    mean_a: np.ndarray,
    swing_a: np.ndarray,
    n_harmonics: int,
    n_grid: int = 64,
) -> np.ndarray:
    """Harmonic amplitudes (V) of the stage drop of a biased pair, ``x = V_X asinh(i / 2 I_q)``,
    for an output current ``i = I0 + B cos`` (numerical Fourier transform over ``n_grid``
    points per period: harmonics up to ``n_grid / 2 - 1``; what lies above folds into them, so
    their power sum keeps the drop's distortion power)."""
    th = 2.0 * np.pi * np.arange(n_grid) / n_grid
    with np.errstate(divide="ignore", invalid="ignore"):
        u = (mean_a[:, None] + swing_a[:, None] * np.cos(th)[None, :]) / (2.0 * i_q[:, None])
    x = np.asarray(scale_v)[:, None] * np.arcsinh(u)
    spec = np.abs(np.fft.rfft(x, axis=1)) * (2.0 / n_grid)
    h = min(n_harmonics, n_grid // 2 - 1)
    out = np.zeros((x.shape[0], n_harmonics - 1))
    out[:, : h - 1] = spec[:, 2 : h + 1]
    return out


def input_stage_harmonics(
    a_v: np.ndarray,
    gamma: np.ndarray,
    sr0_v_per_s: np.ndarray,
    rate_amp_v_per_s: float | np.ndarray,
    noise_gain: float | np.ndarray,
    n_harmonics: int = DEFAULT_HARMONICS,
) -> np.ndarray:
    """Slew-induced distortion of the input stage: harmonic amplitudes (V) at the output.

    The drive must move at ``r = R cos`` (``R = rate_amp_v_per_s``, the output's slope); the
    stage law of :mod:`partsel.physics.stage` (``r = SR_0 t / (1 + gamma t)``,
    ``e = a atanh(t) + b_0 t / (1 + gamma t)``) then needs the error
    ``e = a atanh(u / (1 - gamma u)) + b_0 u`` with ``u = r / SR_0 = k cos``. Its nonlinear
    part is ``(a / 2) [ln(1 + (1 - gamma) u) - ln(1 - (1 + gamma) u)]``: two logarithm series,
    exact while ``R`` stays below the slower slew rate (NaN beyond: the output is slew-limited).
    The output carries ``-e / beta`` (feedback network), so each harmonic is multiplied by the
    noise gain.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        k = np.where(np.isfinite(sr0_v_per_s), rate_amp_v_per_s / sr0_v_per_s, 0.0)
    g = np.asarray(gamma, dtype=float)
    b1 = log_cos_coefficients((1.0 - g) * k, n_harmonics)
    b2 = log_cos_coefficients(-(1.0 + g) * k, n_harmonics)
    e = 0.5 * np.asarray(a_v)[:, None] * np.abs(b1 - b2)
    return e * np.asarray(noise_gain, dtype=float)[..., None]


def clipped_sine_harmonics(
    u_top: np.ndarray, u_bot: np.ndarray, n_harmonics: int = DEFAULT_HARMONICS
) -> tuple[np.ndarray, np.ndarray]:
    """Harmonics of ``sin t`` clipped at ``u_top`` above and ``-u_bot`` below (levels relative to
    the amplitude, in (0, 1]; 1 or more: no clipping on that side).

    A sine clipped at level ``u`` is the sine minus a cosine-cap pulse of half-width
    ``b = acos(u)`` centred on its peak; the pulse ``sin t - u`` over ``|t - pi/2| < b`` has
    the cosine coefficients (about its centre)
    ``p_n = [sin((n-1) b)/(n-1) + sin((n+1) b)/(n+1) - 2 cos(b) sin(n b)/n] / pi`` (``n >= 2``)
    and ``p_1 = (b - sin b cos b) / pi`` (the conduction-angle series). The lower pulse is the
    same shape mirrored, centred half a period later, so its harmonic ``n`` carries the sign
    ``-(-1)^n``. Returns ``(a_1, a_n)``: the fundamental's amplitude (units of the sine's
    amplitude) and the harmonic amplitudes for n = 2..H, shape (P, H - 1).
    """

    def pulse(u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        b = np.arccos(np.clip(u, -1.0, 1.0))[:, None]
        n = _orders(n_harmonics)
        with np.errstate(invalid="ignore", divide="ignore"):
            pn = (
                np.sin((n - 1) * b) / (n - 1)
                + np.sin((n + 1) * b) / (n + 1)
                - 2.0 * np.cos(b) * np.sin(n * b) / n
            ) / np.pi
        p1 = (b[:, 0] - np.sin(b[:, 0]) * np.cos(b[:, 0])) / np.pi
        return p1, np.nan_to_num(pn)

    ut = np.asarray(u_top, dtype=float)
    ub = np.asarray(u_bot, dtype=float)
    p1t, pnt = pulse(np.minimum(ut, 1.0))
    p1b, pnb = pulse(np.minimum(ub, 1.0))
    n = _orders(n_harmonics)
    # Phasors relative to the top pulse's centre (t = pi / 2): the bottom pulse sits at
    # t = 3 pi / 2, i.e. harmonic n is rotated by n pi, and is inverted.
    an = pnt - pnb * np.cos(n * np.pi)
    a1 = 1.0 - p1t - p1b
    return a1, np.abs(an)
