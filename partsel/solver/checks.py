"""The checks a part must pass in a design, evaluated for many parts at once.

Every check compares a *value* with a *limit* in one unit (SI; temperatures in degC):

* sense ``min``: passes when ``value >= limit``; margin ``value - limit``;
* sense ``max``: passes when ``value <= limit``; margin ``limit - value``;
* sense ``is``: a categorical check (lifecycle, package, channels); no margin.

The **margin** is signed and in the check's unit (>= 0 passes). The **ratio** is
``value / limit`` (sense ``min``) or ``limit / value`` (sense ``max``), >= 1 passes; where the
denominator is not positive the ratio is ``inf`` if the check passes and 0 if it fails. Ratios
of temperatures in degC mean nothing and are NaN, except the junction check, whose ratio is the
allowed temperature rise over the predicted rise, ``(T_j,max - T_a) / (T_j - T_a)``.

The physics comes from :func:`partsel.physics.analysis.predict_closed_form` (one call for all
parts) and :func:`partsel.physics.fix.size_fix`; see :mod:`partsel.solver.solve`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from partsel.physics.analysis import (
    ClosedForm,
    held_current,
    input_extremes,
    output_extremes,
)
from partsel.physics.circuit import Design
from partsel.physics.stage import StageParams
from partsel.solver.requirements import Requirements
from partsel.solver.table import PartTable

CheckSense = Literal["min", "max", "is"]
Relax = Literal["add", "scale", "direct", "choice"]

# Status codes (int8 arrays).
PASS, FAIL, NA, FIXED, IGNORED, UNKNOWN, SKIPPED, WARN = range(8)
STATUS_NAMES: tuple[str, ...] = (
    "pass",
    "fail",
    "n/a",
    "fixed",
    "not-required",
    "unknown",
    "not-evaluated",
    "warning",
)
#: Statuses that reject a part.
FAILING = (FAIL, UNKNOWN)


@dataclass(frozen=True)
class CheckDef:
    """One check.

    Attributes
    ----------
    name: identifier (JSON, CSV column stem).
    unit: unit of value, limit and margin.
    sense: see the module docstring.
    description: one line for people.
    requirement: key of the limit in ``[requirements.limits]`` that sets or shifts the limit
        (None: a fixed physical limit).
    relax: how that requirement enters, for relaxation hints: ``add`` (limit = base +
        requirement), ``scale`` (limit = base * requirement), ``direct`` (limit = requirement),
        ``choice`` (a list of accepted values).
    params: catalogue parameters the check reads (to show which side of each range was used).
    repairable: the fix resistor can make it pass (the conduction check, THD, glitch).
    corner: depends on the stage current (swept over its range on the worst-case basis).
    """

    name: str
    unit: str
    sense: CheckSense
    description: str
    requirement: str | None = None
    relax: Relax | None = None
    params: tuple[str, ...] = ()
    repairable: bool = False
    corner: bool = False
    has_ratio: bool = True
    display: str = ""
    """Unit for people (:func:`partsel.present.quantity`): ``%`` for ratios shown as a
    percentage; empty: the same as ``unit``."""

    @property
    def display_unit(self) -> str:
        """The unit values of this check are shown in to people."""
        return self.display or self.unit


CHECKS: tuple[CheckDef, ...] = (
    CheckDef("supply_min", "V", "max", "Part's lowest total supply <= the design's V+ - V-"),
    CheckDef("supply_max", "V", "min", "Part's highest total supply >= the design's V+ - V-"),
    CheckDef("temp_min", "degC", "max", "Part's rated ambient minimum <= the design's lowest "
             "ambient", has_ratio=False),
    CheckDef("temp_max", "degC", "min", "Part's rated ambient maximum >= the design's highest "
             "ambient", has_ratio=False),
    CheckDef("input_cm_low", "V", "min", "Lowest input level above V- >= the part's common-mode "
             "headroom to V- plus min_cm_margin", "min_cm_margin", "add", ("cm_headroom_neg",)),
    CheckDef("input_cm_high", "V", "min", "Highest input level below V+ >= the part's "
             "common-mode headroom to V+ plus min_cm_margin", "min_cm_margin", "add",
             ("cm_headroom_pos",)),
    CheckDef("swing_high", "V", "min", "Room between the output's peak and V+ >= the headroom "
             "the part needs at the source current then, plus min_swing_margin",
             "min_swing_margin", "add", ("swing_pos", "stage_current"), corner=True),
    CheckDef("swing_low", "V", "min", "Room between the output's trough and V- >= the headroom "
             "the part needs at the sink current then, plus min_swing_margin",
             "min_swing_margin", "add", ("swing_neg",)),
    CheckDef("source_current", "A", "min", "Part's source current limit >= the peak source "
             "current", params=("source_limit", "stage_current"), corner=True),
    CheckDef("sink_current", "A", "min", "Part's sink current limit >= the peak sink current",
             params=("sink_limit",)),
    CheckDef("slew", "V/s", "min", "Part's slew rate (slower edge) >= min_slew_ratio times "
             "2 pi f A", "min_slew_ratio", "scale", ("slew_rise", "slew_fall")),
    CheckDef("bandwidth", "Hz", "min", "Closed-loop bandwidth GBW / noise gain >= "
             "min_bandwidth_ratio times the signal frequency", "min_bandwidth_ratio", "scale",
             ("gbw",)),
    CheckDef("gain_error", "1", "max", "Relative gain error at the signal frequency (single-pole "
             "loop) <= max_gain_error", "max_gain_error", "direct", ("gbw",), display="%"),
    CheckDef("stability", "V/V", "min", "Noise gain >= the part's minimum stable gain"),
    CheckDef("cap_load", "F", "max", "Load capacitance <= max_cap_load_ratio times the part's "
             "stated capacitive-load limit (without that limit: a warning above the stated "
             "limit)", "max_cap_load_ratio", "scale", ("cap_load_limit",)),
    CheckDef("junction_temp", "degC", "max", "Junction temperature at the highest ambient <= "
             "the part's junction maximum", params=("supply_current",)),
    CheckDef("conduction", "A", "min", "Smallest source-device current (class A/B) >= "
             "min_source_fraction times the stage current: the stage stays in one conduction "
             "mode", "min_source_fraction", "scale", ("stage_current", "dead_band"),
             repairable=True, corner=True),
    CheckDef("fix_resistor", "ohm", "min", "The fix resistor that keeps the stage in one mode "
             "works and is >= min_fix_resistance", "min_fix_resistance", "direct",
             ("stage_current", "source_limit", "sink_limit", "swing_pos", "swing_neg")),
    CheckDef("thd", "1", "max", "THD_F estimate of the output stage (closed form: crossover, or "
             "the one-mode device law, also with the fix fitted) <= max_thd", "max_thd", "direct",
             ("dead_band", "gbw", "stage_current"),
             repairable=True, corner=True, display="%"),
    CheckDef("glitch", "V", "max", "Predicted crossover glitch <= max_glitch", "max_glitch",
             "direct", ("dead_band", "gbw", "stage_current", "slew_rise", "slew_fall"),
             repairable=True, corner=True),
    CheckDef("supply_current", "A", "max", "Mean supply current for the design's channels "
             "(quiescent, load and fix resistor) <= max_supply_current", "max_supply_current",
             "direct", ("supply_current",)),
    CheckDef("price", "currency unit", "max", "Price for the design's channels <= max_price",
             "max_price", "direct"),
    CheckDef("offset", "V", "max", "Input offset voltage <= max_offset", "max_offset", "direct",
             ("offset_voltage",)),
    CheckDef("noise", "V/rtHz", "max", "Input voltage noise density <= max_noise", "max_noise",
             "direct", ("noise_density",)),
    CheckDef("bias_current", "A", "max", "Input bias current <= max_bias_current",
             "max_bias_current", "direct", ("bias_current",)),
    CheckDef("yield", "1", "min", "Monte Carlo yield (fraction of boards meeting every other "
             "check, partsel.solver.spread) >= min_yield; evaluated for the parts feasible on "
             "the basis", "min_yield", "direct", display="%"),
    CheckDef("lifecycle", "", "is", "Lifecycle state is one of those accepted", "lifecycle",
             "choice", has_ratio=False),
    CheckDef("package", "", "is", "The part offers one of the accepted packages", "packages",
             "choice", has_ratio=False),
    CheckDef("channels", "", "is", "Channels per package is one of those accepted", "channels",
             "choice", has_ratio=False),
)  # fmt: skip

CHECK_NAMES: tuple[str, ...] = tuple(c.name for c in CHECKS)
IDX: dict[str, int] = {c.name: i for i, c in enumerate(CHECKS)}
N_CHECKS = len(CHECKS)
SENSE_MIN = np.array([c.sense == "min" for c in CHECKS])
SENSE_MAX = np.array([c.sense == "max" for c in CHECKS])
HAS_RATIO = np.array([c.has_ratio for c in CHECKS])
REPAIRABLE = np.array([c.repairable for c in CHECKS])
CORNER = np.array([c.corner for c in CHECKS])


@dataclass
class CheckArrays:
    """Check results of P parts: arrays of shape (P, number of checks)."""

    value: np.ndarray
    limit: np.ndarray
    margin: np.ndarray
    ratio: np.ndarray
    status: np.ndarray  #: int8 status codes

    def take(self, idx: np.ndarray) -> CheckArrays:
        """Rows ``idx`` (column-major copies)."""
        return CheckArrays(*(np.asfortranarray(a[idx]) for a in self.astuple()))

    def put(self, idx: np.ndarray, other: CheckArrays) -> None:
        """Write ``other`` into rows ``idx``."""
        for mine, theirs in zip(self.astuple(), other.astuple(), strict=True):
            mine[idx] = theirs

    def astuple(self) -> tuple[np.ndarray, ...]:
        return (self.value, self.limit, self.margin, self.ratio, self.status)

    @property
    def failing(self) -> np.ndarray:
        """(P, C) True where a check rejects the part."""
        return (self.status == FAIL) | (self.status == UNKNOWN)


def _column_margin_ratio(
    v: np.ndarray, lo: np.ndarray, sense: str, has_ratio: bool
) -> tuple[np.ndarray, np.ndarray]:
    if sense == "is":
        nan = np.full(v.shape, np.nan)
        return nan, nan.copy()
    with np.errstate(invalid="ignore", divide="ignore"):
        if sense == "min":
            margin, num, den = v - lo, v, lo
        else:
            margin, num, den = lo - v, lo, v
        if not has_ratio:
            return margin, np.full(v.shape, np.nan)
        ratio = np.where(den > 0, np.maximum(num, 0.0) / den, np.where(margin >= 0, np.inf, 0.0))
    ratio[np.isnan(margin)] = np.nan
    return margin, ratio


def margins_and_ratios(value: np.ndarray, limit: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Signed margins and ratios (see the module docstring) of (P, C) value/limit arrays.

    Column by column (the arrays are column-major, so each column is contiguous)."""
    margin = np.empty(value.shape, order="F")
    ratio = np.empty(value.shape, order="F")
    for j, c in enumerate(CHECKS):
        margin[:, j], ratio[:, j] = _column_margin_ratio(
            value[:, j], limit[:, j], c.sense, c.has_ratio
        )
    return margin, ratio


def _empty(p: int, fill: float | int, dtype: type = float) -> np.ndarray:
    """A column-major (P, C) array."""
    return np.full((p, N_CHECKS), fill, dtype=dtype, order="F")


@dataclass(frozen=True)
class DesignLevels:
    """Part-independent levels of the ideal waveform, V (arrays of shape (N,) for a batch
    design, one per row)."""

    out_max_v: Any
    out_min_v: Any
    in_max_v: Any
    in_min_v: Any

    @classmethod
    def of(cls, design: Design) -> DesignLevels:
        (v_lo, v_hi), (vp_lo, vp_hi) = output_extremes(design), input_extremes(design)
        ends = (v_hi, v_lo, vp_hi, vp_lo)
        if design.rows is not None:
            return cls(*(np.broadcast_to(np.asarray(x, dtype=float), (design.rows,)) for x in ends))
        return cls(*(float(x) for x in ends))


def packages_needed(table_channels: np.ndarray, used: int) -> np.ndarray:
    """Packages needed for ``used`` channels with ``table_channels`` per package."""
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.ceil(used / table_channels)


def evaluate(
    table: PartTable,
    idx: np.ndarray,
    stage: StageParams,
    cf: ClosedForm,
    design: Design,
    req: Requirements,
    levels: DesignLevels,
    *,
    inputs: Mapping[str, np.ndarray] | None = None,
) -> CheckArrays:
    """Every check, as designed (no fix fitted), for the parts ``idx`` of ``table``.

    ``stage`` and ``cf`` hold the same parts, in the same order, as ``idx`` (a part may appear
    in several rows: the spread analysis evaluates samples of a part as rows, with a batch
    ``design`` of one circuit per row). ``inputs``: the input parameters of the rows that the
    stage model does not hold (``offset_voltage``, ``noise_density``, ``bias_current``); by
    default the table's on the requirements' basis.
    """
    p = idx.size
    basis = req.basis
    value = _empty(p, np.nan)
    limit = _empty(p, np.nan)
    status = _empty(p, PASS, np.int8)
    sup = design.supply
    total = sup.total_v
    lim = req.limit

    def put(name: str, v: np.ndarray | float, lo: np.ndarray | float) -> None:
        j = IDX[name]
        value[:, j] = v
        limit[:, j] = lo

    put("supply_min", stage.supply_min_v, total)
    put("supply_max", stage.supply_max_v, total)
    put("temp_min", table.number("temp_min_c")[idx], design.t_ambient_min_c)
    put("temp_max", table.number("temp_max_c")[idx], design.t_ambient_max_c)
    cm = lim("min_cm_margin") or 0.0
    put("input_cm_low", levels.in_min_v - sup.v_neg_v, stage.cm_headroom_neg_v + cm)
    put("input_cm_high", sup.v_pos_v - levels.in_max_v, stage.cm_headroom_pos_v + cm)
    sw = lim("min_swing_margin") or 0.0
    room_hi = sup.v_pos_v - levels.out_max_v
    room_lo = levels.out_min_v - sup.v_neg_v
    put("swing_high", room_hi, room_hi - cf.swing_pos_margin_v + sw)
    put("swing_low", room_lo, room_lo - cf.swing_neg_margin_v + sw)
    put("source_current", stage.source_limit_a, cf.source_peak_a)
    put("sink_current", stage.sink_limit_a, cf.sink_peak_a)
    sr = np.minimum(stage.slew_rise_v_per_s, stage.slew_fall_v_per_s)
    put("slew", sr, (lim("min_slew_ratio") or 1.0) * cf.slew_required_v_per_s)
    f = design.signal.frequency_hz
    put("bandwidth", cf.closed_loop_bw_hz, (lim("min_bandwidth_ratio") or 1.0) * f)
    put("gain_error", np.abs(cf.gain_error), np.nan if lim("max_gain_error") is None else
        lim("max_gain_error"))  # fmt: skip
    put("stability", design.noise_gain, stage.min_stable_gain)
    put(
        "cap_load",
        design.load.c_load_f,
        (lim("max_cap_load_ratio") or 1.0) * stage.cap_load_limit_f,
    )
    put("junction_temp", cf.t_junction_c, stage.junction_max_c)
    put("conduction", cf.held_current_a, conduction_limit(stage, req))
    put("fix_resistor", np.nan, lim("min_fix_resistance") or 0.0)
    put("thd", cf.thd_estimate, np.nan if lim("max_thd") is None else lim("max_thd"))
    put("glitch", cf.glitch_v, np.nan if lim("max_glitch") is None else lim("max_glitch"))
    put("supply_current", cf.supply_current_a, _opt(lim("max_supply_current")))
    n_pack = packages_needed(table.channels[idx], design.channels_used)
    put("price", table.number("price")[idx] * n_pack, _opt(lim("max_price")))

    def given(key: str) -> np.ndarray:
        if inputs is not None and key in inputs:
            return np.asarray(inputs[key], dtype=float)
        return table.param(key, basis)[0][idx]

    put("offset", given("offset_voltage"), _opt(lim("max_offset")))
    put("noise", given("noise_density"), _opt(lim("max_noise")))
    put("bias_current", given("bias_current"), _opt(lim("max_bias_current")))
    put("yield", np.nan, _opt(lim("min_yield")))  # a spread analysis, see partsel.solver.solve

    margin, ratio = margins_and_ratios(value, limit)
    # junction: ratio of allowed over predicted temperature rise
    j = IDX["junction_temp"]
    t_a = design.t_ambient_max_c
    with np.errstate(invalid="ignore", divide="ignore"):
        rise = value[:, j] - t_a
        allowed = limit[:, j] - t_a
        ratio[:, j] = np.where(
            rise > 0, np.maximum(allowed, 0.0) / rise, np.where(margin[:, j] >= 0, np.inf, 0.0)
        )
    ratio[np.isnan(margin[:, j]), j] = np.nan

    for j in np.flatnonzero(SENSE_MIN | SENSE_MAX):
        m = margin[:, j]
        status[:, j] = np.where(m >= 0, PASS, np.where(np.isnan(m), UNKNOWN, FAIL))
    status[:, IDX["yield"]] = SKIPPED if lim("min_yield") is not None else IGNORED
    # optional limits not set: shown, not required
    for name, key in (
        ("gain_error", "max_gain_error"),
        ("thd", "max_thd"),
        ("glitch", "max_glitch"),
        ("supply_current", "max_supply_current"),
        ("price", "max_price"),
        ("offset", "max_offset"),
        ("noise", "max_noise"),
        ("bias_current", "max_bias_current"),
        ("yield", "min_yield"),
    ):
        if lim(key) is None:
            status[:, IDX[name]] = IGNORED
            margin[:, IDX[name]] = np.nan
            ratio[:, IDX[name]] = np.nan
    # not applicable; warnings
    j = IDX["cap_load"]
    no_cap = np.broadcast_to(np.asarray(design.load.c_load_f) <= 0, (p,))
    if lim("max_cap_load_ratio") is None:
        status[:, j] = np.where(status[:, j] == PASS, PASS, WARN)
    status[no_cap, j] = NA
    biased = ~stage.has_pulldown
    status[biased, IDX["conduction"]] = NA
    if req.conduction == "allowed":
        status[stage.has_pulldown, IDX["conduction"]] = IGNORED
    status[:, IDX["fix_resistor"]] = NA
    # categorical
    for name, key, ok in (
        ("lifecycle", "lifecycle", lambda c: np.isin(table.lifecycle[idx], list(c))),
        ("package", "packages", lambda c: table.offers_package(tuple(c))[idx]),
        ("channels", "channels", lambda c: np.isin(table.channels[idx], list(c))),
    ):
        choice = req.choice(key)
        if choice is None:
            status[:, IDX[name]] = IGNORED
        else:
            status[:, IDX[name]] = np.where(ok(choice), PASS, FAIL)
    for name in ("lifecycle", "package", "channels"):
        margin[:, IDX[name]] = np.nan
        ratio[:, IDX[name]] = np.nan
    # n/a checks carry no margin; an ignored conduction check keeps its margin (information)
    for j in range(N_CHECKS):
        na = status[:, j] == NA
        if na.any():
            margin[na, j] = np.nan
            ratio[na, j] = np.nan
    return CheckArrays(value, limit, margin, ratio, status)


def put_yield(chk: CheckArrays, rows: np.ndarray, fraction: np.ndarray, req: Requirements) -> None:
    """The yield check of parts ``rows``: their Monte Carlo yields ``fraction`` against
    ``min_yield`` (in place; shown, not required, without that limit)."""
    j = IDX["yield"]
    chk.value[rows, j] = fraction
    m, r = _column_margin_ratio(chk.value[rows, j], chk.limit[rows, j], "min", True)
    if req.limit("min_yield") is None:
        chk.status[rows, j] = IGNORED
        return
    chk.margin[rows, j], chk.ratio[rows, j] = m, r
    chk.status[rows, j] = np.where(m >= 0, PASS, np.where(np.isnan(m), UNKNOWN, FAIL))


def conduction_limit(stage: StageParams, req: Requirements) -> np.ndarray:
    """The least source-device current the conduction check asks of each part, A:
    ``min_source_fraction`` of its stage current."""
    frac = req.limit("min_source_fraction")
    return (0.0 if frac is None else frac) * stage.stage_current_a


def conduction_fails(
    stage: StageParams, dem_lo: np.ndarray, dem_hi: np.ndarray, req: Requirements
) -> np.ndarray:
    """Where the conduction check rejects a class-A/B part whose source device's demand spans
    ``dem_lo`` .. ``dem_hi`` (A; the held device's least current by
    :func:`partsel.physics.analysis.held_current`, as the closed form's); never with
    ``conduction = "allowed"``, nor for a biased stage."""
    if req.conduction == "allowed":
        return np.zeros(stage.n, dtype=bool)
    held, _ = held_current(stage, dem_lo, dem_hi)
    with np.errstate(invalid="ignore"):
        return stage.has_pulldown & ~(held >= conduction_limit(stage, req))


def _opt(x: float | None) -> float:
    return np.nan if x is None else x


def fix_variant(
    base: CheckArrays, *, r_ohm: np.ndarray, works: np.ndarray, req: Requirements
) -> CheckArrays:
    """The checks of parts that need the fix, before the circuit with it is evaluated.

    ``base`` holds those parts as designed. Where no resistor works (or none was sized) the
    conduction check fails (ignored under ``conduction = "allowed"``) and so does the
    fix-resistor check; the other parts get their checks from the circuit with the resistor
    fitted (:func:`with_fix_resistor`, by :func:`partsel.solver.solve.rank`).
    """
    out = CheckArrays(*(a.copy(order="F") for a in base.astuple()))
    works = works & np.isfinite(r_ohm)
    j = IDX["conduction"]
    unfixed = IGNORED if req.conduction == "allowed" else FAIL
    out.status[:, j] = np.where(works, out.status[:, j], unfixed)
    j = IDX["fix_resistor"]
    out.value[:, j] = np.where(works, r_ohm, np.nan)
    out.status[:, j] = np.where(works, out.status[:, j], FAIL)
    out.ratio[:, j] = np.where(works, out.ratio[:, j], 0.0)
    return out


def with_fix_resistor(
    chk: CheckArrays, r_ohm: float | np.ndarray, req: Requirements
) -> CheckArrays:
    """``chk``, the checks of parts on the circuit with their fix resistor ``r_ohm`` fitted
    (:func:`evaluate` of that circuit), marked as such: the fix-resistor check holds the value
    against ``min_fix_resistance``, and a conduction check that passes reads ``fixed``."""
    out = CheckArrays(*(a.copy(order="F") for a in chk.astuple()))
    j = IDX["fix_resistor"]
    out.value[:, j] = r_ohm
    c = CHECKS[j]
    m, r = _column_margin_ratio(out.value[:, j], out.limit[:, j], c.sense, c.has_ratio)
    out.margin[:, j] = m
    out.ratio[:, j] = r
    out.status[:, j] = np.where(m >= 0, PASS, FAIL)
    j = IDX["conduction"]
    out.status[:, j] = np.where(out.status[:, j] == PASS, FIXED, out.status[:, j])
    return out
