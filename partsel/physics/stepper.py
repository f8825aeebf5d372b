"""Compiled time stepper of partsel's macro-model (numba): one part at a time, all steps inside.

:func:`run` integrates the macro-model of :mod:`partsel.physics.simulate` for every part. Parts
are independent, so the loop over parts is the outer loop and the loop over time steps the inner
one, each step a scalar Newton solve: far cheaper than one vectorised numpy expression per
residual evaluation for all parts at once. Each part runs in its own circuit of a table of
circuits (one for every part of a design, or one per part for a batch of designs).

Unknowns per step (backward Euler; SI units):

* ``z``: state of the input stage. Its output current is ``tanh(z)`` of its tail current
  (which the drive's own slope and the common-mode input's slope modulate), and the error
  voltage it needs for that is ``e(z) = a z + b tanh(z) / (1 + gamma_d tanh(z))`` (the
  degenerated differential pair of :mod:`partsel.physics.stage`). The output voltage then
  follows from the feedback network, ``v_out = (c_in - e(z)) / beta``, and the drive
  (integrator) node from the rate,
  ``v_drive = v_drive_old + dt * SR_cm tanh(z) / (1 + gamma_d tanh(z))``.
* ``y``: the Darlington source device's base node, relative to the output (class A / B only):
  ``C_e dy/dt = i_1 - i_2 / beta_D`` with ``i_1`` the driver's and ``i_2`` the output device's
  current (see :mod:`partsel.physics.stage`).

The two residuals, Kirchhoff's current law at the output node and the base-node equation, are
solved by Newton's method with the exact Jacobian, starting from the previous step and limiting
every increase of an exponent to ``EXP_STEP`` per iteration (junction limiting, as SPICE does).
The coupling capacitor is advanced explicitly after each step, and corrected after each warm-up
period by shooting on the periodicity condition (zero mean current through it); the load
capacitance is integrated with the output node (backward Euler).

The numba cache lives in the user cache folder (``platformdirs.user_cache_dir("partsel")``,
sub-folder ``numba``) unless ``NUMBA_CACHE_DIR`` is set: the compile happens once per machine
and later processes load it (:func:`warm_up` reports the time).
"""

from __future__ import annotations

import math
import os
import sys
import time

from partsel.physics.stepper_layout import cache_dir

os.environ["NUMBA_CACHE_DIR"] = str(cache_dir())  # the given folder, or partsel's default

import numba
import numpy as np

if not numba.config.CACHE_DIR:  # numba was imported before this module with no folder set
    numba.config.CACHE_DIR = os.environ["NUMBA_CACHE_DIR"]


def _load_numpy_support_without_blas_probe() -> None:
    """Load numba's numpy support now, skipping its BLAS probe when scipy is not loaded yet.

    numba probes for a BLAS by importing ``scipy.linalg`` (about 0.2 s where scipy is
    installed, ``tests/bench/bench_physics.py``) the first time it loads compiled code; the
    stepper uses no linear algebra, so while the support loads ``scipy.linalg`` is hidden and
    numba records "no BLAS" (its ``np.dot`` is then unavailable to compiled code in this
    process only). scipy itself is untouched: it imports normally afterwards
    (``fit-capture``)."""
    if "scipy.linalg" in sys.modules or "numba.np.arraymath" in sys.modules:
        return  # probed already, or scipy.linalg is loaded anyway
    sys.modules["scipy.linalg"] = None  # type: ignore[assignment]
    try:
        import numba.np.arraymath  # noqa: F401
    finally:
        del sys.modules["scipy.linalg"]


_load_numpy_support_without_blas_probe()

#: Largest increase of an exponent argument (units of its voltage scale) per Newton iteration.
EXP_STEP = 3.0
#: The retry of a failed step damps every Newton update by this factor: a plain Newton step
#: can cycle across a kink of the output-node equation (the current available at a swing
#: limit taking over from the source device's own law while the output clips).
RETRY_DAMPING = 0.5
#: Exponent arguments are capped here (exp(60) ~ 1e26: far beyond any current limit).
EXP_CAP = 60.0
#: LLVM fast-math flags of the step: contraction, reassociation, reciprocals and approximate
#: functions, but NaN and infinity keep their meaning (limits may be infinite).
FAST = {"contract", "reassoc", "arcp", "afn", "nsz"}

from partsel.physics.stepper_layout import (
    GIVE_UP_NON_FINITE,
    GIVE_UP_UNCONVERGED,
    GIVE_UP_WORK,
    ITERATION_BUDGET,
    N_PARAMS,
    P_A,
    P_B0,
    P_DB,
    P_DRIVE_HI,
    P_DRIVE_LO,
    P_G_S,
    P_GAMMA,
    P_GAMMA_CM,
    P_H_FAR_NEG,
    P_H_FAR_POS,
    P_I_S,
    P_I_SNK0,
    P_I_SRC0,
    P_I_STAGE,
    P_INV_BETA_D,
    P_K_E,
    P_LIM_SNK,
    P_LIM_SRC,
    P_PD_CONST,
    P_PD_SLOPE,
    P_SR0,
    P_TOPO,
    P_V_CAP0,
    P_VS_SNK,
    P_VS_SRC,
    P_WT,
    P_X0,
    P_Y0,
    T_BIASED,
    T_CLASS_A,
    T_CLASS_B,
)


@numba.njit(cache=True, inline="always")
def _pwl(x: float, xp: np.ndarray, fp: np.ndarray) -> tuple[float, float]:
    """Value and slope of the piecewise-linear curve through (xp, fp) (NaN-padded) at ``x``,
    linear extrapolation at both ends (the same segment choice as stage.pwl_with_slope)."""
    k_n = 0
    for k in range(xp.shape[0]):
        if math.isnan(xp[k]) or math.isnan(fp[k]):
            break
        k_n += 1
    if k_n == 0:
        return math.nan, 0.0
    if k_n == 1:
        return fp[0], 0.0
    seg = 0
    for k in range(1, k_n - 1):
        if x >= xp[k]:
            seg = k
    dx = xp[seg + 1] - xp[seg]
    s = (fp[seg + 1] - fp[seg]) / dx if dx > 0 else 0.0
    return fp[seg] + s * (x - xp[seg]), s


@numba.njit(cache=True, fastmath=FAST, inline="always")
def _cexp(u: float) -> float:
    return math.exp(u if u < EXP_CAP else EXP_CAP)


@numba.njit(cache=True, fastmath=FAST, inline="always")
def _step(
    prm: np.ndarray,
    inv_vt: float,
    c_in: float,
    cm_rate: float,
    inv_beta: float,
    dt: float,
    vd_old: float,
    y_old: float,
    z0: float,
    y0: float,
    g_tot: float,
    i_const: float,
    kp: float,
    sp: float,
    kn: float,
    sn: float,
    vneg: float,
    tol_v: float,
    max_it: int,
    damp: float,
) -> tuple[float, float, float, float, float, float, float, float, int]:
    """One backward-Euler step: returns (z, y, v_out, v_drive, i_src, i_snk, i_pd, i_1,
    converged). ``kp - sp v`` and ``kn + sn (v - V-)`` are the currents available at the
    swing limits (linearised for this step; ``kp`` or ``kn`` infinite: far from that rail)."""
    topo = int(prm[P_TOPO])
    i_src0 = prm[P_I_SRC0]
    i_snk0 = prm[P_I_SNK0]
    lim_src = prm[P_LIM_SRC]
    lim_snk = prm[P_LIM_SNK]
    db = prm[P_DB]
    inv_vs = prm[P_VS_SRC]
    inv_vk = prm[P_VS_SNK]
    c_e = dt * prm[P_K_E]
    inv_bd = prm[P_INV_BETA_D]
    wt = prm[P_WT]
    pd_c = prm[P_PD_CONST]
    pd_s = prm[P_PD_SLOPE]
    lo = prm[P_DRIVE_LO]
    hi = prm[P_DRIVE_HI]
    sr0 = prm[P_SR0]
    gam = prm[P_GAMMA]
    a = prm[P_A]
    linear = math.isinf(sr0)
    # the common-mode input's slope takes its share of the tail current
    if linear:
        sr_cm = sr0
        b0 = 0.0
    else:
        sr_cm = sr0 - prm[P_GAMMA_CM] * cm_rate
        if sr_cm < 0.05 * sr0:
            sr_cm = 0.05 * sr0
        b0 = prm[P_B0] * sr_cm / sr0
    darl = topo != T_BIASED
    far_p = math.isinf(kp)
    far_n = math.isinf(kn)
    # the base node's step is bracketed: it cannot fall faster than its own discharge at the
    # start of the step, nor rise beyond the DC point of the drive (see the module docstring)
    vt = 1.0 / inv_vt if darl else 0.0
    # the Darlington's transistors carry at most the source limit (1 A where none is given)
    lim_dev = lim_src if lim_src < 1.0 else 1.0
    e2_max = lim_dev / i_src0 if i_src0 > 0.0 else math.inf
    e1_max = e2_max / inv_bd
    y_floor = y_old - c_e * _cexp(y_old * inv_vt) - vt if darl else 0.0
    z = z0
    y = y0
    ok = 0
    vo = 0.0
    vd = vd_old
    i_src = 0.0
    i_snk = 0.0
    i_pd = 0.0
    i_1 = 0.0
    y_bound = 0
    for it in range(max_it):
        # input stage: fraction t = tanh(z) of the tail current, which the drive's own slope
        # and the common-mode slope modulate: rate = SR_cm t / (1 + gamma_d t), error
        # e = a z + b t / (1 + gamma_d t); an infinite slew rate means a linear stage
        # (rate = omega_t e)
        if linear:
            e = z
            de = 1.0
            rate = wt * z
            drate = wt
        else:
            th = math.tanh(z)
            den = 1.0 / (1.0 + gam * th) if gam != 0.0 else 1.0
            q = (1.0 - th * th) * den * den
            e = a * z + b0 * th * den
            de = a + b0 * q
            rate = sr_cm * th * den
            drate = sr_cm * q
        vo = (c_in - e) * inv_beta
        dvo = -de * inv_beta
        vd = vd_old + dt * rate
        dvd = dt * drate
        if vd > hi:
            vd = hi
            dvd = 0.0
        elif vd < lo:
            vd = lo
            dvd = 0.0
        x = vd - vo
        dx = dvd - dvo
        # swing limits of this step (linearised around the last output level)
        if far_p:
            av_p = math.inf
            dav_p = 0.0
        else:
            av_p = kp - sp * vo
            dav_p = -sp
            if av_p < 0.0:
                av_p = 0.0
                dav_p = 0.0
        if far_n:
            av_n = math.inf
            dav_n = 0.0
        else:
            av_n = kn + sn * (vo - vneg)
            dav_n = sn
            if av_n < 0.0:
                av_n = 0.0
                dav_n = 0.0
        # source device (and pull-down for class A / B)
        f2 = 0.0
        f2z = 0.0
        f2y = 1.0
        if darl:
            if it == 0 and ((x - y) * inv_vt > 40.0 or y * inv_vt > 40.0):
                y = 0.5 * x  # an inconsistent start (e.g. after a shooting correction)
            y_ceil = max(y_old, 0.5 * x) + vt
            y_bound = 0
            if y > y_ceil:
                y = y_ceil
                y_bound = 1
            elif y < y_floor:
                y = y_floor
                y_bound = -1
            i_pd = pd_c + pd_s * vo
            di_pd = pd_s
            if i_pd > av_n:
                i_pd = av_n
                di_pd = dav_n
            # each transistor's current (normalised) capped at the device's current limit
            e2 = _cexp(y * inv_vt)
            de2 = e2 * inv_vt
            if e2 > e2_max:
                e2 = e2_max
                de2 = 0.0
            e1 = _cexp((x - y) * inv_vt)
            de1 = e1 * inv_vt
            if e1 > e1_max:
                e1 = e1_max
                de1 = 0.0
            i_2 = i_src0 * e2
            i_1 = i_src0 * inv_bd * e1
            raw = i_2 + i_1
            draw_z = i_src0 * inv_bd * de1 * dx
            draw_y = i_src0 * (de2 - inv_bd * de1)
            f2 = y - y_old - c_e * (e1 - e2)
            f2z = -c_e * de1 * dx
            f2y = 1.0 + c_e * (de1 + de2)
            es = 0.0
        else:
            i_pd = 0.0
            di_pd = 0.0
            es = _cexp(x * inv_vs)
            raw = i_src0 * es
            draw_z = raw * inv_vs * dx
            draw_y = 0.0
        i_src = raw
        ds_z = draw_z
        ds_y = draw_y
        if i_src > lim_src:
            i_src = lim_src
            ds_z = 0.0
            ds_y = 0.0
        if i_src > av_p:
            i_src = av_p
            ds_z = dav_p * dvo
            ds_y = 0.0
        # sink device
        if topo == T_CLASS_A:
            i_snk = 0.0
            dk_z = 0.0
        else:
            if topo == T_CLASS_B:
                u = (-x - db) * inv_vk
                i_snk = i_snk0 * math.exp(u) if u > -60.0 else 0.0
            else:
                i_snk = i_snk0 * _cexp(-x * inv_vk)
            dk_z = -i_snk * inv_vk * dx
            if not far_n:
                room = av_n - i_pd
                droom = (dav_n - di_pd) * dvo
                if room < 0.0:
                    room = 0.0
                    droom = 0.0
                if i_snk > room:
                    i_snk = room
                    dk_z = droom
            if i_snk > lim_snk:
                i_snk = lim_snk
                dk_z = 0.0
        f1 = i_src - i_snk - i_pd - (g_tot * vo - i_const)
        f1z = ds_z - dk_z - (di_pd + g_tot) * dvo
        f1y = ds_y
        # Newton step on (z, y)
        if darl:
            det = f1z * f2y - f1y * f2z
            if det == 0.0:
                break
            dz = -(f1 * f2y - f1y * f2) / det
            dy = -(f1z * f2 - f2z * f1) / det
            # projected Newton: a base node held at its bracket by a step that points out of
            # it stays there, and the drive alone solves the node (the output is then set by a
            # swing or device limit, not by this node)
            if ((y_bound > 0 and dy > 0.0) or (y_bound < 0 and dy < 0.0)) and f1z != 0.0:
                dy = 0.0
                dz = -f1 / f1z
        else:
            if f1z == 0.0:
                break
            dz = -f1 / f1z
            dy = 0.0
        # junction limiting: no exponent may grow by more than EXP_STEP in one iteration
        dxs = dx * dz
        scale = 1.0
        if darl:
            g = dy * inv_vt
            if g > EXP_STEP:
                scale = min(scale, EXP_STEP / g)
            g = (dxs - dy) * inv_vt
            if g > EXP_STEP:
                scale = min(scale, EXP_STEP / g)
        else:
            g = dxs * inv_vs
            if g > EXP_STEP:
                scale = min(scale, EXP_STEP / g)
            g = -dxs * inv_vk
            if g > EXP_STEP:
                scale = min(scale, EXP_STEP / g)
        if topo == T_CLASS_B:
            g = -dxs * inv_vk
            if g > EXP_STEP and (-x - db) * inv_vk > -40.0:
                scale = min(scale, EXP_STEP / g)
        if abs(dz) * scale > 4.0:
            scale = 4.0 / abs(dz)
        dz *= scale
        dy *= scale
        z += damp * dz
        y += damp * dy
        if abs(dvo * dz) < tol_v and abs(dy) < tol_v and scale == 1.0:
            ok = 1
            break
    return z, y, vo, vd, i_src, i_snk, i_pd, i_1, ok * (it + 1)


@numba.njit(cache=True)
def _give_up(
    p: int, out: np.ndarray, flags: np.ndarray, bad: int, warm: int, iters: int, why: int
) -> None:
    """Part ``p`` is given up: its record is NaN and ``flags[p, 3]`` says why."""
    out[p, :, :] = math.nan
    flags[p, 0] = bad
    flags[p, 1] = warm
    flags[p, 2] = iters
    flags[p, 3] = why


@numba.njit(cache=True, fastmath=FAST, inline="always")
def _run_part(
    p: int,
    prm: np.ndarray,
    pos_h: np.ndarray,
    pos_i: np.ndarray,
    neg_h: np.ndarray,
    neg_i: np.ndarray,
    c_in: np.ndarray,
    cm_rate: np.ndarray,
    v_start: float,
    inv_vt: float,
    inv_beta: float,
    dt: float,
    vpos: float,
    vneg: float,
    c_l: float,
    ac: bool,
    r_l: float,
    c_c: float,
    v_ref_l: float,
    n_warmup: int,
    max_warmup: int,
    settle_v: float,
    n_record: int,
    tol_v: float,
    max_it: int,
    max_bad: int,
    out: np.ndarray,
    flags: np.ndarray,
) -> None:
    """Part ``p`` of :func:`run` (warm-up, shooting, record)."""
    n = c_in.shape[0]
    row = prm[p]
    g_s = row[P_G_S]
    i_s = row[P_I_S]
    inv_dt = 1.0 / dt
    inv_rl = 1.0 / r_l if ac else 0.0
    dt_cc = dt / c_c if ac else 0.0
    cl_dt = c_l * inv_dt
    g_tot = g_s + cl_dt + inv_rl
    v = v_start
    v_old = v_start
    vd = v_start + row[P_X0]
    y = row[P_Y0]
    z = 0.0
    z_old = 0.0
    y_old = y
    z_old2 = 0.0
    y_old2 = y
    v_cap = row[P_V_CAP0]
    i_cap_sum = 0.0
    bad = 0
    bad_period = 0
    work = 0  # Newton iterations of this period, failed attempts included
    iters = 0
    shoot_prev_start = 0.0
    shoot_prev_mean = 0.0
    shoot_ok = False
    have_prev = False
    start_v = v
    start_vd = vd
    warm = 0
    recording = False
    j = 0
    while True:
        for k in range(n):
            i_const = i_s + cl_dt * v + (v_cap + v_ref_l) * inv_rl
            # swing limits: only near a rail (beyond h_far the available current exceeds
            # anything the part can carry, so the curve cannot bind)
            if vpos - v < row[P_H_FAR_POS]:
                ap, sp = _pwl(vpos - v, pos_h[p], pos_i[p])
                kp = ap + sp * v if not math.isnan(ap) else math.inf
            else:
                kp, sp = math.inf, 0.0
            if v - vneg < row[P_H_FAR_NEG]:
                an, sn = _pwl(v - vneg, neg_h[p], neg_i[p])
                kn = an - sn * (v - vneg) if not math.isnan(an) else math.inf
            else:
                kn, sn = math.inf, 0.0
            # predictor: quadratic extrapolation of the last three steps
            z_guess = 3.0 * (z - z_old) + z_old2
            y_guess = 3.0 * (y - y_old) + y_old2
            zn, yn, vo, vdn, i_src, i_snk, i_pd, _i1, ok = _step(
                row, inv_vt, c_in[k], cm_rate[k], inv_beta, dt, vd, y, z_guess, y_guess,
                g_tot, i_const, kp, sp, kn, sn, vneg, tol_v, max_it, 1.0,
            )  # fmt: skip
            iters += ok
            work += ok if ok else max_it
            if ok == 0:
                # retry from the last converged state (no extrapolation)
                zn, yn, vo, vdn, i_src, i_snk, i_pd, _i1, ok = _step(
                    row, inv_vt, c_in[k], cm_rate[k], inv_beta, dt, vd, y, z, y, g_tot,
                    i_const, kp, sp, kn, sn, vneg, tol_v, 4 * max_it, RETRY_DAMPING,
                )  # fmt: skip
                work += ok if ok else 4 * max_it
                if ok == 0:
                    bad += 1
                    bad_period += 1
            z_old2 = z_old
            y_old2 = y_old
            z_old = z
            y_old = y
            z = zn
            y = yn
            v_old = v
            v = vo
            vd = vdn
            if not (math.isfinite(v) and math.isfinite(vd)):
                _give_up(p, out, flags, bad, warm, iters, GIVE_UP_NON_FINITE)
                return
            if ac:
                i_c = (v - v_cap - v_ref_l) * inv_rl
                v_cap += dt_cc * i_c
                i_cap_sum += i_c
            if recording:
                out[p, 0, j] = v
                out[p, 1, j] = vd
                out[p, 2, j] = i_src - i_snk - i_pd
                out[p, 3, j] = i_src
                out[p, 4, j] = i_snk
                out[p, 5, j] = i_pd
                j += 1
        if bad_period > max_bad:  # the step budget: give this part up, say so
            _give_up(p, out, flags, bad, warm, iters, GIVE_UP_UNCONVERGED)
            return
        if work > ITERATION_BUDGET * n:  # the work budget, likewise
            _give_up(p, out, flags, bad, warm, iters, GIVE_UP_WORK)
            return
        bad_period = 0
        work = 0
        if recording:
            if j >= n * n_record:
                break
            continue
        warm += 1
        change = max(abs(v - start_v), abs(vd - start_vd))
        loop_settled = change < 1e-3
        settled = change < settle_v
        if ac:
            mean_i = i_cap_sum / n
            start = v_cap - dt * i_cap_sum / c_c
            slope = -1.0 / r_l
            if have_prev and shoot_ok:
                dv = start - shoot_prev_start
                if abs(dv) > 1e-12:
                    sec = (mean_i - shoot_prev_mean) / dv
                    if sec < -0.02 / r_l:
                        slope = sec
            shoot_prev_start = start
            shoot_prev_mean = mean_i
            have_prev = True
            shoot_ok = loop_settled
            if loop_settled:
                v_cap = start - mean_i / slope
            i_cap_sum = 0.0
            settled = settled and abs(mean_i) * r_l < settle_v
        start_v = v
        start_vd = vd
        if warm >= n_warmup and (settled or warm >= max_warmup):
            recording = True
    _ = v_old
    flags[p, 0] = bad
    flags[p, 1] = warm
    flags[p, 2] = iters


@numba.njit(cache=True)
def run(
    prm: np.ndarray,
    pos_h: np.ndarray,
    pos_i: np.ndarray,
    neg_h: np.ndarray,
    neg_i: np.ndarray,
    grp: np.ndarray,
    c_in: np.ndarray,
    cm_rate: np.ndarray,
    v_start: np.ndarray,
    vt: float,
    beta: np.ndarray,
    dt: np.ndarray,
    vpos: np.ndarray,
    vneg: np.ndarray,
    c_l: np.ndarray,
    ac: bool,
    r_l: np.ndarray,
    c_c: np.ndarray,
    v_ref_l: np.ndarray,
    n_warmup: int,
    max_warmup: int,
    settle_v: float,
    n_record: int,
    tol_v: float,
    max_it: int,
    max_bad: int,
    out: np.ndarray,
    flags: np.ndarray,
) -> None:
    """Simulate every part (rows of ``prm``) and write the recorded periods into ``out``.

    ``out`` has shape (P, 6, n_record * N): output, drive, output current, source, sink and
    pull-down current. ``flags[p]`` receives (unconverged steps, warm-up periods run, Newton
    iterations of the steps that converged at the first attempt, why the part was given up:
    0 it was not, or a GIVE_UP_* code). A part is given up when its state leaves the finite
    numbers, when more than ``max_bad`` steps of one period fail, or when one period takes
    more than ITERATION_BUDGET Newton iterations per step on average.
    Part ``p`` runs in the circuit ``g = grp[p]``: ``c_in[g]`` holds ``v_plus - v_md`` and
    ``cm_rate[g]`` the common-mode input's slope (V/s) at the end of every step of one period
    (shape (G, N)); ``v_start``, ``beta``, ``dt``, the rails, ``c_l``, ``r_l``, ``c_c`` and
    ``v_ref_l`` hold one value per circuit (shape (G,)).
    """
    inv_vt = 1.0 / vt
    for p in range(prm.shape[0]):
        g = grp[p]
        _run_part(
            p, prm, pos_h, pos_i, neg_h, neg_i, c_in[g], cm_rate[g], v_start[g], inv_vt,
            1.0 / beta[g], dt[g], vpos[g], vneg[g], c_l[g], ac, r_l[g], c_c[g], v_ref_l[g],
            n_warmup, max_warmup, settle_v, n_record, tol_v, max_it, max_bad, out, flags,
        )  # fmt: skip


@numba.njit(cache=True, parallel=True)
def run_parallel(
    prm: np.ndarray,
    pos_h: np.ndarray,
    pos_i: np.ndarray,
    neg_h: np.ndarray,
    neg_i: np.ndarray,
    grp: np.ndarray,
    c_in: np.ndarray,
    cm_rate: np.ndarray,
    v_start: np.ndarray,
    vt: float,
    beta: np.ndarray,
    dt: np.ndarray,
    vpos: np.ndarray,
    vneg: np.ndarray,
    c_l: np.ndarray,
    ac: bool,
    r_l: np.ndarray,
    c_c: np.ndarray,
    v_ref_l: np.ndarray,
    n_warmup: int,
    max_warmup: int,
    settle_v: float,
    n_record: int,
    tol_v: float,
    max_it: int,
    max_bad: int,
    out: np.ndarray,
    flags: np.ndarray,
) -> None:
    """:func:`run`, with the parts shared among numba's threads (``prange``)."""
    inv_vt = 1.0 / vt
    for p in numba.prange(prm.shape[0]):
        g = grp[p]
        _run_part(
            p, prm, pos_h, pos_i, neg_h, neg_i, c_in[g], cm_rate[g], v_start[g], inv_vt,
            1.0 / beta[g], dt[g], vpos[g], vneg[g], c_l[g], ac, r_l[g], c_c[g], v_ref_l[g],
            n_warmup, max_warmup, settle_v, n_record, tol_v, max_it, max_bad, out, flags,
        )  # fmt: skip


def warm_up() -> float:
    """Compile (or load from the cache) the stepper with a tiny problem; seconds taken."""
    t0 = time.perf_counter()
    prm = np.zeros((1, N_PARAMS))
    prm[0, P_TOPO] = T_BIASED
    prm[0, P_I_STAGE] = prm[0, P_I_SRC0] = prm[0, P_I_SNK0] = 1e-4
    prm[0, P_LIM_SRC] = prm[0, P_LIM_SNK] = math.inf
    prm[0, P_VS_SRC] = prm[0, P_VS_SNK] = 1.0 / 0.026
    prm[0, P_INV_BETA_D] = 0.01
    prm[0, P_WT] = 1e6
    prm[0, P_SR0] = 1e6
    prm[0, P_A] = 0.05
    prm[0, P_G_S] = 1e-4
    prm[0, P_DRIVE_LO], prm[0, P_DRIVE_HI] = -10.0, 10.0
    prm[0, P_H_FAR_POS] = prm[0, P_H_FAR_NEG] = 1.0
    curve = np.array([[0.0, 1.0]])
    out = np.zeros((1, 6, 8))
    flags = np.zeros((1, 4), dtype=np.int64)
    one = np.ones(1)
    run(
        prm, curve, curve * 1e-3, curve, curve * 1e-3, np.zeros(1, dtype=np.int64),
        np.zeros((1, 8)), np.zeros((1, 8)), 0.0 * one, 0.026, one, 1e-6 * one, 5.0 * one,
        0.0 * one, 0.0 * one, False, one, one, 0.0 * one, 1, 1, 1.0, 1, 1e-9, 20, 4, out, flags,
    )  # fmt: skip
    return time.perf_counter() - t0
