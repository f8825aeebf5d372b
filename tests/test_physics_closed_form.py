"""Closed-form predictions of partsel.physics.analysis against outside references.

References named beside each check:

* full-power bandwidth ``f_FP = SR / (2 pi V_peak)`` and closed-loop bandwidth
  ``f_CL = GBW / noise gain`` of a single-pole amplifier: op-amp application literature (the
  standard textbook formulas, from memory);
* the gain error of a single-pole loop: python-control (``control.tf`` / ``control.feedback``);
* the load current of an RC network: phasor analysis by hand (written out in the tests);
* the handover time across the dead band: design notes section 4, and an independent numerical
  integration of the drive-node speed with scipy;
* the flat step during a handover at ``V_bias - I_pd R_L``: common practice (design notes
  section 3);
* the THD of a sine clipped on one side: its Fourier series, integrated with scipy;
* the period means of the sourced current and of the output devices' dissipation
  (``conduction_means``): the rectified integrands integrated numerically with scipy.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import replace

import control
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from physics_helpers import DEFAULT_SWING, DEFAULT_TYP, line_design, make_stage, stage_columns
from scipy.integrate import quad
from scipy.optimize import brentq

from partsel.physics.analysis import conduction_means, predict_closed_form
from partsel.physics.circuit import Design
from partsel.physics.stage import StageParams

CLASS_B = "class-b-pulldown"

# ------------------------------------------------------------------ bandwidth and gain error


def test_full_power_bandwidth_formula() -> None:
    """f_FP = SR / (2 pi V_peak), SR the slower of the two edges (op-amp application
    literature); a sine at f_FP needs exactly the available slew rate. Tolerance 1e-12."""
    stage = make_stage(CLASS_B, 3, slew_rise=[0.5e6, 0.3e6, 2e6], slew_fall=[0.3e6, 0.5e6, 2e6])
    d = line_design(out_amplitude_v=0.8)
    cf = predict_closed_form(stage, d)
    sr = np.array([0.3e6, 0.3e6, 2e6])
    expected = sr / (2 * math.pi * 0.8)
    np.testing.assert_allclose(cf.full_power_bw_hz, expected, rtol=1e-12)
    # At f = f_FP the required slew rate 2 pi f V_peak equals the part's slew rate.
    d_fp = line_design(out_amplitude_v=0.8, frequency_hz=float(expected[0]))
    cf_fp = predict_closed_form(stage, d_fp)
    assert cf_fp.slew_required_v_per_s == pytest.approx(0.3e6, rel=1e-12)
    assert cf_fp.slew_margin_ratio[0] == pytest.approx(1.0, rel=1e-12)


@pytest.mark.parametrize(
    ("configuration", "gain", "noise_gain"),
    [("non-inverting", 1.0, 1.0), ("non-inverting", 5.0, 5.0), ("inverting", 4.0, 5.0)],
)
def test_closed_loop_bandwidth_is_gbw_over_noise_gain(
    configuration: str, gain: float, noise_gain: float
) -> None:
    """f_CL = GBW / noise gain, noise gain = G (non-inverting) or 1 + G (inverting)
    (op-amp application literature). Tolerance 1e-12."""
    gbw = np.array([0.7e6, 1e6, 10e6])
    stage = make_stage(CLASS_B, 3, gbw=gbw)
    d = line_design(gain=gain, configuration=configuration)
    cf = predict_closed_form(stage, d)
    np.testing.assert_allclose(cf.closed_loop_bw_hz, gbw / noise_gain, rtol=1e-12)


@pytest.mark.parametrize(
    ("configuration", "gain", "frequency_hz"),
    [("non-inverting", 2.0, 100e3), ("non-inverting", 10.0, 20e3), ("inverting", 3.0, 50e3)],
)
def test_gain_error_of_single_pole_loop_against_python_control(
    configuration: str, gain: float, frequency_hz: float
) -> None:
    """Gain error |A_cl / A_ideal| - 1 and phase error of a single-pole loop, evaluated with
    python-control: open loop omega_t / s, closed loop A / (1 + A beta) (non-inverting, ideal
    1/beta) or A beta / (1 + A beta) (inverting, the signal path's loop-gain factor).
    Tolerance 1e-9."""
    gbw = np.array([1e6, 3e6])
    stage = make_stage(CLASS_B, 2, gbw=gbw)
    d = line_design(gain=gain, configuration=configuration, frequency_hz=frequency_hz)
    cf = predict_closed_form(stage, d)
    beta = 1.0 / (gain if configuration == "non-inverting" else 1.0 + gain)
    s = 2j * math.pi * frequency_hz
    for k, g in enumerate(gbw):
        a_ol = control.tf([2 * math.pi * g], [1, 0])
        if configuration == "non-inverting":
            ratio = complex(control.feedback(a_ol, beta)(s)) * beta
        else:
            ratio = complex(control.feedback(a_ol * beta, 1)(s))
        assert cf.gain_error[k] == pytest.approx(abs(ratio) - 1.0, rel=1e-9)
        assert cf.phase_error_rad[k] == pytest.approx(np.angle(ratio), rel=1e-9)
    assert np.all(cf.gain_error < 0)


# ------------------------------------------------------------------ conduction analysis


def test_output_current_of_ac_coupled_rc_load_against_phasor() -> None:
    """i_out of R_L through C_c with C_L to ground, near the coupling corner (phasor analysis
    by hand): Y = j w C_c / (1 + j w R_L C_c) + j w C_L; the coupling capacitor carries no DC,
    so i = +-|Y| A. Tolerance 1e-9."""
    r_l, c_c, c_l, f, a = 10e3, 100e-9, 10e-9, 200.0, 1.0  # corner 159 Hz
    d = line_design(out_amplitude_v=a, frequency_hz=f, r_load_ohm=r_l, c_couple_f=c_c, c_load_f=c_l)
    cf = predict_closed_form(make_stage(CLASS_B, 1), d)
    w = 2 * math.pi * f
    x = w * r_l * c_c
    y_re = w**2 * r_l * c_c**2 / (1 + x**2)
    y_im = w * c_c / (1 + x**2) + w * c_l
    i_peak = math.hypot(y_re, y_im) * a
    assert cf.i_out_max_a[0] == pytest.approx(i_peak, rel=1e-9)
    assert cf.i_out_min_a[0] == pytest.approx(-i_peak, rel=1e-9)


def test_output_current_of_dc_coupled_load_with_feedback_network() -> None:
    """DC-coupled R_L to a reference plus R_f + R_g to the gain reference (Ohm's law): the
    output current at the output extremes V0 +- A. Tolerance 1e-9."""
    r_l, v_ref, a, v0 = 2e3, 0.0, 1.0, 2.5
    d0 = line_design(coupling="dc", r_load_ohm=r_l, reference_v=v_ref, out_amplitude_v=a)
    cf = predict_closed_form(make_stage(CLASS_B, 1), d0)
    assert cf.i_out_min_a[0] == pytest.approx((v0 - a - v_ref) / r_l, rel=1e-9)
    assert cf.i_out_max_a[0] == pytest.approx((v0 + a - v_ref) / r_l, rel=1e-9)
    assert not cf.handover[0]  # the load only ever takes current from the output

    d1 = replace(d0, closed_loop=replace(d0.closed_loop, feedback_ohm=10e3))
    cf1 = predict_closed_form(make_stage(CLASS_B, 1), d1)
    r_fb = 10e3 + 10e3 / (2.0 - 1.0)  # R_f + R_g at gain 2, returning to the bias 2.5 V
    assert cf1.i_out_min_a[0] == pytest.approx((v0 - a - v_ref) / r_l - a / r_fb, rel=1e-9)
    assert cf1.i_out_max_a[0] == pytest.approx((v0 + a - v_ref) / r_l + a / r_fb, rel=1e-9)


def test_conduction_verdict_from_the_source_demand_and_the_margin_band() -> None:
    """Class B (design notes section 3): the source device must carry the load current plus
    the pull-down current, whose Early effect makes it I (1 + (v - V-)/V_A) / (1 + (V_mid -
    V-)/V_A) (a transistor current source normalised at mid-supply). Loads that need 0.3, 0.8,
    1.2 and 1.7 times I_pd at the trough (v = 1.5 V) leave the least demand at +0.7, +0.2,
    -0.2 and -0.7 I_pd (nearly): outside the margin band of +-0.5 I_pd it is one mode or a
    handover, inside it marginal from either side (partsel's band, the fix's margin). Class AB
    is "biased" whatever its output current does. Tolerance 1e-9 relative (algebra)."""
    from partsel.physics.analysis import MARGIN
    from partsel.physics.stage import V_EARLY_PULLDOWN

    i_pd, a = 50e-6, 1.0
    v_a = V_EARLY_PULLDOWN
    pd_trough = i_pd * (1 + 1.5 / v_a) / (1 + 2.5 / v_a)  # at v = 1.5 V, V- = 0, V_mid = 2.5
    want = ["one-mode", "marginal", "marginal", "changes-mode"]
    for need, verdict in zip((0.3, 0.8, 1.2, 1.7), want, strict=True):
        r = a / (need * i_pd)
        d = line_design(out_amplitude_v=a, r_load_ohm=r, c_couple_f=1e-3)
        stage = make_stage([CLASS_B, "class-ab"], stage_current=i_pd)
        cf = predict_closed_form(stage, d)
        i_min = float(np.real(-a / complex(r, -1 / (d.omega * 1e-3))))  # through 1 mF
        assert cf.i_out_min_a[0] == pytest.approx(-a / abs(complex(r, -1 / (d.omega * 1e-3))))
        assert cf.min_source_a[0] == pytest.approx(cf.source_demand_min_a[0], rel=1e-12)
        # the demand's minimum lies at the trough (load and pull-down slopes add in phase)
        assert cf.source_demand_min_a[0] == pytest.approx(cf.i_out_min_a[0] + pd_trough, rel=2e-3)
        assert cf.conduction[0] == verdict
        assert bool(cf.handover[0]) is (verdict == "changes-mode")
        assert bool(cf.marginal[0]) is (verdict == "marginal")
        assert abs(cf.source_demand_min_a[0]) < MARGIN * i_pd or verdict != "marginal"
        assert i_min < 0
        assert cf.conduction[1] == "biased" and not cf.handover[1]
        assert cf.crossover_biased[1]


def test_class_a_hands_over_when_load_needs_more_than_its_sink_bias() -> None:
    """Class A sinks at most its bias current (design notes section 2): an AC-coupled 10 kohm
    load at 1 V peak needs 100 uA of sink current, more than 50 uA of bias (handover) but less
    than 150 uA; a DC load to ground never needs sinking. With the same load DC-coupled to the
    2.5 V bias (no coupling capacitor to recharge), the closed-form glitch of class A is the
    clip depth flat level - trough = 2.0 V - 1.5 V (common practice; the AC-coupled level
    follows the capacitor's charge balance, tested in test_physics_simulation)."""
    stage = make_stage("class-a", 2, stage_current=[50e-6, 150e-6])
    cf = predict_closed_form(stage, line_design())
    assert list(cf.handover) == [True, False]
    cf_ref = predict_closed_form(stage, line_design(coupling="dc", reference_v=2.5))
    assert list(cf_ref.handover) == [True, False]
    assert cf_ref.flat_level_v[0] == pytest.approx(2.5 - 50e-6 * 10e3, abs=1e-3)
    assert cf_ref.glitch_v[0] == pytest.approx(2.0 - 1.5, abs=1e-3)
    cf_dc = predict_closed_form(stage, line_design(coupling="dc", reference_v=0.0))
    assert not cf_dc.handover.any()


def test_flat_level_is_pulldown_current_times_load_below_bias() -> None:
    """AC-coupled R_L: during the handover the load holds the output where it draws -I_pd,
    V_bias - I_pd R_L (common practice). With R_pd to V- as well, where
    (v - V_bias)/R_L + (v - V-)/R_pd = -I_pd (Kirchhoff). Tolerance 1 mV (0.2 % of I_pd R_L).
    The level is given for marginal stages too (80 uA here: the load needs 100 uA at most)."""
    i_pd = np.array([30e-6, 50e-6, 80e-6])
    stage = make_stage(CLASS_B, 3, stage_current=i_pd)
    cf = predict_closed_form(stage, line_design())
    np.testing.assert_allclose(cf.flat_level_v, 2.5 - i_pd * 10e3, atol=1e-3)
    r_pd = 100e3
    cf2 = predict_closed_form(stage, line_design(r_to_neg_ohm=r_pd))
    expected = (2.5 / 10e3 - i_pd) / (1 / 10e3 + 1 / r_pd)
    np.testing.assert_allclose(cf2.flat_level_v, expected, atol=1e-3)


# ------------------------------------------------------------------ handover time and glitch


def _dc_mid_design(**kw: float) -> Design:
    """R_L DC-coupled to the output bias 2.5 V: i(t) = A sin(wt) / R_L exactly."""
    return line_design(coupling="dc", reference_v=2.5, **kw)


def _crossing_by_quadrature(
    deviation: Callable[[float], float], k_rate: float, slew: float, dead_band: float
) -> float:
    """tau solving int_0^tau min(k D(t), SR) dt = dV (scipy quad + brentq), s."""

    def covered(t: float) -> float:
        return quad(lambda u: min(k_rate * deviation(u), slew), 0.0, t, limit=200)[0]

    return brentq(lambda t: covered(t) - dead_band, 1e-10, 2e-4, xtol=1e-16, rtol=1e-12)


def _rising_edge(a: float, f: float, i_pd: float, r_l: float) -> tuple[float, float]:
    """Slope and steepening of the ideal A sin(wt) (bias removed) where the load current
    A sin(wt) / R_L rises back through -I_pd (sink device cuts off): (s, c), V/s and V/s^2."""
    w = 2 * math.pi * f
    x = -i_pd * r_l / a  # sin of the phase
    return w * a * math.sqrt(1 - x * x), -a * w * w * x


def test_handover_time_reduces_to_design_notes_formula() -> None:
    """Stuck output against an ideal that moves linearly: tau0 = sqrt(2 dV G / (omega_t s)),
    glitch s tau0 (design notes section 4). The ideal's own steepening c over the crossing
    enters at first order in e = c tau0 / s (from s tau^2 / 2 + c tau^3 / 6 = dV / k, analytic):
    tau = tau0 (1 - e / 6), glitch = s tau0 (1 + e / 3); e is 0.05 to 0.09 here, so the
    second order is below 0.2 %. Checked on the crossing itself (analysis._crossing, with the
    distance dV it is given); in predict_closed_form quadrupling GBW about halves the glitch
    (analytic; within 6 %: the distance the exponential laws leave grows a little with GBW)."""
    from partsel.physics.analysis import _crossing

    a, f, g, r_l, i_pd = 1.0, 1e3, 2.0, 10e3, 50e-6
    gbw = np.array([1e6, 4e6, 1e6])
    db = np.array([1.3, 1.3, 5.2])
    s, c = _rising_edge(a, f, i_pd, r_l)
    k = 2 * math.pi * gbw / g
    tau, glitch, capped = _crossing(db, s, c, 0.0, k, np.full(3, 20e6), 0.25 / f)
    assert not capped.any()
    tau0 = np.sqrt(2 * db * g / (2 * math.pi * gbw * s))
    e = c * tau0 / s
    np.testing.assert_allclose(tau, tau0 * (1 - e / 6), rtol=2e-3)
    np.testing.assert_allclose(glitch, s * tau0 * (1 + e / 3), rtol=2e-3)
    stage = make_stage(CLASS_B, 3, gbw=gbw, dead_band=db, slew_rise=20e6, slew_fall=20e6)
    d = _dc_mid_design(out_amplitude_v=a, frequency_hz=f, gain=g, r_load_ohm=r_l)
    cf = predict_closed_form(stage, d)
    np.testing.assert_allclose(cf.slope_v_per_s, s, rtol=1e-9)
    assert cf.glitch_v[1] / cf.glitch_v[0] == pytest.approx(0.5, rel=0.06)


def test_handover_time_against_numerical_integration() -> None:
    """The drive moves at min(omega_t beta D(t), SR) (design notes section 4) against the
    deviation D(t) = s t + c t^2 / 2 of a stuck output from a steepening ideal; tau solves
    int_0^tau min(k D, SR) dt = dV, found here with scipy quad + brentq, and the glitch is
    D(tau). With and without the slew limit reached (analysis._crossing). Tolerance 1e-6."""
    from partsel.physics.analysis import _crossing

    a, f, g, r_l, i_pd, db = 1.0, 1e3, 2.0, 10e3, 50e-6, 1.3
    sr = np.array([20e6, 0.05e6, 0.02e6])
    s, c = _rising_edge(a, f, i_pd, r_l)
    k_rate = 2 * math.pi * 1e6 / g

    def dev(t: float) -> float:
        return s * t + 0.5 * c * t * t

    tau_cf, glitch_cf, _ = _crossing(np.full(3, db), s, c, 0.0, np.full(3, k_rate), sr, 0.25 / f)
    for j, slew in enumerate(sr):
        tau = _crossing_by_quadrature(dev, k_rate, float(slew), db)
        assert tau_cf[j] == pytest.approx(tau, rel=1e-6)
        assert glitch_cf[j] == pytest.approx(dev(tau), rel=1e-6)
    assert k_rate * dev(tau_cf[2]) > sr[2]  # the slew limit was reached


def test_capacitive_load_crossing_against_ode_integration() -> None:
    """With a load capacitance the output is not stuck during the handover: the load alone
    moves it, C_L dv/dt = -I_pd - (v - V_ref) / R_L (Kirchhoff), from the level and slope the
    ideal had. Integrating that node and the drive (omega_t beta times the deviation from the
    ideal sine) with scipy solve_ivp gives the crossing time and the deviation at its end.
    Where the ideal steepens (rising edge here) the closed form's crossing agrees within the
    ideal's third-order term it leaves out, s tau (omega tau)^2 / 6: 0.3 % of tau and 0.7 % of
    the glitch here (which the load's motion makes 0.45 s tau); tolerance 1 %;
    where it flattens (falling edge) the closed form leaves the flattening out, so it must be
    pessimistic: a longer-lasting or larger deviation is not claimed smaller. A larger C_L
    (slower load) gives a smaller glitch than a stuck output, and a smaller I_pd a larger one."""
    from scipy.integrate import solve_ivp

    from partsel.physics.analysis import _crossing

    a, f, g, r_l, db, gbw = 1.0, 1e3, 2.0, 10e3, 1.3, 1e6
    c_l, i_pd = 2e-9, 50e-6
    w = 2 * math.pi * f
    k_rate = 2 * math.pi * gbw / g
    z = complex(1 / r_l, w * c_l) * a  # load current phasor of the ideal output
    phi = math.atan2(z.imag, z.real)
    x = math.asin(-i_pd / abs(z))
    for edge, psi, sign in (
        ("rise", 2 * math.pi + x - phi, -1.0),
        ("fall", math.pi - x - phi, 1.0),
    ):
        t0 = psi / w

        def rhs(t: float, y: np.ndarray, sign: float = sign) -> list[float]:
            v, _ = y
            return [(-i_pd - v / r_l) / c_l, k_rate * sign * (v - a * math.sin(w * t))]

        def crossed(t: float, y: np.ndarray) -> float:
            return y[1] - db

        crossed.terminal = True  # type: ignore[attr-defined]
        sol = solve_ivp(
            rhs, (t0, t0 + 2e-4), [a * math.sin(psi), 0.0], events=crossed,
            rtol=1e-10, atol=1e-13, max_step=1e-7,
        )  # fmt: skip
        t_end = float(sol.t_events[0][0])
        dev_end = sign * (float(sol.y_events[0][0][0]) - a * math.sin(w * t_end))
        slope = abs(a * w * math.cos(psi))
        accel = sign * a * w * w * math.sin(psi)  # > 0: the ideal steepens
        tau, glitch, capped = _crossing(
            np.array([db]), np.array([slope]), np.array([max(accel, 0.0)]),
            np.array([c_l * r_l]), np.array([k_rate]), np.array([20e6]), 0.25 / f,
        )  # fmt: skip
        assert not capped[0]
        if edge == "rise":
            assert accel > 0
            assert tau[0] == pytest.approx(t_end - t0, rel=1e-2)
            assert glitch[0] == pytest.approx(dev_end, rel=1e-2)
        else:
            assert accel < 0
            assert glitch[0] >= dev_end
    stage = make_stage(CLASS_B, 2, stage_current=[50e-6, 30e-6], dead_band=db, gbw=gbw)
    cf = predict_closed_form(stage, _dc_mid_design(gain=g, r_load_ohm=r_l, c_load_f=c_l))
    stuck = predict_closed_form(stage, _dc_mid_design(gain=g, r_load_ohm=r_l))
    assert np.all(cf.glitch_v < stuck.glitch_v)
    assert cf.glitch_v[1] > cf.glitch_v[0]


# ------------------------------------------------------------------ class A clipping THD


def test_class_a_thd_estimate_against_clipped_sine_fourier_series() -> None:
    """A class-A stage on a DC load to 2.5 V flattens the trough at V_ref - I_bias R_L = 2.0 V
    (1 V peak around 2.5 V: clip at -0.5 of the amplitude). THD_F of a sine clipped on one side
    at -c: Fourier coefficients integrated with scipy quad (harmonics 2..40, IEC 61000-2-2
    convention, from memory). Tolerance 20 % (the estimate is a closed-form approximation)."""
    stage = make_stage("class-a", 1)
    cf = predict_closed_form(stage, _dc_mid_design())
    c = 0.5

    def coef(h: int) -> float:
        re = quad(lambda th: max(math.sin(th), -c) * math.cos(h * th), 0, 2 * math.pi, limit=200)
        im = quad(lambda th: max(math.sin(th), -c) * math.sin(h * th), 0, 2 * math.pi, limit=200)
        return math.hypot(re[0], im[0]) / math.pi

    a1 = coef(1)
    thd_ref = math.sqrt(sum(coef(h) ** 2 for h in range(2, 41))) / a1
    assert cf.handover[0]
    assert cf.thd_estimate[0] == pytest.approx(thd_ref, rel=0.2)


# ------------------------------------------------------------------ worst-case basis


def test_worst_case_basis_picks_pessimistic_side() -> None:
    """Worst case (design notes section 7): min GBW and slew, max dead band, min stage current,
    max headroom; typical takes typ, or the middle of min/max where no typ is given."""
    cols = stage_columns(
        [CLASS_B, CLASS_B],
        gbw_min=0.7e6,
        gbw_max=1.4e6,
        dead_band_max=1.8,
        dead_band_min=1.0,
        stage_current_min=[30e-6, np.nan],
        stage_current_max=80e-6,
        slew_rise_min=0.3e6,
        swing_neg_v1_max=0.45,
        swing_pos_v0_max=1.5,
    )
    cols["gbw_typ"] = np.array([1e6, np.nan])
    wc = StageParams.from_columns(cols, basis="worst-case")
    ty = StageParams.from_columns(cols, basis="typical")
    np.testing.assert_array_equal(wc.gbw_hz, [0.7e6, 0.7e6])
    np.testing.assert_array_equal(wc.dead_band_v, [1.8, 1.8])
    # No minimum given for part 1: the next value towards pessimism is typ.
    np.testing.assert_array_equal(wc.stage_current_a, [30e-6, 50e-6])
    np.testing.assert_array_equal(wc.slew_rise_v_per_s, [0.3e6, 0.3e6])
    np.testing.assert_array_equal(wc.swing_neg_v[:, 1], [0.45, 0.45])
    np.testing.assert_array_equal(wc.swing_pos_v[:, 0], [1.5, 1.5])
    assert list(wc.used["gbw"]) == ["min", "min"]
    assert list(wc.used["dead_band"]) == ["max", "max"]
    assert list(wc.used["stage_current"]) == ["min", "typ"]
    np.testing.assert_array_equal(ty.gbw_hz, [1e6, 0.5 * (0.7e6 + 1.4e6)])
    assert list(ty.used["gbw"]) == ["typ", "mid"]
    np.testing.assert_array_equal(ty.dead_band_v, [1.3, 1.3])


_spread = st.floats(min_value=0.0, max_value=0.5)


@settings(max_examples=60, deadline=None)
@given(
    lo=st.lists(_spread, min_size=5, max_size=5),
    hi=st.lists(_spread, min_size=5, max_size=5),
    have_max=st.lists(st.booleans(), min_size=2, max_size=2),
    topology=st.sampled_from([CLASS_B, "class-a", "class-ab"]),
    amp=st.floats(min_value=0.3, max_value=1.0),
    r_load=st.floats(min_value=3e3, max_value=30e3),
)
def test_worst_case_never_more_optimistic_than_typical(
    lo: list[float],
    hi: list[float],
    have_max: list[bool],
    topology: str,
    amp: float,
    r_load: float,
) -> None:
    """For every check the worst-case basis uses the pessimistic side (design notes section
    7), so its glitch is >= and its margins are <= the typical ones (absolute slack 1e-12).
    Headroom curves come with or without a guaranteed maximum and the source limit as typical
    only, as datasheets often give them; a missing side falls back to typ. The glitch of a
    marginal stage comes from the device law in time, which is not monotonic in every
    parameter (a slower slew rate also shrinks the recovery's overshoot), so the glitch is
    compared where neither basis is marginal."""
    keys = ["gbw", "dead_band", "stage_current", "slew_rise", "slew_fall"]
    vals: dict[str, float] = {}
    for k, key in enumerate(keys):
        vals[f"{key}_min"] = DEFAULT_TYP[key] * (1 - lo[k])
        vals[f"{key}_max"] = DEFAULT_TYP[key] * (1 + hi[k])
    for rail, flag in zip(("pos", "neg"), have_max, strict=True):
        if flag:
            for j, (_, h) in enumerate(DEFAULT_SWING[rail]):
                vals[f"swing_{rail}_v{j}_max"] = h * 1.1
    cols = stage_columns(topology, 1, **vals)
    d = line_design(out_amplitude_v=amp, r_load_ohm=r_load)
    ty_stage = StageParams.from_columns(cols, "typical")
    wc_stage = StageParams.from_columns(cols, "worst-case")
    ty = predict_closed_form(ty_stage, d)
    wc = predict_closed_form(wc_stage, d)
    eps = 1e-12
    formula = "marginal" not in (ty.conduction[0], wc.conduction[0])
    checks = {
        "glitch_v": wc.glitch_v[0] >= ty.glitch_v[0] - eps or not formula,
        "handover": wc.handover[0] >= ty.handover[0],
        "min_source_a": wc.min_source_a[0] <= ty.min_source_a[0] + eps,
        "swing_pos_margin_v": wc.swing_pos_margin_v[0] <= ty.swing_pos_margin_v[0] + eps,
        "swing_neg_margin_v": wc.swing_neg_margin_v[0] <= ty.swing_neg_margin_v[0] + eps,
        "slew_margin_ratio": wc.slew_margin_ratio[0] <= ty.slew_margin_ratio[0] + eps,
        "full_power_bw_hz": wc.full_power_bw_hz[0] <= ty.full_power_bw_hz[0] + eps,
        "closed_loop_bw_hz": wc.closed_loop_bw_hz[0] <= ty.closed_loop_bw_hz[0] + eps,
        "gain_error": wc.gain_error[0] <= ty.gain_error[0] + eps,
        "source_limit_margin_a": wc_stage.source_limit_a[0] - wc.source_peak_a[0]
        <= ty_stage.source_limit_a[0] - ty.source_peak_a[0] + eps,
    }
    optimistic = [name for name, ok in checks.items() if not ok]
    assert not optimistic, f"worst case more optimistic than typical in {optimistic}"


# ------------------------------------------------------------------ monotonic glitch (property)


@settings(max_examples=100, deadline=None)
@given(
    gbw=st.floats(min_value=0.3e6, max_value=10e6),
    db=st.floats(min_value=0.8, max_value=2.5),
    i_pd=st.floats(min_value=5e-6, max_value=80e-6),
    slew=st.floats(min_value=0.05e6, max_value=5e6),
    f=st.floats(min_value=100.0, max_value=20e3),
    amp=st.floats(min_value=0.2, max_value=1.0),
    gain=st.floats(min_value=1.0, max_value=10.0),
)
def test_closed_form_glitch_grows_with_frequency_and_shrinks_with_gbw(
    gbw: float, db: float, i_pd: float, slew: float, f: float, amp: float, gain: float
) -> None:
    """Glitch ~ sqrt(2 dV G s / omega_t), at most s tau with the slew limit (design notes
    section 4): doubling f raises it, doubling GBW lowers it (any handover with a load of
    10 kohm through 1 mF, the coupling corner far below f), up to the quarter-period cap."""
    stage = make_stage(
        CLASS_B,
        2,
        gbw=[gbw, 2 * gbw],
        dead_band=db,
        stage_current=i_pd,
        slew_rise=slew,
        slew_fall=slew,
    )
    kw = {"out_amplitude_v": amp, "gain": gain, "c_couple_f": 1e-3}
    cf1 = predict_closed_form(stage, line_design(frequency_hz=f, **kw))
    cf2 = predict_closed_form(stage, line_design(frequency_hz=2 * f, **kw))
    cap = amp * math.pi / 2  # a crossing of a quarter period or more is cut there
    if cf1.handover[0] and cf1.glitch_v[0] < cap * (1 - 1e-9):
        assert cf2.glitch_v[0] > cf1.glitch_v[0]
        assert cf1.glitch_v[1] < cf1.glitch_v[0]
    elif cf1.handover[0]:
        assert cf2.glitch_v[0] == pytest.approx(cap)
        assert cf1.glitch_v[1] <= cf1.glitch_v[0]
    elif not cf1.marginal[0]:
        assert cf1.glitch_v[0] == 0.0


# ------------------------------------------------------------------ one-mode distortion


def test_one_mode_thd_against_fft_of_the_device_law() -> None:
    """Class B kept in source mode: the follower's drop V_S ln(i_src) over the ideal period
    (i_src the load current plus the pull-down's, with its Early effect; the output stage's
    term alone, input_stage=False),
    sampled (4096 points) and transformed with numpy's FFT, each harmonic n passed through the
    loop's error transfer j n w / (j n w + omega_t beta) (single-pole loop, analytic), gives
    the same THD_F (harmonics 2..40) as the closed form's analytic Fourier series of the
    logarithm (rtol 1e-6). Lower pull-down current or less GBW: more distortion."""
    from partsel.physics.analysis import one_mode_thd
    from partsel.physics.loading import ideal_current
    from partsel.physics.stage import M_FOLLOWER, V_EARLY_PULLDOWN, V_T

    i_pd = np.array([400e-6, 250e-6, 250e-6])
    gbw = np.array([1e6, 1e6, 0.3e6])
    stage = make_stage(CLASS_B, 3, stage_current=i_pd, gbw=gbw)
    d = line_design(r_load_ohm=10e3)  # sinks up to 100 uA: stays in source mode
    est = one_mode_thd(stage, d, input_stage=False)
    cf = predict_closed_form(stage, d)
    assert list(cf.conduction) == ["one-mode"] * 3
    # the ranking's estimate adds the input stage's slew-induced term in power (tiny at 1 kHz)
    np.testing.assert_array_equal(cf.thd_estimate, one_mode_thd(stage, d))
    np.testing.assert_allclose(cf.thd_estimate, est, rtol=1e-3)
    n = 4096
    t = np.arange(n) / (n * d.signal.frequency_hz)
    i_out = ideal_current(d, t)
    w = d.omega
    orders = np.arange(2, 41)
    v_out = d.v_ideal(t)
    for j in range(3):
        # pull-down with its Early effect, normalised at mid-supply (stage module docstring)
        pd = i_pd[j] * (1 + v_out / V_EARLY_PULLDOWN) / (1 + 2.5 / V_EARLY_PULLDOWN)
        x = M_FOLLOWER * V_T * np.log(pd + i_out)
        harm = np.abs(np.fft.rfft(x))[orders] * 2 / n
        k = 2 * math.pi * gbw[j] / d.noise_gain
        e = harm * orders * w / np.sqrt((orders * w) ** 2 + k**2)
        assert est[j] == pytest.approx(np.sqrt(np.sum(e**2)) / d.out_amplitude_v, rel=1e-6)
    assert est[1] > est[0] and est[2] > est[1]


def test_one_mode_thd_with_a_pull_up_uses_the_sink_device() -> None:
    """A resistor to V+ that keeps the sink device on: the same law on the sink current
    -I0 - I_pd + B sin (Kirchhoff at the output); a stage that would hand over gives NaN."""
    from partsel.physics.analysis import one_mode_thd

    stage = make_stage(CLASS_B, 2, stage_current=50e-6)
    d = line_design(r_load_ohm=2e3)  # sinks up to 0.5 mA: hands over as designed
    assert np.all(np.isnan(one_mode_thd(stage, d)))
    r_pos = np.array([np.nan, 1.5e3])  # 2.5 V / 1.5 kohm = 1.67 mA pulled in at the bias
    got = one_mode_thd(stage, d, r_to_pos_ohm=r_pos)
    assert np.isnan(got[0]) and 0 < got[1] < 1e-3


# ------------------------------------------------------------------ power means without a grid


@settings(max_examples=60, deadline=None)
@given(
    i0=st.floats(-2e-3, 2e-3),
    i_sin=st.floats(-3e-3, 3e-3),
    i_cos=st.floats(-3e-3, 3e-3),
    v0=st.floats(0.5, 4.5),
    a=st.floats(-2.0, 2.0),
)
def test_conduction_means_against_numerical_integration(
    i0: float, i_sin: float, i_cos: float, v0: float, a: float
) -> None:
    """Means over a period of max(i, 0) and of max(i, 0)(V+ - v) + max(-i, 0)(v - V-), for
    i = I0 + b_s sin + b_c cos and v = V0 + a sin (5 V single supply), against scipy's quad of
    the rectified integrands (breakpoints at the current's zeros)."""
    vp, vn = 5.0, 0.0

    def cur(t: float) -> float:
        return i0 + i_sin * math.sin(t) + i_cos * math.cos(t)

    def power(t: float) -> float:
        v = v0 + a * math.sin(t)
        i = cur(t)
        return max(i, 0.0) * (vp - v) + max(-i, 0.0) * (v - vn)

    b = math.hypot(i_sin, i_cos)
    zeros = []
    if b > abs(i0):  # i = I0 + B sin(t + phi) = 0
        phi = math.atan2(i_cos, i_sin)
        al = math.asin(-i0 / b)
        zeros = sorted({(al - phi) % (2 * math.pi), (math.pi - al - phi) % (2 * math.pi)})
    src_ref = quad(lambda t: max(cur(t), 0.0), 0.0, 2 * math.pi, points=zeros or None)[0]
    pwr_ref = quad(power, 0.0, 2 * math.pi, points=zeros or None)[0]
    src, pwr = conduction_means(i0, i_sin, i_cos, v0, a, vp, vn)
    assert float(src) == pytest.approx(src_ref / (2 * math.pi), rel=1e-7, abs=1e-12)
    assert float(pwr) == pytest.approx(pwr_ref / (2 * math.pi), rel=1e-7, abs=1e-12)
