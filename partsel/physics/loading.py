"""The load network seen by the amplifier output (linear, part-independent).

Currents are positive *out of* the amplifier output into the network, A. The network is:
``R_L`` to ``V_ref`` (DC) or through ``C_c`` (AC), ``C_L`` to ground, optional resistors to the
negative and positive rails, and the feedback network (``R_f + R_g`` to the gain reference).

References
----------
Phasor analysis of an RC network; design notes section 3.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from partsel.physics.circuit import Design, col


@dataclass(frozen=True)
class Resistive:
    """The DC-conducting branches as a Norton equivalent, for output voltage ``v``:
    ``i = g_s * v - i_s`` (so the Thevenin level is ``i_s / g_s``). Floats for one design,
    arrays of shape (N,) for a batch (:attr:`partsel.physics.circuit.Design.rows`) or for
    per-part resistors."""

    g_s: Any  #: total conductance of the resistive branches, S
    i_s: Any  #: sum of g_k * V_k over the branches, A


def _branch(r: Any, v: Any) -> tuple[Any, Any]:
    """Conductance and ``g * v`` current of a resistor ``r`` (ohm) to the level ``v`` (V);
    ``None`` or a non-finite value (an array's NaN) is no resistor."""
    if r is None:
        return 0.0, 0.0
    if np.ndim(r) == 0 and np.ndim(v) == 0:
        return (1.0 / r, v / r) if np.isfinite(r) else (0.0, 0.0)
    r = np.asarray(r, dtype=float)
    ok = np.isfinite(r)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(ok, 1.0 / r, 0.0), np.where(ok, v / r, 0.0)


def resistive_branches(
    design: Design,
    *,
    ac_level_v: Any = None,
    r_to_neg_ohm: Any = None,
    r_to_pos_ohm: Any = None,
) -> Resistive:
    """Norton form of the resistive branches (AC-coupled ``R_L`` counted only if
    ``ac_level_v`` gives the coupling capacitor's far-end level, i.e. ``V_ref + v_cap``).

    ``r_to_neg_ohm`` / ``r_to_pos_ohm`` override the design's extra resistors (for the fix).
    """
    ld = design.load
    g: Any = 0.0
    i: Any = 0.0
    if ld.r_load_ohm is not None:
        if ld.coupling == "dc":
            dg, di = _branch(ld.r_load_ohm, ld.reference_v)
            g, i = g + dg, i + di
        elif ac_level_v is not None:
            dg, di = _branch(ld.r_load_ohm, ac_level_v)
            g, i = g + dg, i + di
    rn = ld.r_to_neg_ohm if r_to_neg_ohm is None else r_to_neg_ohm
    rp = ld.r_to_pos_ohm if r_to_pos_ohm is None else r_to_pos_ohm
    for r, level in ((rn, design.supply.v_neg_v), (rp, design.supply.v_pos_v)):
        dg, di = _branch(r, level)
        g, i = g + dg, i + di
    rfb = design.feedback_load_ohm
    if rfb is not None:
        dg, di = _branch(rfb, design.reference_v)
        g, i = g + dg, i + di
    return Resistive(g, i)


def admittance(
    design: Design,
    omega: Any,
    *,
    r_to_neg_ohm: Any = None,
    r_to_pos_ohm: Any = None,
) -> Any:
    """Small-signal admittance of the whole load network at angular frequency ``omega``, S
    (a complex number; an array of shape (N,) for a batch design)."""
    ld = design.load
    g_s = resistive_branches(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm).g_s
    batch = any(np.ndim(x) > 0 for x in (g_s, omega, ld.c_load_f, ld.c_couple_f, ld.r_load_ohm))
    if not batch:
        y = complex(g_s)
        if ld.r_load_ohm is not None and ld.coupling == "ac":
            cc = ld.c_couple_f or 0.0
            if cc > 0 and omega > 0:
                y += 1.0 / (ld.r_load_ohm + 1.0 / (1j * omega * cc))
        y += 1j * omega * ld.c_load_f
        return y
    yb = np.asarray(g_s, dtype=complex)
    if ld.r_load_ohm is not None and ld.coupling == "ac":
        cc = np.asarray(0.0 if ld.c_couple_f is None else ld.c_couple_f, dtype=float)
        w = np.asarray(omega, dtype=float)
        ok = (cc > 0) & (w > 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            branch = 1.0 / (ld.r_load_ohm + 1.0 / (1j * w * cc))
        yb = yb + np.where(ok, branch, 0.0)
    return yb + 1j * omega * ld.c_load_f


def dc_current(design: Design, *, r_to_neg_ohm: Any = None, r_to_pos_ohm: Any = None) -> Any:
    """Mean output current at the ideal output bias, A (the AC-coupled branch carries none)."""
    rb = resistive_branches(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    return rb.g_s * design.out_bias_v - rb.i_s


def ideal_current(
    design: Design,
    t_s: np.ndarray,
    *,
    r_to_neg_ohm: Any = None,
    r_to_pos_ohm: Any = None,
) -> np.ndarray:
    """Output current (A) in periodic steady state when the output follows the ideal sine
    (shape of ``t_s``, or (N, T) for a batch design)."""
    a = design.signal_gain * design.signal.amplitude_v
    w = design.omega
    y = admittance(design, w, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    i0 = dc_current(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    # v = V0 + a sin(wt) = V0 + Im(a e^{jwt}); i = I0 + Im(Y a e^{jwt})
    t = np.asarray(t_s, dtype=float)
    if np.ndim(y) == 0 and np.ndim(i0) == 0 and np.ndim(a) == 0:
        return i0 + np.imag(y * a * np.exp(1j * w * t))
    ya = y * a  # a batch: the same, as Re(ya) sin(wt) + Im(ya) cos(wt) (real arithmetic)
    wt = col(w) * t
    return col(i0) + col(np.real(ya)) * np.sin(wt) + col(np.imag(ya)) * np.cos(wt)


def thevenin_level(
    design: Design, *, r_to_neg_ohm: Any = None, r_to_pos_ohm: Any = None
) -> tuple[Any, Any]:
    """Level (V) and conductance (S) the resistive network pulls an unloaded output to,
    with an AC-coupling capacitor holding the ideal output bias (the flat level of a
    handover is ``level - I_stage / conductance``); NaN and 0 where nothing conducts."""
    ld = design.load
    ac = None
    if ld.r_load_ohm is not None and ld.coupling == "ac":
        ac = design.out_bias_v
    rb = resistive_branches(
        design, ac_level_v=ac, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm
    )
    if np.ndim(rb.g_s) == 0 and np.ndim(rb.i_s) == 0:
        if rb.g_s <= 0:
            return float("nan"), 0.0
        return rb.i_s / rb.g_s, rb.g_s
    g = np.asarray(rb.g_s, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        level = np.where(g > 0, rb.i_s / g, np.nan)
    return level, np.where(g > 0, g, 0.0)
