"""Time-domain simulation of partsel's amplifier macro-model, compiled, one part after another.

The macro-model (one channel, every part):

* error at the inputs ``e = v_plus - v_minus`` with ``v_minus = beta * v_out + v_md`` (the
  feedback network);
* the input stage (a degenerated differential pair, :mod:`partsel.physics.stage`) drives the
  internal node at ``omega_t e`` for small errors (``omega_t = 2 pi GBW``) and at the slew rate
  (rising or falling) when fully switched, with the pair's tanh law in between;
* the output stage of :mod:`partsel.physics.stage`: a Darlington source follower whose base
  node is a state, a PNP sink follower behind the dead band, a pull-down current source with
  finite output resistance (class A / B), or a biased translinear pair (class AB / CMOS);
  current limits and swing limits at the current flowing;
* the load network of :mod:`partsel.physics.loading` as an ODE (coupling capacitor state,
  load capacitance).

Integration is backward Euler at a fixed step in :mod:`partsel.physics.stepper` (numba), so the
step need not resolve the closed-loop pole nor the Darlington node; each step is a scalar Newton
solve. The coupling capacitor starts at its linear periodic steady state and is corrected after
each warm-up period (shooting on the periodicity condition: zero mean current through it); each
part warms up until it has settled, then ``n_record`` periods are kept and analysed with
coherent sampling.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from partsel.physics import stepper_layout as _st
from partsel.physics.circuit import Design, col
from partsel.physics.loading import ideal_current, resistive_branches
from partsel.physics.spectrum import DEFAULT_HARMONICS, harmonic_amplitudes, thd
from partsel.physics.stage import (
    CLASS_A,
    CLASS_B,
    DARLINGTON_BETA,
    DARLINGTON_C_E,
    GAMMA_CM_SHARE,
    V_T,
    StageParams,
    input_law,
    pulldown_law,
)

#: Fraction of the stage current below which the source device counts as cut off.
CUTOFF_FRACTION = 0.1
#: From this many parts on, the parts are spread over the CPU's cores (numba prange).
PARALLEL_PARTS = 64


@dataclass(frozen=True)
class SimResult:
    """Waveforms of the recorded periods and their analysis. Shapes: (N,) or (P, N)."""

    t_s: np.ndarray  #: (N,), or (P, N) for a batch design (one circuit per part)
    v_ideal: np.ndarray  #: (N,), or (P, N) for a batch design
    v_out: np.ndarray
    v_drive: np.ndarray
    i_out: np.ndarray  #: current out of the output pin into the network, A
    i_source: np.ndarray  #: source-device current, A
    i_sink: np.ndarray  #: sink-device current, A (class A: 0)
    i_pulldown: np.ndarray  #: internal pull-down current, A (class AB / CMOS: 0)
    n_record: int
    steps_per_period: int
    frequency_hz: float | np.ndarray
    """signal frequency of the design simulated, Hz (one per part for a batch design)"""
    harmonics_v: np.ndarray  #: (P, H+1) peak amplitudes of harmonics 0..H, V
    thd_f: np.ndarray  #: (P,) THD_F over harmonics 2..H (IEC definition, ratio)
    residual_peak_v: np.ndarray  #: (P,) peak of v_out minus its DC and fundamental, V
    deviation_peak_v: np.ndarray  #: (P,) peak |v_out - v_ideal|, V
    min_source_a: np.ndarray  #: (P,) smallest source-device current over the period, A
    handover: np.ndarray
    """(P,) bool: the stage changed conduction mode (class B: the sink device took over;
    class A: the source device cut off); never for class AB / CMOS, see crossover_biased."""
    handover_level_v: np.ndarray  #: (P,) output level at the first handover instant, V
    handover_time_s: np.ndarray  #: (P,) time of the first handover in the record, s
    unconverged: np.ndarray  #: (P,) bool: the output-node solve missed its tolerance somewhere
    bad_steps: np.ndarray  #: (P,) steps whose output-node solve missed its tolerance (int)
    abandoned: np.ndarray
    """(P,) bool: the part was given up (``stepper_layout.MAX_BAD_SHARE`` and
    ``ITERATION_BUDGET``): its waveforms and figures are NaN and the closed form stands; see
    :func:`abandoned_reason`."""
    abandoned_why: np.ndarray  #: (P,) 0, or stepper_layout.GIVE_UP_NON_FINITE / _UNCONVERGED
    handover_edges_s: np.ndarray
    """(P, 2) times of the hand-over (source device to sink device or to the load alone) and of
    the hand-back in the record, s; NaN where none (biased stages never hand over)."""
    handover_edge_levels_v: np.ndarray  #: (P, 2) output level at those instants, V
    crossover_biased: np.ndarray  #: (P,) bool: class AB / CMOS output current changes sign
    warmup_periods: np.ndarray  #: (P,) warm-up periods each part ran before the record


#: Most steps per period a simulation takes (the step budget's other half).
MAX_STEPS = 16384


def default_steps(stage: StageParams, design: Design) -> int:
    """Steps per period: at least 1024, and ~10 steps across the shortest predicted handover."""
    a = design.out_amplitude_v
    w = design.omega
    n = 1024
    if np.any(np.asarray(a) > 0):
        s = w * a
        wt = 2 * np.pi * np.nan_to_num(stage.gbw_hz, nan=1e6)
        db = np.nan_to_num(stage.dead_band_v, nan=0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            tau = np.sqrt(2 * db * design.noise_gain / (wt * s))
            periods = np.broadcast_to(1.0 / np.asarray(design.signal.frequency_hz), tau.shape)
            ratio = (periods / tau)[(db > 0) & np.isfinite(tau) & (tau > 0)]
        if ratio.size:
            want = 10.0 * float(ratio.max())
            n = MAX_STEPS if not math.isfinite(want) else max(n, math.ceil(min(want, MAX_STEPS)))
    return int(min(n, MAX_STEPS))


def abandoned_reason(sim: SimResult, k: int) -> str:
    """Why part ``k`` was given up (:attr:`SimResult.abandoned`), in words."""
    dt = 1.0 / (
        sim.steps_per_period
        * float(np.asarray(sim.frequency_hz).reshape(-1)[k if np.ndim(sim.frequency_hz) else 0])
    )
    if sim.abandoned_why[k] == _st.GIVE_UP_NON_FINITE:
        what = "its state left the finite numbers"
    elif sim.abandoned_why[k] == _st.GIVE_UP_WORK:
        what = (
            f"one period needed more than {_st.ITERATION_BUDGET} Newton iterations per step "
            "(its work budget)"
        )
    else:
        what = (
            f"the output-node solve failed at more than {100 * _st.MAX_BAD_SHARE:.0f} % of the "
            f"{sim.steps_per_period} steps of a period"
        )
    return (
        f"the time-domain simulation did not converge and was stopped: {what} (one step "
        f"{dt:.3g} s; the signal period is far from the loop's time constants, or a parameter "
        f"is far outside its plausible range); the closed-form figures stand"
    )


def _as_part_array(value: float | np.ndarray | None, n: int) -> np.ndarray:
    if value is None:
        return np.full(n, np.inf)
    arr = np.broadcast_to(np.asarray(value, dtype=float), (n,)).copy()
    return np.where(np.isnan(arr), np.inf, arr)


def part_matrix(
    stage: StageParams,
    design: Design,
    r_to_neg_ohm: np.ndarray | None = None,
    r_to_pos_ohm: np.ndarray | None = None,
) -> np.ndarray:
    """Per-part constants of the stepper, shape (P, stepper.N_PARAMS) (one formula for every
    topology; see :mod:`partsel.physics.stage`). Used by simulate() and the SPICE deck."""
    p = stage.n
    sup = design.supply
    vpos, vneg = sup.v_pos_v, sup.v_neg_v
    topo = stage.topology
    pulldown = stage.has_pulldown
    i_stage = np.nan_to_num(stage.stage_current_a, nan=0.0)
    db = np.nan_to_num(stage.dead_band_v, nan=0.0)
    m = np.zeros((p, _st.N_PARAMS))
    m[:, _st.P_TOPO] = np.select(
        [topo == CLASS_B, topo == CLASS_A], [_st.T_CLASS_B, _st.T_CLASS_A], _st.T_BIASED
    )
    m[:, _st.P_I_STAGE] = i_stage
    m[:, _st.P_I_SRC0] = i_stage
    m[:, _st.P_I_SNK0] = np.where(topo == CLASS_A, 0.0, i_stage)
    m[:, _st.P_LIM_SRC] = np.nan_to_num(stage.source_limit_a, nan=np.inf)
    m[:, _st.P_LIM_SNK] = np.nan_to_num(stage.sink_limit_a, nan=np.inf)
    m[:, _st.P_DB] = db
    m[:, _st.P_VS_SRC] = 1.0 / stage.device_scale_v
    m[:, _st.P_VS_SNK] = 1.0 / stage.sink_scale_v
    with np.errstate(divide="ignore", invalid="ignore"):
        k_e = np.where(pulldown, i_stage / (DARLINGTON_BETA * DARLINGTON_C_E), 0.0)
    m[:, _st.P_K_E] = k_e
    m[:, _st.P_INV_BETA_D] = 1.0 / DARLINGTON_BETA
    wt = 2.0 * np.pi * stage.gbw_hz
    m[:, _st.P_WT] = wt
    sr0, gamma, a, b0 = input_law(
        stage.gbw_hz,
        np.nan_to_num(stage.slew_rise_v_per_s, nan=np.inf),
        np.nan_to_num(stage.slew_fall_v_per_s, nan=np.inf),
    )
    m[:, _st.P_SR0] = sr0
    m[:, _st.P_GAMMA] = (1.0 - GAMMA_CM_SHARE) * gamma
    m[:, _st.P_GAMMA_CM] = GAMMA_CM_SHARE * gamma
    m[:, _st.P_A] = a
    m[:, _st.P_B0] = b0
    pd_const, pd_slope = pulldown_law(np.where(pulldown, i_stage, 0.0), vpos, vneg)
    m[:, _st.P_PD_CONST] = pd_const
    m[:, _st.P_PD_SLOPE] = pd_slope
    rb = resistive_branches(design)
    rn = _as_part_array(r_to_neg_ohm, p)
    rp = _as_part_array(r_to_pos_ohm, p)
    m[:, _st.P_G_S] = rb.g_s + 1.0 / rn + 1.0 / rp
    m[:, _st.P_I_S] = rb.i_s + vneg / rn + vpos / rp
    m[:, _st.P_DRIVE_LO] = vneg - db - 1.0
    m[:, _st.P_DRIVE_HI] = vpos + 1.0
    m[:, _st.P_V_CAP0] = coupling_start(design)
    # Start in the DC state of the device laws for the current the load draws at t = 0 (the
    # output on its ideal value): drive x0 and Darlington base node y0 (its DC point x0 / 2).
    zero = np.array([0.0])
    v0 = np.asarray(design.v_ideal(zero), dtype=float)[..., 0]
    i_out0 = np.asarray(ideal_current(design, zero), dtype=float)[..., 0]
    if v0.ndim == 0 and i_out0.ndim == 0:
        v0, i_out0 = float(v0), float(i_out0)
    i_out0 = i_out0 + (v0 - vneg) / rn + (v0 - vpos) / rp
    demand = i_out0 + pd_const + pd_slope * v0
    with np.errstate(divide="ignore", invalid="ignore"):
        safe = np.where(i_stage > 0, i_stage, 1.0)
        u = demand / safe
        x_src = 2.0 * V_T * np.log(np.maximum(u, 1e-12))
        x_snk = -db - V_T * np.log(np.maximum(-u, 1e-12))
        x_biased = stage.device_scale_v * np.arcsinh(u / 2.0)
    x0 = np.where(pulldown, np.where((u > 0) | (topo == CLASS_A), x_src, x_snk), x_biased)
    x0 = np.clip(np.nan_to_num(x0), vneg - db - 1.0 - v0, vpos + 1.0 - v0)
    m[:, _st.P_X0] = x0
    m[:, _st.P_Y0] = np.where(pulldown, 0.5 * x0, 0.0)
    # Headroom beyond which a swing curve cannot bind: where it offers more current than the
    # device limit (or 1 A), plus 0.1 V of room for the output's move within a step.
    with np.errstate(invalid="ignore"):
        big_p = np.minimum(np.nan_to_num(stage.source_limit_a, nan=1.0), 1.0)
        big_n = np.minimum(np.nan_to_num(stage.sink_limit_a, nan=1.0) + 2.0 * i_stage, 1.0)
        h_p = stage.headroom_pos(big_p)
        h_n = stage.headroom_neg(big_n)
    m[:, _st.P_H_FAR_POS] = np.where(np.isfinite(h_p), np.maximum(h_p, 0.0) + 0.1, np.inf)
    m[:, _st.P_H_FAR_NEG] = np.where(np.isfinite(h_n), np.maximum(h_n, 0.0) + 0.1, np.inf)
    return m


def coupling_start(design: Design) -> float | np.ndarray:
    """Start voltage of the coupling capacitor (output side minus load side): the linear
    periodic steady state, V (0 without an AC-coupled load; one per row of a batch design)."""
    ld = design.load
    if not (ld.r_load_ohm is not None and ld.coupling == "ac"):
        return 0.0
    a_sig = design.signal_gain * design.signal.amplitude_v
    if design.rows is not None:
        c_c = np.inf if ld.c_couple_f is None else np.asarray(ld.c_couple_f, dtype=float)
        h = 1.0 / (1.0 + 1j * design.omega * ld.r_load_ohm * c_c)
        return np.asarray(design.out_bias_v - ld.reference_v + np.imag(a_sig * h), dtype=float)
    r_l = float(ld.r_load_ohm)
    c_c = float(ld.c_couple_f or np.inf)
    h = 1.0 / (1.0 + 1j * design.omega * r_l * c_c)
    return float(design.out_bias_v - ld.reference_v + float(np.imag(a_sig * h)))


def _curves(stage: StageParams) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Inverse swing curves (headroom -> current) as contiguous (P, K) arrays."""
    return (
        np.ascontiguousarray(stage.swing_pos_v, dtype=float),
        np.ascontiguousarray(stage.swing_pos_i_a, dtype=float),
        np.ascontiguousarray(stage.swing_neg_v, dtype=float),
        np.ascontiguousarray(stage.swing_neg_i_a, dtype=float),
    )


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
    max_iterations: int = 200,
    tol_v: float = 1e-7,
    max_bad_share: float = _st.MAX_BAD_SHARE,
) -> SimResult:
    """Simulate all parts of ``stage`` in ``design`` and analyse the last periods.

    ``r_to_neg_ohm`` / ``r_to_pos_ohm`` (scalar or one per part) add resistors from the output
    to a rail on top of the design's own (the fix under test). Each part runs at least
    ``n_warmup`` and at most ``max_warmup`` warm-up periods (until its output and drive repeat
    within ``settle_v`` from one period to the next), then ``n_record`` recorded periods.
    ``tol_v`` is the Newton tolerance of the output node (V) and ``max_iterations`` its
    iteration limit per step (a step that misses it is retried once from the last state and
    counted in ``unconverged``; a part where more than ``max_bad_share`` of one period's steps
    miss it, or whose state is no longer finite, is given up, see ``abandoned``);
    ``iterations`` is accepted for compatibility and unused (the Newton solve stops at its
    tolerance).
    """
    del iterations
    p = stage.n
    batch = design.rows is not None
    g_n = p if batch else 1  # circuits: one per part for a batch design, else one for all
    sup = design.supply
    vpos, vneg = sup.v_pos_v, sup.v_neg_v
    f = design.signal.frequency_hz
    period = 1.0 / f
    n = steps_per_period or default_steps(stage, design)
    n_harm = min(n_harmonics, n // 2 - 1)
    dt = period / n
    max_warmup = max(max_warmup, n_warmup)

    def per_circuit(value: float | np.ndarray) -> np.ndarray:  # writable: one compiled kernel
        return np.broadcast_to(np.asarray(value, dtype=float), (g_n,)).copy()

    prm = part_matrix(
        stage,
        design,
        None if r_to_neg_ohm is None else _as_part_array(r_to_neg_ohm, p),
        None if r_to_pos_ohm is None else _as_part_array(r_to_pos_ohm, p),
    )
    ld = design.load
    ac = ld.r_load_ohm is not None and ld.coupling == "ac"
    r_l = ld.r_load_ohm if ac else np.inf
    c_c = (np.inf if ld.c_couple_f is None else ld.c_couple_f) if ac else np.inf
    # Input drive at the end of every step of a period (the drive is periodic and steps align).
    t_all = (np.arange(n) + 1) * col(dt)
    c_in = design.v_plus(t_all) - design.v_minus_drive(t_all)
    cm_rate = design.v_plus_slope(t_all)
    c_in = np.broadcast_to(np.asarray(c_in, dtype=float), (g_n, n)).copy()
    cm_rate = np.broadcast_to(np.asarray(cm_rate, dtype=float), (g_n, n)).copy()
    v_start = np.asarray(design.v_ideal(np.array([0.0])), dtype=float)[..., 0]
    rec_n = n * n_record
    out = np.empty((p, 6, rec_n))
    flags = np.zeros((p, 4), dtype=np.int64)
    pos_h, pos_i, neg_h, neg_i = _curves(stage)
    grp = np.arange(p, dtype=np.int64) if batch else np.zeros(p, dtype=np.int64)
    _st.before_stepper_import()
    from partsel.physics import stepper  # numba: loaded when a simulation runs, not before

    runner = stepper.run_parallel if p >= PARALLEL_PARTS else stepper.run
    runner(
        prm, pos_h, pos_i, neg_h, neg_i, grp, c_in, cm_rate, per_circuit(v_start), V_T,
        per_circuit(design.beta), per_circuit(dt), per_circuit(vpos), per_circuit(vneg),
        per_circuit(ld.c_load_f), ac, per_circuit(r_l), per_circuit(c_c),
        per_circuit(ld.reference_v), int(n_warmup), int(max_warmup), float(settle_v),
        int(n_record), float(tol_v), int(max_iterations), int(max_bad_share * n), out, flags,
    )  # fmt: skip
    unconverged = flags[:, 0] > 0
    n_warm_rec = int(flags[:, 1].max()) if p else n_warmup
    rec = {
        "v": out[:, 0],
        "vd": out[:, 1],
        "io": out[:, 2],
        "isrc": out[:, 3],
        "isnk": out[:, 4],
        "ipd": out[:, 5],
    }
    pulldown = stage.has_pulldown

    t_rec = (np.arange(rec_n) + 1) * col(dt) + n * n_warm_rec * col(dt)
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
    deviation = np.max(np.abs(v_out - (v_id if v_id.ndim == 2 else v_id[None, :])), axis=1)

    i_src_rec = rec["isrc"]
    i_snk_rec = rec["isnk"]
    min_src = i_src_rec.min(axis=1)
    edges_t, edges_v = _handover_edges(stage, i_src_rec, i_snk_rec, v_out, t_rec)
    handover = np.isfinite(edges_t).any(axis=1)
    io = rec["io"]
    crossover_biased = ~pulldown & (io.max(axis=1) > 0) & (io.min(axis=1) < 0)
    first = np.argmin(np.where(np.isfinite(edges_t), edges_t, np.inf), axis=1)
    rows = np.arange(p)
    level = np.where(handover, edges_v[rows, first], np.nan)
    when = np.where(handover, edges_t[rows, first], np.nan)
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
        frequency_hz=float(f) if np.ndim(f) == 0 else np.broadcast_to(f, (p,)).astype(float),
        harmonics_v=amps,
        thd_f=thd_f,
        residual_peak_v=residual,
        deviation_peak_v=deviation,
        min_source_a=min_src,
        handover=handover,
        handover_level_v=level,
        handover_time_s=when,
        unconverged=unconverged,
        bad_steps=flags[:, 0].copy(),
        abandoned=flags[:, 3] > 0,
        abandoned_why=flags[:, 3].copy(),
        handover_edges_s=edges_t,
        handover_edge_levels_v=edges_v,
        crossover_biased=crossover_biased,
        warmup_periods=flags[:, 1].copy(),
    )


def _handover_edges(
    stage: StageParams,
    i_src: np.ndarray,
    i_snk: np.ndarray,
    v_out: np.ndarray,
    t_rec: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Times (s) and output levels (V) of the handovers in the record, shape (P, 2): column 0
    the hand-over from the source device (class B: the sink device starts to carry more than
    CUTOFF_FRACTION of the stage current; class A: the source device falls below it, the load
    alone holding the output), column 1 the hand-back (the source device carries it again).
    NaN where it does not happen, and for biased stages (both devices stay on)."""
    p = i_src.shape[0]
    t_out = np.full((p, 2), np.nan)
    v_at = np.full((p, 2), np.nan)
    thr = (CUTOFF_FRACTION * np.nan_to_num(stage.stage_current_a, nan=0.0))[:, None]
    topo = stage.topology
    with np.errstate(invalid="ignore"):
        src_on = i_src >= thr
        away = np.where((topo == CLASS_B)[:, None], i_snk >= thr, ~src_on)
    # a mode change needs both states within the period; edges are the up-steps of each
    # state on the periodic record (wrapping round from the last sample to the first)
    for column, state in ((0, away), (1, src_on)):
        prev = np.roll(state, 1, axis=1)
        up = state & ~prev
        has = up.any(axis=1) & (~state).any(axis=1) & stage.has_pulldown
        has &= away.any(axis=1) & src_on.any(axis=1)
        k = np.argmax(up, axis=1)
        rows = np.flatnonzero(has)
        t_out[rows, column] = t_rec[rows, k[rows]] if t_rec.ndim == 2 else t_rec[k[rows]]
        v_at[rows, column] = v_out[rows, k[rows]]
    return t_out, v_at
