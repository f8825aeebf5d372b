"""partsel's own simulation against ngspice running the exported deck of the same macro-model.

:func:`partsel.physics.spice.spice_deck` writes the macro-model (loop, slew-clipped integrator,
device laws, swing limits, load network) as an ngspice deck; ngspice 39 (Debian package
``ngspice``) integrates it with its own method (trapezoidal, adaptive step no longer than
simulate()'s step ``dt``, reltol 1e-6). The cases use invented parts with classic single-supply
bipolar values (stage current 50 uA, dead band 1.3 V, GBW 1 MHz, SR 0.5 V/us: common practice,
from memory) and a 5 V single supply:

(a) class-B stage with pull-down, 10 uF into 4.7 kohm, output 2.5 V +- 1 V at 1 kHz: the load
    must sink up to 213 uA > 50 uA, so the stage hands over twice a period;
(b) the same with the resistor to the negative rail that :func:`partsel.physics.fix.size_fix`
    recommends (E24; 7.5 kohm here): the source device stays on;
(c) a class-AB part in the same circuit;
(d) inverting gain 2, DC load to 1 V, 1 nF load capacitance, a design resistor to the negative
    rail and the feedback network's load, with a class-A and a CMOS part (the rest of the load
    network and the inverting error expression);
(e) the class-AB part of (c), whose rising and falling slew rates differ, at 20 kHz and 0.8 V
    peak into 2 kohm: its input stage far from linear, with the tail current modulated by the
    drive's and the common mode's slopes (the deck's input-stage node and common-mode term).

Both simulators run exactly three periods (simulate() with two warm-up periods, not more).
Comparison: ngspice's waveform is interpolated linearly onto simulate()'s time grid of the last
period (ngspice's steps are <= dt, so the interpolation error is below ``dt**2 |v''| / 8``, a few
uV), then the same analysis is applied as in simulate(): glitch amplitude = peak of v_out minus
its DC and fundamental (``SimResult.residual_peak_v``), THD_F from
:func:`partsel.physics.spectrum.thd` over exactly one period.

Tolerances, from the integration methods (``dt = T/n``, ``K = omega_t * beta`` the closed-loop
rate, 3.1e6 /s here, so ``K dt`` is about 3 at simulate()'s default n = 1024):

* ngspice's own error: its waveform moves by 0.10 mV in case (a) when its largest step goes from
  dt to dt/8 (measured), so what remains is simulate()'s.
* smooth cases (b, c, d, e; no handover): backward Euler's integrator is ``(1/s)(1 + s dt/2 +
  ..)``, so for a sine tracked by the loop it changes the closed-loop error ``1 - H`` only by
  about ``omega**2 dt / (2 K)``: ``|dv| ~ A omega**2 dt / (2 K)``. Tolerance: 5 times that plus
  5 uV (36, 15, 79, 42 and 169 uV). Measured: (b) 5.9 uV, (c) 2.5 uV, (d) 13.8 uV and 4.7 uV,
  (e) 33 uV. THD_F, glitch amplitude and minimum source current: 1 % relative (measured at
  most 0.33 %, the residual of (c)).
* handover case (a): the glitch ends with a step of about its amplitude ``g`` that settles at
  the rate K, faster than one step; backward Euler leaves ``1/(1 + K dt)`` of it after a step
  where the exact solution leaves ``exp(-K dt)``, so ``max |dv| <~ g (1/(1 + K dt) -
  exp(-K dt))`` (11.5 mV here; measured 11.3 mV). Glitch amplitude and THD_F: relative
  ``dt / tau`` with ``tau = sqrt(2 dV G / (omega_t s))`` the dead-band crossing time (design
  notes section 4), i.e. the dead-band crossing resolved to one step (8.4 %; measured -3.2 %
  and +0.02 %). And the difference must shrink like a first-order method's: doubling n must
  cut ``max |dv|`` by at least 1.5 (measured 1.72).

Without ngspice the tests skip, unless ``CI`` is ``true`` or ``PARTSEL_REQUIRE_NGSPICE=1``: then
they fail (fixture ``need_ngspice`` in conftest.py).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
from physics_helpers import residual_peak, thd_f

from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.physics.fix import size_fix
from partsel.physics.simulate import SimResult, simulate
from partsel.physics.spice import spice_deck
from partsel.physics.stage import StageParams, pwl
from partsel.spice_run import run_ngspice_columns

N_STEPS = 1024  # simulate()'s default for these designs (at least 1024 steps per period)
PERIODS = 3  # two warm-up periods and the recorded one, in both simulators


# ---- invented parts -------------------------------------------------------------------------
def _bipolar(topology: str) -> dict[str, float]:
    """An invented classic single-supply bipolar part (typical values, common practice)."""
    return {
        "topology": topology,
        "dead_band_typ": 1.3,
        "stage_current_typ": 50e-6,
        "source_limit_typ": 40e-3,
        "sink_limit_typ": 20e-3,
        "gbw_typ": 1e6,
        "slew_rise_typ": 0.5e6,
        "slew_fall_typ": 0.5e6,
        "supply_current_typ": 350e-6,
        "swing_pos_i0": 0.0, "swing_pos_v0_typ": 1.3,
        "swing_pos_i1": 10e-3, "swing_pos_v1_typ": 1.6,
        "swing_neg_i0": 0.0, "swing_neg_v0_typ": 0.005,
        "swing_neg_i1": 50e-6, "swing_neg_v1_typ": 0.3,
        "swing_neg_i2": 1e-3, "swing_neg_v2_typ": 0.75,
        "swing_neg_i3": 10e-3, "swing_neg_v3_typ": 1.2,
    }  # fmt: skip


def _class_ab() -> dict[str, float]:
    """An invented class-AB bipolar part (quiescent current 40 uA, GBW 3 MHz)."""
    return {
        "topology": "class-ab",
        "stage_current_typ": 40e-6,
        "source_limit_typ": 30e-3,
        "sink_limit_typ": 30e-3,
        "gbw_typ": 3e6,
        "slew_rise_typ": 1.5e6,
        "slew_fall_typ": 1.2e6,
        "supply_current_typ": 600e-6,
        "swing_pos_i0": 0.0, "swing_pos_v0_typ": 0.9,
        "swing_pos_i1": 10e-3, "swing_pos_v1_typ": 1.3,
        "swing_neg_i0": 0.0, "swing_neg_v0_typ": 0.05,
        "swing_neg_i1": 1e-3, "swing_neg_v1_typ": 0.15,
        "swing_neg_i2": 10e-3, "swing_neg_v2_typ": 0.9,
    }  # fmt: skip


def _cmos() -> dict[str, float]:
    """An invented CMOS rail-to-rail part (quiescent current 60 uA, GBW 2 MHz)."""
    return {
        "topology": "cmos-rail-to-rail",
        "stage_current_typ": 60e-6,
        "source_limit_typ": 25e-3,
        "sink_limit_typ": 25e-3,
        "gbw_typ": 2e6,
        "slew_rise_typ": 1.0e6,
        "slew_fall_typ": 1.0e6,
        "supply_current_typ": 500e-6,
        "swing_pos_i0": 0.0, "swing_pos_v0_typ": 0.01,
        "swing_pos_i1": 5e-3, "swing_pos_v1_typ": 0.25,
        "swing_neg_i0": 0.0, "swing_neg_v0_typ": 0.01,
        "swing_neg_i1": 5e-3, "swing_neg_v1_typ": 0.2,
    }  # fmt: skip


def _stage(parts: list[dict[str, float]]) -> StageParams:
    keys = sorted({k for p in parts for k in p})
    cols: dict[str, np.ndarray] = {}
    for k in keys:
        if k == "topology":
            cols[k] = np.array([p[k] for p in parts])
        else:
            cols[k] = np.array([p.get(k, np.nan) for p in parts], dtype=float)
    return StageParams.from_columns(cols)


DESIGN_A = Design(
    "line driver, AC-coupled",
    Supply(5.0),
    Signal(bias_v=2.5, amplitude_v=0.5, frequency_hz=1e3),
    ClosedLoop("non-inverting", gain=2.0),
    Load(r_load_ohm=4.7e3, coupling="ac", c_couple_f=10e-6),
)
DESIGN_E = Design(
    "line driver at 20 kHz",
    Supply(5.0),
    Signal(bias_v=2.5, amplitude_v=0.4, frequency_hz=20e3),
    ClosedLoop("non-inverting", gain=2.0),
    Load(r_load_ohm=2e3, coupling="ac", c_couple_f=10e-6),
)
DESIGN_D = Design(
    "inverting, DC load",
    Supply(5.0),
    Signal(bias_v=2.5, amplitude_v=0.4, frequency_hz=2e3),
    ClosedLoop("inverting", gain=2.0, feedback_ohm=20e3),
    Load(r_load_ohm=2e3, reference_v=1.0, c_load_f=1e-9, r_to_neg_ohm=47e3),
)


# ---- the comparison ---------------------------------------------------------------------------
@dataclass(frozen=True)
class Pair:
    """simulate() and ngspice for one part, on simulate()'s grid of the recorded period."""

    design: Design
    stage: StageParams
    index: int
    sim: SimResult
    v_ng: np.ndarray
    i_source_ng: np.ndarray

    @property
    def v_sim(self) -> np.ndarray:
        return self.sim.v_out[self.index]

    @property
    def max_diff_v(self) -> float:
        assert not self.sim.unconverged[self.index], "simulate()'s node solve did not converge"
        return float(np.max(np.abs(self.v_ng - self.v_sim)))


def _ngspice(
    design: Design,
    stage: StageParams,
    index: int,
    sim: SimResult,
    work: Path,
    r_neg: float | None = None,
) -> Pair:
    deck = spice_deck(
        stage,
        index,
        design,
        r_to_neg_ohm=r_neg,
        periods=PERIODS,
        steps_per_period=sim.steps_per_period,
    )
    cols = run_ngspice_columns(deck, work)
    t = sim.t_s
    return Pair(
        design,
        stage,
        index,
        sim,
        np.interp(t, cols["time"], cols["v(out)"]),
        np.interp(t, cols["time"], cols["i_source"]),
    )


@pytest.fixture(scope="module")
def pairs(need_ngspice: None, tmp_path_factory: pytest.TempPathFactory) -> dict[str, Pair]:
    """Cases (a) to (d): simulate() for each design once (parts vectorised), ngspice per part."""
    work = tmp_path_factory.mktemp("ngspice")
    st_a = _stage([_bipolar("class-b-pulldown"), _bipolar("class-b-pulldown"), _class_ab()])
    fix = size_fix(st_a, DESIGN_A, series="E24")
    r_fix = float(fix.r_neg_ohm[0])
    assert math.isfinite(r_fix), "size_fix recommends no resistor to the negative rail"
    r_neg = np.array([np.nan, r_fix, np.nan])
    # exactly PERIODS - 1 warm-up periods, as in the deck (parts otherwise warm up until settled)
    warm = {"n_warmup": PERIODS - 1, "max_warmup": PERIODS - 1}
    sim_a = simulate(st_a, DESIGN_A, steps_per_period=N_STEPS, r_to_neg_ohm=r_neg, **warm)
    st_d = _stage([_bipolar("class-a"), _cmos()])
    sim_d = simulate(st_d, DESIGN_D, steps_per_period=N_STEPS, **warm)
    st_e = _stage([_class_ab()])
    sim_e = simulate(st_e, DESIGN_E, steps_per_period=N_STEPS, **warm)
    return {
        "a-handover": _ngspice(DESIGN_A, st_a, 0, sim_a, work / "a"),
        "b-fixed": _ngspice(DESIGN_A, st_a, 1, sim_a, work / "b", r_neg=r_fix),
        "c-class-ab": _ngspice(DESIGN_A, st_a, 2, sim_a, work / "c"),
        "d-class-a": _ngspice(DESIGN_D, st_d, 0, sim_d, work / "d0"),
        "d-cmos": _ngspice(DESIGN_D, st_d, 1, sim_d, work / "d1"),
        "e-class-ab-fast": _ngspice(DESIGN_E, st_e, 0, sim_e, work / "e"),
    }


def _smooth_tolerance_v(p: Pair) -> float:
    """5 x the backward-Euler tracking-error estimate A w^2 dt / (2 K), plus 5 uV."""
    d = p.design
    k = 2.0 * math.pi * float(p.stage.gbw_hz[p.index]) * d.beta
    dt = 1.0 / (d.signal.frequency_hz * p.sim.steps_per_period)
    return 5.0 * d.out_amplitude_v * d.omega**2 * dt / (2.0 * k) + 5e-6


def _handover_tolerances(p: Pair) -> tuple[float, float]:
    """(max |dv| in V, relative tolerance of glitch amplitude and THD) for case (a)."""
    d = p.design
    st = p.stage
    i = p.index
    wt = 2.0 * math.pi * float(st.gbw_hz[i])
    k = wt * d.beta
    dt = 1.0 / (d.signal.frequency_hz * p.sim.steps_per_period)
    g = residual_peak(p.v_ng)
    dv = g * (1.0 / (1.0 + k * dt) - math.exp(-k * dt))
    # Handover where the AC load current A sin(theta) / R_L reaches -I_stage.
    a = d.out_amplitude_v
    sin_c = float(st.stage_current_a[i]) * float(d.load.r_load_ohm) / a
    slope = d.omega * a * math.sqrt(1.0 - sin_c**2)
    tau = math.sqrt(2.0 * float(st.dead_band_v[i]) * d.noise_gain / (wt * slope))
    return dv, dt / tau


SMOOTH = ["b-fixed", "c-class-ab", "d-class-a", "d-cmos", "e-class-ab-fast"]


def test_handover_case_waveform(pairs: dict[str, Pair]) -> None:
    """(a): a clear handover in both simulators, and waveforms within the BE step estimate."""
    p = pairs["a-handover"]
    i_stage = float(p.stage.stage_current_a[p.index])
    assert p.sim.handover[p.index]
    assert p.i_source_ng.min() < 0.1 * i_stage  # the source device cuts off in ngspice too
    assert residual_peak(p.v_ng) > 0.02  # a glitch of tens of mV, not a numerical ripple
    dv_tol, _ = _handover_tolerances(p)
    assert p.max_diff_v <= dv_tol


def test_handover_case_glitch_and_thd(pairs: dict[str, Pair]) -> None:
    """(a): glitch amplitude and THD_F within dt / tau (dead band crossed to one step)."""
    p = pairs["a-handover"]
    _, rel = _handover_tolerances(p)
    assert p.sim.residual_peak_v[p.index] == pytest.approx(residual_peak(p.v_ng), rel=rel)
    assert p.sim.thd_f[p.index] == pytest.approx(thd_f(p.v_ng), rel=rel)


def test_handover_case_converges_first_order(pairs: dict[str, Pair], tmp_path: Path) -> None:
    """(a) at twice the steps: the difference to ngspice falls by >= 1.5 (first order: 2)."""
    p = pairs["a-handover"]
    one = p.stage.take([p.index])
    sim2 = simulate(
        one, p.design, steps_per_period=2 * N_STEPS, n_warmup=PERIODS - 1, max_warmup=PERIODS - 1
    )
    p2 = _ngspice(p.design, one, 0, sim2, tmp_path)
    assert p2.max_diff_v * 1.5 <= p.max_diff_v


@pytest.mark.parametrize("case", SMOOTH)
def test_smooth_cases_waveform(pairs: dict[str, Pair], case: str) -> None:
    """(b), (c), (d): waveforms within 5 x the backward-Euler tracking-error estimate."""
    p = pairs[case]
    assert p.max_diff_v <= _smooth_tolerance_v(p)


@pytest.mark.parametrize("case", SMOOTH)
def test_smooth_cases_thd_glitch_and_margin(pairs: dict[str, Pair], case: str) -> None:
    """(b), (c), (d): THD_F, glitch amplitude and minimum source current within 1 %."""
    p = pairs[case]
    i = p.index
    assert p.sim.thd_f[i] == pytest.approx(thd_f(p.v_ng), rel=0.01)
    assert p.sim.residual_peak_v[i] == pytest.approx(residual_peak(p.v_ng), rel=0.01)
    assert p.sim.min_source_a[i] == pytest.approx(p.i_source_ng.min(), rel=0.01)


def test_fix_keeps_source_on_in_ngspice(pairs: dict[str, Pair]) -> None:
    """(b): with size_fix's resistor the source device keeps its margin in ngspice, and the
    glitch of (a) is gone (THD_F falls by more than ten times)."""
    a, b = pairs["a-handover"], pairs["b-fixed"]
    fix = size_fix(b.stage, b.design, series="E24")
    i_stage = float(b.stage.stage_current_a[b.index])
    assert not b.sim.handover[b.index]
    assert b.i_source_ng.min() >= fix.margin * i_stage
    assert thd_f(b.v_ng) * 10.0 < thd_f(a.v_ng)


# ---- the deck's building blocks --------------------------------------------------------------
def test_pwl_expression_matches_stage_pwl(need_ngspice: None, tmp_path: Path) -> None:
    """ngspice evaluating pwl_expression over a DC sweep equals partsel.physics.stage.pwl,
    for a curve that is neither convex nor concave and has a repeated point, including the
    linear extrapolation at both ends (ngspice B-source ternary; tolerance: 9 printed digits)."""
    from partsel.physics.spice import pwl_expression

    xs = np.array([0.1, 0.4, 0.4, 0.9, 1.5])
    fs = np.array([0.0, 2.0, 2.5, 3.0, 6.0])
    expr = pwl_expression("v(h)", xs, fs)
    deck = "\n".join([
        "pwl check", "Vh h 0 DC 0", f"By y 0 V = {expr}", "Ry y 0 1k",
        ".dc Vh -0.5 2.5 0.005", ".control", "set wr_singlescale", "set wr_vecnames", "run",
        "wrdata pwl.dat v(y)", "quit", ".endc", ".end", ""])  # fmt: skip
    cols = run_ngspice_columns(deck, tmp_path)
    h = cols["v-sweep"] if "v-sweep" in cols else next(iter(cols.values()))
    want = pwl(h[None, :], xs[None, :], fs[None, :])[0]
    np.testing.assert_allclose(cols["v(y)"], want, rtol=1e-7, atol=1e-8)


def test_deck_says_what_it_is() -> None:
    """The deck names the part, the basis and that it is an estimate; no ngspice needed."""
    st = _stage([_bipolar("class-b-pulldown")])
    deck = spice_deck(st, 0, DESIGN_A, data_file="out.dat")
    assert "basis: typical" in deck
    assert "NOT a transistor-level model" in deck
    assert "wrdata out.dat v(out)" in deck
    assert deck.rstrip().endswith(".end")
    cols = {k: np.array([v]) for k, v in _bipolar("class-b-pulldown").items()}
    worst = StageParams.from_columns(cols, basis="worst-case")
    assert "basis: worst-case" in spice_deck(worst, 0, DESIGN_A)


def test_deck_refuses_a_part_without_swing_curve() -> None:
    part = {k: v for k, v in _bipolar("class-b-pulldown").items() if "swing_neg" not in k}
    with pytest.raises(ValueError, match="negative swing curve"):
        spice_deck(_stage([part]), 0, DESIGN_A)
