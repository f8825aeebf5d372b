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

import numpy as np

from partsel.physics.circuit import Design


@dataclass(frozen=True)
class Resistive:
    """The DC-conducting branches as a Norton equivalent, for output voltage ``v``:
    ``i = g_s * v - i_s`` (so the Thevenin level is ``i_s / g_s``)."""

    g_s: float  #: total conductance of the resistive branches, S
    i_s: float  #: sum of g_k * V_k over the branches, A


def resistive_branches(
    design: Design,
    *,
    ac_level_v: float | None = None,
    r_to_neg_ohm: float | None = None,
    r_to_pos_ohm: float | None = None,
) -> Resistive:
    """Norton form of the resistive branches (AC-coupled ``R_L`` counted only if
    ``ac_level_v`` gives the coupling capacitor's far-end level, i.e. ``V_ref + v_cap``).

    ``r_to_neg_ohm`` / ``r_to_pos_ohm`` override the design's extra resistors (for the fix).
    """
    ld = design.load
    g = 0.0
    i = 0.0
    if ld.r_load_ohm is not None:
        if ld.coupling == "dc":
            g += 1.0 / ld.r_load_ohm
            i += ld.reference_v / ld.r_load_ohm
        elif ac_level_v is not None:
            g += 1.0 / ld.r_load_ohm
            i += ac_level_v / ld.r_load_ohm
    rn = ld.r_to_neg_ohm if r_to_neg_ohm is None else r_to_neg_ohm
    rp = ld.r_to_pos_ohm if r_to_pos_ohm is None else r_to_pos_ohm
    if rn is not None and np.isfinite(rn):
        g += 1.0 / rn
        i += design.supply.v_neg_v / rn
    if rp is not None and np.isfinite(rp):
        g += 1.0 / rp
        i += design.supply.v_pos_v / rp
    rfb = design.feedback_load_ohm
    if rfb is not None:
        g += 1.0 / rfb
        i += design.reference_v / rfb
    return Resistive(g, i)


def admittance(
    design: Design,
    omega: float,
    *,
    r_to_neg_ohm: float | None = None,
    r_to_pos_ohm: float | None = None,
) -> complex:
    """Small-signal admittance of the whole load network at angular frequency ``omega``, S."""
    ld = design.load
    y = complex(
        resistive_branches(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm).g_s
    )
    if ld.r_load_ohm is not None and ld.coupling == "ac":
        cc = ld.c_couple_f or 0.0
        if cc > 0 and omega > 0:
            y += 1.0 / (ld.r_load_ohm + 1.0 / (1j * omega * cc))
    y += 1j * omega * ld.c_load_f
    return y


def dc_current(
    design: Design, *, r_to_neg_ohm: float | None = None, r_to_pos_ohm: float | None = None
) -> float:
    """Mean output current at the ideal output bias, A (the AC-coupled branch carries none)."""
    rb = resistive_branches(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    return rb.g_s * design.out_bias_v - rb.i_s


def ideal_current(
    design: Design,
    t_s: np.ndarray,
    *,
    r_to_neg_ohm: float | None = None,
    r_to_pos_ohm: float | None = None,
) -> np.ndarray:
    """Output current (A) in periodic steady state when the output follows the ideal sine."""
    a = design.signal_gain * design.signal.amplitude_v
    w = design.omega
    y = admittance(design, w, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    i0 = dc_current(design, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm)
    # v = V0 + a sin(wt) = V0 + Im(a e^{jwt}); i = I0 + Im(Y a e^{jwt})
    return i0 + np.imag(y * a * np.exp(1j * w * np.asarray(t_s, dtype=float)))


def thevenin_level(
    design: Design, *, r_to_neg_ohm: float | None = None, r_to_pos_ohm: float | None = None
) -> tuple[float, float]:
    """Level (V) and conductance (S) the resistive network pulls an unloaded output to,
    with an AC-coupling capacitor holding the ideal output bias (the flat level of a
    handover is ``level - I_stage / conductance``)."""
    ld = design.load
    ac = None
    if ld.r_load_ohm is not None and ld.coupling == "ac":
        ac = design.out_bias_v
    rb = resistive_branches(
        design, ac_level_v=ac, r_to_neg_ohm=r_to_neg_ohm, r_to_pos_ohm=r_to_pos_ohm
    )
    if rb.g_s <= 0:
        return float("nan"), 0.0
    return rb.i_s / rb.g_s, rb.g_s
