"""Fit a part's output stage to a bench capture by least squares on partsel's simulation.

The capture is the output (and optionally the input) of the part in a known circuit, the
design. The model of the capture is partsel's own time-domain simulation of the part in that
design (:func:`partsel.physics.simulate.simulate`, one steady-state period, periodic), shifted
in time and offset in voltage::

    v(t) = v_sim((t - t_0) mod T; theta) + v_off

with ``theta`` the stage current (every topology), the dead band (class B) and, where the
signal or the crossing reaches the slew limit, a common factor on both slew rates (their
ratio kept). ``t_0`` comes from the input channel when the capture has one (its phase at the
design's frequency, linear least squares), else it is fitted too; ``v_off`` (the scope's or
the part's offset) is always fitted. The stage current and the slew factor are fitted on a log
scale. ``scipy.optimize.least_squares`` (trust region reflective, with bounds) minimises the
residual (scipy is an optional extra, ``partsel[fit]``: wherever scipy is installed numba
probes its BLAS and a simulating command starts later; tests/bench/bench_physics.py prints
``partsel predict`` with and without it); its Jacobian is finite differences of the
simulation in one batched call, the perturbed parameter sets simulated as parts side by side
(the simulation is vectorised over parts), and analytic for ``t_0`` and ``v_off``.

Confidence intervals are the usual linearised ones: ``cov = s^2 (J^T J)^-1`` with
``s^2 = |r|^2 / (N - p)``, and 95 % intervals from Student's t with ``N - p`` degrees of
freedom (e.g. Seber and Wild, *Nonlinear Regression*, chapter 5; from memory). They assume
that the model describes the part and that the noise is white; a parameter whose interval is
wider than half its value is reported as not determined by the capture (a biased stage's
quiescent current hardly shows in its waveform).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from partsel.errors import InputError
from partsel.io.scope import Capture
from partsel.physics.circuit import Design
from partsel.physics.stage import CLASS_B, StageParams

#: Relative step of the finite differences (log parameters) and absolute step of the dead
#: band, V.
LOG_STEP = 2e-3
DEAD_BAND_STEP_V = 2e-3
#: A parameter whose 95 % interval is wider than this fraction of its value is "not
#: determined" by the capture.
UNDETERMINED = 0.5
#: Steps per period of the fit's simulations: four times partsel's default (which puts about
#: ten steps across the shortest dead-band crossing), at least MIN_STEPS. The simulation is
#: backward Euler, first order in the step: fitting a waveform simulated with 32768 steps, the
#: sample part BRQ-622 in the sample line driver came out 0.7 / 0.4 / 0.2 / 0.1 % low in stage
#: current and 3.3 / 1.8 / 0.8 / 0.3 % low in dead band at 2048 / 4096 / 8192 / 16384 steps
#: (under a second per fit; tests/bench/bench_characterise.py prints the figures).
MIN_STEPS = 16384
MAX_STEPS = 65536
#: Fewest signal periods a capture must span.
MIN_PERIODS = 1.0
#: The slew rate is fitted when the signal needs more than this fraction of the slower slew
#: rate, or the dead-band crossing ends at more than this fraction of it.
SLEW_SHARE = 0.5


@dataclass(frozen=True)
class Fitted:
    """One fitted quantity: value, 95 % half-width, start value, SI unit."""

    key: str
    value: float
    ci95: float
    start: float
    unit: str

    @property
    def determined(self) -> bool:
        return bool(math.isfinite(self.ci95) and self.ci95 <= UNDETERMINED * abs(self.value))


@dataclass(frozen=True)
class CaptureFit:
    """The result of :func:`fit_capture`."""

    params: tuple[Fitted, ...]  #: stage_current, dead_band (class B), slew_rise, slew_fall
    offset: Fitted
    time_shift: Fitted  #: t_0, s (ci95 0 when taken from the input)
    residual_rms_v: float
    n: int
    dof: int
    periods: float
    t0_from_input: bool
    nfev: int
    t_s: np.ndarray
    v_capture: np.ndarray
    v_fit: np.ndarray

    def get(self, key: str) -> Fitted | None:
        return next((p for p in self.params if p.key == key), None)


def _phase(t: np.ndarray, v: np.ndarray, w: float) -> tuple[float, float]:
    """(amplitude, phase) of the best ``c + R sin(w t + psi)`` through ``(t, v)``."""
    a = np.column_stack([np.ones_like(t), np.sin(w * t), np.cos(w * t)])
    _c, s_, k = np.linalg.lstsq(a, v, rcond=None)[0]
    return float(math.hypot(s_, k)), float(math.atan2(k, s_))


def _periodic(tau: np.ndarray, grid: np.ndarray, v: np.ndarray, period: float) -> np.ndarray:
    """Values of periodic samples ``v`` (at ``grid``, in (0, period]; one row or several) at
    the phase times ``tau``."""
    g = np.concatenate([[grid[-1] - period], grid])
    rows = np.atleast_2d(v)
    ext = np.concatenate([rows[:, -1:], rows], axis=1)
    out = np.stack([np.interp(tau, g, row) for row in ext])
    return out[0] if v.ndim == 1 else out


def fit_capture(stage: StageParams, design: Design, capture: Capture) -> CaptureFit:
    """Fit the one part of ``stage`` (its values are the start) to ``capture`` in
    ``design`` (see the module docstring)."""
    try:  # lazily: only this command needs scipy (an optional extra, see pyproject)
        from scipy import optimize, stats
    except ImportError:
        raise InputError(
            "fit-capture needs scipy (its least-squares solver): pip install 'partsel[fit]'"
        ) from None

    from partsel.physics.analysis import predict_closed_form
    from partsel.physics.simulate import default_steps, simulate

    if stage.n != 1:
        raise ValueError("fit one part at a time")
    f = design.signal.frequency_hz
    period = 1.0 / f
    w = 2.0 * math.pi * f
    t, v = capture.t_s, capture.v_out
    dt_cap = float(np.median(np.diff(t)))
    span = float(t[-1] - t[0]) + dt_cap  # the samples cover their last interval too
    if span < MIN_PERIODS * period * (1 - 1e-6):
        raise InputError(
            f"the capture spans {span:.4g} s, less than one period of the design's "
            f"{f:.6g} Hz signal",
            file=capture.file,
        )
    if dt_cap > period / 64:
        raise InputError(
            f"the capture samples every {dt_cap:.3g} s, too coarse for a {f:.6g} Hz signal "
            "(at least 64 samples per period)",
            file=capture.file,
        )
    is_b = bool(stage.topology[0] == CLASS_B)
    cf = predict_closed_form(stage, design)
    sr_min = float(np.nanmin([stage.slew_rise_v_per_s[0], stage.slew_fall_v_per_s[0]]))
    needs = cf.slew_required_v_per_s
    wt_beta = 2.0 * math.pi * float(stage.gbw_hz[0]) * design.beta
    crossing = float(cf.glitch_v[0]) * wt_beta if bool(cf.handover[0]) else 0.0
    fit_slew = math.isfinite(sr_min) and max(needs, crossing) > SLEW_SHARE * sr_min
    keys = ["stage_current"] + (["dead_band"] if is_b else []) + (["slew"] if fit_slew else [])
    i0 = float(stage.stage_current_a[0])
    db0 = float(stage.dead_band_v[0]) if is_b else 0.0
    if not (i0 > 0 and math.isfinite(i0)):
        raise InputError("the part has no stage current to start the fit from",
                         pointer="/output/stage_current")  # fmt: skip
    steps = min(MAX_STEPS, max(MIN_STEPS, 4 * default_steps(stage, design)))
    grid = (np.arange(steps) + 1) * (period / steps)

    def stages(x_phys: np.ndarray) -> StageParams:
        """One part per row of ``x_phys`` (columns as ``keys``)."""
        n = x_phys.shape[0]
        st = stage.take(np.zeros(n, dtype=int))
        ch: dict[str, np.ndarray] = {}
        for k, key in enumerate(keys):
            col = x_phys[:, k]
            if key == "stage_current":
                ch["stage_current_a"] = i0 * np.exp(col)
                ch["stage_current_high_a"] = i0 * np.exp(col)
            elif key == "dead_band":
                ch["dead_band_v"] = col
            else:
                ch["slew_rise_v_per_s"] = st.slew_rise_v_per_s * np.exp(col)
                ch["slew_fall_v_per_s"] = st.slew_fall_v_per_s * np.exp(col)
        return st.replace(**ch)

    def waves(x_phys: np.ndarray) -> np.ndarray:
        sim = simulate(stages(x_phys), design, steps_per_period=steps)
        return sim.v_out  # (P, steps), at grid (whole periods of warm-up before)

    # time origin: from the input, or from the output's fundamental against the start model
    start_phys = np.array([[0.0] + ([db0] if is_b else []) + ([0.0] if fit_slew else [])])
    base = waves(start_phys)[0]
    if capture.v_in is not None:
        _, psi = _phase(t, capture.v_in, w)
        t0_start, free_t0 = -psi / w, False
    else:
        _, psi_c = _phase(t, v, w)
        _, psi_s = _phase(grid, base, w)
        t0_start, free_t0 = (psi_s - psi_c) / w, True
    n_phys = len(keys)
    cache: dict[bytes, np.ndarray] = {}

    def split(x: np.ndarray) -> tuple[np.ndarray, float, float]:
        phys = x[:n_phys]
        t0 = x[n_phys] * period if free_t0 else t0_start
        return phys, t0, x[-1]

    def model(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        phys, t0, off = split(x)
        key = phys.tobytes()
        if key not in cache:
            cache.clear()
            cache[key] = waves(phys[None, :])[0]
        wave = cache[key]
        tau = np.mod(t - t0, period)
        return _periodic(tau, grid, wave, period) + off, wave

    def residual(x: np.ndarray) -> np.ndarray:
        return model(x)[0] - v

    def jacobian(x: np.ndarray) -> np.ndarray:
        phys, t0, _ = split(x)
        steps_k = np.array([DEAD_BAND_STEP_V if k == "dead_band" else LOG_STEP for k in keys])
        rows = np.vstack([phys[None, :], phys[None, :] + np.diag(steps_k)])
        ws = waves(rows)
        tau = np.mod(t - t0, period)
        on_cap = _periodic(tau, grid, ws, period)
        cols = [(on_cap[k + 1] - on_cap[0]) / steps_k[k] for k in range(n_phys)]
        if free_t0:
            slope = np.gradient(ws[0], grid)
            cols.append(-_periodic(tau, grid, slope, period) * period)
        cols.append(np.ones_like(t))
        return np.column_stack(cols)

    base_x = np.concatenate([start_phys[0], [t0_start / period] if free_t0 else []])
    x0 = np.append(base_x, float(np.mean(v - model(np.append(base_x, 0.0))[0])))
    lo = np.array(
        [-math.log(10.0) if k != "dead_band" else 0.0 for k in keys]
        + ([-np.inf] if free_t0 else [])
        + [-np.inf]
    )
    hi = np.array(
        [math.log(10.0) if k != "dead_band" else 6.0 for k in keys]
        + ([np.inf] if free_t0 else [])
        + [np.inf]
    )
    x0 = np.clip(x0, lo + 1e-9, hi - 1e-9)
    sol = optimize.least_squares(residual, x0, jac=jacobian, bounds=(lo, hi), method="trf",
                                 x_scale="jac", max_nfev=60)  # fmt: skip
    r = sol.fun
    jac = jacobian(sol.x)
    n, p = t.size, sol.x.size
    dof = max(n - p, 1)
    s2 = float(r @ r) / dof
    try:
        cov = s2 * np.linalg.inv(jac.T @ jac)
        sd = np.sqrt(np.maximum(np.diag(cov), 0.0))
    except np.linalg.LinAlgError:
        sd = np.full(p, np.inf)
    q = float(stats.t.ppf(0.975, dof))
    phys, t0, off = split(sol.x)
    out: list[Fitted] = []
    for k, key in enumerate(keys):
        if key == "stage_current":
            val = i0 * math.exp(phys[k])
            out.append(Fitted("stage_current", val, val * q * sd[k], i0, "A"))
        elif key == "dead_band":
            out.append(Fitted("dead_band", float(phys[k]), q * sd[k], db0, "V"))
        else:
            for side in ("rise", "fall"):
                s0 = float(getattr(stage, f"slew_{side}_v_per_s")[0])
                val = s0 * math.exp(phys[k])
                out.append(Fitted(f"slew_{side}", val, val * q * sd[k], s0, "V/s"))
    t0_ci = q * sd[n_phys] * period if free_t0 else 0.0
    fit_v, _ = model(sol.x)
    return CaptureFit(
        params=tuple(out),
        offset=Fitted("offset", float(off), q * float(sd[-1]), float(x0[-1]), "V"),
        time_shift=Fitted("time_shift", float(t0), float(t0_ci), float(t0_start), "s"),
        residual_rms_v=float(math.sqrt(float(r @ r) / n)),
        n=int(n),
        dof=int(dof),
        periods=span / period,
        t0_from_input=not free_t0,
        nfev=int(sol.nfev),
        t_s=t,
        v_capture=v,
        v_fit=fit_v,
    )
