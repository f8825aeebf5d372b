"""The measurements of ``partsel characterise``: plain functions over the arrays a bench wrote.

Every function here reads terminal quantities only (pin voltages, supply and load currents):
what a maker's model exposes, and what a bench could measure on a real part (design notes
section 11). SI units throughout; V- is 0 V.

* supply current, offset and bias current: the follower at mid-supply;
* gain-bandwidth: ``|A(f)| f`` over the part of the open-loop response that falls at
  -20 dB/decade with a phase near -90 degrees (the integrator region partsel's macro-model
  uses), its median; the unity-gain frequency and the phase margin there; the minimum stable
  gain when the phase margin at unity is below 45 degrees (common practice): the gain at which
  the phase is -135 degrees;
* slew rate: 20 % to 80 % of each edge of a large step (common practice), from the settled
  levels before and after the edge;
* swing: headroom ``V+ - v_out`` (``v_out - V-``) against the load current, the curve kept as
  at most six points chosen where the polyline through them follows the measured curve best
  (greedy insertion where it misses most, then each point moved between its neighbours to
  where the larger miss of its two segments is least; a miss is in headroom or in current,
  :func:`curve_distance`);
* stage current, by the knee method of the design notes (section 11): pull a DC current
  ``I_x`` into the follower's output and watch the V+ supply current fall by what the source
  device no longer carries. Class A / B: it falls one for one until the source device cuts
  off; the knee's position is the pull-down (or bias) current. A biased stage shows no knee;
  its fall at large ``I_x`` is the source device's current at no load, the quiescent
  current. A translinear pair never quite cuts off (``I_src = I_q^2 / I_sink``), so the fall at
  ``I_x`` and at ``I_x / 2`` are extrapolated to infinite ``I_x`` (first-order Richardson in
  ``1 / I_x``);
* topology from the same sweep: the sink device conducts at no load when the supply current
  falls by less than 3/4 of the pulled current at first (a biased pair shares it about
  equally: slope -1/2; a class A or B source device alone: slope -1); class A when the loop
  lets go of the output once the pulled current passes the knee; CMOS rail-to-rail when the
  output reaches within :data:`RAIL_TO_RAIL_V` of both rails at no load;
* input common-mode range: where the input offset stays within :data:`CM_TOLERANCE_V` of its
  value at mid-supply;
* dead band (class B): the peak deviation of a follower's output from its input through the
  handover, at a known slope; inverted with partsel's own closed form (the design notes'
  ``dV = g^2 omega_t / (2 G s)`` with its second-order terms, :func:`invert_dead_band`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from partsel.errors import InputError
from partsel.params import MAX_SWING_POINTS, Topology
from partsel.physics.circuit import Design
from partsel.physics.stage import StageParams

#: Output within this of a rail at no load (both rails): a rail-to-rail output, V.
RAIL_TO_RAIL_V = 0.1
#: Input offset change that ends the common-mode range, V (a fifth of a typical bipolar
#: offset specification; the offset moves by tens of millivolts within a few tens of
#: millivolts once an input stage leaves its range, so the figure hardly matters).
CM_TOLERANCE_V = 5e-3
#: Output moved by more than this from its no-load level: the loop has let go, V.
REGULATION_V = 0.05
#: The knee sweep reads the fall of the supply current up to this many times its first
#: estimate of the stage current (a translinear pair's source current is then below 2 % of
#: I_q, and the extrapolation takes the rest).
KNEE_REACH = 50.0
#: Slope of the supply current against the pulled current at no load above which the sink
#: device conducts too (a biased stage): between the class-A/B value -1 and the pair's -1/2.
BIASED_SLOPE = -0.75
#: Misses of the swing curve's points' polyline from the measured curve that the points are
#: chosen to stay within, where six points allow it (:func:`curve_distance`): headroom, V, or
#: current, relative.
SWING_TOLERANCE_V = 5e-3
SWING_TOLERANCE_REL = 0.05
#: Phase margin below which the part counts as not unity-gain stable, degrees (common practice).
STABLE_MARGIN_DEG = 45.0


class MeasurementError(InputError):
    """A bench's result that cannot be measured (the model does not behave like an op-amp)."""


def _fail(bench: str, message: str) -> MeasurementError:
    return MeasurementError(f"bench {bench!r}: {message}", pointer=f"/benches/{bench}")


# ---- supply --------------------------------------------------------------------------------


@dataclass(frozen=True)
class Quiescent:
    supply_current_a: float
    offset_v: float  #: output minus input of the follower (signed)
    bias_current_a: float  #: current into IN+ (magnitude)


def quiescent(cols: dict[str, np.ndarray], mid_v: float) -> Quiescent:
    """Supply, offset and bias current from the ``supply`` bench's operating point."""
    i_sup = -float(np.ravel(cols["i(vp)"])[0])
    if not i_sup > 0:
        raise _fail("supply", f"the model draws no current from V+ ({i_sup:g} A)")
    return Quiescent(
        i_sup,
        float(np.ravel(cols["v(out)"])[0]) - mid_v,
        abs(float(np.ravel(cols["i(vin)"])[0])),
    )


# ---- open loop ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class OpenLoop:
    gbw_hz: float
    unity_hz: float
    phase_margin_deg: float
    dc_gain: float
    min_stable_gain: float  #: 1 when unity-gain stable
    region_hz: tuple[float, float]  #: band the GBW was read over
    integrator: bool  #: False: no -20 dB/decade region; GBW is the unity-gain frequency


def _log_interp(x: float, xp: np.ndarray, fp: np.ndarray) -> float:
    return float(10 ** np.interp(x, xp, np.log10(fp)))


def open_loop(f: np.ndarray, mag_db: np.ndarray, phase_rad: np.ndarray) -> OpenLoop:
    """GBW, unity-gain frequency, phase margin and the minimum stable gain of an AC sweep of
    the open-loop gain (see the module docstring)."""
    gain = 10 ** (mag_db / 20.0)
    phase = np.degrees(np.unwrap(phase_rad))
    phase = phase - 360.0 * np.round(phase[0] / 360.0)  # starts near 0
    below = np.flatnonzero(gain < 1.0)
    if gain[0] <= 1.0 or below.size == 0:
        raise _fail(
            "open_loop",
            f"the open-loop gain is {gain[0]:.3g} at {f[0]:g} Hz and {gain[-1]:.3g} at "
            f"{f[-1]:.3g} Hz: no unity-gain crossing in the sweep",
        )
    k = int(below[0])
    lf, lg = np.log10(f[k - 1 : k + 1]), np.log10(gain[k - 1 : k + 1])
    unity = float(10 ** np.interp(0.0, lg[::-1], lf[::-1]))
    ph_u = float(np.interp(math.log10(unity), np.log10(f), phase))
    pm = 180.0 + ph_u
    slope = np.gradient(np.log10(gain), np.log10(f))
    region = (np.abs(slope + 1.0) < 0.1) & (np.abs(phase + 90.0) < 20.0) & (f <= unity)
    if region.any():
        gbw = float(np.median(gain[region] * f[region]))
        band = (float(f[region].min()), float(f[region].max()))
    else:
        gbw, band = unity, (unity, unity)
    msg = 1.0
    if pm < STABLE_MARGIN_DEG:
        at = np.flatnonzero(phase <= -180.0 + STABLE_MARGIN_DEG)
        if at.size:
            j = int(at[0])
            g = _log_interp(-180.0 + STABLE_MARGIN_DEG, phase[j - 1 : j + 1][::-1],
                            gain[j - 1 : j + 1][::-1])  # fmt: skip
            msg = float(np.ceil(g * 10.0) / 10.0)
    return OpenLoop(gbw, unity, pm, float(gain[0]), max(msg, 1.0), band, bool(region.any()))


# ---- short circuit, swing ----------------------------------------------------------------------


def short_current(cols: dict[str, np.ndarray], rail: str) -> float:
    """The current limit (magnitude, A) of a ``short_pos`` / ``short_neg`` bench."""
    i = float(np.ravel(cols["i(vf)"])[0])
    value = i if rail == "pos" else -i
    if not value > 0:
        word = "source" if rail == "pos" else "sink"
        raise _fail(
            f"short_{rail}",
            f"the output does not {word} current when driven towards "
            f"{'V+' if rail == 'pos' else 'V-'} ({value:g} A)",
        )
    return value


@dataclass(frozen=True)
class SwingCurve:
    current_a: np.ndarray  #: dense measured curve
    headroom_v: np.ndarray
    points: tuple[tuple[float, float], ...]  #: the catalogue's (current, headroom) points


def curve_distance(x: np.ndarray, y: np.ndarray, kx: np.ndarray, ky: np.ndarray) -> np.ndarray:
    """How far the piecewise-linear curve through ``(kx, ky)`` (what partsel interpolates)
    misses each point ``(x, y)`` of a measured swing curve (current, headroom), in units of
    the tolerances: the smaller of the headroom miss over :data:`SWING_TOLERANCE_V` and the
    current miss (the polyline's current at that headroom against the curve's, relative to
    the current) over :data:`SWING_TOLERANCE_REL`. A step (a class-B stage's sink headroom
    jumps by 0.4 V within microamps at its pull-down current) then counts by how far off it
    is in current, and the curved stretches by their headroom."""
    vertical = np.abs(y - np.interp(x, kx, ky)) / SWING_TOLERANCE_V
    ramp = ky + np.arange(ky.size) * 1e-12  # strictly increasing for the inverse
    x_at = np.interp(y, ramp, kx)
    floor = 1e-3 * float(x[-1])
    sideways = np.abs(x_at - x) / np.maximum(x, floor) / SWING_TOLERANCE_REL
    return np.minimum(vertical, sideways)


def _distance(x: np.ndarray, y: np.ndarray, keep: list[int]) -> np.ndarray:
    k = sorted(keep)
    return curve_distance(x, y, x[k], y[k])


def _refine(x: np.ndarray, y: np.ndarray, keep: list[int], passes: int = 4) -> list[int]:
    """Move each inner breakpoint, between its neighbours, to where the larger distance of
    its two segments from the curve is least (a few passes: greedy insertion alone leaves the
    points where the miss first peaked)."""
    keep = list(keep)
    for _ in range(passes):
        moved = False
        for n in range(1, len(keep) - 1):
            a, b = keep[n - 1], keep[n + 1]
            if b - a < 3:
                continue
            best, best_err = keep[n], math.inf
            for j in range(a + 1, b, max(1, (b - a) // 200)):
                err = float(np.max(_distance(x, y, [0, a, j, b, x.size - 1])[a : b + 1]))
                if err < best_err:
                    best, best_err = j, err
            moved |= best != keep[n]
            keep[n] = best
        if not moved:
            break
    return keep


def swing_curve(
    tables: list[dict[str, np.ndarray]], rail: str, supply_v: float, top_a: float
) -> SwingCurve:
    """Headroom against current from the ``swing_*`` bench's sweeps, and the catalogue's
    points: 0 and ``top_a`` and up to four more, at least four in all (see the module
    docstring; :data:`SWING_TOLERANCE`)."""
    i = np.concatenate([t["i-sweep"] for t in tables])
    v = np.concatenate([t["v(out)"] for t in tables])
    order = np.argsort(i, kind="stable")
    i, v = i[order], v[order]
    i, first = np.unique(i, return_index=True)
    v = v[first]
    head = supply_v - v if rail == "pos" else v
    m = i <= top_a * (1 + 1e-9)
    i, head = i[m], np.maximum.accumulate(head[m])
    if i.size < 4 or not (0.0 <= head[0] < supply_v):
        raise _fail(f"swing_{rail}", "the output does not reach towards the rail")
    keep = [0, i.size - 1]
    while len(keep) < MAX_SWING_POINTS:
        err = _distance(i, head, keep)
        j = int(np.argmax(err))
        if err[j] <= 1.0 and len(keep) >= 4:
            break
        if j in keep:  # error zero everywhere: add the largest gap's middle
            gaps = np.diff(sorted(keep))
            j = int(sorted(keep)[int(np.argmax(gaps))] + gaps.max() // 2)
        keep.append(j)
    keep = _refine(i, head, sorted(set(keep)))
    points = tuple((float(i[j]), float(head[j])) for j in sorted(set(keep)))
    return SwingCurve(i, head, points)


# ---- input common mode ---------------------------------------------------------------------


@dataclass(frozen=True)
class CommonMode:
    low_v: float  #: lowest common-mode input (V- = 0)
    high_v: float
    low_beyond: bool  #: the range reaches the end of the sweep (it extends at least so far)
    high_beyond: bool
    offset_v: np.ndarray  #: offset against vcm (for the figure)
    vcm_v: np.ndarray


def common_mode(vcm: np.ndarray, vout: np.ndarray, mid_v: float) -> CommonMode:
    """The input common-mode range of the ``input_cm`` bench (see the module docstring)."""
    vos = vout - mid_v
    ref = float(np.interp(mid_v, vcm, vos))
    ok = np.abs(vos - ref) <= CM_TOLERANCE_V
    k0 = int(np.argmin(np.abs(vcm - mid_v)))
    if not ok[k0]:
        raise _fail("input_cm", "the loop does not hold the output at mid-supply")
    lo = k0
    while lo > 0 and ok[lo - 1]:
        lo -= 1
    hi = k0
    while hi < vcm.size - 1 and ok[hi + 1]:
        hi += 1

    def edge(a: int, b: int) -> float:  # between the last good point a and the first bad b
        da, db = abs(vos[a] - ref), abs(vos[b] - ref)
        w = (CM_TOLERANCE_V - da) / (db - da) if db > da else 0.0
        return float(vcm[a] + w * (vcm[b] - vcm[a]))

    low = float(vcm[0]) if lo == 0 else edge(lo, lo - 1)
    high = float(vcm[-1]) if hi == vcm.size - 1 else edge(hi, hi + 1)
    return CommonMode(low, high, lo == 0, hi == vcm.size - 1, vos, vcm)


# ---- knee: stage current and topology ------------------------------------------------------


@dataclass(frozen=True)
class Knee:
    stage_current_a: float
    slope_at_zero: float  #: d(I_V+)/d(I_x) at no load
    regulated_to_a: float  #: largest pulled current the loop still holds the output at
    biased: bool
    class_a: bool
    extrapolation: float  #: relative change the Richardson step made (biased stages)
    fall_a: float  #: fall of the supply current at the largest pulled current used
    ix_a: np.ndarray  #: the sweep (for the figure)
    supply_a: np.ndarray


def knee(tables: list[dict[str, np.ndarray]]) -> Knee:
    """Stage current and conduction at no load from the ``knee`` bench (module docstring)."""
    ix = np.concatenate([-t["i(vx)"] for t in tables])
    sup = np.concatenate([-t["i(vp)"] for t in tables])
    vo = np.concatenate([t["v(out)"] for t in tables])
    order = np.argsort(ix, kind="stable")
    ix, sup, vo = ix[order], sup[order], vo[order]
    ix, first = np.unique(ix, return_index=True)
    sup, vo = sup[first], vo[first]
    s0 = float(np.interp(0.0, ix, sup))
    v0 = float(np.interp(0.0, ix, vo))
    held = np.abs(vo - v0) <= REGULATION_V
    start = int(np.searchsorted(ix, 0.0))
    end = start
    while end + 1 < ix.size and held[end + 1]:
        end += 1
    reg = float(ix[end])
    fall = s0 - sup
    pos = (ix >= 0) & (ix <= reg)
    est = float(fall[pos].max()) if pos.any() else 0.0
    if not est > 0:
        raise _fail("knee", "the supply current does not fall when current is pulled into the "
                    "output (no source device to measure)")  # fmt: skip
    near = pos & (ix <= 0.1 * est)
    if near.sum() < 3:
        near = pos & (ix <= ix[pos][min(4, int(pos.sum()) - 1)])
    slope = float(np.polyfit(ix[near], sup[near], 1)[0])
    biased = slope > BIASED_SLOPE
    far = min(reg, KNEE_REACH * est)
    f_far = float(np.interp(far, ix, fall))
    f_half = float(np.interp(0.5 * far, ix, fall))
    # class A: the loop lets go at the knee itself (no sink device takes over)
    class_a = (not biased) and reg < 1.5 * est
    if biased:
        value = 2.0 * f_far - f_half
        extrapolation = (value - f_far) / f_far
    else:
        value = _knee_position(ix, sup, pos, slope, est)
        extrapolation = 0.0
    return Knee(
        stage_current_a=value,
        slope_at_zero=slope,
        regulated_to_a=reg,
        biased=biased,
        class_a=class_a,
        extrapolation=extrapolation,
        fall_a=f_far,
        ix_a=ix,
        supply_a=sup,
    )


def _knee_position(
    ix: np.ndarray, sup: np.ndarray, pos: np.ndarray, slope: float, est: float
) -> float:
    """Where the supply current leaves the line it follows from no load (slope ``slope``,
    about -1): the pulled current at which the source device stops carrying it, A. The
    position of the knee, not the depth of the fall: when the drive node crosses the dead band
    there, the gain stage's load current changes with it (its Early effect), which moves the
    supply current by a few percent of the stage current at the knee itself."""
    a = float(np.interp(0.0, ix, sup))
    resid = sup - (a + slope * ix)
    tol = 0.01 * est
    off = np.flatnonzero(pos & (ix > 0) & (np.abs(resid) > tol))
    if off.size == 0:
        return float(est)
    j = int(off[0])
    if j == 0:
        return float(ix[0])
    # between the last point on the line and the first off it
    r0, r1 = abs(resid[j - 1]), abs(resid[j])
    w = (tol - r0) / (r1 - r0) if r1 > r0 else 1.0
    return float(ix[j - 1] + w * (ix[j] - ix[j - 1]))


def topology(k: Knee, headroom_pos0_v: float, headroom_neg0_v: float) -> Topology:
    """The output-stage topology from the knee sweep and the swing at no load."""
    if not k.biased:
        return Topology.CLASS_A if k.class_a else Topology.CLASS_B_PULLDOWN
    rr = headroom_pos0_v < RAIL_TO_RAIL_V and headroom_neg0_v < RAIL_TO_RAIL_V
    return Topology.CMOS_RAIL if rr else Topology.CLASS_AB


# ---- slew ------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Slew:
    rise_v_per_s: float
    fall_v_per_s: float
    swing_v: float  #: settled step at the output
    settled: bool  #: both edges settled within their windows


def _crossing(t: np.ndarray, v: np.ndarray, level: float, rising: bool) -> float:
    above = v > level if rising else v < level
    k = int(np.argmax(above))
    if not above[k] or k == 0:
        return math.nan
    t0, t1, v0, v1 = t[k - 1], t[k], v[k - 1], v[k]
    return float(t0 + (level - v0) * (t1 - t0) / (v1 - v0)) if v1 != v0 else float(t1)


def slew(
    t: np.ndarray, v: np.ndarray, t_rise: float, t_fall: float, t_end: float
) -> Slew:  # fmt: skip
    """Rising and falling slew rate, 20 % to 80 % of each edge's settled step."""

    def level(a: float, b: float) -> float:
        m = (t >= a) & (t <= b)
        return float(np.median(v[m])) if m.any() else float(np.interp(b, t, v))

    lo0 = level(0.5 * t_rise, t_rise)
    win = t_fall - t_rise
    hi = level(t_fall - 0.1 * win, t_fall)
    lo1 = level(t_end - 0.1 * (t_end - t_fall), t_end)
    rates = []
    for a, b, v_from, v_to, rising in (
        (t_rise, t_fall, lo0, hi, True),
        (t_fall, t_end, hi, lo1, False),
    ):
        m = (t >= a) & (t <= b)
        tt, vv = t[m], v[m]
        step = v_to - v_from
        if (step > 0) != rising or abs(step) < 1e-3:
            raise _fail("slew", "the output does not follow the step")
        l20, l80 = v_from + 0.2 * step, v_from + 0.8 * step
        t20, t80 = _crossing(tt, vv, l20, rising), _crossing(tt, vv, l80, rising)
        if not (math.isfinite(t20) and math.isfinite(t80) and t80 > t20):
            raise _fail("slew", "the output's edge is not resolved")
        rates.append(0.6 * abs(step) / (t80 - t20))
    tail = (t >= t_fall - 0.1 * win) & (t <= t_fall)
    settled = bool(np.ptp(v[tail]) < 0.02 * abs(hi - lo0)) if tail.any() else False
    return Slew(rates[0], rates[1], hi - lo0, settled)


# ---- dead band -----------------------------------------------------------------------------


def glitch(t: np.ndarray, v_out: np.ndarray, v_in: np.ndarray, period_s: float) -> float:
    """Peak deviation of a follower's output from its input over the last period, V, after
    the static offset (the output at t = 0, where the input is at mid-supply and the load
    draws nothing) is removed."""
    offset = float(v_out[0] - v_in[0])
    last = t >= t[-1] - period_s * (1 - 1e-9)
    return float(np.max(np.abs(v_out[last] - offset - v_in[last])))


def dead_band_first_guess(
    glitch_v: float, slope_v_per_s: float, gbw_hz: float, gain: float
) -> float:
    """The design notes' inversion ``dV = g^2 omega_t / (2 G s)`` (section 11), V."""
    return glitch_v**2 * 2.0 * math.pi * gbw_hz / (2.0 * gain * slope_v_per_s)


def invert_dead_band(stage: StageParams, design: Design, glitch_v: float) -> tuple[float, float]:
    """The dead band (V) with which partsel's closed form (:func:`partsel.physics.analysis.
    predict_closed_form`: the crossing against the integrator and the slew limit, with the
    device laws' effective dead band) gives the glitch ``glitch_v`` for the one part of
    ``stage`` in ``design``, and the slope at the handover (V/s). Candidate dead bands are
    evaluated as parts of one vectorised call, the bracket refined twice."""
    from partsel.physics.analysis import predict_closed_form

    lo, hi = 1e-3, 8.0
    root = math.nan
    slope = math.nan
    for points in (64, 48, 48):
        grid = np.geomspace(lo, hi, points)
        st = stage.take(np.zeros(points, dtype=int)).replace(dead_band_v=grid)
        cf = predict_closed_form(st, design)
        g = cf.glitch_v
        if not bool(np.all(cf.handover)):
            raise MeasurementError(
                "the dead-band bench does not hand over in partsel's model of the part "
                "(its stage current or load would keep it in one mode)",
                pointer="/benches/deadband_1",
            )
        slope = float(np.nanmax(cf.slope_v_per_s))
        above = np.flatnonzero(g >= glitch_v)
        if above.size == 0 or above[0] == 0:
            raise MeasurementError(
                f"a glitch of {glitch_v * 1e3:.3g} mV lies outside what a dead band of "
                f"{lo:g} V to {hi:g} V gives in partsel's model ({g[0] * 1e3:.3g} to "
                f"{g[-1] * 1e3:.3g} mV)",
                pointer="/benches/deadband_1",
            )
        k = int(above[0])
        lo, hi = float(grid[k - 1]), float(grid[k])
        w = (glitch_v - g[k - 1]) / (g[k] - g[k - 1]) if g[k] > g[k - 1] else 0.0
        root = float(np.exp(np.log(lo) + w * (np.log(hi) - np.log(lo))))
    return root, slope
