"""Sizing of the fix resistor (partsel.physics.fix) against hand calculations and references.

References named beside each check: IEC 60063 E24 series through the `eseries` package (an
independent implementation of the tables and their usual 5 % tolerance); the resistor bound
solved by hand for a sine on an AC-coupled resistive load (design notes section 5); the mean of
a sine over whole periods (calculus); the simulation of the same macro-model for the effect of
the fix.
"""

from __future__ import annotations

import math

import eseries as es
import numpy as np
import pytest
from physics_helpers import line_design, make_stage

from partsel.physics.circuit import Design
from partsel.physics.fix import DEFAULT_MARGIN, size_fix
from partsel.physics.simulate import CUTOFF_FRACTION, simulate

CLASS_B = "class-b-pulldown"
E24_TOL = es.tolerance(es.E24)  # 5 %


def _next_e24_above(r_ohm: float) -> float:
    """Smallest E24 value strictly above ``r_ohm`` (eseries package)."""
    values = [v for v in es.erange(es.E24, r_ohm, 10 * r_ohm) if v > r_ohm * (1 + 1e-9)]
    return float(values[0])


def _check_rounding(r_ohm: np.ndarray, r_max: np.ndarray) -> int:
    """Assert every chosen value is E24, safe at +tolerance, and the next value is not."""
    count = 0
    for r, bound in zip(r_ohm, r_max, strict=True):
        if not np.isfinite(r):
            continue
        count += 1
        assert es.find_nearest(es.E24, float(r)) == pytest.approx(float(r), rel=1e-12)
        assert r * (1 + E24_TOL) <= bound
        assert _next_e24_above(float(r)) * (1 + E24_TOL) > bound
    return count


def test_fix_resistor_is_safe_e24_value() -> None:
    """IEC 60063 E24 (eseries package): the chosen R is an E24 value, R (1 + 5 %) <= r_max, and
    the next larger E24 value would exceed r_max at the top of its tolerance."""
    i_pd = np.array([10e-6, 30e-6, 50e-6, 70e-6, 90e-6])
    stage = make_stage(CLASS_B, 5, stage_current=i_pd)
    n = 0
    for bias, r_l in ((2.5, 10e3), (2.0, 4.7e3), (1.6, 20e3)):
        fix = size_fix(stage, line_design(bias_v=bias, r_load_ohm=r_l, out_amplitude_v=1.0))
        assert fix.tolerance == E24_TOL
        n += _check_rounding(fix.negative.r_ohm, fix.negative.r_max_ohm)
        n += _check_rounding(fix.positive.r_ohm, fix.positive.r_max_ohm)
    assert n >= 20


def _hand_phasor(design: Design, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """v(t) and i(t) of a sine on R_L through C_c (phasor by hand): i = Im(Y A e^{j theta})."""
    ld = design.load
    assert ld.r_load_ohm is not None and ld.c_couple_f is not None
    a = design.out_amplitude_v
    y = 1.0 / (ld.r_load_ohm + 1.0 / (1j * design.omega * ld.c_couple_f))
    return design.out_bias_v + a * np.sin(theta), np.imag(y * a * np.exp(1j * theta))


@pytest.mark.parametrize(("bias", "amp", "r_l"), [(2.5, 1.0, 10e3), (1.8, 0.9, 4.7e3)])
def test_negative_rail_bound_by_hand(bias: float, amp: float, r_l: float) -> None:
    """R_max = min_t (v - V-) / (-(1 - m) I - i(t)) over instants where the bracket is positive
    (design notes section 5). On an AC-coupled R_L well above the corner i = (v - V0)/R_L, the
    ratio falls towards the trough, so R_max = (V0 - A) / (A/R_L - (1 - m) I). Checked both
    against that formula and a 100 000-point minimum with the exact phasor. Tolerance 1e-3
    (partsel samples 512 instants)."""
    i_pd = np.array([20e-6, 50e-6, 70e-6])
    stage = make_stage(CLASS_B, 3, stage_current=i_pd)
    d = line_design(bias_v=bias, out_amplitude_v=amp, r_load_ohm=r_l)
    fix = size_fix(stage, d)
    m = DEFAULT_MARGIN
    formula = (bias - amp) / (amp / r_l - (1 - m) * i_pd)
    theta = np.linspace(0, 2 * np.pi, 100_000, endpoint=False)
    v, i = _hand_phasor(d, theta)
    need = -(1 - m) * i_pd[:, None] - i[None, :]
    brute = np.min(np.where(need > 0, v[None, :] / need, np.inf), axis=1)
    np.testing.assert_allclose(fix.negative.r_max_ohm, formula, rtol=1e-3)
    np.testing.assert_allclose(fix.negative.r_max_ohm, brute, rtol=1e-3)
    assert fix.needed.all()


def test_positive_rail_bound_by_hand() -> None:
    """Resistor to V+ keeping the sink device on: (V+ - v)/R >= i + (1 + m) I; the ratio falls
    towards the crest, so R_max = (V+ - V0 - A) / (A/R_L + (1 + m) I) (design notes section 5).
    Tolerance 1e-3."""
    i_pd = np.array([20e-6, 50e-6])
    stage = make_stage(CLASS_B, 2, stage_current=i_pd)
    fix = size_fix(stage, line_design(bias_v=2.0, out_amplitude_v=1.0))
    m = DEFAULT_MARGIN
    formula = (5.0 - 2.0 - 1.0) / (1.0 / 10e3 + (1 + m) * i_pd)
    np.testing.assert_allclose(fix.positive.r_max_ohm, formula, rtol=1e-3)


def test_extra_supply_current_and_resistor_dissipation() -> None:
    """The resistor to V- draws mean((v - V-)/R_lo) = (V0 - V-)/R_lo from the supply and
    dissipates mean(v^2)/R_lo = (V0^2 + A^2/2)/R_lo, with R_lo = R (1 - 5 %) the bottom of its
    tolerance (mean of a sine over whole periods). To V+: (V+ - V0)/R_lo and
    ((V+ - V0)^2 + A^2/2)/R_lo. Tolerance 1e-9."""
    stage = make_stage(CLASS_B, 2, stage_current=[30e-6, 60e-6])
    v0, a = 2.2, 1.0
    fix = size_fix(stage, line_design(bias_v=v0, out_amplitude_v=a))
    r_lo = fix.negative.r_ohm * (1 - E24_TOL)
    np.testing.assert_allclose(fix.negative.extra_supply_a, v0 / r_lo, rtol=1e-9)
    np.testing.assert_allclose(
        fix.negative.dissipation_resistor_w, (v0**2 + a**2 / 2) / r_lo, rtol=1e-9
    )
    rp_lo = fix.positive.r_ohm * (1 - E24_TOL)
    np.testing.assert_allclose(fix.positive.extra_supply_a, (5.0 - v0) / rp_lo, rtol=1e-9)
    np.testing.assert_allclose(
        fix.positive.dissipation_resistor_w, ((5.0 - v0) ** 2 + a**2 / 2) / rp_lo, rtol=1e-9
    )


def test_no_resistor_works_when_output_sinks_near_negative_rail() -> None:
    """Output trough 5 mV above V- while a 1 kohm AC-coupled load returns ~1 mA (design notes
    sections 5-6). By hand, a resistor to V- must take that current at 5 mV:
    R <= 5 mV / (0.995 mA - 25 uA) = 5.2 ohm, which at the 2 V crest needs ~0.4 A of source
    current, far beyond 40 mA; a resistor to V+ needs the sink device to sink near V-, where it
    has no headroom (0 A at 5 mV). So no resistor works, and both reasons say why."""
    stage = make_stage(CLASS_B, 1)
    fix = size_fix(stage, line_design(bias_v=1.0, out_amplitude_v=0.995, r_load_ohm=1e3))
    hand = 0.005 / (0.995e-3 - (1 - DEFAULT_MARGIN) * 50e-6)
    assert fix.negative.r_max_ohm[0] == pytest.approx(hand, rel=1e-2)
    assert fix.negative.device_peak_a[0] > 0.2
    assert list(fix.recommended) == ["none"]
    assert not fix.negative.ok[0] and fix.negative.reason[0]
    assert not fix.positive.ok[0] and fix.positive.reason[0]
    assert "source limit" in fix.negative.reason[0]
    assert "swing" in fix.positive.reason[0]


def test_no_resistor_works_when_trough_reaches_negative_rail() -> None:
    """A trough at V- itself while the load sinks: a resistor to V- carries no current there,
    so no value keeps the source device on (design notes section 5)."""
    stage = make_stage(CLASS_B, 1)
    fix = size_fix(stage, line_design(bias_v=1.0, out_amplitude_v=1.0, r_load_ohm=10e3))
    assert list(fix.recommended) == ["none"]
    assert fix.negative.reason[0]
    assert not np.isfinite(fix.negative.r_ohm[0]) or not fix.negative.ok[0]


def test_not_needed_for_biased_stage_or_light_load() -> None:
    """Class AB needs no fix; nor does a class-B stage whose load never sinks more than half
    its pull-down current (partsel's margin; 100 kohm at 1 V peak takes 10 uA of 50 uA)."""
    stage = make_stage(["class-ab", CLASS_B])
    fix = size_fix(stage, line_design(r_load_ohm=100e3))
    assert list(fix.recommended) == ["not-needed", "not-needed"]
    assert not fix.needed.any()


def test_negative_fix_removes_handover_in_simulation() -> None:
    """The recommended resistor to V- keeps the source device on in the simulation of the same
    macro-model: no handover, source current >= the margin's half of I_pd (at nominal R it is
    higher than at the bottom of the tolerance), and THD_F falls at least tenfold."""
    stage = make_stage(CLASS_B, 2)
    d = line_design()
    fix = size_fix(stage, d)
    assert list(fix.recommended) == ["negative", "negative"]
    r_neg = np.array([fix.r_neg_ohm[0], np.nan])
    sim = simulate(stage, d, r_to_neg_ohm=r_neg, n_warmup=1, steps_per_period=1024)
    assert list(sim.handover) == [False, True]
    assert sim.min_source_a[0] >= 0.9 * DEFAULT_MARGIN * 50e-6
    assert sim.thd_f[0] * 10 < sim.thd_f[1]


def test_positive_fix_holds_sink_mode_and_is_no_handover() -> None:
    """Low output bias (1.5 V) and a small pull-down (5 uA): the resistor to V+ costs less and
    is recommended (extra current (V+ - V0)/R_lo < V0/R_lo of the V- remedy). With it the sink
    device conducts all period and the source device never does: the stage stays in one mode,
    so the simulation must report no handover (design notes section 5). THD_F falls at least
    tenfold against no fix."""
    i_pd = 5e-6
    stage = make_stage(CLASS_B, 2, stage_current=i_pd)
    d = line_design(bias_v=1.5)
    fix = size_fix(stage, d)
    assert list(fix.recommended) == ["positive", "positive"]
    assert fix.positive.extra_supply_a[0] < fix.negative.extra_supply_a[0]
    r_pos = np.array([fix.r_pos_ohm[0], np.nan])
    sim = simulate(stage, d, r_to_pos_ohm=r_pos, n_warmup=1, steps_per_period=1024)
    cutoff = CUTOFF_FRACTION * i_pd
    assert np.all(sim.i_sink[0] > cutoff)  # sink device on all period
    assert np.all(sim.i_source[0] < cutoff)  # source device off all period
    assert sim.thd_f[0] * 10 < sim.thd_f[1]
    assert not sim.handover[0]
    assert math.isfinite(fix.positive.r_ohm[0])
