"""Time-domain simulation of partsel's amplifier macro-model, vectorised over parts.

The macro-model (one channel, all parts at once):

* error at the inputs ``e = v_plus - v_minus`` with ``v_minus = beta * v_out + v_md`` (the
  feedback network);
* a slew-limited integrator drives the internal node:
  ``dv_drive/dt = clip(omega_t * e, -SR_fall, +SR_rise)``, ``omega_t = 2 pi GBW``;
* the output stage of :mod:`partsel.physics.stage` (dead-zone followers with pull-down or bias
  current, current limits, swing limits) feeds the output node;
* the load network of :mod:`partsel.physics.loading` as an ODE (coupling capacitor state,
  load capacitance).

Integration is backward Euler on the drive node and on the load capacitance, so the time step
need not resolve the closed-loop pole; at each step the output-node equation is monotonic in
``v_out`` and is solved for all parts at once with a bracketing (Illinois) iteration. The
coupling capacitor starts at its linear periodic steady state and is corrected after each
warm-up period (shooting on the periodicity condition: zero mean current through it). The last
``n_record`` periods are kept and analysed with coherent sampling.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from partsel.physics.circuit import Design
from partsel.physics.loading import resistive_branches
from partsel.physics.spectrum import DEFAULT_HARMONICS, harmonic_amplitudes, thd
from partsel.physics.stage import CLASS_A, V_EARLY_PULLDOWN, StageParams, pwl_with_slope

#: Fraction of the stage current below which the source device counts as cut off.
CUTOFF_FRACTION = 0.1
#: Fraction of the stage current below which a stage still in source mode counts as marginal.
MARGINAL_FRACTION = 0.5


@dataclass(frozen=True)
class SimResult:
    """Waveforms of the recorded periods and their analysis. Shapes: (N,) or (P, N)."""

    t_s: np.ndarray
    v_ideal: np.ndarray
    v_out: np.ndarray
    v_drive: np.ndarray
    i_out: np.ndarray  #: current out of the output pin into the network, A
    i_source: np.ndarray  #: source-device current, A
    i_sink: np.ndarray  #: sink-device current, A (class A: 0)
    i_pulldown: np.ndarray  #: internal pull-down current, A (class AB / CMOS: 0)
    n_record: int
    steps_per_period: int
    harmonics_v: np.ndarray  #: (P, H+1) peak amplitudes of harmonics 0..H, V
    thd_f: np.ndarray  #: (P,) THD_F over harmonics 2..H (IEC definition, ratio)
    residual_peak_v: np.ndarray  #: (P,) peak of v_out minus its DC and fundamental, V
    deviation_peak_v: np.ndarray  #: (P,) peak |v_out - v_ideal|, V
    min_source_a: np.ndarray  #: (P,) smallest source-device current over the period, A
    handover: np.ndarray  #: (P,) bool: the stage changed conduction mode
    handover_level_v: np.ndarray  #: (P,) output level at the first handover instant, V
    handover_time_s: np.ndarray  #: (P,) time of the first handover in the record, s
    unconverged: np.ndarray  #: (P,) bool: the output-node solve missed its tolerance somewhere


def default_steps(stage: StageParams, design: Design) -> int:
    """Steps per period: at least 1024, and ~10 steps across the shortest predicted handover."""
    a = design.out_amplitude_v
    w = design.omega
    n = 1024
    if a > 0:
        s = w * a
        wt = 2 * np.pi * np.nan_to_num(stage.gbw_hz, nan=1e6)
        db = np.nan_to_num(stage.dead_band_v, nan=0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            tau = np.sqrt(2 * db * design.noise_gain / (wt * s))
        tau = tau[(db > 0) & np.isfinite(tau)]
        if tau.size:
            period = 1.0 / design.signal.frequency_hz
            n = max(n, math.ceil(10.0 * period / float(tau.min())))
    return int(min(n, 16384))


def _as_part_array(value: float | np.ndarray | None, n: int) -> np.ndarray:
    if value is None:
        return np.full(n, np.inf)
    arr = np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()
    return np.where(np.isnan(arr), np.inf, arr)


def simulate(
    stage: StageParams,
    design: Design,
    *,
    steps_per_period: int | None = None,
    n_warmup: int = 2,
    max_warmup: int = 16,
    settle_v: float = 2e-5,
    n_record: int = 1,
    r_to_neg_ohm: float | np.ndarray | None = None,
    r_to_pos_ohm: float | np.ndarray | None = None,
    n_harmonics: int = DEFAULT_HARMONICS,
    iterations: int = 4,
    max_iterations: int = 60,
    tol_v: float = 1e-7,
) -> SimResult:
    """Simulate all parts of ``stage`` in ``design`` and analyse the last periods.

    ``r_to_neg_ohm`` / ``r_to_pos_ohm`` (scalar or one per part) add resistors from the output
    to a rail on top of the design's own (the fix under test).
    """
    p = stage.n

    def stage_pos_curve(h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Available source current and its slope d i / d headroom at headroom ``h``."""
        return pwl_with_slope(h, stage.swing_pos_v, stage.swing_pos_i_a)

    def stage_neg_curve(h: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        return pwl_with_slope(h, stage.swing_neg_v, stage.swing_neg_i_a)

    sup = design.supply
    vpos, vneg = sup.v_pos_v, sup.v_neg_v
    f = design.signal.frequency_hz
    period = 1.0 / f
    n = steps_per_period or default_steps(stage, design)
    n_harm = min(n_harmonics, n // 2 - 1)
    dt = period / n
    max_warmup = max(max_warmup, n_warmup)

    # --- part parameters (one formula for every topology; see partsel.physics.stage) --------
    topo = stage.topology
    pulldown = stage.has_pulldown
    i_stage = np.nan_to_num(stage.stage_current_a, nan=0.0)
    inv_vs = 1.0 / stage.device_scale_v
    db = np.nan_to_num(stage.dead_band_v, nan=0.0)
    i_src0 = i_stage
    i_snk0 = np.where(topo == CLASS_A, 0.0, i_stage)  # class A has no sink device
    i_pd0 = np.where(pulldown, i_stage, 0.0)  # internal pull-down / sink-bias source
    lim_src = np.nan_to_num(stage.source_limit_a, nan=np.inf)
    lim_snk = np.nan_to_num(stage.sink_limit_a, nan=np.inf)
    wt = 2.0 * np.pi * stage.gbw_hz
    sr_r = np.nan_to_num(stage.slew_rise_v_per_s, nan=np.inf)
    sr_f = np.nan_to_num(stage.slew_fall_v_per_s, nan=np.inf)
    beta = design.beta
    v_mid = 0.5 * (vpos + vneg)
    drive_lo = vneg - db - 1.0
    drive_hi = vpos + 1.0
    pd_slope = i_pd0 / V_EARLY_PULLDOWN
    pd_const = i_pd0 - pd_slope * v_mid

    # --- load network -------------------------------------------------------------------------
    ld = design.load
    rb = resistive_branches(design)
    rn = _as_part_array(r_to_neg_ohm, p)
    rp = _as_part_array(r_to_pos_ohm, p)
    g_s = rb.g_s + 1.0 / rn + 1.0 / rp
    i_s = rb.i_s + vneg / rn + vpos / rp
    ac = ld.r_load_ohm is not None and ld.coupling == "ac"
    r_l = float(ld.r_load_ohm) if ac else np.inf
    c_c = float(ld.c_couple_f or np.inf) if ac else np.inf
    v_ref_l = ld.reference_v
    c_l = ld.c_load_f
    g_tot = g_s + c_l / dt + (1.0 / r_l if ac else 0.0)
    a_sig = design.signal_gain * design.signal.amplitude_v
    w = design.omega
    if ac:
        h = 1.0 / (1.0 + 1j * w * r_l * c_c)
        v_cap = np.full(p, design.out_bias_v - v_ref_l + float(np.imag(a_sig * h)))
    else:
        v_cap = np.zeros(p)

    # Input drive for every step of a period (the drive is periodic and the steps align).
    t_all = (np.arange(n) + 1) * dt
    drive_in = design.v_plus(t_all) - design.v_minus_drive(t_all)

    # --- state ------------------------------------------------------------------------------------
    v = np.full(p, float(design.v_ideal(np.array([0.0]))[0]))
    vd = v.copy()
    v_old = v.copy()
    rec_n = n * n_record
    rec = {k: np.empty((rec_n, p)) for k in ("v", "vd", "io", "isrc", "isnk", "ipd")}
    i_cap_sum = np.zeros(p)
    unconverged = np.zeros(p, dtype=bool)
    shoot_prev: tuple[np.ndarray, np.ndarray] | None = None
    shoot_ok = np.zeros(p, dtype=bool)  # shoot_prev holds a usable point for this part
    settled = np.zeros(p, dtype=bool)
    period_start = (v.copy(), vd.copy())
    n_warm_done = 0
    recording = False
    k_total = 0
    j = -1

    while True:
        for k in range(n):
            k_total += 1
            # Per-step constants.
            c_rate = wt * drive_in[k]
            base = vd
            i_const = i_s + c_l * v / dt + ((v_cap + v_ref_l) / r_l if ac else 0.0)
            # Swing limits linearised around the last output level (one segment per step).
            ap, sp = stage_pos_curve(vpos - v)
            an, sn = stage_neg_curve(v - vneg)
            kp = ap + sp * v  # avail_pos(vo) = kp - sp * vo
            kn = an - sn * (v - vneg)  # avail_neg(vo) = kn + sn * (vo - vneg)

            def drive(vo: np.ndarray) -> np.ndarray:
                """Drive node at the end of the step: slew-limited integrator, clamped."""
                rate = np.clip(c_rate - (wt * beta) * vo, -sr_f, sr_r)
                return np.clip(base + dt * rate, drive_lo, drive_hi)

            def devices(x: np.ndarray, vo: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
                """Source, sink and pull-down currents at drive - output ``x`` and output
                ``vo`` (device laws of partsel.physics.stage, swing limits of this step)."""
                avail_pos = np.maximum(kp - sp * vo, 0.0)
                avail_neg = np.maximum(kn + sn * (vo - vneg), 0.0)
                i_src = np.minimum(
                    np.minimum(i_src0 * np.exp(np.minimum(x * inv_vs, 60.0)), lim_src), avail_pos
                )
                i_pd = np.minimum(pd_const + pd_slope * vo, avail_neg)
                e_snk = np.exp(np.minimum((-x - db) * inv_vs, 60.0))
                i_snk = np.minimum(
                    np.minimum(i_snk0 * e_snk, lim_snk), np.maximum(avail_neg - i_pd, 0.0)
                )
                return i_src, i_snk, i_pd

            def resid(vo: np.ndarray) -> np.ndarray:
                i_src, i_snk, i_pd = devices(drive(vo) - vo, vo)
                return i_src - i_snk - i_pd - (g_tot * vo - i_const)

            # Bracket around the linear extrapolation of the last two steps.
            v_pred = 2.0 * v - v_old
            width = 0.1 * np.abs(v - v_old) + 2e-6  # extrapolation is good to second order
            lo = v_pred - width
            hi = v_pred + width
            flo = resid(lo)
            fhi = resid(hi)
            for _ in range(12):
                below = flo < 0  # root below lo (F is decreasing)
                above = fhi > 0  # root above hi
                if not (below.any() or above.any()):
                    break
                width = width * 8.0
                hi = np.where(below, lo, hi)
                fhi = np.where(below, flo, fhi)
                lo = np.where(above, hi, lo)
                flo = np.where(above, fhi, flo)
                lo = np.where(below, lo - width, lo)
                hi = np.where(above, hi + width, hi)
                flo = np.where(below, resid(lo), flo)
                fhi = np.where(above, resid(hi), fhi)
            # Illinois (modified regula falsi) on a decreasing function, F(lo) >= 0 >= F(hi),
            # iterated until every part's bracket is below tol_v (bisection every 4th step
            # guarantees progress), at most max_iterations.
            side = np.zeros(p)
            for it in range(max_iterations):
                with np.errstate(divide="ignore", invalid="ignore"):
                    c = lo + flo * (hi - lo) / (flo - fhi)
                if it % 4 == 3:
                    c = 0.5 * (lo + hi)
                c = np.where((c > lo) & (c < hi), c, 0.5 * (lo + hi))
                fc = resid(c)
                up = fc > 0
                lo = np.where(up, c, lo)
                hi = np.where(up, hi, c)
                flo = np.where(up, fc, np.where(side < 0, 0.5 * flo, flo))
                fhi = np.where(up, np.where(side > 0, 0.5 * fhi, fhi), fc)
                side = np.where(up, 1.0, -1.0)
                if it + 1 >= iterations and float(np.max(hi - lo)) < tol_v:
                    break
            else:
                unconverged |= (hi - lo) >= tol_v
            with np.errstate(divide="ignore", invalid="ignore"):
                v_new = lo + flo * (hi - lo) / (flo - fhi)
            v_new = np.where((v_new >= lo) & (v_new <= hi), v_new, 0.5 * (lo + hi))
            v_old = v
            v = v_new
            vd = drive(v)
            if ac:
                i_c = (v - v_cap - v_ref_l) / r_l
                v_cap = v_cap + dt * i_c / c_c
                i_cap_sum += i_c
            if recording:
                j += 1
                i_src, i_snk, i_pd = devices(vd - v, v)
                rec["v"][j] = v
                rec["vd"][j] = vd
                rec["io"][j] = i_src - i_snk - i_pd
                rec["isrc"][j] = i_src
                rec["isnk"][j] = i_snk
                rec["ipd"][j] = i_pd
        # ---- end of a period -------------------------------------------------------------
        if recording:
            if j + 1 >= rec_n:
                break
            continue
        n_warm_done += 1
        change = np.maximum(np.abs(v - period_start[0]), np.abs(vd - period_start[1]))
        loop_settled = change < 1e-3
        if ac:
            # Shooting on the periodicity condition: zero mean coupling-capacitor current, for
            # parts whose own loop has settled (a slew-limited loop settles over several periods
            # and would spoil the estimate). First step d(mean i)/d(v_cap) = -1/R_L, then secant.
            mean_i = i_cap_sum / n
            start = v_cap - dt * i_cap_sum / c_c
            slope = np.full(p, -1.0 / r_l)
            if shoot_prev is not None:
                dv = start - shoot_prev[0]
                with np.errstate(divide="ignore", invalid="ignore"):
                    sec = (mean_i - shoot_prev[1]) / dv
                good = shoot_ok & (np.abs(dv) > 1e-12) & (sec < -0.02 / r_l)
                slope = np.where(good, sec, slope)
            shoot_prev = (start, mean_i)
            shoot_ok = loop_settled
            v_cap = np.where(loop_settled, start - mean_i / slope, v_cap)
            i_cap_sum[:] = 0.0
            settled = (change < settle_v) & (np.abs(mean_i) * r_l < settle_v)
        else:
            settled = change < settle_v
        period_start = (v.copy(), vd.copy())
        if n_warm_done >= n_warmup and (settled.all() or n_warm_done >= max_warmup):
            recording = True
            n_warm_rec = n_warm_done
    rec = {key: val.T.copy() for key, val in rec.items()}

    t_rec = (np.arange(rec_n) + 1) * dt + n * n_warm_rec * dt
    v_id = design.v_ideal(t_rec)
    v_out = rec["v"]
    amps = harmonic_amplitudes(v_out, n_record, n_harm)
    thd_f = thd(v_out, n_record, n_harm, definition="F")
    # Residual after removing DC and the fundamental (least squares = FFT bins 0 and 1).
    ph = np.fft.rfft(v_out, axis=1)
    keep = np.zeros_like(ph)
    keep[:, 0] = ph[:, 0]
    keep[:, n_record] = ph[:, n_record]
    lin = np.fft.irfft(keep, n=rec_n, axis=1)
    residual = np.max(np.abs(v_out - lin), axis=1)
    deviation = np.max(np.abs(v_out - v_id[None, :]), axis=1)

    i_src_rec = rec["isrc"]
    min_src = i_src_rec.min(axis=1)
    with np.errstate(invalid="ignore"):
        if pulldown.any():
            cut = i_src_rec < CUTOFF_FRACTION * i_stage[:, None]
        else:
            cut = np.zeros_like(i_src_rec, dtype=bool)
        # Biased stages: "mode change" = the output current changes sign.
        io = rec["io"]
        sign_change = (io.max(axis=1) > 0) & (io.min(axis=1) < 0)
    # A handover is a change of conduction mode within the period (a stage held in one mode
    # all period, e.g. sink mode by a resistor to V+, does not hand over).
    handover = np.where(pulldown, cut.any(axis=1) & (~cut).any(axis=1), sign_change)
    on_off = np.diff(cut.astype(np.int8), axis=1, prepend=cut[:, -1:].astype(np.int8)) > 0
    sign_flip = np.diff(np.sign(io), axis=1, prepend=np.sign(io[:, -1:])) != 0
    first = np.argmax(np.where(pulldown[:, None], on_off, sign_flip), axis=1)
    level = np.where(handover, v_out[np.arange(p), first], np.nan)
    when = np.where(handover, t_rec[first], np.nan)
    return SimResult(
        t_s=t_rec,
        v_ideal=v_id,
        v_out=v_out,
        v_drive=rec["vd"],
        i_out=rec["io"],
        i_source=i_src_rec,
        i_sink=rec["isnk"],
        i_pulldown=rec["ipd"],
        n_record=n_record,
        steps_per_period=n,
        harmonics_v=amps,
        thd_f=thd_f,
        residual_peak_v=residual,
        deviation_peak_v=deviation,
        min_source_a=min_src,
        handover=handover,
        handover_level_v=level,
        handover_time_s=when,
        unconverged=unconverged,
    )
