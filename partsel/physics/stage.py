"""Output-stage parameters of many parts at once, and the device laws of the macro-model.

Parts lie along axis 0 of every array. :class:`StageParams` holds one value per part, already
resolved to a *basis*: ``"typical"`` (datasheet typical values) or ``"worst-case"`` (for every
parameter the side of its guaranteed range that is pessimistic, see
:attr:`partsel.params.ParamDef.worst_side`). Each field records which side it came from.

Device laws (partsel's own macro-model; SI units; design notes sections 2 and 4)
-------------------------------------------------------------------------------

* drive coordinate ``x = v_drive - v_out`` is chosen so that at ``x = 0`` the source device of a
  class-A or class-B stage carries exactly the stage current (pull-down or sink bias) in DC.
* class A / class B **source device**: a Darlington emitter follower (driver and output
  transistor, two base-emitter junctions). The output transistor's base node is a state:
  ``y = v_base - v_out`` (relative to its value at the stage current), with
  ``i_2 = I_stage exp(y / V_T)`` (output transistor), ``i_1 = (I_stage / beta_D)
  exp((x - y) / V_T)`` (driver) and ``C_e dy/dt = i_1 - i_2 / beta_D``: the node is charged by
  the driver and discharged only by the output transistor's base current. The output receives
  ``i_1 + i_2``. In DC ``y = x / 2`` and ``i_src = I_stage exp(x / (2 V_T))``
  (:data:`M_FOLLOWER` junctions); when the drive falls quickly the driver cuts off at once and
  the output transistor's current decays over ``beta_D C_e V_T / i_2`` (a 1/t tail that is
  long exactly when the current is small: the marginal cases). The catalogue gives neither
  ``beta_D`` nor ``C_e``: partsel takes :data:`DARLINGTON_BETA` and :data:`DARLINGTON_C_E`,
  generic values of a small-geometry bipolar process (an assumption; see their docstrings).
  Each of the two transistors carries at most the source limit (1 A where none is given).
* class B **sink device**: a PNP emitter follower, one junction:
  ``i_snk = I_stage exp((-x - dV) / V_T)``: it carries the stage current once the drive is a
  dead band ``dV`` below the point where the source device carries it.
* class A: no sink device; the bias current source is the only way to sink current.
* **pull-down / sink-bias current source**: a transistor current source with finite output
  resistance (Early voltage :data:`V_EARLY_PULLDOWN`): ``i_pd = I_stage (1 + (v_out - V-) /
  V_A) / (1 + (V_mid - V-) / V_A)``, the catalogue's stage current being taken at mid-supply
  ``V_mid`` (an assumption: datasheets rarely state the output level of that figure).
* class AB / CMOS: ``i_src = I_q exp(x / V_X)`` and ``i_snk = I_q exp(-x / V_X)`` (translinear
  pair; both carry ``I_q`` at zero output current).
* every device current is capped by its current limit and by the current available at the
  present headroom to its rail (inverse of the swing curve); the class-A/B pull-down current
  source collapses near the negative rail the same way.
* **input stage**: a differential pair into the compensation capacitance (the integrator). Its
  output is ``SR tanh(z)`` (the drive node's rate: the slew rate ``SR`` when fully switched),
  for an input error ``e = a z + b tanh(z)`` with
  ``a = min(2 V_T, V_lin)``, ``b = V_lin - a`` and ``V_lin = SR / omega_t``: the law of a
  bipolar pair with emitter degeneration, ``e = 2 V_T atanh(y) + R_E I_tail y`` for the output
  fraction ``y = tanh(z)`` (e.g. Gray, Hurst, Lewis and Meyer, *Analysis and Design of Analog
  Integrated Circuits*, differential pair with emitter degeneration; from memory). Its small-
  signal rate is ``omega_t e`` (GBW) and its large-signal limit the slew rate, both from the
  catalogue; ``V_lin = 2 V_T`` is a plain pair (tanh law), larger values a degenerated one.
  The tail current, and with it the slew rate, moves with two slopes: the drive node's own
  slope ``r`` (a capacitive coupling of the swinging gain stage into the input stage's bias,
  e.g. through the collector-base capacitance of the gain stage's current-source load) and
  the common-mode input's slope ``c`` (the tail node's capacitance follows the input pair):
  ``SR = SR_0 - gamma_d r - gamma_cm c``, so ``r = SR_cm t / (1 + gamma_d t)`` for
  ``t = tanh(z)`` and ``SR_cm = SR_0 - gamma_cm c``, and the degeneration term in proportion:
  ``e = a z + b_0 (SR_cm / SR_0) t / (1 + gamma_d t)``. A datasheet's slew test is a
  unity-gain follower (common practice), where ``c = r``: ``SR_rise = SR_0 / (1 + gamma)``
  and ``SR_fall = SR_0 / (1 - gamma)`` with ``gamma = gamma_d + gamma_cm``, so
  ``SR_0 = 2 SR_r SR_f / (SR_r + SR_f)`` and ``gamma = (SR_f - SR_r) / (SR_f + SR_r)``. How
  ``gamma`` splits between the two cannot be read from such a test; partsel gives each half
  (:data:`GAMMA_CM_SHARE`). In partsel's transistor-level test circuit (the coupling there is
  the gain stage's load into the bias line and the input pair's tail node) a crossing at
  20 kHz, where the drive slews while the common mode hardly moves, shows between a half and
  two thirds of the follower's asymmetry (0.53 to 0.64, measured in
  tests/test_transistor_level_opamp.py); the even split is not fitted to it.
  ``V_lin = SR_0 / omega_t``.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from partsel.params import MAX_SWING_POINTS, PARAMS, Topology

Basis = Literal["typical", "worst-case"]

#: Topology codes used in the arrays (index into :data:`TOPOLOGIES`).
TOPOLOGIES: tuple[Topology, ...] = (
    Topology.CLASS_A,
    Topology.CLASS_B_PULLDOWN,
    Topology.CLASS_AB,
    Topology.CMOS_RAIL,
)
CLASS_A, CLASS_B, CLASS_AB, CMOS = range(4)

#: Thermal voltage kT/q at 300 K, V (CODATA constants: k/q = 8.617e-5 V/K).
V_T = 8.617333262e-5 * 300.0
#: Junctions in the class-A/B source follower (a Darlington pair: two base-emitter drops).
M_FOLLOWER = 2.0
#: Current gain of the Darlington's output transistor (an assumption: a generic small-signal
#: integrated NPN, beta 100 to 200; from memory).
DARLINGTON_BETA = 150.0
#: Capacitance of the Darlington output transistor's base node (its base-emitter and base-
#: collector junctions and the driver's emitter junction), F (an assumption: a few pF for an
#: output device of a few unit emitters of a small-geometry bipolar process; from memory).
#: The turn-off tail ``beta_D C_e V_T / i`` scales with the product of the two.
DARLINGTON_C_E = 3e-12
#: Junctions in the class-B sink follower (a PNP emitter follower: one base-emitter drop).
M_SINK = 1.0
#: Share of a datasheet's slew-rate asymmetry that partsel gives to the common-mode input's
#: motion (the rest to the drive node's own slope): a follower's slew test moves both at the
#: same rate, so the split cannot be read from a datasheet; partsel takes half each (a neutral
#: choice; see the module docstring).
GAMMA_CM_SHARE = 0.5
#: Effective voltage scale of the class-AB device law, V: bipolar followers ``V_T``;
#: CMOS output devices in moderate inversion (gm/I of roughly 12 /V, an assumption).
V_X_BIPOLAR = V_T
V_X_CMOS = 1.0 / 12.0
#: Early voltage of the internal pull-down current source, V (assumption, typical of a
#: small-geometry bipolar current mirror; makes the pull-down current rise with output voltage).
V_EARLY_PULLDOWN = 50.0


def pulldown_law(i_stage: np.ndarray, v_pos: float, v_neg: float) -> tuple[np.ndarray, np.ndarray]:
    """``(const, slope)`` of the pull-down current ``i_pd = const + slope * v_out`` (A, A/V):
    Early effect normalised to the stage current at mid-supply (see the module docstring)."""
    v_mid = 0.5 * (v_pos + v_neg)
    slope = i_stage / (V_EARLY_PULLDOWN + (v_mid - v_neg))
    return i_stage - slope * v_mid, slope


def input_law(
    gbw_hz: np.ndarray, slew_rise_v_per_s: np.ndarray, slew_fall_v_per_s: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """``(SR_0, gamma, a, b_0)`` of the input stage (see the module docstring): the slew rate
    of the unmodulated tail current (V/s), the total modulation ``gamma = gamma_d + gamma_cm``
    (split by :data:`GAMMA_CM_SHARE`), and the law's coefficients (V, V). Infinite slew rates
    give a linear stage (``SR_0`` infinite, ``gamma = b_0 = 0``)."""
    sr_r = np.asarray(slew_rise_v_per_s, dtype=float)
    sr_f = np.asarray(slew_fall_v_per_s, dtype=float)
    fin = np.isfinite(sr_r) & np.isfinite(sr_f) & (sr_r > 0) & (sr_f > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        sr0 = np.where(fin, 2.0 * sr_r * sr_f / (sr_r + sr_f), np.inf)
        gamma = np.where(fin, (sr_f - sr_r) / (sr_r + sr_f), 0.0)
        v_lin = np.where(fin, sr0 / (2.0 * np.pi * gbw_hz), np.inf)
    a = np.where(fin, np.minimum(2.0 * V_T, v_lin), 0.0)
    b0 = np.where(fin, v_lin - a, 0.0)
    return sr0, gamma, np.nan_to_num(a), np.nan_to_num(b0)


def drive_slew(
    gbw_hz: np.ndarray,
    slew_rise_v_per_s: np.ndarray,
    slew_fall_v_per_s: np.ndarray,
    cm_slope_v_per_s: np.ndarray | float,
    rising: bool,
) -> np.ndarray:
    """The rate the drive node slews at, fully switched, while the common-mode input moves at
    ``cm_slope`` (V/s, signed): ``SR_0 - gamma_d r - gamma_cm c = |r|`` solved for the drive
    rate ``r`` (see the module docstring); the datasheet's own rates where ``c = r``."""
    sr0, gamma, _a, _b = input_law(gbw_hz, slew_rise_v_per_s, slew_fall_v_per_s)
    g_d = (1.0 - GAMMA_CM_SHARE) * gamma
    g_c = GAMMA_CM_SHARE * gamma
    c = np.asarray(cm_slope_v_per_s, dtype=float)
    with np.errstate(invalid="ignore"):
        rate = (sr0 - g_c * c) / ((1.0 + g_d) if rising else (1.0 - g_d))
    return np.where(np.isfinite(sr0), np.maximum(rate, 0.05 * sr0), np.inf)


def _resolve(
    cols: Mapping[str, np.ndarray], key: str, basis: Basis, worse: str, n: int
) -> tuple[np.ndarray, np.ndarray]:
    """Pick one value per part for ``key`` on ``basis``; return (values, side-used labels)."""

    def get(side: str) -> np.ndarray:
        c = f"{key}_{side}"
        if c in cols:
            return np.asarray(cols[c], dtype=float)
        return np.full(n, np.nan)

    vmin, vtyp, vmax = get("min"), get("typ"), get("max")
    if basis == "typical":
        order = [("typ", vtyp), ("mid", 0.5 * (vmin + vmax)), ("min", vmin), ("max", vmax)]
    else:
        first, second = (
            (("min", vmin), ("max", vmax)) if worse == "low" else (("max", vmax), ("min", vmin))
        )
        order = [first, ("typ", vtyp), second]
    out = np.full(n, np.nan)
    used = np.full(n, "none", dtype=object)
    for label, arr in order:
        take = np.isnan(out) & ~np.isnan(arr)
        out[take] = arr[take]
        used[take] = label
    return out, used


@dataclass(frozen=True)
class StageParams:
    """Parameters of P parts on one basis; every array has shape (P,) unless noted. SI units."""

    topology: np.ndarray  #: int codes, see :data:`TOPOLOGIES`
    dead_band_v: np.ndarray
    stage_current_a: np.ndarray
    stage_current_high_a: np.ndarray
    """Stage current on the side that is pessimistic for checks that the stage current *adds*
    to (source-side swing headroom, source limit): the maximum on the worst-case basis."""
    source_limit_a: np.ndarray
    sink_limit_a: np.ndarray
    gbw_hz: np.ndarray
    slew_rise_v_per_s: np.ndarray
    slew_fall_v_per_s: np.ndarray
    supply_current_a: np.ndarray
    cm_headroom_neg_v: np.ndarray
    cm_headroom_pos_v: np.ndarray
    cap_load_limit_f: np.ndarray
    min_stable_gain: np.ndarray
    supply_min_v: np.ndarray
    supply_max_v: np.ndarray
    channels: np.ndarray
    theta_ja_k_per_w: np.ndarray
    junction_max_c: np.ndarray
    swing_pos_i_a: np.ndarray  #: (P, K) source currents of the headroom curve to V+
    swing_pos_v: np.ndarray  #: (P, K) headroom to V+ at those currents
    swing_neg_i_a: np.ndarray  #: (P, K) sink currents of the headroom curve to V-
    swing_neg_v: np.ndarray  #: (P, K) headroom to V- at those currents
    basis: Basis = "typical"
    used: dict[str, np.ndarray] = field(default_factory=dict)
    """Which side of each parameter's range was used, per part ('typ', 'min', 'max', ...)."""

    @property
    def n(self) -> int:
        """Number of parts."""
        return int(self.topology.shape[0])

    @classmethod
    def from_columns(cls, cols: Mapping[str, np.ndarray], basis: Basis = "typical") -> StageParams:
        """Build from flat catalogue columns (a pandas frame or a dict of arrays).

        Columns follow :mod:`partsel.params`: ``{key}_{min,typ,max}``, ``topology`` (strings
        or codes), ``supply_min_v``, ``supply_max_v``, ``channels``, ``theta_ja_k_per_w``,
        ``junction_max_c``, ``min_stable_gain``, ``swing_pos_i{k}``, ``swing_pos_v{k}_{side}``
        and likewise ``swing_neg_*``.
        """
        topo_raw = np.asarray(cols["topology"])
        n = topo_raw.shape[0]
        if topo_raw.dtype.kind in "iu":
            topo = topo_raw.astype(int)
        else:
            lookup = {t.value: i for i, t in enumerate(TOPOLOGIES)}
            topo = np.array([lookup[str(t)] for t in topo_raw], dtype=int)
        vals: dict[str, np.ndarray] = {}
        used: dict[str, np.ndarray] = {}
        for p in PARAMS:
            v, u = _resolve(cols, p.key, basis, p.worse, n)
            vals[p.key], used[p.key] = v, u

        def plain(name: str, default: float) -> np.ndarray:
            if name in cols:
                a = np.asarray(cols[name], dtype=float)
                return np.where(np.isnan(a), default, a)
            return np.full(n, default)

        # Dead band: only a class-B stage has one; biased and class-A stages have none.
        db = np.where(topo == CLASS_B, vals["dead_band"], 0.0)

        def curve(rail: str) -> tuple[np.ndarray, np.ndarray]:
            ii = np.full((n, MAX_SWING_POINTS), np.nan)
            vv = np.full((n, MAX_SWING_POINTS), np.nan)
            for k in range(MAX_SWING_POINTS):
                ic = f"swing_{rail}_i{k}"
                if ic not in cols:
                    continue
                ii[:, k] = np.asarray(cols[ic], dtype=float)
                v, u = _resolve(cols, f"swing_{rail}_v{k}", basis, "high", n)
                vv[:, k] = v
                if k == 0:
                    used[f"swing_{rail}"] = u
            vv = np.where(np.isnan(ii), np.nan, vv)
            # A headroom curve must not fall with current: enforce a running maximum.
            filled = np.where(np.isnan(vv), -np.inf, vv)
            vv = np.where(np.isnan(vv), np.nan, np.maximum.accumulate(filled, axis=1))
            return ii, vv

        pos_i, pos_v = curve("pos")
        neg_i, neg_v = curve("neg")
        return cls(
            topology=topo,
            dead_band_v=db,
            stage_current_a=vals["stage_current"],
            stage_current_high_a=_resolve(cols, "stage_current", basis, "high", n)[0],
            source_limit_a=vals["source_limit"],
            sink_limit_a=vals["sink_limit"],
            gbw_hz=vals["gbw"],
            slew_rise_v_per_s=vals["slew_rise"],
            slew_fall_v_per_s=np.where(
                np.isnan(vals["slew_fall"]), vals["slew_rise"], vals["slew_fall"]
            ),
            supply_current_a=vals["supply_current"],
            cm_headroom_neg_v=vals["cm_headroom_neg"],
            cm_headroom_pos_v=vals["cm_headroom_pos"],
            cap_load_limit_f=vals["cap_load_limit"],
            min_stable_gain=plain("min_stable_gain", 1.0),
            supply_min_v=plain("supply_min_v", np.nan),
            supply_max_v=plain("supply_max_v", np.nan),
            channels=plain("channels", 1.0),
            theta_ja_k_per_w=plain("theta_ja_k_per_w", np.nan),
            junction_max_c=plain("junction_max_c", 150.0),
            swing_pos_i_a=pos_i,
            swing_pos_v=pos_v,
            swing_neg_i_a=neg_i,
            swing_neg_v=neg_v,
            basis=basis,
            used=used,
        )

    def take(self, index: np.ndarray | list[int]) -> StageParams:
        """The parameters of a subset of parts (fancy indexing along axis 0)."""
        idx = np.asarray(index)
        kw = {}
        for name in self.__dataclass_fields__:
            val = getattr(self, name)
            if isinstance(val, np.ndarray):
                kw[name] = val[idx]
            elif name == "used":
                kw[name] = {k: v[idx] for k, v in val.items()}
            else:
                kw[name] = val
        return StageParams(**kw)

    def replace(self, **changes: np.ndarray) -> StageParams:
        """A copy with some arrays replaced."""
        kw = {name: getattr(self, name) for name in self.__dataclass_fields__}
        kw.update(changes)
        return StageParams(**kw)

    # ---- convenience -------------------------------------------------------------------
    @property
    def has_pulldown(self) -> np.ndarray:
        """True where the stage has an internal pull-down / sink-bias current source."""
        return (self.topology == CLASS_A) | (self.topology == CLASS_B)

    @property
    def biased(self) -> np.ndarray:
        """True for class-AB and CMOS stages (both devices biased)."""
        return ~self.has_pulldown

    @property
    def device_scale_v(self) -> np.ndarray:
        """Voltage scale of the source device's DC law, V (see module docstring)."""
        return np.select(
            [self.topology == CLASS_AB, self.topology == CMOS],
            [V_X_BIPOLAR, V_X_CMOS],
            M_FOLLOWER * V_T,
        )

    @property
    def sink_scale_v(self) -> np.ndarray:
        """Voltage scale of the sink device's law, V (class B: one junction)."""
        return np.select(
            [self.topology == CLASS_AB, self.topology == CMOS],
            [V_X_BIPOLAR, V_X_CMOS],
            M_SINK * V_T,
        )

    def headroom_pos(self, i_a: np.ndarray) -> np.ndarray:
        """Headroom to V+ (V) at source current ``i_a`` (A); shape (P,) or (P, T)."""
        return pwl(i_a, self.swing_pos_i_a, self.swing_pos_v)

    def headroom_neg(self, i_a: np.ndarray) -> np.ndarray:
        """Headroom to V- (V) at sink current ``i_a`` (A); shape (P,) or (P, T)."""
        return pwl(i_a, self.swing_neg_i_a, self.swing_neg_v)

    def current_at_headroom_pos(self, h_v: np.ndarray) -> np.ndarray:
        """Largest source current (A) available at headroom ``h_v`` to V+ (>= 0)."""
        return np.maximum(pwl(h_v, self.swing_pos_v, self.swing_pos_i_a), 0.0)

    def current_at_headroom_neg(self, h_v: np.ndarray) -> np.ndarray:
        """Largest sink current (A) available at headroom ``h_v`` to V- (>= 0)."""
        return np.maximum(pwl(h_v, self.swing_neg_v, self.swing_neg_i_a), 0.0)


def pwl(x: np.ndarray, xp: np.ndarray, fp: np.ndarray) -> np.ndarray:
    """Piecewise-linear interpolation per part, see :func:`pwl_with_slope` (values only)."""
    return _pwl(x, xp, fp, False)[0]


def pwl_with_slope(x: np.ndarray, xp: np.ndarray, fp: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Piecewise-linear interpolation per part with linear extrapolation at both ends.

    ``xp``/``fp`` have shape (P, K), increasing along K, NaN-padded at the end (at least one
    point; a single point gives a constant). ``x`` has shape (P,) or (P, T). Parts with no
    points give NaN. Returns the values and the local slopes.
    """
    out, slope = _pwl(x, xp, fp, True)
    assert slope is not None
    return out, slope


def _pwl(
    x: np.ndarray, xp: np.ndarray, fp: np.ndarray, slopes: bool
) -> tuple[np.ndarray, np.ndarray | None]:
    """:func:`pwl_with_slope`; the slopes only where ``slopes`` (else None)."""
    x = np.asarray(x, dtype=float)
    squeeze = x.ndim == 1
    xx = x[:, None] if squeeze else x
    dx = xp[:, 1:] - xp[:, :-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        seg_slope = np.where(dx > 0, (fp[:, 1:] - fp[:, :-1]) / dx, 0.0)
    seg_ok = ~np.isnan(dx)
    s0 = np.where(seg_ok[:, 0], seg_slope[:, 0], 0.0)[:, None]
    out = fp[:, :1] + s0 * (xx - xp[:, :1])
    slope = np.broadcast_to(s0, out.shape) if slopes else None
    for k in range(1, xp.shape[1] - 1):
        if not seg_ok[:, k].any():
            break
        m = seg_ok[:, k, None] & (xx >= xp[:, k, None])
        sk = seg_slope[:, k, None]
        out = np.where(m, fp[:, k, None] + sk * (xx - xp[:, k, None]), out)
        if slope is not None:
            slope = np.where(m, sk, slope)
    if squeeze:
        return out[:, 0], None if slope is None else slope[:, 0]
    return out, slope
