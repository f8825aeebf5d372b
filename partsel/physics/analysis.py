"""Closed-form predictions for many parts in one design (vectorised, no time stepping).

* conduction analysis: the output current of the ideal waveform, whether and where the stage
  hands over between source and sink device (class B with pull-down: where the load must sink
  more than the pull-down current; class A: where it must sink more than the bias current);
* the glitch estimate: handover time across the dead band with the integrator and slew limit,
  and the output glitch amplitude;
* the other checks: swing margins at the current flowing, input common-mode margins, slew rate
  and full-power bandwidth, closed-loop bandwidth and gain error, capacitive load, supply
  range, stability at the noise gain, supply current, dissipation and junction temperature.

References
----------
Design notes sections 3, 4 and 6. Full-power bandwidth ``f_FP = SR / (2 pi V_peak)`` and
closed-loop bandwidth ``f_CL = GBW / noise gain`` for a single-pole amplifier are the usual
op-amp application formulas. Junction temperature ``T_j = T_a + P theta_JA``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from partsel.physics.circuit import Design, col, pick
from partsel.physics.distortion import (
    clipped_sine_harmonics,
    device_law_harmonics,
    input_stage_harmonics,
    loop_residue,
    translinear_harmonics,
)
from partsel.physics.loading import (
    admittance,
    dc_current,
    ideal_current,
    resistive_branches,
    thevenin_level,
)
from partsel.physics.spectrum import DEFAULT_HARMONICS
from partsel.physics.stage import (
    CLASS_A,
    CLASS_B,
    GAMMA_CM_SHARE,
    Basis,
    StageParams,
    drive_slew,
    input_law,
    pulldown_law,
)

#: Samples per period used for the swing / dissipation checks over the ideal waveform.
GRID = 256
#: Margin band of the conduction verdict, as a fraction of the stage current: a class-A/B stage
#: whose least source-device demand lies within +- MARGIN * I_stage of zero is "marginal"
#: (partsel's choice, the same margin the fix is sized for; design notes sections 4 and 5).
MARGIN = 0.5
#: Conduction verdicts (one per part), see :func:`conduction_verdict`.
VERDICTS = ("one-mode", "marginal", "changes-mode", "biased")
#: Factor of the distortion bound of biased and one-mode stages over the sum of the modelled
#: mechanisms (every harmonic taken at the sum of the magnitudes of its contributions, then
#: tripled): room for mechanisms up to twice the modelled ones that the macro-model leaves out
#: (unequal device betas, Early effect, the gain stage's own nonlinearity). partsel's choice;
#: the tests hold the bound against transistor-level circuits and keep it within 20 dB.
BOUND_FACTOR = 3.0
#: Least rise/fall asymmetry ``(SR_f - SR_r) / (SR_f + SR_r)`` the bound assumes: a 5 : 3 ratio
#: of the two slew rates, common in classic single-supply bipolar parts (common practice).
GAMMA_BOUND = 0.25
#: Largest THD figure of a bound (and of a slew-limited stage, which has none): 100 %, i.e.
#: "very large" (the figure is then labelled by ClosedForm.limited_by); capping keeps a stage
#: just short of its slew limit from ranking worse than one beyond it.
BOUND_CAP = 1.0
#: Steps per period of the device-law simulation that gives a marginal stage its THD, after
#: one warm-up period (at most two): within 0.5 dB of 2048 steps and a settled start in 95 %
#: of marginal synthetic parts (tests/bench/bench_physics.py parts), 3 dB at worst.
MARGINAL_STEPS = 512


@dataclass(frozen=True)
class ClosedForm:
    """Closed-form results per part (arrays of shape (P,)); SI units."""

    basis: Basis
    # conduction
    i_out_min_a: np.ndarray
    i_out_max_a: np.ndarray
    min_source_a: np.ndarray  #: smallest source-device current over the period
    held_current_a: np.ndarray
    """Least current of the device that must stay on all period, A: the source device's, or
    (class B held in sink mode, e.g. by a pull-up) the sink device's; negative when the stage
    changes mode (by how much the other device takes over). The conduction check's value: it
    passes where :func:`conduction_verdict` says one mode with the margin."""
    held_sink: np.ndarray  #: the held device is the sink device (class B in sink mode)
    handover: np.ndarray  #: verdict "changes-mode" (class A/B)
    marginal: np.ndarray
    """verdict "marginal": the least source-device demand lies within the margin band around
    zero (either side); its THD comes from the device law (a short simulation), not from the
    dead-zone formula."""
    crossover_biased: np.ndarray  #: class AB / CMOS: output current changes sign
    flat_level_v: np.ndarray
    """Level the load holds the output at during a handover (changes-mode and marginal class-A/B
    stages), V."""
    handover_out_v: np.ndarray  #: ideal output level at the handover instant (falling edge)
    handover_phase_rad: np.ndarray  #: phase of the falling-edge handover (0 = rising zero)
    slope_v_per_s: np.ndarray  #: |output slope| at the steeper of the two handovers
    handover_time_s: np.ndarray  #: time to cross the dead band (tau)
    glitch_v: np.ndarray  #: output glitch, deviation from the ideal waveform
    thd_estimate: np.ndarray
    """THD_F estimate used for ranking, ratio: changes-mode class B from the glitch shape,
    class A from the clipped sine, marginal from the device law (simulation), one-mode from the
    device law's Fourier series, biased stages the upper bound ``thd_bound``; a clipping output
    adds the clipped sine's THD."""
    # swing / input / dynamics
    swing_pos_margin_v: np.ndarray
    swing_neg_margin_v: np.ndarray
    cm_low_margin_v: np.ndarray
    cm_high_margin_v: np.ndarray
    slew_required_v_per_s: float
    slew_margin_ratio: np.ndarray  #: available / required slew rate
    full_power_bw_hz: np.ndarray
    closed_loop_bw_hz: np.ndarray
    gain_error: np.ndarray  #: relative magnitude error at the signal frequency (<= 0)
    phase_error_rad: np.ndarray
    cap_load_ratio: np.ndarray  #: load capacitance / stated limit (> 1: flag)
    stable_at_gain: np.ndarray  #: noise gain >= minimum stable gain
    supply_in_range: np.ndarray
    source_peak_a: np.ndarray
    sink_peak_a: np.ndarray
    source_limit_ok: np.ndarray
    sink_limit_ok: np.ndarray
    # power
    supply_current_a: np.ndarray  #: whole package and any pull-up, mean, from the positive rail
    dissipation_w: np.ndarray  #: whole package
    t_junction_c: np.ndarray  #: at the highest ambient
    t_junction_margin_c: np.ndarray
    # verdicts, bounds and labels (issue 11)
    conduction: np.ndarray
    """Conduction verdict per part (object array of str, one of :data:`VERDICTS`): "one-mode",
    "marginal", "changes-mode" (class A/B) or "biased" (class AB / CMOS); see
    :func:`conduction_verdict`."""
    dead_band_eff_v: np.ndarray
    """Drive distance the crossing of the reported edge covers with the exponential device
    laws (the dead band shortened or lengthened by the devices' soft turn-off and turn-on at
    this load, see _effective_dead_band), V; NaN where no class-B handover."""
    source_demand_min_a: np.ndarray
    """Least current the source device must carry (class A/B: load plus pull-down current with
    its Early effect; negative: the sink device or the load alone must take the rest), A."""
    source_demand_max_a: np.ndarray  #: largest such current, A
    thd_bound: np.ndarray
    """Upper bound of THD_F (ratio) for biased stages and class-A/B stages in one mode: the
    loop-reduced device-law drop (the gm variation of the output devices over the cycle) plus
    the input stage's slew-induced distortion, times BOUND_FACTOR. NaN for changes-mode and
    marginal stages (their THD is an estimate, not a bound)."""
    clip_depth_v: np.ndarray
    """How far the ideal output goes beyond the swing limits at the current flowing, V (0: it
    stays inside; the larger of the two rails)."""
    clip_top_v: np.ndarray  #: depth beyond the positive swing limit, V
    clip_bottom_v: np.ndarray  #: depth beyond the negative swing limit, V
    thd_clipping: np.ndarray  #: THD_F of the ideal sine clipped at those limits (ratio)
    limited_by: np.ndarray
    """What limits the output, per part (object array of str): "" (nothing: the glitch and THD
    figures describe the stage), "clipping" (the output hits a swing limit), "slew" (the signal
    needs more than the slower slew rate) or "bandwidth" (the signal is at or above the
    closed-loop bandwidth, or the dead-band crossing lasts a quarter period): then the glitch
    and THD figures describe a limited output, not a crossover."""


def _psi(u: np.ndarray, em1: np.ndarray | None = None) -> np.ndarray:
    """``u - (1 - exp(-u))``, accurate for small ``u`` (``em1``: ``expm1(-u)`` if at hand)."""
    with np.errstate(over="ignore"):
        exact = u + (np.expm1(-u) if em1 is None else em1)
    return np.where(u < 1e-2, u * u * (0.5 - u / 6.0 + u * u / 24.0), exact)


def _phi(u: np.ndarray, em1: np.ndarray | None = None) -> np.ndarray:
    """``u**2 / 2 - u + 1 - exp(-u)`` (the integral of :func:`_psi`), accurate for small ``u``
    (``em1``: ``expm1(-u)`` if at hand)."""
    with np.errstate(over="ignore"):
        exact = 0.5 * u * u - u - (np.expm1(-u) if em1 is None else em1)
    return np.where(u < 1e-2, u**3 * (1.0 / 6.0 - u / 24.0 + u * u / 120.0), exact)


def _deviation(t: np.ndarray, s: np.ndarray, c: np.ndarray, tau_l: np.ndarray) -> np.ndarray:
    """Output deviation from the ideal ``t`` seconds into the dead band, V (see _crossing)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        rc = np.where(tau_l > 0, s * tau_l * _psi(t / tau_l), s * t)
    return rc + 0.5 * c * t * t


def _displacement(t: np.ndarray, s: np.ndarray, c: np.ndarray, tau_l: np.ndarray) -> np.ndarray:
    """Integral of :func:`_deviation` from 0 to ``t``, V s."""
    with np.errstate(divide="ignore", invalid="ignore"):
        rc = np.where(tau_l > 0, s * tau_l * tau_l * _phi(t / tau_l), 0.5 * s * t * t)
    return rc + c * t**3 / 6.0


#: Newton steps of :func:`_crossing_roots`: from a bound within 14 % of the root the iterates
#: fall monotonically onto it; 5 steps agree with a 16-step bisection and 3 Newton steps within
#: 1e-11 (relative) on 200,000 random crossings (dead band, slope, steepening, load time
#: constant, loop and slew rate each over 3 to 5 decades).
CROSSING_NEWTON_STEPS = 5


def _cubic_root_bound(k: np.ndarray) -> np.ndarray:
    """Positive root ``u`` of ``u**3 / (6 + 2 u) = k`` (k >= 0): ``u**3 - 2 k u - 6 k = 0``
    by Cardano's formula (one real root while its discriminant is positive, else the
    trigonometric form)."""
    p, q = -2.0 * k, -6.0 * k
    disc = (q / 2.0) ** 2 + (p / 3.0) ** 3
    with np.errstate(invalid="ignore", divide="ignore"):
        sq = np.sqrt(np.maximum(disc, 0.0))
        one = np.cbrt(-q / 2.0 + sq) + np.cbrt(-q / 2.0 - sq)
        m = np.sqrt(np.maximum(-p / 3.0, 0.0))
        arg = np.clip((3.0 * q / (2.0 * p)) * np.sqrt(np.maximum(-3.0 / p, 0.0)), -1.0, 1.0)
        three = 2.0 * m * np.cos(np.arccos(arg) / 3.0)
    return np.where(disc >= 0, one, three)


def _crossing_roots(
    dv: np.ndarray,
    s: np.ndarray,
    c: np.ndarray,
    tau_l: np.ndarray,
    k: np.ndarray,
    sr: np.ndarray,
    t_max: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """The two times of :func:`_crossing` for every load (``tau_l``: its time constant, s; 0
    for a resistive load): ``t_lin`` where ``k * _displacement = dv`` (the drive, unlimited, has
    crossed the dead band) and ``t1`` where ``k * _deviation = sr`` (the drive reaches the slew
    rate; searched below ``t_lin``), both within ``t_max``.

    Both functions are increasing and convex in ``t``, so Newton's method started to the right
    of a root falls monotonically onto it. The start is a closed-form upper bound from lower
    bounds of the two load terms: ``phi(u) >= u**3 / (6 + 2 u)`` and ``psi(u) >= u**2 / (2 + u)``
    (``u = t / tau_l``; checked numerically for u = 1e-6 .. 1e4, tight to 9 % and 14 %),
    ``c t**3 / 6`` and ``c t**2 / 2`` for the steepening, and ``s t**2 / 2``, ``s t`` for a
    resistive load (``tau_l = 0``)."""
    rc = tau_l > 0
    tl = np.where(rc, tau_l, 1.0)
    inf = np.inf
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        target1 = dv / k
        u1 = _cubic_root_bound(target1 / (s * tl * tl))
        t_s1 = np.where(s > 0, np.where(rc, u1 * tl, np.sqrt(2.0 * target1 / s)), inf)
        t_c1 = np.where(c > 0, np.cbrt(6.0 * target1 / c), inf)
        target2 = sr / k
        q2 = target2 / (s * tl)
        t_s2 = np.where(
            s > 0, np.where(rc, 0.5 * (q2 + np.sqrt(q2 * q2 + 8.0 * q2)) * tl, target2 / s), inf
        )
        t_c2 = np.where(c > 0, np.sqrt(2.0 * target2 / c), inf)
    t_lin = np.minimum(np.minimum(t_s1, t_c1), t_max)
    t1 = np.minimum(np.minimum(t_s2, t_c2), t_lin)

    def parts(t: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        # load terms at u = t / tau_l: phi(u) tau^2 (displacement), psi(u) tau (deviation),
        # (1 - exp(-u)) (slope of the deviation), with their small-u series; tau = 0: t^2/2, t, 1
        u = t / tl
        with np.errstate(over="ignore"):
            em1 = np.expm1(-u)  # once for the three terms
        return (
            np.where(rc, _phi(u, em1) * tl * tl, 0.5 * t * t),
            np.where(rc, _psi(u, em1) * tl, t),
            np.where(rc, -em1, 1.0),
        )

    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        for _ in range(CROSSING_NEWTON_STEPS):
            disp, dev, _ = parts(t_lin)
            f = k * (s * disp + c * t_lin**3 / 6.0) - dv
            df = k * (s * dev + 0.5 * c * t_lin * t_lin)
            step = np.where(df > 0, f / df, 0.0)
            t_lin = np.clip(t_lin - np.where(np.isfinite(step), step, 0.0), 0.0, t_max)
        t1 = np.minimum(t1, t_lin)
        for _ in range(CROSSING_NEWTON_STEPS):
            _, dev, slope = parts(t1)
            f = k * (s * dev + 0.5 * c * t1 * t1) - sr
            df = k * (s * slope + c * t1)
            step = np.where(df > 0, f / df, 0.0)
            t1 = np.clip(t1 - np.where(np.isfinite(step), step, 0.0), 0.0, t_lin)
    return t_lin, t1


def _crossing(
    dead_band_v: np.ndarray,
    slope: np.ndarray,
    accel: np.ndarray,
    tau_load: np.ndarray,
    wt_beta: np.ndarray,
    slew: np.ndarray,
    t_max: float | np.ndarray,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Dead-band crossing of a class-B stage whose output the load keeps moving.

    While neither device conducts, the load network alone moves the output: it relaxes from
    where it was towards the flat level with the load's time constant ``tau_load = C_L / G``
    (s; 0 for a resistive load, which holds it at once), starting with the ideal's slope
    ``slope`` (V/s, magnitude), while the ideal output moves on and, with ``accel`` (V/s**2,
    >= 0), steepens. The deviation is ``D(t) = s tau_L psi(t / tau_L) + a t**2 / 2`` (``s t``
    when ``tau_L = 0``: the design notes' stuck output, whose crossing ``tau = sqrt(2 dV /
    (omega_t beta s))`` this reduces to), the drive moves at ``min(omega_t beta D, SR)`` (design
    notes section 4) and the crossing ends when it has moved ``dV``.
    Returns ``(tau, glitch, capped)``: crossing time (s), deviation at its end (V), and where
    the crossing would last longer than ``t_max`` (s, one value or one per part; it is then cut
    there).
    """
    n = dead_band_v.shape[0]
    s = np.broadcast_to(slope, (n,)).astype(float)
    c = np.broadcast_to(accel, (n,)).astype(float)
    tl = np.broadcast_to(tau_load, (n,)).astype(float)
    k = np.broadcast_to(wt_beta, (n,)).astype(float)
    ok = (dead_band_v > 0) & (s > 0) & (k > 0)
    tau = np.zeros(n)
    capped = np.zeros(n, dtype=bool)
    if ok.any():
        i = np.flatnonzero(ok)
        dv, si, ci, tli, ki, sr = dead_band_v[i], s[i], c[i], tl[i], k[i], slew[i]
        hi = np.broadcast_to(np.asarray(t_max, dtype=float), (n,))[i].copy()
        reach = ki * _displacement(hi, si, ci, tli)  # drive moved by t_max, no slew limit
        t_lin, t1 = _crossing_roots(dv, si, ci, tli, ki, sr, hi)
        fast = ki * _deviation(t_lin, si, ci, tli) > sr
        with np.errstate(invalid="ignore"):
            t_slew = t1 + (dv - ki * _displacement(t1, si, ci, tli)) / sr
        t_all = np.where(fast, t_slew, t_lin)
        cap = (reach < dv) | (t_all >= hi)
        tau[i] = np.where(cap, hi, t_all)
        capped[i] = cap
    glitch = np.where(ok, _deviation(tau, s, c, tl), 0.0)
    return tau, glitch, capped


def _ramp_transform(w: np.ndarray, tau: np.ndarray) -> np.ndarray:
    """``integral_0^tau t exp(-j w t) dt`` (s**2), with its series where ``w tau`` is small."""
    u = w * tau
    with np.errstate(divide="ignore", invalid="ignore"):
        exact = (np.exp(-1j * u) * (1.0 + 1j * u) - 1.0) / w**2
    series = tau**2 * (0.5 - 1j * u / 3.0 - u**2 / 8.0)
    return np.where(np.abs(u) < 1e-3, series, exact)


def _glitch_thd_exact(
    omega: float,
    amp: float,
    edges: list[tuple[np.ndarray, np.ndarray, np.ndarray]],
    n_harmonics: int = DEFAULT_HARMONICS,
) -> np.ndarray:
    """THD_F (harmonics 2..H, IEC definition) of a sine of peak ``amp`` with crossover glitches.

    Each edge is ``(slope, tau, t_rec)``, arrays over parts: the deviation from the ideal
    grows as a ramp ``slope * t`` (V/s) for the crossing time ``tau`` (s), then decays as
    ``exp(-t / t_rec)`` once the other device conducts (``t_rec = 0``: at once). The harmonic
    amplitudes of one such pulse per period follow from the Fourier integrals of a ramp and an
    exponential; the edges are added in power (their phase relation is left out: for the two
    opposite pulses of a sine it changes the sum by about 1 %, and leaving it out keeps the
    estimate monotonic in every part parameter). The arrays broadcast against each other
    (the result has their broadcast shape). The sine's own harmonics are zero, so these
    are the distortion. Truncating at ``H`` as :func:`partsel.physics.spectrum.thd` does keeps
    both on one definition (a short glitch
    spreads its energy far above the 40th harmonic).
    """
    shape = np.broadcast_shapes(*(np.shape(a) for e in edges for a in e)) if edges else (0,)
    if amp <= 0 or math.prod(shape) == 0:
        return np.zeros(shape)
    wk = np.arange(2, n_harmonics + 1, dtype=float) * omega  # the harmonic axis is the last
    power = np.zeros(shape)
    for slope, tau, t_rec in edges:
        tau_c = np.asarray(tau)[..., None]
        ramp = _ramp_transform(wk, tau_c)
        t_rec_c = np.asarray(t_rec)[..., None]
        tail = tau_c * t_rec_c * np.exp(-1j * wk * tau_c) / (1.0 + 1j * wk * t_rec_c)
        # One-sided amplitude a_k = (2 / T) |integral|, with 1 / T = omega / (2 pi); summed in
        # power, |integral|^2 without the square root
        z = ramp + tail
        gain = (np.asarray(slope) * (omega / np.pi)) ** 2
        power = power + gain * np.sum(z.real**2 + z.imag**2, axis=-1)
    return np.sqrt(power) / amp


_U_LO, _U_HI, _N_U, _N_RHO = 1e-7, 0.5 * np.pi, 601, 41


@functools.lru_cache(maxsize=4)
def _pulse_table(n_harmonics: int) -> np.ndarray:
    """``log S(u, rho)``: the pulse power sum of :func:`_glitch_thd_exact` in units of
    ``(slope / (pi omega))**2``, over ``u = omega tau`` (log-spaced, 1e-7 to pi / 2) and
    ``rho = t_rec / tau`` (0 to 1), shape (601, 41)."""
    u = np.exp(np.linspace(np.log(_U_LO), np.log(_U_HI), _N_U))[:, None]
    rho = np.linspace(0.0, 1.0, _N_RHO)[None, :]
    # omega = 1, slope = pi: the exact routine then returns sqrt(S) / amp with amp = 1; tau
    # has shape (601, 1), so the parts of the pulse that do not depend on rho are computed once
    thd = _glitch_thd_exact(1.0, 1.0, [(np.array(np.pi), u, u * rho)], n_harmonics)
    return np.log(np.maximum(thd, 1e-300) ** 2)


def _glitch_thd(
    omega: float | np.ndarray,
    amp: float | np.ndarray,
    edges: list[tuple[np.ndarray, np.ndarray, np.ndarray]],
    n_harmonics: int = DEFAULT_HARMONICS,
) -> np.ndarray:
    """:func:`_glitch_thd_exact` through a precomputed table (bilinear in ``log omega tau``
    and ``t_rec / tau``; the power sum is a smooth function of both): within 0.5 % of it, at
    a small fraction of the cost for large catalogues. ``omega`` and ``amp``: one value, or
    one per part of the edges."""
    n = edges[0][0].size if edges else 0
    if n == 0 or np.all(np.asarray(amp) <= 0):
        return np.zeros(n)
    table = _pulse_table(n_harmonics)
    lu_lo, lu_hi = np.log(_U_LO), np.log(_U_HI)
    power = np.zeros(n)
    for slope, tau, t_rec in edges:
        u_raw = omega * tau
        u = np.clip(u_raw, _U_LO, _U_HI)
        with np.errstate(divide="ignore", invalid="ignore"):
            rho = np.clip(np.where(tau > 0, t_rec / tau, 0.0), 0.0, 1.0)
        x = (np.log(u) - lu_lo) / (lu_hi - lu_lo) * (_N_U - 1)
        y = rho * (_N_RHO - 1)
        i = np.clip(x.astype(int), 0, _N_U - 2)
        j = np.clip(y.astype(int), 0, _N_RHO - 2)
        fx, fy = x - i, y - j
        log_s = (
            table[i, j] * (1 - fx) * (1 - fy)
            + table[i + 1, j] * fx * (1 - fy)
            + table[i, j + 1] * (1 - fx) * fy
            + table[i + 1, j + 1] * fx * fy
        )
        # below the table the pulse is far shorter than a harmonic's period: S ~ u**4
        with np.errstate(divide="ignore"):
            log_s = log_s + 4.0 * np.minimum(np.log(np.maximum(u_raw, 1e-300)) - np.log(u), 0.0)
        p = (slope / (np.pi * omega)) ** 2 * np.exp(log_s)
        power += np.where(tau > 0, p, 0.0)
    if np.ndim(amp) == 0:
        return np.sqrt(power) / amp
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(np.asarray(amp) > 0, np.sqrt(power) / amp, 0.0)


def source_demand(
    stage: StageParams,
    design: Design,
    *,
    r_to_neg_ohm: np.ndarray | None = None,
    r_to_pos_ohm: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Mean ``D0`` and amplitude ``B`` (A, shape (P,)) of the current the source device must
    carry over the ideal period, ``d(t) = D0 + B sin(omega t + psi)``: the output current plus,
    for class A / B, the pull-down current with its Early effect (``i_pd = c + g v_out``, see
    :func:`partsel.physics.stage.pulldown_law`). Per-part resistors to either rail (NaN: none)
    are added to the design's load, as a fix would be. Biased stages: the output current.
    A batch design (one design per part, :attr:`Design.rows`) is evaluated row by row."""
    n = stage.n
    a = design.signal_gain * design.signal.amplitude_v
    w = design.omega
    v0 = design.out_bias_v
    sup = design.supply
    i_pd = np.where(stage.has_pulldown, np.nan_to_num(stage.stage_current_a), 0.0)
    pd_c, pd_s = pulldown_law(i_pd, sup.v_pos_v, sup.v_neg_v)
    if design.rows is not None:  # per-row resistors need no grouping: each row its own network
        ld = design.load
        rn_b, rp_b = (
            None if r is None else np.where(np.isnan(r), np.nan if own is None else own, r)
            for r, own in ((r_to_neg_ohm, ld.r_to_neg_ohm), (r_to_pos_ohm, ld.r_to_pos_ohm))
        )
        y = admittance(design, w, r_to_neg_ohm=rn_b, r_to_pos_ohm=rp_b)
        i0 = dc_current(design, r_to_neg_ohm=rn_b, r_to_pos_ohm=rp_b)
        return i0 + pd_c + pd_s * v0, np.abs(y + pd_s) * np.abs(a)
    rn = np.full(n, np.nan) if r_to_neg_ohm is None else np.asarray(r_to_neg_ohm, dtype=float)
    rp = np.full(n, np.nan) if r_to_pos_ohm is None else np.asarray(r_to_pos_ohm, dtype=float)
    d0 = np.empty(n)
    b = np.empty(n)
    if r_to_neg_ohm is None and r_to_pos_ohm is None:
        groups = [(np.ones(n, dtype=bool), None, None)]
    else:
        keys = np.stack([np.nan_to_num(rn, nan=-1.0), np.nan_to_num(rp, nan=-1.0)], axis=1)
        groups = [
            (
                np.all(keys == key, axis=1),
                None if key[0] < 0 else float(key[0]),
                None if key[1] < 0 else float(key[1]),
            )
            for key in (np.unique(keys, axis=0) if n else [])
        ]
    for sel, r_neg, r_pos in groups:
        y = admittance(design, w, r_to_neg_ohm=r_neg, r_to_pos_ohm=r_pos)
        i0 = dc_current(design, r_to_neg_ohm=r_neg, r_to_pos_ohm=r_pos)
        d0[sel] = i0 + pd_c[sel] + pd_s[sel] * v0
        b[sel] = np.abs(y + pd_s[sel]) * abs(a)
    return d0, b


def conduction_verdict(
    stage: StageParams,
    demand_min_a: np.ndarray,
    demand_max_a: np.ndarray,
    margin: float = MARGIN,
) -> np.ndarray:
    """The conduction verdict of every part: the one rule every output uses.

    ``demand`` is the current the source device must carry (:func:`source_demand`); ``m`` the
    margin as a fraction of the stage current ``I``:

    * class AB / CMOS: ``"biased"`` (both devices stay biased; bounded, not quoted);
    * class A / B: ``"one-mode"`` when the least demand is at least ``m I`` (source mode) or,
      class B only, the largest demand at most ``-m I`` (sink mode, a pull-up holding the sink
      device on); ``"marginal"`` when the demand comes within ``m I`` of zero from either side
      (the device nearly cuts off, or the other one barely takes over: the device law decides);
      ``"changes-mode"`` otherwise (the demand crosses zero by more than ``m I``: a handover,
      or for class A a clipped trough).
    """
    i = np.nan_to_num(stage.stage_current_a, nan=0.0)
    band = margin * i
    lo = np.asarray(demand_min_a, dtype=float)
    hi = np.asarray(demand_max_a, dtype=float)
    is_b = stage.topology == CLASS_B
    src_mode = lo >= band
    snk_mode = is_b & (hi <= -band)
    near = (np.abs(lo) < band) | (is_b & (np.abs(hi) < band))
    out = np.full(stage.n, "changes-mode", dtype=object)
    out[near] = "marginal"
    out[src_mode | snk_mode] = "one-mode"
    out[stage.biased] = "biased"
    return out


def one_mode_thd(
    stage: StageParams,
    design: Design,
    *,
    r_to_neg_ohm: np.ndarray | None = None,
    r_to_pos_ohm: np.ndarray | None = None,
    n_harmonics: int = DEFAULT_HARMONICS,
    input_stage: bool = True,
) -> np.ndarray:
    """THD_F estimate (harmonics 2..H, ratio) of a class-A / class-B stage kept in one mode.

    The output stage's drop (below) and, with ``input_stage``, the input stage's slew-induced
    distortion (:func:`partsel.physics.distortion.input_stage_harmonics`), added in power (the
    phase between the two is not modelled).

    The conducting device follows its DC law (see :mod:`partsel.physics.stage`): the source
    device ``x = V_S ln(d / I)`` for the demand ``d = D0 + B sin(theta)`` of
    :func:`source_demand`, or, with a pull-up that keeps the sink device on, the sink device
    ``x = -dV - V_K ln(-d / I)``. The Fourier series of the logarithm is analytic
    (``ln(1 + m sin) = c + 2 sum (-1)^.. r^n / n cos(n ..)`` with ``m = B / D0``,
    ``r = (1 - sqrt(1 - m^2)) / m``), so harmonic ``n`` of the stage drop has amplitude
    ``2 V_S r^n / n``; the loop (integrator at ``omega_t beta``) leaves
    ``n omega / sqrt((n omega)^2 + (omega_t beta)^2)`` of it at the output. The estimate grows
    without bound as the device nearly cuts off (``m -> 1``: a marginal stage, whose THD comes
    from the device law in time instead, see :func:`predict_closed_form`). Per-part resistors
    to either rail (``NaN``: none) are added to the design's load, as a fix would be. NaN where
    the stage changes mode or is biased (class AB / CMOS).
    """
    n = stage.n
    out = np.full(n, np.nan)
    amp = design.out_amplitude_v
    w = design.omega
    pulldown = stage.has_pulldown
    if np.ndim(amp) == 0 and (not pulldown.any() or amp <= 0):
        return np.where(pulldown, 0.0, np.nan) if amp <= 0 else out
    if not pulldown.any():
        return out
    d0, b = source_demand(stage, design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    k = 2.0 * np.pi * stage.gbw_hz * design.beta
    sel = np.flatnonzero(pulldown)
    w, amp_s = pick(w, sel), pick(amp, sel)
    src = d0[sel]
    snk = -d0[sel]
    can_sink = stage.topology[sel] != CLASS_A
    mean = np.where(src > b[sel], src, np.where(can_sink, snk, np.nan))
    scale = np.where(src > b[sel], stage.device_scale_v[sel], stage.sink_scale_v[sel])
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.where(mean > b[sel], b[sel] / mean, np.nan)
        r = np.where(m > 0, m / (1.0 + np.sqrt(1.0 - m * m)), 0.0)  # (1 - sqrt(1-m^2)) / m
        # sum over n of (r^n w)^2 / ((n w)^2 + k^2), r^n by repeated products (no pow)
        r2 = np.where(np.isfinite(r), r * r, 0.0)
        k2 = k[sel] ** 2
        rn2 = r2 * r2  # r^(2n) for n = 2
        acc = np.zeros(sel.size)
        for order in range(2, n_harmonics + 1):
            acc += rn2 / ((order * w) ** 2 + k2)
            rn2 = rn2 * r2
        thd_sel = 2.0 * scale * w * np.sqrt(acc) / amp_s
        if np.ndim(amp_s) > 0:  # a batch: no signal, no distortion
            thd_sel = np.where(amp_s > 0, thd_sel, 0.0)
    out[sel] = np.where(np.isfinite(m), thd_sel, np.nan)
    if input_stage:
        with np.errstate(over="ignore"):
            out = np.sqrt(out**2 + _input_stage_thd(stage, design, n_harmonics) ** 2)
        out = np.where(np.isinf(out), BOUND_CAP, out)
    return out


def _input_stage_series(
    stage: StageParams, design: Design, n_harmonics: int, bound: bool = False
) -> np.ndarray:
    """Harmonics (V) of the input stage's slew-induced distortion at the output, (P, H - 1):
    the drive follows the output's slope; the common mode moves at the input's (a
    non-inverting stage's input is the output over the gain; an inverting stage's is still),
    so the tail sees ``gamma_d + gamma_cm / G`` or ``gamma_d`` of the output's slope. For a
    ``bound`` the rise/fall asymmetry is taken at least :data:`GAMMA_BOUND` (a datasheet's two
    rates are each uncertain; equal minima do not make a part symmetric)."""
    sr0, gamma, a_in, _b0 = input_law(
        stage.gbw_hz, stage.slew_rise_v_per_s, stage.slew_fall_v_per_s
    )
    if bound:
        gamma = np.maximum(np.abs(gamma), GAMMA_BOUND)
    cm = (
        1.0 / design.closed_loop.gain
        if design.closed_loop.configuration == "non-inverting"
        else 0.0
    )
    g_eff = gamma * ((1.0 - GAMMA_CM_SHARE) + GAMMA_CM_SHARE * cm)
    rate = design.out_amplitude_v * design.omega
    return input_stage_harmonics(a_in, g_eff, sr0, rate, design.noise_gain, n_harmonics)


def _input_stage_thd(stage: StageParams, design: Design, n_harmonics: int) -> np.ndarray:
    """THD_F (ratio) of the input stage's slew-induced distortion alone (inf: slew-limited)."""
    amp = design.out_amplitude_v
    if stage.n == 0 or np.all(np.asarray(amp) <= 0):
        return np.zeros(stage.n)
    es = _input_stage_series(stage, design, n_harmonics)
    with np.errstate(invalid="ignore", divide="ignore"):
        out = np.where(np.isfinite(es).all(axis=1), np.sqrt(np.sum(es * es, axis=1)) / amp, np.inf)
    return out if np.ndim(amp) == 0 else np.where(np.asarray(amp) > 0, out, 0.0)


def thd_bound(
    stage: StageParams,
    design: Design,
    *,
    r_to_neg_ohm: np.ndarray | None = None,
    r_to_pos_ohm: np.ndarray | None = None,
    n_harmonics: int = DEFAULT_HARMONICS,
) -> np.ndarray:
    """Upper bound of THD_F (harmonics 2..H, ratio) of a biased stage, or of a class-A/B stage
    kept in one mode (NaN for a class-A/B stage that does not stay in one mode with margin).

    Two mechanisms, each as an exact harmonic series over the ideal period (design notes
    section 10), combined per harmonic by the sum of magnitudes and multiplied by
    :data:`BOUND_FACTOR`:

    (a) the output devices' gm variation between quiescent and peak current: the stage drop
        ``x(t)`` of the device law, ``V_X asinh(i / 2 I_q)`` for a biased pair and
        ``V_S ln(d / I)`` for a follower in one mode (:func:`one_mode_thd`), each harmonic
        reduced by the loop at its own frequency, ``n omega / sqrt((n omega)^2 + K^2)`` with
        ``K = omega_t beta`` (the loop gain ``GBW / (G f)`` at ``f``);
    (b) slew-induced distortion of the input stage: the error the differential pair needs to
        deliver a fraction ``k = 2 pi f A / SR`` of its tail current
        (:func:`partsel.physics.distortion.input_stage_harmonics`; it does not depend on the
        load and dominates at high frequency into light loads).

    Where the output needs more than the slower slew rate (b) has no bound: the figure is then
    :data:`BOUND_CAP` (100 %), as is any bound above it, and ``ClosedForm.limited_by`` says
    "slew".
    """
    n = stage.n
    amp = design.out_amplitude_v
    out = np.full(n, np.nan)
    if n == 0:
        return out
    if np.all(np.asarray(amp) <= 0):
        return np.zeros(n)
    w = design.omega
    k = 2.0 * np.pi * stage.gbw_hz * design.beta
    d0, b = source_demand(stage, design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    dem_lo, dem_hi = d0 - b, d0 + b
    verdict = conduction_verdict(stage, dem_lo, dem_hi)
    keep = np.flatnonzero((verdict == "one-mode") | (verdict == "biased"))
    if keep.size == 0:
        return out
    st = stage.take(keep)
    ds = design.take(keep)
    h = n_harmonics - 1
    xs = np.zeros((keep.size, h))
    biased = st.biased
    i_q = np.nan_to_num(st.stage_current_a)
    if biased.any():
        j = np.flatnonzero(biased)
        xs[j] = translinear_harmonics(
            st.device_scale_v[j], i_q[j], d0[keep][j], b[keep][j], n_harmonics
        )
    fol = np.flatnonzero(~biased)
    if fol.size:
        src_mode = d0[keep][fol] > 0
        mean = np.where(src_mode, d0[keep][fol], -d0[keep][fol])
        scale = np.where(src_mode, st.device_scale_v[fol], st.sink_scale_v[fol])
        xs[fol] = device_law_harmonics(scale, mean, b[keep][fol], n_harmonics)
    xs = np.nan_to_num(xs) * loop_residue(pick(w, keep), k[keep], n_harmonics)
    es = _input_stage_series(st, ds, n_harmonics, bound=True)
    slewed = ~np.isfinite(es).all(axis=1)
    tot = xs + np.nan_to_num(es, posinf=0.0)
    amp_k = pick(amp, keep)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        bound = BOUND_FACTOR * np.sqrt(np.sum(tot * tot, axis=1)) / amp_k
    out[keep] = np.where(slewed, BOUND_CAP, np.minimum(bound, BOUND_CAP))
    if np.ndim(amp_k) > 0:  # a batch: rows without a signal have no distortion
        out[keep] = np.where(amp_k > 0, out[keep], 0.0)
    return out


def _device_law_thd(
    stage: StageParams, design: Design, idx: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """THD_F and glitch (peak residual, V) of parts ``idx`` from the device law in time: the
    compiled simulation of :mod:`partsel.physics.simulate` at MARGINAL_STEPS steps per period
    (a batch design: each row in its own circuit)
    (marginal stages: no formula holds where a device nearly cuts off)."""
    from partsel.physics.simulate import simulate

    sim = simulate(
        stage.take(idx), design.take(idx), steps_per_period=MARGINAL_STEPS, n_warmup=1,
        max_warmup=2,
    )  # fmt: skip
    return sim.thd_f, sim.residual_peak_v


#: Points at which the swing check reads the headroom curves between the output's peak and the
#: current's peak, and the padding on each side (a fraction of a period): the tightest instant
#: lies between the two peaks, so the check costs O(P) whatever the catalogue's size.
WINDOW_POINTS = 24
WINDOW_PAD = 3.0 / GRID


def _peak_window(theta_a: np.ndarray, theta_b: np.ndarray) -> np.ndarray:
    """Phases (rad) from ``theta_a`` to ``theta_b`` the short way round a period, padded by
    :data:`WINDOW_PAD` of a period at both ends: :data:`WINDOW_POINTS` evenly spaced points and
    the two ends themselves (the peaks); shape ``theta_a.shape + (WINDOW_POINTS + 2,)``."""
    two_pi = 2.0 * np.pi
    d = np.mod(np.asarray(theta_b, dtype=float) - theta_a, two_pi)
    flip = d > np.pi
    pad = WINDOW_PAD * two_pi
    start = np.where(flip, theta_b, theta_a) - pad
    length = np.where(flip, two_pi - d, d) + 2.0 * pad
    frac = np.linspace(0.0, 1.0, WINDOW_POINTS)
    even = np.asarray(start)[..., None] + np.asarray(length)[..., None] * frac
    ends = np.broadcast_arrays(np.asarray(theta_a, dtype=float), np.asarray(theta_b, dtype=float))
    return np.concatenate([even, np.stack(ends, axis=-1)], axis=-1)


def _arc_integrals(p1: np.ndarray, p2: np.ndarray) -> tuple[np.ndarray, ...]:
    """Integrals over ``p1 .. p2`` (rad) of 1, sin, cos, sin**2 and sin cos."""
    s1, s2, c1, c2 = np.sin(p1), np.sin(p2), np.cos(p1), np.cos(p2)
    length = p2 - p1
    return (
        length,
        c1 - c2,
        s2 - s1,
        0.5 * length - 0.5 * (s2 * c2 - s1 * c1),
        0.5 * (s2 * s2 - s1 * s1),
    )


def conduction_means(
    i0: np.ndarray,
    i_sin: np.ndarray,
    i_cos: np.ndarray,
    v0: np.ndarray,
    a: np.ndarray,
    v_pos: np.ndarray,
    v_neg: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Exact means over one period of the sourced current ``max(i, 0)`` (A) and of the power the
    output devices dissipate, ``max(i, 0) (V+ - v) + max(-i, 0) (v - V-)`` (W), for the output
    current ``i = I0 + b_s sin(theta) + b_c cos(theta)`` and the output ``v = V0 + a sin(theta)``
    (the ideal waveform in steady state). With ``i = I0 + B sin(psi)``, ``psi = theta + phi``,
    the source device conducts on ``-alpha < psi < pi + alpha``, ``sin(alpha) = I0 / B``; the
    integrands are sums of 1, sin, cos, sin**2 and sin cos on each arc (no grid)."""
    b = np.hypot(i_sin, i_cos)
    phi = np.arctan2(i_cos, i_sin)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):  # (b may be subnormal)
        alpha = np.where(b > 0, np.arcsin(np.clip(i0 / np.where(b > 0, b, 1.0), -1.0, 1.0)), 0.0)
    # the full period where the current keeps one sign (b = 0, or |I0| >= B)
    always_src = (b <= np.abs(i0)) & (i0 >= 0)
    always_snk = (b <= np.abs(i0)) & (i0 < 0)
    alpha = np.where(always_src, 0.5 * np.pi, np.where(always_snk, -0.5 * np.pi, alpha))
    p1, p2 = -alpha, np.pi + alpha  # the source device's arc; the sink's runs on to 2 pi - alpha
    cp, sp = np.cos(phi), np.sin(phi)

    def integral(lo, hi, k, p, q):  # integral of (I0 + B sin)(k + p sin + q cos)
        length, s1, c1, s2, sc = _arc_integrals(lo, hi)
        return i0 * k * length + i0 * p * s1 + i0 * q * c1 + b * k * s1 + b * p * s2 + b * q * sc

    # v = V0 + a sin(psi - phi) = V0 + a cos(phi) sin(psi) - a sin(phi) cos(psi)
    src_current = integral(p1, p2, 1.0, 0.0, 0.0)
    src_power = integral(p1, p2, v_pos - v0, -a * cp, a * sp)
    snk_power = -integral(p2, 2.0 * np.pi - alpha, v0 - v_neg, a * cp, -a * sp)
    inv = 1.0 / (2.0 * np.pi)
    return src_current * inv, (src_power + snk_power) * inv


def _class_a_clip(design: Design, i_bias: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Flat level, clip depth and THD_F of a class-A output that cannot sink more than
    ``i_bias`` (one value per part), in closed form.

    While clipped the load alone holds the output where it draws ``-i_bias``. With an
    AC-coupled load the coupling capacitor settles where its mean current is zero, i.e. its
    far-end level ``L`` equals the mean of the clipped output (solved by Newton's method).
    The clipped sine ``A max(sin t, u)`` equals the sine plus a cosine pulse of half-width
    ``b = acos(-u)``, whose Fourier coefficients are the classic conduction-angle series
    (e.g. tuned power-amplifier texts): ``a_1 = (b - sin b cos b) / pi``,
    ``a_n = [sin((n-1)b)/(n-1) + sin((n+1)b)/(n+1) - 2 cos b sin(nb)/n] / pi``, and the mean
    ``(sin b - b cos b) / pi``. THD_F over harmonics 2..DEFAULT_HARMONICS.
    """
    from partsel.physics.spectrum import DEFAULT_HARMONICS

    v0, amp = design.out_bias_v, design.out_amplitude_v
    ld = design.load
    ac = ld.r_load_ohm is not None and ld.coupling == "ac"
    rb = resistive_branches(design)

    def pulse_mean(u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        b = np.arccos(np.clip(-u, -1.0, 1.0))
        return (np.sin(b) - b * np.cos(b)) / np.pi, b / np.pi  # mean, clipped fraction

    if np.all(np.asarray(amp) <= 0):
        nan = np.full(i_bias.shape, np.nan)
        return nan, np.zeros(i_bias.shape), np.zeros(i_bias.shape)
    if ac:
        g_ac = 1.0 / ld.r_load_ohm
        kappa = g_ac / (rb.g_s + g_ac)
        level = np.full(i_bias.shape, v0)
        for _ in range(30):
            flat = (rb.i_s + g_ac * level - i_bias) / (rb.g_s + g_ac)
            m, frac = pulse_mean((flat - v0) / amp)
            g = level - v0 - amp * m
            step = g / (1.0 - kappa * frac)
            level = level - step
            if float(np.max(np.abs(step))) < 1e-9:
                break
        flat = (rb.i_s + g_ac * level - i_bias) / (rb.g_s + g_ac)
    elif np.ndim(rb.g_s) == 0:
        flat = (rb.i_s - i_bias) / rb.g_s if rb.g_s > 0 else np.full(i_bias.shape, -np.inf)
    else:
        with np.errstate(divide="ignore", invalid="ignore"):
            flat = np.where(rb.g_s > 0, (rb.i_s - i_bias) / rb.g_s, -np.inf)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.clip((flat - v0) / amp, -1.0, 1.0)
    depth = np.maximum(flat - (v0 - amp), 0.0)
    b = np.arccos(-u)[:, None]
    n = np.arange(2, DEFAULT_HARMONICS + 1)[None, :]
    with np.errstate(invalid="ignore", divide="ignore"):
        a_n = (
            np.sin((n - 1) * b) / (n - 1)
            + np.sin((n + 1) * b) / (n + 1)
            - 2.0 * np.cos(b) * np.sin(n * b) / n
        ) / np.pi
    a_1 = (b[:, 0] - np.sin(b[:, 0]) * np.cos(b[:, 0])) / np.pi
    with np.errstate(invalid="ignore", divide="ignore"):
        thd_f = np.sqrt(np.sum(a_n**2, axis=1)) / np.abs(1.0 - a_1)
    return flat, depth, np.nan_to_num(thd_f, nan=0.0)


def _quarter_times(design: Design) -> np.ndarray:
    """The instants of the sine's two peaks (a quarter and three quarters of a period), s;
    (2,) or (N, 2) for a batch."""
    return np.array([0.25, 0.75]) / col(design.signal.frequency_hz)


def output_extremes(design: Design) -> tuple[np.ndarray, np.ndarray]:
    """Lowest and highest level of the ideal output, V (one value, or (N,) for a batch)."""
    v = design.v_ideal(_quarter_times(design))
    return v.min(axis=-1), v.max(axis=-1)


def input_extremes(design: Design) -> tuple[np.ndarray, np.ndarray]:
    """Lowest and highest level of the non-inverting input (:meth:`Design.v_plus`), V."""
    v = design.v_plus(_quarter_times(design))
    return v.min(axis=-1), v.max(axis=-1)


def ideal_grid(design: Design, n: int = GRID) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """One period of the ideal waveform: times (s), output (V) and output current (A); shape
    (n,), or (N, n) for a batch design (:attr:`Design.rows`; the times (n,) while every row has
    the same frequency)."""
    t = np.arange(n) / (n * col(design.signal.frequency_hz))
    v, i = design.v_ideal(t), ideal_current(design, t)
    if design.rows is not None:  # (the times stay one axis while the frequency is shared)
        shape = (design.rows, n)
        return t, np.broadcast_to(v, shape), np.broadcast_to(i, shape)
    return t, v, i


def _effective_dead_band(
    dead_band_v: np.ndarray,
    i_stage: np.ndarray,
    r_eff: float,
    slope: np.ndarray,
    glitch_v: np.ndarray,
    k_loop: np.ndarray,
    slew: np.ndarray,
    v_off: np.ndarray,
    v_on: np.ndarray,
) -> np.ndarray:
    """The drive distance a crossing really covers with exponential device laws, V.

    The dead band ``dV`` separates the drive points where each device carries the stage
    current ``I``. With a load of resistance ``R`` the device turning off follows the ideal
    until the drive can no longer keep up with its logarithmic law: ``x = V_off ln(s t / R I)``
    needs the drive speed ``V_off / t``, i.e. an error ``V_off / (K t)``, which reaches the
    ideal's own ``s t`` at ``t_0 = sqrt(V_off / (K s))``; the crossing proper starts there, at
    ``V_off ln(s t_0 / (R I))`` from that device's stage-current point. The deviation stops
    growing when the output moves as fast as the ideal again: the device turning on moves it
    at ``R i r / V_on`` for a drive rate ``r = min(K g, SR)``, which equals ``s`` at
    ``i = s V_on / (R r)``, ``V_on ln(i / I)`` from its point. So the distance is
    ``dV + V_off ln(s t_0 / R I) + V_on ln(s V_on / (R r I))`` (shorter than ``dV`` for light
    loads), at least a tenth of ``dV``.
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        t0 = np.sqrt(v_off / (k_loop * slope))
        start = v_off * np.log(slope * t0 / (r_eff * i_stage))
        rate = np.minimum(k_loop * np.maximum(glitch_v, 1e-12), slew)
        end = v_on * np.log(slope * v_on / (r_eff * rate * i_stage))
        eff = dead_band_v + np.nan_to_num(start) + np.nan_to_num(end)
    return np.clip(eff, 0.1 * dead_band_v, None)


def _clip_levels(
    stage: StageParams, design: Design, pulldown: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Depths (V, >= 0) by which the ideal output goes beyond the positive and the negative
    swing limit at the current flowing there (the headroom curves of the catalogue), taken at
    the output's peaks: ``max(v_pk - (V+ - h_pos(i_src)), 0)`` and likewise below. The current
    is the one the load draws at the clip level itself (solved by fixed-point iteration: a
    clipped output draws less than the ideal would)."""
    sup = design.supply
    v0, amp = design.out_bias_v, design.out_amplitude_v
    rb = resistive_branches(design)
    ld = design.load
    ac = ld.r_load_ohm is not None and ld.coupling == "ac"
    g = rb.g_s + (1.0 / ld.r_load_ohm if ac else 0.0)
    i_s = rb.i_s + (v0 / ld.r_load_ohm if ac else 0.0)
    i_hi = np.where(pulldown, stage.stage_current_high_a, 0.0)
    top = np.broadcast_to(np.asarray(v0 + amp, dtype=float), (stage.n,)).copy()
    bot = np.broadcast_to(np.asarray(v0 - amp, dtype=float), (stage.n,)).copy()
    for _ in range(4):
        src = np.maximum(g * top - i_s + i_hi, 0.0)
        top = np.minimum(v0 + amp, sup.v_pos_v - stage.headroom_pos(src))
        snk = np.maximum(-(g * bot - i_s), 0.0)
        bot = np.maximum(v0 - amp, sup.v_neg_v + stage.headroom_neg(snk))
    depth_top = np.nan_to_num(np.maximum(v0 + amp - top, 0.0))
    depth_bot = np.nan_to_num(np.maximum(bot - (v0 - amp), 0.0))
    return depth_top, depth_bot


def held_current(
    stage: StageParams,
    dem_lo: np.ndarray,
    dem_hi: np.ndarray,
    min_source_a: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Least current of the device that must stay on all period, A, and whether that is the
    sink device, from the source device's demand range ``dem_lo`` .. ``dem_hi`` (A): the source
    device's least current ``min_source_a`` (default ``dem_lo``), or, for class B held in sink
    mode (the demand stays below zero), the sink device's ``-dem_hi``; the side nearer to one
    mode is the one held. The conduction check's value (:attr:`ClosedForm.held_current_a`)."""
    lo = dem_lo if min_source_a is None else min_source_a
    held_sink = (stage.topology == CLASS_B) & (-dem_hi > dem_lo)
    return np.where(held_sink, -dem_hi, lo), held_sink


@np.errstate(over="ignore", invalid="ignore")
def predict_closed_form(
    stage: StageParams, design: Design, *, device_law: np.ndarray | None = None
) -> ClosedForm:
    """Closed-form predictions of every part of ``stage`` in ``design``.

    ``design`` may be a batch (:attr:`partsel.physics.circuit.Design.rows`: one design per row
    of ``stage``, e.g. one sample of the circuit's tolerances per row): every formula is then
    evaluated row by row, with the same rules. ``device_law``: the rows (a boolean mask) whose
    marginal stages get their THD and glitch from the device-law simulation (default: all);
    elsewhere a marginal stage's THD and glitch are NaN, not evaluated (for callers that know
    those rows are rejected on other grounds).

    Overflow becomes infinity and NaN a missing figure, not a warning: only values far outside
    their plausible range get there (a signal at 1e-300 Hz), and the checks read them as
    failing or unknown."""
    p = stage.n
    batch = design.rows is not None
    sup = design.supply
    vpos, vneg = sup.v_pos_v, sup.v_neg_v
    w = design.omega
    a = design.signal_gain * design.signal.amplitude_v  # signed output amplitude
    amp = abs(a)
    v0 = design.out_bias_v
    i_stage = stage.stage_current_a
    pulldown = stage.has_pulldown
    wt = 2.0 * np.pi * stage.gbw_hz
    wt_beta = wt * design.beta

    # --- conduction: i(t) = I0 + B sin(wt + phi); source demand d(t) = D0 + B_d sin(..) --------
    y = admittance(design, w)
    i0 = dc_current(design)
    b = abs(y) * amp
    if batch:
        phi = np.arctan2(np.imag(y), np.real(y)) + np.where(np.asarray(a) < 0, np.pi, 0.0)
    else:
        phi = math.atan2(y.imag, y.real) + (math.pi if a < 0 else 0.0)
    i_min, i_max = i0 - b, i0 + b
    d0, bd = source_demand(stage, design)
    dem_lo, dem_hi = d0 - bd, d0 + bd
    verdict = conduction_verdict(stage, dem_lo, dem_hi)
    handover = verdict == "changes-mode"
    marginal = verdict == "marginal"
    with np.errstate(invalid="ignore"):
        min_src = np.where(pulldown, dem_lo, 0.5 * (i_min + np.sqrt(i_min**2 + 4.0 * i_stage**2)))
    held, held_sink = held_current(stage, dem_lo, dem_hi, min_src)
    crossover_biased = ~pulldown & (i_min < 0) & (i_max > 0)
    level, g_th = thevenin_level(design)
    with np.errstate(divide="ignore", invalid="ignore"):
        # Handover where B sin(theta) = -I_stage - I0 (class A/B) or = -I0 (biased).
        thr = np.where(pulldown, -i_stage - i0, -i0)
        if batch:
            flat = np.where(g_th > 0, level - i_stage / g_th, np.nan)
            k = np.where(b > 0, np.clip(thr / b, -1.0, 1.0), np.nan)
        else:
            flat = level - i_stage / g_th if g_th > 0 else np.full(p, np.nan)
            k = np.clip(thr / b, -1.0, 1.0) if b > 0 else np.full(p, np.nan)
    theta_fall = np.pi - np.arcsin(k)
    theta_rise = 2.0 * np.pi + np.arcsin(k)
    s_fall = np.abs(a * w * np.cos(theta_fall - phi))
    s_rise = np.abs(a * w * np.cos(theta_rise - phi))
    active = handover | crossover_biased
    out_at = np.where(active, v0 + a * np.sin(theta_fall - phi), np.nan)
    phase = np.where(active, np.mod(theta_fall - phi, 2 * np.pi), np.nan)
    # the drive slews through a crossing at the input stage's full rate, its tail current less
    # the common mode's share of its slope (the input's slope; 0 for an inverting stage)
    cm_gain = (
        1.0 / design.closed_loop.gain
        if design.closed_loop.configuration == "non-inverting"
        else 0.0
    )
    sr_f = drive_slew(
        stage.gbw_hz, stage.slew_rise_v_per_s, stage.slew_fall_v_per_s, -cm_gain * s_fall, False
    )
    sr_r = drive_slew(
        stage.gbw_hz, stage.slew_rise_v_per_s, stage.slew_fall_v_per_s, cm_gain * s_rise, True
    )
    # The crossing is modelled against a linearly moving ideal output, which holds for a small
    # part of a period only. A crossing that would last a quarter period or more (a part far
    # too slow for the signal; the slew and bandwidth checks reject it) is taken as lasting a
    # quarter period with the deviation a sine reaches in that time, amp * pi / 2, whatever
    # the part: the estimate then says "very large" without ranking hopeless parts by noise,
    # and limited_by says "bandwidth" (or "slew").
    quarter = 0.25 / design.signal.frequency_hz
    g_cap = amp * np.pi / 2.0
    c_load = design.load.c_load_f
    if batch:
        with np.errstate(divide="ignore", invalid="ignore"):
            tau_load = np.where(c_load <= 0, 0.0, np.where(g_th > 0, c_load / g_th, np.inf))
            r_eff = np.where(g_th > 0, 1.0 / g_th, np.inf)
    else:
        if c_load <= 0:
            tau_load = 0.0
        elif g_th > 0:
            tau_load = c_load / g_th
        else:
            tau_load = np.inf
        r_eff = 1.0 / g_th if g_th > 0 else np.inf
    v_src = stage.device_scale_v
    v_snk = stage.sink_scale_v
    edges_raw = []
    for s_e, sr_e, psi_e, sign, v_off, v_on in (
        (s_fall, sr_f, theta_fall - phi, 1.0, v_src, v_snk),
        (s_rise, sr_r, theta_rise - phi, -1.0, v_snk, v_src),
    ):
        if not handover.any():  # no crossing to model (e.g. every part kept in one mode)
            zero = np.zeros(p)
            edges_raw.append((zero, zero.copy(), np.zeros(p, dtype=bool), stage.dead_band_v))
            continue
        # ideal output's steepening at the handover (falling edge: slope growing more negative)
        accel = np.maximum(sign * a * w * w * np.sin(psi_e), 0.0)
        # dead-zone crossing over the distance the exponential laws leave (two passes: the
        # end of the crossing depends on the glitch it produces)
        db_eff = stage.dead_band_v
        for _ in range(2):
            tau_e, g_e, capped = _crossing(db_eff, s_e, accel, tau_load, wt_beta, sr_e, quarter)
            db_eff = _effective_dead_band(
                stage.dead_band_v, i_stage, r_eff, s_e, g_e, wt_beta, sr_e, v_off, v_on
            )
        tau_e, g_e, capped = _crossing(db_eff, s_e, accel, tau_load, wt_beta, sr_e, quarter)
        edges_raw.append((tau_e, np.where(capped, g_cap, np.minimum(g_e, g_cap)), capped, db_eff))
    (tau_f, g_fall, cap_f, db_f), (tau_r, g_rise, cap_r, db_r) = edges_raw
    glitch = np.maximum(g_fall, g_rise)
    tau = np.where(g_fall >= g_rise, tau_f, tau_r)
    db_used = np.where(g_fall >= g_rise, db_f, db_r)
    slope = np.where(g_fall >= g_rise, s_fall, s_rise)
    is_a = stage.topology == CLASS_A
    glitch = np.where(handover, glitch, 0.0)
    tau = np.where(handover & ~is_a, tau, 0.0)
    crossing_capped = handover & ~is_a & (cap_f | cap_r)
    f = design.signal.frequency_hz
    # Class B: the deviation from the ideal is a ramp on each edge (output stuck while the drive
    # crosses the dead band) that the loop then removes at its closed-loop rate omega_t beta, or
    # at the slew rate when the step is larger than that rate can follow; its harmonics 2..H are
    # the distortion (see _glitch_thd).
    thd_est = np.zeros(p)
    sel = np.flatnonzero(handover & ~is_a)
    if sel.size:
        edges = []
        for g_e, tau_e, sr_e, cap_e in (
            (g_fall, tau_f, sr_f, cap_f),
            (g_rise, tau_r, sr_r, cap_r),
        ):
            g_sel, tau_sel = g_e[sel], tau_e[sel]
            with np.errstate(divide="ignore", invalid="ignore"):
                t_rec = np.maximum(1.0 / wt_beta[sel], 0.5 * g_sel / sr_e[sel])
            # The recovery is taken as no slower than the crossing (a slower one means the
            # loop is slew-bound throughout, which the slew check reports; an exponential
            # tail longer than the ramp would only smooth the glitch away), and as immediate
            # for a capped crossing, so that the capped value bounds all others.
            t_rec = np.where(cap_e[sel], 0.0, np.minimum(t_rec, tau_sel))
            with np.errstate(divide="ignore", invalid="ignore"):
                slope_sel = np.where(tau_sel > 0, g_sel / tau_sel, 0.0)
            edges.append((slope_sel, tau_sel, t_rec))
        thd_est[sel] = _glitch_thd(pick(w, sel), pick(amp, sel), edges)
    # Biased stages and class A/B in one mode: an upper bound (design notes section 10); the
    # ranking of biased stages uses the bound itself, one-mode followers their device-law
    # estimate (the Fourier series of the log law).
    bound = thd_bound(stage, design)
    one = pulldown & (verdict == "one-mode")
    if one.any():
        rows_one = np.flatnonzero(one)
        thd_est[one] = np.nan_to_num(one_mode_thd(stage.take(rows_one), design.take(rows_one)))
    thd_est = np.where(stage.biased, bound, thd_est)
    # Marginal: the device law in time (a short compiled simulation of these parts only).
    marg_idx = np.flatnonzero(marginal if device_law is None else marginal & device_law)
    if device_law is not None:
        skipped = marginal & ~device_law
        thd_est[skipped] = np.nan
        glitch[skipped] = np.nan
    if marg_idx.size:
        thd_m, glitch_m = _device_law_thd(stage, design, marg_idx)
        thd_est[marg_idx] = thd_m
        glitch[marg_idx] = glitch_m
    # Class A: the output flattens at the flat level instead of crossing a dead band.
    clipped = np.flatnonzero(is_a & handover)
    if clipped.size:
        level_a, depth_a, thd_a = _class_a_clip(design.take(clipped), i_stage[clipped])
        flat = np.array(flat, dtype=float, copy=True)
        flat[clipped] = level_a
        glitch[clipped] = depth_a
        thd_est[clipped] = thd_a

    # --- currents and swing at the instants that matter (no grid) ----------------------------
    # the output peaks at theta = pi/2 (a > 0), the current i = I0 + B sin(theta + phi) at
    # pi/2 - phi; the ideal waveform read at the window's instants
    top = np.where(np.asarray(a) >= 0, 0.5 * np.pi, 1.5 * np.pi)
    t_p = _peak_window(top, 0.5 * np.pi - phi) / col(w)  # output top .. current peak
    t_n = _peak_window(top + np.pi, 1.5 * np.pi - phi) / col(w)  # bottom .. current trough
    i_p, i_n = (np.atleast_2d(ideal_current(design, tt)) for tt in (t_p, t_n))
    h_p = col(vpos) - np.atleast_2d(design.v_ideal(t_p))
    h_n = np.atleast_2d(design.v_ideal(t_n)) - col(vneg)
    # The pull-down current adds to the source current: its pessimistic side here is the high one.
    i_hi = stage.stage_current_high_a
    src_p = np.maximum(i_p + np.where(pulldown, i_hi, 0.0)[:, None], 0.0)
    swing_pos = np.min(h_p - stage.headroom_pos(src_p), axis=1)
    snk_n = np.broadcast_to(np.maximum(-i_n, 0.0), (p, i_n.shape[1]))
    swing_neg = np.min(h_n - stage.headroom_neg(snk_n), axis=1)
    src_peak = np.maximum(i_max + np.where(pulldown, i_hi, 0.0), 0.0)
    snk_peak = np.broadcast_to(np.maximum(-np.asarray(i_min, dtype=float), 0.0), (p,)).copy()

    # --- clipping at the swing limits (the current flowing there) ------------------------------
    clip_top, clip_bot = _clip_levels(stage, design, pulldown)
    clip_depth = np.maximum(clip_top, clip_bot)
    thd_clip = np.zeros(p)
    clipping = clip_depth > 0
    if clipping.any() and np.any(np.asarray(amp) > 0):
        amp_c = pick(amp, clipping)
        with np.errstate(divide="ignore", invalid="ignore"):
            a1, an = clipped_sine_harmonics(
                1.0 - clip_top[clipping] / amp_c, 1.0 - clip_bot[clipping] / amp_c
            )
        with np.errstate(divide="ignore", invalid="ignore"):
            thd_clip[clipping] = np.sqrt(np.sum(an * an, axis=1)) / np.abs(a1)
        # the clipped part's THD adds to the crossover's (different instants: in power)
        with np.errstate(over="ignore"):
            thd_est = np.where(clipping, np.sqrt(thd_est**2 + thd_clip**2), thd_est)
        bound = np.where(clipping & np.isfinite(bound), bound + thd_clip, bound)

    # --- input common mode -------------------------------------------------------------------
    vp_lo, vp_hi = input_extremes(design)
    cm_low = vp_lo - (vneg + stage.cm_headroom_neg_v)
    cm_high = (vpos - stage.cm_headroom_pos_v) - vp_hi

    # --- dynamics ---------------------------------------------------------------------------
    slew_req = amp * w
    sr = np.minimum(stage.slew_rise_v_per_s, stage.slew_fall_v_per_s)  # datasheet values
    with np.errstate(divide="ignore", invalid="ignore"):
        slew_ratio = np.where(slew_req > 0, sr / slew_req, np.inf)
        fpbw = np.where(amp > 0, sr / (2.0 * np.pi * amp), np.inf)
    gn = design.noise_gain
    f_cl = stage.gbw_hz / gn
    # Single-pole loop: A_cl / A_ideal = 1 / (1 + j f / f_cl).
    ratio = 1.0 / (1.0 + 1j * f / f_cl)
    gain_err = np.abs(ratio) - 1.0
    phase_err = np.angle(ratio)
    with np.errstate(divide="ignore", invalid="ignore"):
        cap_ratio = design.load.c_load_f / stage.cap_load_limit_f
    stable = gn >= stage.min_stable_gain * (1 - 1e-9)
    limited = np.full(p, "", dtype=object)
    limited[crossing_capped | (f >= f_cl)] = "bandwidth"
    limited[slew_ratio < 1.0] = "slew"
    limited[clipping] = "clipping"
    total = sup.total_v
    in_range = (stage.supply_min_v <= total + 1e-9) & (total <= stage.supply_max_v + 1e-9)

    # --- power -------------------------------------------------------------------------------
    chans = np.maximum(stage.channels, design.channels_used)
    used = float(design.channels_used)
    # i = I0 + b_s sin(theta) + b_c cos(theta), as loading.ideal_current
    src_mean, p_devices = conduction_means(i0, np.real(y) * a, np.imag(y) * a, v0, a, vpos, vneg)
    # from the positive rail: the quiescent current, what the source device delivers, and what
    # a resistor from V+ to the output (a pull-up) draws straight from the rail (its mean over
    # the sine is (V+ - V0) / R_up; per row of a batch: NaN where a row has none)
    r_up = design.load.r_to_pos_ohm
    if r_up is None:
        i_up = 0.0
    else:
        r_up_a = np.asarray(r_up, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            i_up = np.where(np.isfinite(r_up_a), (vpos - v0) / r_up_a, 0.0)
        i_up = float(i_up) if np.ndim(i_up) == 0 else i_up
    i_supply = stage.supply_current_a * chans + used * (src_mean + i_up)
    p_out_stage = used * p_devices
    p_diss = stage.supply_current_a * chans * total + p_out_stage
    t_j = design.t_ambient_max_c + p_diss * stage.theta_ja_k_per_w

    return ClosedForm(
        basis=stage.basis,
        i_out_min_a=np.broadcast_to(np.asarray(i_min, dtype=float), (p,)).copy(),
        i_out_max_a=np.broadcast_to(np.asarray(i_max, dtype=float), (p,)).copy(),
        min_source_a=min_src,
        held_current_a=held,
        held_sink=held_sink,
        handover=handover,
        marginal=marginal,
        crossover_biased=crossover_biased,
        flat_level_v=np.where(handover | marginal, flat, np.nan),
        handover_out_v=out_at,
        handover_phase_rad=phase,
        slope_v_per_s=np.where(active, slope, np.nan),
        handover_time_s=tau,
        glitch_v=glitch,
        thd_estimate=thd_est,
        swing_pos_margin_v=swing_pos,
        swing_neg_margin_v=swing_neg,
        cm_low_margin_v=cm_low,
        cm_high_margin_v=cm_high,
        slew_required_v_per_s=slew_req,
        slew_margin_ratio=slew_ratio,
        full_power_bw_hz=fpbw,
        closed_loop_bw_hz=f_cl,
        gain_error=gain_err,
        phase_error_rad=phase_err,
        cap_load_ratio=cap_ratio,
        stable_at_gain=stable,
        supply_in_range=in_range,
        source_peak_a=src_peak,
        sink_peak_a=snk_peak,
        source_limit_ok=src_peak <= stage.source_limit_a,
        sink_limit_ok=snk_peak <= stage.sink_limit_a,
        supply_current_a=i_supply,
        dissipation_w=p_diss,
        t_junction_c=t_j,
        t_junction_margin_c=stage.junction_max_c - t_j,
        conduction=verdict,
        dead_band_eff_v=np.where(handover & ~is_a, db_used, np.nan),
        source_demand_min_a=np.where(pulldown, dem_lo, np.nan),
        source_demand_max_a=np.where(pulldown, dem_hi, np.nan),
        thd_bound=bound,
        clip_depth_v=clip_depth,
        clip_top_v=clip_top,
        clip_bottom_v=clip_bot,
        thd_clipping=thd_clip,
        limited_by=limited,
    )
