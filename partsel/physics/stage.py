"""Output-stage parameters of many parts at once, and the device laws of the macro-model.

Parts lie along axis 0 of every array. :class:`StageParams` holds one value per part, already
resolved to a *basis*: ``"typical"`` (datasheet typical values) or ``"worst-case"`` (for every
parameter the side of its guaranteed range that is pessimistic, see
:attr:`partsel.params.ParamDef.worst_side`). Each field records which side it came from.

Device laws (partsel's own macro-model; SI units):

* drive coordinate ``x = v_drive - v_out`` is chosen so that at ``x = 0`` the source device of a
  class-A or class-B stage carries exactly the stage current (pull-down or sink bias).
* class A / class B source device (emitter follower, often a Darlington):
  ``i_src = I_stage * exp(x / V_S)`` with ``V_S = M_FOLLOWER * V_T``.
* class B sink device: ``i_snk = I_stage * exp((-x - dV) / V_S)``: it carries the stage current
  once the drive is a dead band ``dV`` below the output.
* class AB / CMOS: ``i_src = I_q * exp(x / V_X)`` and ``i_snk = I_q * exp(-x / V_X)``
  (translinear pair; both carry ``I_q`` at zero output current).
* every device current is capped by its current limit and by the current available at the
  present headroom to its rail (inverse of the swing curve); the class-A/B pull-down current
  source collapses near the negative rail the same way and has a finite output resistance
  (Early voltage :data:`V_EARLY_PULLDOWN`).
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
#: Effective voltage scale of the class-AB device law, V: bipolar followers ``V_T``;
#: CMOS output devices in moderate inversion (gm/I of roughly 12 /V, an assumption).
V_X_BIPOLAR = V_T
V_X_CMOS = 1.0 / 12.0
#: Early voltage of the internal pull-down current source, V (assumption, typical of a
#: small-geometry bipolar current mirror; makes the pull-down current rise with output voltage).
V_EARLY_PULLDOWN = 50.0


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
        """Voltage scale of the device law, V (see module docstring)."""
        return np.select(
            [self.topology == CLASS_AB, self.topology == CMOS],
            [V_X_BIPOLAR, V_X_CMOS],
            M_FOLLOWER * V_T,
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
    """Piecewise-linear interpolation per part, see :func:`pwl_with_slope`."""
    return pwl_with_slope(x, xp, fp)[0]


def pwl_with_slope(x: np.ndarray, xp: np.ndarray, fp: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Piecewise-linear interpolation per part with linear extrapolation at both ends.

    ``xp``/``fp`` have shape (P, K), increasing along K, NaN-padded at the end (at least one
    point; a single point gives a constant). ``x`` has shape (P,) or (P, T). Parts with no
    points give NaN. Returns the values and the local slopes.
    """
    x = np.asarray(x, dtype=float)
    squeeze = x.ndim == 1
    xx = x[:, None] if squeeze else x
    dx = xp[:, 1:] - xp[:, :-1]
    with np.errstate(invalid="ignore", divide="ignore"):
        seg_slope = np.where(dx > 0, (fp[:, 1:] - fp[:, :-1]) / dx, 0.0)
    seg_ok = ~np.isnan(dx)
    s0 = np.where(seg_ok[:, 0], seg_slope[:, 0], 0.0)[:, None]
    out = fp[:, :1] + s0 * (xx - xp[:, :1])
    slope = np.broadcast_to(s0, out.shape)
    for k in range(1, xp.shape[1] - 1):
        if not seg_ok[:, k].any():
            break
        m = seg_ok[:, k, None] & (xx >= xp[:, k, None])
        sk = seg_slope[:, k, None]
        out = np.where(m, fp[:, k, None] + sk * (xx - xp[:, k, None]), out)
        slope = np.where(m, sk, slope)
    if squeeze:
        return out[:, 0], slope[:, 0]
    return out, slope
