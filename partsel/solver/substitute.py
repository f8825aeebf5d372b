"""Substitute vetting and side-by-side comparison of parts (numpy / pandas only).

A component engineer replacing an incumbent part asks three things of every candidate, in this
order (design notes section 1):

* **form**: does it fit the footprint: the same channel count and a package code with the same
  pinout code (two packages of one code with different pinouts do not fit one footprint);
* **fit**: does it cover the use: the supply range (the design's rails, or without a design the
  incumbent's rated range), the temperature range, the lifecycle;
* **function**: every electrical parameter of :data:`partsel.params.PARAMS` compared
  direction-aware (:attr:`~partsel.params.ParamDef.worse`) on guaranteed values (``worst-case``
  basis) or typicals, as better / equal / worse and by how much; plus the output swing headroom
  at the incumbent's curve points.

With a design, both the incumbent and every candidate are predicted in that circuit in one
vectorised call of :func:`partsel.physics.analysis.predict_closed_form`, and the candidate's
in-circuit checks are compared with the incumbent's (:func:`evaluate_circuit`): a conduction-mode
change where the incumbent had none, a larger glitch, a swing, input or slew margin that no
longer holds.

Some differences change behaviour even when every number looks better; they are flagged for
review: another output-stage topology, a much higher gain-bandwidth with a capacitive load, an
input range that no longer reaches a rail the incumbent's reached (or, with a design, no longer
covers the bias point), a part that is not unity-gain stable.

Verdicts (partsel's own classes, best first, :data:`VERDICTS`):

``drop-in``
    form, fit and function all equal or better; no behaviour flag; with a design no in-circuit
    check worse.
``fits-this-circuit``
    some value is worse than the incumbent's, but the design tolerates it (every in-circuit
    check that judges it still passes); only given with a design.
``review``
    a difference that needs an engineer's judgement: a behaviour flag, a worse value no design
    judges, a lifecycle of not-for-new-designs, a package the board may not use.
``unsuitable``
    wrong footprint or channel count, obsolete, or an in-circuit check fails that the incumbent
    passes.

Every candidate carries its reasons (:class:`Reason`), each with an aspect (form, fit,
function, behaviour, circuit), a severity and a message for people.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, Literal

import numpy as np
import pandas as pd

from partsel.errors import InputError
from partsel.params import PARAMS, Lifecycle, Topology
from partsel.physics.analysis import ClosedForm, predict_closed_form
from partsel.physics.circuit import Design
from partsel.physics.fix import size_fix
from partsel.physics.stage import Basis, StageParams

Verdict = Literal["drop-in", "fits-this-circuit", "review", "unsuitable"]
#: Verdict classes, best first.
VERDICTS: tuple[Verdict, ...] = ("drop-in", "fits-this-circuit", "review", "unsuitable")
Severity = Literal["fail", "review", "circuit-ok", "info"]
#: Severities of a reason, worst first; the worst one present sets the verdict.
SEVERITIES: tuple[Severity, ...] = ("fail", "review", "circuit-ok", "info")
_VERDICT_OF: dict[str, Verdict] = {
    "fail": "unsuitable",
    "review": "review",
    "circuit-ok": "fits-this-circuit",
}
Aspect = Literal["form", "fit", "function", "behaviour", "circuit"]
Change = Literal["better", "equal", "worse", "unknown", "n/a"]
BASES: tuple[Basis, ...] = ("worst-case", "typical")

#: Printed with every vetting and comparison (and in their JSON).
CAUTION = (
    "Verdicts compare catalogue values and partsel's behavioural macro-model predictions: "
    "confirm a substitute against its datasheet and on the bench before release, and follow "
    "your organisation's design rules where safety is involved."
)

#: A candidate whose gain-bandwidth is at least this many times the incumbent's is flagged when
#: the output drives a capacitance (partsel's choice: a load pole that sat a factor of three
#: above the incumbent's loop crossover then sits at the candidate's, and the phase margin
#: there is gone; common practice for a single-pole loop with an output-resistance pole).
GBW_FLAG_RATIO = 3.0
#: Relative tolerance within which two catalogue values count as equal (parsing round-off).
EQUAL_RTOL = 1e-6
#: Relative change below which an in-circuit figure counts as unchanged (partsel's choice).
CIRCUIT_RTOL = 0.01
#: Absolute change below which an in-circuit figure counts as unchanged, per unit.
CIRCUIT_ATOL: dict[str, float] = {
    "V": 1e-3,
    "A": 1e-9,
    "degC": 0.1,
    "Hz": 1.0,
    "1": 1e-6,
    "V/V": 1e-6,
}

#: SI unit of each parameter dimension (partsel.units.SI_UNIT, repeated here so that the solver
#: does not import pint).
_DIM_UNIT: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "frequency": "Hz",
    "slew": "V/s",
    "capacitance": "F",
    "noise_voltage": "V/rtHz",
}
#: Parameters that the in-circuit prediction judges (so a worse value can still fit a circuit).
_JUDGED_IN_CIRCUIT: frozenset[str] = frozenset(
    {
        "supply_current",
        "cm_headroom_neg",
        "cm_headroom_pos",
        "gbw",
        "slew_rise",
        "slew_fall",
        "cap_load_limit",
        "dead_band",
        "stage_current",
        "source_limit",
        "sink_limit",
        "swing_pos",
        "swing_neg",
        "junction_max_c",
        "theta_ja_k_per_w",
    }
)
#: Parameters the circuit model does not judge, with the design requirement that limits them
#: (canonical key in ``Design.requirements["limits"]``, SI value).
_REQUIREMENT_LIMIT: dict[str, str] = {
    "offset_voltage": "max_offset",
    "bias_current": "max_bias_current",
    "noise_density": "max_noise",
}
#: What each output stage does, for the topology flag (design notes section 2).
_TOPOLOGY_TEXT: dict[str, str] = {
    Topology.CLASS_A.value: "a class-A follower: it sinks at most its bias current, and the "
    "output flattens where the load must sink more",
    Topology.CLASS_B_PULLDOWN.value: "a class-B stage with a pull-down: it crosses a dead band "
    "(a crossover glitch) where the load must sink more than the pull-down current",
    Topology.CLASS_AB.value: "a class-AB stage: no dead band, but a quiescent output current, "
    "and its own swing and supply current",
    Topology.CMOS_RAIL.value: "a CMOS rail-to-rail stage: no dead band; its swing to the rails "
    "shrinks with the load current",
}


# ---- small helpers -----------------------------------------------------------------------------

_PREFIXES = (
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "u"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
)


def fmt(value: float | None, unit: str) -> str:
    """A value for people, with an engineering prefix (``fmt(4.7e-6, "F") == "4.7 uF"``).

    Slew rates are shown in V/us, temperatures in degC, ratios (unit ``"1"``) bare.
    """
    if value is None or not math.isfinite(value):
        return "n/a" if value is None or math.isnan(value) else ("inf" if value > 0 else "-inf")
    if unit == "degC":
        return f"{value:.4g} degC"
    if unit == "1":
        return f"{value:.3g}"
    if unit == "V/s":
        return f"{value / 1e6:.3g} V/us"
    if value == 0:
        return f"0 {unit}"
    mag = abs(value)
    for scale, prefix in _PREFIXES:
        if mag >= scale * 0.9995:
            return f"{value / scale:.3g} {prefix}{unit}"
    scale, prefix = _PREFIXES[-1]
    return f"{value / scale:.3g} {prefix}{unit}"


def _pct(new: float, old: float) -> str:
    """Relative change ``(new - old) / |old|`` as a signed percentage ('' when meaningless)."""
    if not (math.isfinite(new) and math.isfinite(old)) or old == 0:
        return ""
    return f" ({(new - old) / abs(old) * 100:+.0f} %)"


def _float(x: Any) -> float | None:
    """A JSON-friendly float (None for NaN / inf / missing)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _num(frame: pd.DataFrame, name: str) -> np.ndarray:
    """Float column ``name`` (NaN when the frame has no such column)."""
    if name in frame.columns:
        col = pd.to_numeric(frame[name], errors="coerce")
        return np.array(col.to_numpy(dtype=float, na_value=np.nan), dtype=float)  # a copy
    return np.full(len(frame), np.nan)


def _txt(frame: pd.DataFrame, name: str, default: str = "") -> list[str]:
    """Text column ``name`` as a list of str ('' for missing values)."""
    if name not in frame.columns:
        return [default] * len(frame)
    return [
        "" if (v is None or (isinstance(v, float) and math.isnan(v))) else str(v)
        for v in frame[name].tolist()
    ]


@lru_cache(maxsize=65536)
def parse_packages(text: str) -> tuple[tuple[str, str], ...]:
    """The ``packages`` column (``'CODE:PINOUT;CODE:PINOUT'``) as (code, pinout) pairs."""
    out = []
    for item in str(text or "").split(";"):
        item = item.strip()
        if not item:
            continue
        code, _, pinout = item.partition(":")
        out.append((code.strip(), pinout.strip()))
    return tuple(out)


def find_part(frame: pd.DataFrame, part_number: str) -> int:
    """Row position of ``part_number`` in ``frame`` (case-insensitive, trimmed).

    Raises :class:`~partsel.errors.InputError` for an unknown part number.
    """
    key = str(part_number).strip().casefold()
    keys = [s.strip().casefold() for s in _txt(frame, "part_number")]
    try:
        return keys.index(key)
    except ValueError:
        raise InputError(f"unknown part number {part_number!r}", pointer="/part_number") from None


def _check_basis(basis: str) -> Basis:
    if basis not in BASES:
        raise InputError(
            f"unknown basis {basis!r}: use 'worst-case' or 'typical'", pointer="/basis"
        )
    return basis  # type: ignore[return-value]


def _requirements(design: Design | None) -> Mapping[str, Any]:
    req = design.requirements if design is not None else None
    return req if isinstance(req, Mapping) else {}


# ---- parameter values on a basis ---------------------------------------------------------------


@dataclass(frozen=True)
class _Sides:
    """min / typ / max arrays of one parameter (NaN where absent)."""

    vmin: np.ndarray
    vtyp: np.ndarray
    vmax: np.ndarray

    def side(self, name: str) -> np.ndarray:
        return {"min": self.vmin, "typ": self.vtyp, "max": self.vmax}[name]


def _sides(frame: pd.DataFrame, key: str) -> _Sides:
    s = _Sides(_num(frame, f"{key}_min"), _num(frame, f"{key}_typ"), _num(frame, f"{key}_max"))
    if key == "dead_band":
        # Only a class-B stage has a dead band; a biased or class-A stage has none (stage.py).
        zero = np.array([t != Topology.CLASS_B_PULLDOWN.value for t in _txt(frame, "topology")])
        s = _Sides(*(np.where(zero, 0.0, a) for a in (s.vmin, s.vtyp, s.vmax)))
    return s


class _Cols:
    """The columns of a frame, each converted once (vetting reads them per candidate)."""

    def __init__(self, frame: pd.DataFrame) -> None:
        self.frame = frame
        self._num: dict[str, np.ndarray] = {}
        self._sides: dict[str, _Sides] = {}

    def num(self, name: str) -> np.ndarray:
        if name not in self._num:
            self._num[name] = _num(self.frame, name)
        return self._num[name]

    def sides(self, key: str) -> _Sides:
        if key not in self._sides:
            self._sides[key] = _sides(self.frame, key)
        return self._sides[key]


def _resolve_one(s: _Sides, k: int, order: Sequence[str]) -> tuple[float, str]:
    for side in order:
        v = float(s.side(side)[k])
        if not math.isnan(v):
            return v, side
    return math.nan, "none"


# ---- results -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Reason:
    """One reason behind a verdict."""

    aspect: Aspect
    severity: Severity
    code: str  #: stable identifier for scripts, e.g. ``"topology"``, ``"circuit-swing_low"``
    message: str  #: one sentence for people

    def to_dict(self) -> dict[str, Any]:
        return {
            "aspect": self.aspect,
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
        }


@dataclass(frozen=True)
class ParamComparison:
    """One parameter of a candidate against the incumbent's; SI units."""

    key: str
    unit: str
    worse: Literal["low", "high"]  #: which direction is pessimistic
    incumbent: float
    candidate: float
    side_incumbent: str  #: side of the range used ('min', 'typ', 'max', 'value', 'none')
    side_candidate: str
    change: Change
    note: str = ""  #: '', 'typical', 'no-guarantee', 'mixed' (see :func:`_pair_all`)
    at_current_a: float | None = None  #: swing headroom: the output current compared at

    @property
    def delta(self) -> float:
        """Candidate minus incumbent (SI)."""
        return self.candidate - self.incumbent

    @property
    def ratio(self) -> float | None:
        """Candidate over incumbent where both are positive."""
        if self.incumbent > 0 and self.candidate > 0:
            return self.candidate / self.incumbent
        return None

    def text(self) -> str:
        """``key a vs b (+x %)`` for people."""
        return (
            f"{self.key} {fmt(self.candidate, self.unit)} vs "
            f"{fmt(self.incumbent, self.unit)}{_pct(self.candidate, self.incumbent)}"
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "parameter": self.key,
            "unit": self.unit,
            "worse": self.worse,
            "incumbent": _float(self.incumbent),
            "candidate": _float(self.candidate),
            "side_incumbent": self.side_incumbent,
            "side_candidate": self.side_candidate,
            "change": self.change,
            "delta": _float(self.delta),
            "ratio": _float(self.ratio),
            "note": self.note,
            "at_current_a": _float(self.at_current_a),
        }


@dataclass(frozen=True)
class CircuitCheck:
    """One in-circuit figure used to compare parts in a design.

    ``ok_rule``: how the figure passes (``">=0"``, ``">=1"``, ``"<=1"``, ``"bool"`` for a flag
    held in ``ok`` only, ``""`` for a figure that is only compared). ``fail_severity``: what a
    failure the incumbent does not have means for a substitute. ``worse_severity``: what a worse
    (but passing) figure means.
    """

    name: str
    unit: str
    higher_is_better: bool
    ok_rule: str
    fail_severity: Severity
    worse_severity: Severity
    description: str

    @property
    def label(self) -> str:
        """Short name for messages."""
        return _CHECK_LABEL.get(self.name, self.name)


_CHECK_LABEL: dict[str, str] = {
    "supply_range": "room to the supply-range limits",
    "temperature": "room to the rated temperature range",
    "input_cm_low": "input common-mode margin at the bottom",
    "input_cm_high": "input common-mode margin at the top",
    "swing_high": "swing margin to V+",
    "swing_low": "swing margin to V-",
    "source_current": "source-current margin",
    "sink_current": "sink-current margin",
    "slew": "slew-rate margin (ratio to what the signal needs)",
    "stability": "stability margin (noise gain over the minimum stable gain)",
    "junction_temp": "junction-temperature margin",
    "cap_load": "load capacitance over the stated limit",
    "conduction": "least source-device current",
    "glitch": "crossover glitch (closed form)",
    "thd_estimate": "THD_F estimate of the output stage (closed form)",
    "closed_loop_bw": "closed-loop bandwidth",
    "supply_current": "supply current in the design",
}

CIRCUIT_CHECKS: tuple[CircuitCheck, ...] = (
    CircuitCheck("supply_range", "V", True, ">=0", "fail", "info",
                 "Room between the design's total supply and the part's supply range"),
    CircuitCheck("temperature", "degC", True, ">=0", "fail", "info",
                 "Room between the design's ambient range and the part's rated range"),
    CircuitCheck("input_cm_low", "V", True, ">=0", "fail", "circuit-ok",
                 "Lowest input level above the bottom of the input common-mode range"),
    CircuitCheck("input_cm_high", "V", True, ">=0", "fail", "circuit-ok",
                 "Highest input level below the top of the input common-mode range"),
    CircuitCheck("swing_high", "V", True, ">=0", "fail", "circuit-ok",
                 "Swing margin to V+ at the source current flowing then"),
    CircuitCheck("swing_low", "V", True, ">=0", "fail", "circuit-ok",
                 "Swing margin to V- at the sink current flowing then"),
    CircuitCheck("source_current", "A", True, ">=0", "fail", "circuit-ok",
                 "Source current limit minus the peak source current"),
    CircuitCheck("sink_current", "A", True, ">=0", "fail", "circuit-ok",
                 "Sink current limit minus the peak sink current"),
    CircuitCheck("slew", "1", True, ">=1", "fail", "circuit-ok",
                 "Slew rate (slower edge) over the 2 pi f A the signal needs"),
    CircuitCheck("stability", "V/V", True, ">=0", "fail", "circuit-ok",
                 "Noise gain minus the part's minimum stable gain"),
    CircuitCheck("junction_temp", "degC", True, ">=0", "fail", "circuit-ok",
                 "Junction temperature margin at the highest ambient"),
    CircuitCheck("cap_load", "1", False, "<=1", "review", "circuit-ok",
                 "Load capacitance over the part's stated capacitive-load limit"),
    CircuitCheck("conduction", "A", True, "bool", "fail", "circuit-ok",
                 "Least source-device current over the period; fails where the stage changes "
                 "conduction mode (class A / B)"),
    CircuitCheck("glitch", "V", False, "", "review", "review",
                 "Crossover glitch (closed-form estimate)"),
    CircuitCheck("thd_estimate", "1", False, "", "review", "review",
                 "THD_F estimate of the output stage (closed form)"),
    CircuitCheck("closed_loop_bw", "Hz", True, "", "circuit-ok", "circuit-ok",
                 "Closed-loop bandwidth GBW / noise gain"),
    CircuitCheck("supply_current", "A", False, "", "circuit-ok", "circuit-ok",
                 "Mean supply current of the package in the design"),
)  # fmt: skip
CIRCUIT_CHECK_BY_NAME: dict[str, CircuitCheck] = {c.name: c for c in CIRCUIT_CHECKS}

#: THD_F (ratio) below which a candidate's higher estimate is not a behaviour change worth a
#: review: 0.01 %, -80 dB, below what a listener or a 12-bit converter resolves (common
#: practice). Above it every increase is reported.
THD_NEGLIGIBLE = 1e-4


@dataclass(frozen=True)
class CircuitResult:
    """In-circuit figures of P parts in one design (arrays of shape (P,)), on one basis."""

    design: Design
    basis: Basis
    stage: StageParams
    closed: ClosedForm
    value: dict[str, np.ndarray]
    ok: dict[str, np.ndarray]  #: bool arrays for checks with a pass rule
    known: dict[str, np.ndarray]  #: False where the catalogue lacks what the check needs
    conduction_allowed: bool  #: the design's requirements accept a change of mode
    _fix: dict[int, tuple[float, str]] = field(default_factory=dict, repr=False)

    def fix(self, k: int) -> tuple[float, str]:
        """Part ``k``'s recommended fix resistor (ohm, NaN: none) and rail, sized on demand
        (:func:`partsel.physics.fix.size_fix`, default E24 series and margin)."""
        if k not in self._fix:
            fx = size_fix(self.stage.take([k]), self.design)
            rec = str(fx.recommended[0])
            r = math.nan
            if rec == "negative":
                r = float(fx.negative.r_ohm[0])
            elif rec == "positive":
                r = float(fx.positive.r_ohm[0])
            self._fix[k] = (r, rec)
        return self._fix[k]

    def failing(self, k: int) -> list[str]:
        """Names of the checks part ``k`` fails (unknown values count as failing)."""
        return [c.name for c in CIRCUIT_CHECKS if c.name in self.ok and not self.ok[c.name][k]]

    def rows(self, k: int) -> list[dict[str, Any]]:
        """Part ``k``'s figures as JSON-friendly rows ``{check, unit, value, ok}``."""
        out = []
        for c in CIRCUIT_CHECKS:
            ok = self.ok.get(c.name)
            out.append(
                {
                    "check": c.name,
                    "unit": c.unit,
                    "value": _float(self.value[c.name][k]),
                    "ok": None if ok is None else bool(ok[k]),
                }
            )
        return out

    def message(self, name: str, k: int) -> str:
        """Why part ``k`` fails check ``name``, for people."""
        v = float(self.value[name][k])
        cf, st, d = self.closed, self.stage, self.design
        if not bool(self.known[name][k]):
            return f"{name}: the catalogue lacks the values this check needs"
        if name == "supply_range":
            return (
                f"supply range {fmt(st.supply_min_v[k], 'V')} .. {fmt(st.supply_max_v[k], 'V')}"
                f" does not include the design's {fmt(d.supply.total_v, 'V')}"
            )
        if name == "temperature":
            return (
                f"rated ambient range does not cover the design's "
                f"{d.t_ambient_min_c:g} .. {d.t_ambient_max_c:g} degC (short by {-v:.3g} K)"
            )
        if name in ("input_cm_low", "input_cm_high"):
            lo = d.supply.v_neg_v + float(st.cm_headroom_neg_v[k])
            hi = d.supply.v_pos_v - float(st.cm_headroom_pos_v[k])
            bias = _bias_point_v(d)
            where = "bias point" if not (lo <= bias <= hi) else "input swing"
            return (
                f"input common-mode range {fmt(lo, 'V')} .. {fmt(hi, 'V')} does not cover the "
                f"{where} (bias {fmt(bias, 'V')}; short by {fmt(-v, 'V')})"
            )
        if name == "swing_high":
            return f"output cannot reach the peak: short by {fmt(-v, 'V')} of headroom to V+"
        if name == "swing_low":
            return (
                f"output cannot reach the trough while sinking "
                f"{fmt(float(cf.sink_peak_a[k]), 'A')}: short by {fmt(-v, 'V')} to V-"
            )
        if name == "source_current":
            return (
                f"peak source current {fmt(float(cf.source_peak_a[k]), 'A')} exceeds the "
                f"limit {fmt(float(st.source_limit_a[k]), 'A')}"
            )
        if name == "sink_current":
            return (
                f"peak sink current {fmt(float(cf.sink_peak_a[k]), 'A')} exceeds the limit "
                f"{fmt(float(st.sink_limit_a[k]), 'A')}"
            )
        if name == "slew":
            return (
                f"slew-limited: has {v:.3g}x the {fmt(cf.slew_required_v_per_s, 'V/s')} the "
                "signal needs (full-power bandwidth SR / (2 pi A))"
            )
        if name == "stability":
            return (
                f"not stable at the design's noise gain {d.noise_gain:g} (minimum stable gain "
                f"{float(st.min_stable_gain[k]):g})"
            )
        if name == "junction_temp":
            return f"junction temperature {float(cf.t_junction_c[k]):.1f} degC exceeds its maximum"
        if name == "cap_load":
            return f"load capacitance is {v:.3g}x the part's stated limit"
        if name == "conduction":
            text = (
                f"changes conduction mode: the load sinks up to "
                f"{fmt(-float(cf.i_out_min_a[k]), 'A')} but the stage current is "
                f"{fmt(float(st.stage_current_a[k]), 'A')}; glitch about "
                f"{fmt(float(cf.glitch_v[k]), 'V')} (closed form)"
            )
            r, rail = self.fix(k)
            if math.isfinite(r):
                text += f"; a {fmt(r, 'ohm')} resistor to the {rail} rail keeps it in one mode"
            return text
        return f"{name} {fmt(v, CIRCUIT_CHECK_BY_NAME[name].unit)}"


def _bias_point_v(design: Design) -> float:
    """DC level at the non-inverting input, V (the bias point the input range must cover)."""
    if design.closed_loop.configuration == "non-inverting":
        return design.signal.bias_v
    return design.reference_v


def evaluate_circuit(
    frame: pd.DataFrame, design: Design, basis: Basis = "worst-case"
) -> CircuitResult:
    """Every part of ``frame`` in ``design``: one call of predict_closed_form for all parts
    (the fix resistor named in a conduction message is sized on demand, per part).

    The figures are those of :data:`CIRCUIT_CHECKS`; see the module docstring of
    :mod:`partsel.physics.analysis` for the physics (design notes sections 3 to 6).
    """
    basis = _check_basis(basis)
    stage = StageParams.from_columns(frame, basis)
    cf = predict_closed_form(stage, design)
    p = stage.n
    total = design.supply.total_v
    t_min = _num(frame, "temp_min_c")
    t_max = _num(frame, "temp_max_c")
    with np.errstate(invalid="ignore"):
        val: dict[str, np.ndarray] = {
            "supply_range": np.minimum(total - stage.supply_min_v, stage.supply_max_v - total),
            "temperature": np.minimum(
                design.t_ambient_min_c - t_min, t_max - design.t_ambient_max_c
            ),
            "input_cm_low": np.asarray(cf.cm_low_margin_v, dtype=float),
            "input_cm_high": np.asarray(cf.cm_high_margin_v, dtype=float),
            "swing_high": cf.swing_pos_margin_v,
            "swing_low": cf.swing_neg_margin_v,
            "source_current": stage.source_limit_a - cf.source_peak_a,
            "sink_current": stage.sink_limit_a - cf.sink_peak_a,
            "slew": cf.slew_margin_ratio,
            "stability": design.noise_gain - stage.min_stable_gain,
            "junction_temp": cf.t_junction_margin_c,
            "cap_load": np.asarray(cf.cap_load_ratio, dtype=float),
            "conduction": cf.min_source_a,
            "glitch": cf.glitch_v,
            "thd_estimate": cf.thd_estimate,
            "closed_loop_bw": cf.closed_loop_bw_hz,
            "supply_current": cf.supply_current_a,
        }
    val = {k: np.broadcast_to(np.asarray(v, dtype=float), (p,)).copy() for k, v in val.items()}
    known = {k: ~np.isnan(v) for k, v in val.items()}
    # The junction check needs theta_JA; without it the part is not judged on it (NaN margin).
    ok: dict[str, np.ndarray] = {}
    with np.errstate(invalid="ignore"):
        for c in CIRCUIT_CHECKS:
            v = val[c.name]
            if c.ok_rule == ">=0":
                ok[c.name] = v >= -1e-12
            elif c.ok_rule == ">=1":
                ok[c.name] = v >= 1.0 - 1e-12
            elif c.ok_rule == "<=1":
                ok[c.name] = ~(v > 1.0)  # no stated limit: not judged
                known[c.name] = np.ones(p, dtype=bool)
            elif c.ok_rule == "bool":
                ok[c.name] = ~np.asarray(cf.handover, dtype=bool)
    ok["supply_range"] = ok["supply_range"] & np.asarray(cf.supply_in_range, dtype=bool)
    ok["stability"] = np.asarray(cf.stable_at_gain, dtype=bool)
    # Junction temperature unknown (no theta_JA): not judged rather than failed.
    known["junction_temp"] = np.ones(p, dtype=bool)
    ok["junction_temp"] = ~(val["junction_temp"] < 0)
    allowed = _requirements(design).get("conduction") == "allowed"
    return CircuitResult(design, basis, stage, cf, val, ok, known, allowed)


# ---- vetting -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class PartSummary:
    """Identity, form and fit of one part, as plain data."""

    part_number: str
    maker: str
    lifecycle: str
    topology: str
    channels: int
    packages: tuple[tuple[str, str], ...]
    supply_min_v: float
    supply_max_v: float
    temp_min_c: float
    temp_max_c: float
    price: float
    currency: str

    def to_dict(self) -> dict[str, Any]:
        return {
            "part_number": self.part_number,
            "maker": self.maker,
            "lifecycle": self.lifecycle,
            "topology": self.topology,
            "channels": self.channels,
            "packages": [{"code": c, "pinout": p} for c, p in self.packages],
            "supply_min_v": _float(self.supply_min_v),
            "supply_max_v": _float(self.supply_max_v),
            "temp_min_c": _float(self.temp_min_c),
            "temp_max_c": _float(self.temp_max_c),
            "price": _float(self.price),
            "currency": self.currency,
        }


def _summaries(frame: pd.DataFrame) -> list[PartSummary]:
    cols = {
        n: _txt(frame, n) for n in ("part_number", "maker", "lifecycle", "topology", "packages")
    }
    cur = _txt(frame, "currency")
    nums = {
        n: _num(frame, n)
        for n in ("channels", "supply_min_v", "supply_max_v", "temp_min_c", "temp_max_c", "price")
    }
    out = []
    for k in range(len(frame)):
        ch = nums["channels"][k]
        out.append(
            PartSummary(
                part_number=cols["part_number"][k],
                maker=cols["maker"][k],
                lifecycle=cols["lifecycle"][k],
                topology=cols["topology"][k],
                channels=int(ch) if math.isfinite(ch) else 0,
                packages=parse_packages(cols["packages"][k]),
                supply_min_v=float(nums["supply_min_v"][k]),
                supply_max_v=float(nums["supply_max_v"][k]),
                temp_min_c=float(nums["temp_min_c"][k]),
                temp_max_c=float(nums["temp_max_c"][k]),
                price=float(nums["price"][k]),
                currency=cur[k],
            )
        )
    return out


@dataclass(frozen=True)
class CircuitComparison:
    """One in-circuit figure of a candidate against the incumbent's."""

    check: str
    unit: str
    incumbent: float
    candidate: float
    incumbent_ok: bool | None
    candidate_ok: bool | None
    change: Change

    def to_dict(self) -> dict[str, Any]:
        return {
            "check": self.check,
            "unit": self.unit,
            "incumbent": _float(self.incumbent),
            "candidate": _float(self.candidate),
            "incumbent_ok": self.incumbent_ok,
            "candidate_ok": self.candidate_ok,
            "change": self.change,
        }


@dataclass(frozen=True)
class Candidate:
    """One candidate substitute with its verdict and the comparisons behind it."""

    part: PartSummary
    verdict: Verdict
    reasons: tuple[Reason, ...]
    function: tuple[ParamComparison, ...]
    circuit: tuple[CircuitComparison, ...] | None  #: None without a design
    common_packages: tuple[str, ...]  #: package codes shared with the same pinout
    circuit_pass: bool | None  #: every in-circuit check passes (None without a design)

    @property
    def part_number(self) -> str:
        return self.part.part_number

    def counts(self) -> dict[str, int]:
        """How many parameters are better, equal, worse, unknown."""
        out = {"better": 0, "equal": 0, "worse": 0, "unknown": 0}
        for c in self.function:
            if c.change in out:
                out[c.change] += 1
        return out

    def sort_key(self) -> tuple[Any, ...]:
        """Order of fitness: verdict; failures; form, fit and behaviour questions plus worse
        or unknown parameters; other questions; better parameters; price; part number."""
        n = self.counts()
        fails = sum(r.severity == "fail" for r in self.reasons)
        heavy = sum(r.severity == "review" and r.aspect != "function" for r in self.reasons)
        light = sum(r.severity == "review" and r.aspect == "function" for r in self.reasons)
        price = self.part.price if math.isfinite(self.part.price) else math.inf
        return (
            VERDICTS.index(self.verdict),
            fails,
            heavy + n["worse"] + n["unknown"],
            light,
            -n["better"],
            price,
            self.part_number.casefold(),
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            **self.part.to_dict(),
            "verdict": self.verdict,
            "reasons": [r.to_dict() for r in self.reasons],
            "common_packages": list(self.common_packages),
            "counts": self.counts(),
            "function": [c.to_dict() for c in self.function],
            "circuit": None if self.circuit is None else [c.to_dict() for c in self.circuit],
            "circuit_pass": self.circuit_pass,
        }


@dataclass(frozen=True)
class Vetting:
    """Result of :func:`vet_substitutes`: the candidates, best first."""

    incumbent: PartSummary
    basis: Basis
    design_name: str | None
    package: str | None
    candidates: tuple[Candidate, ...]
    incumbent_circuit: tuple[dict[str, Any], ...] | None  #: the incumbent's in-circuit figures
    considered: int  #: how many catalogue parts were examined

    def best(self, verdicts: Sequence[str] = ("drop-in", "fits-this-circuit")) -> list[Candidate]:
        """The candidates whose verdict is one of ``verdicts``, best first."""
        return [c for c in self.candidates if c.verdict in verdicts]

    def to_frame(self) -> pd.DataFrame:
        """One row per candidate: rank, part number, verdict, counts, reasons (joined)."""
        rows = []
        for k, c in enumerate(self.candidates, 1):
            n = c.counts()
            rows.append(
                {
                    "rank": k,
                    "part_number": c.part_number,
                    "maker": c.part.maker,
                    "verdict": c.verdict,
                    "lifecycle": c.part.lifecycle,
                    "topology": c.part.topology,
                    "price": c.part.price,
                    "better": n["better"],
                    "equal": n["equal"],
                    "worse": n["worse"],
                    "unknown": n["unknown"],
                    "circuit_pass": c.circuit_pass,
                    "reasons": " | ".join(r.message for r in c.reasons if r.severity != "info"),
                }
            )
        cols = [
            "rank",
            "part_number",
            "maker",
            "verdict",
            "lifecycle",
            "topology",
            "price",
            "better",
            "equal",
            "worse",
            "unknown",
            "circuit_pass",
            "reasons",
        ]
        return pd.DataFrame(rows, columns=cols)

    def to_dict(self) -> dict[str, Any]:
        """The documented JSON form (``data-schema/substitutes.schema.json``)."""
        return {
            "format": "partsel.substitutes/1",
            "incumbent": self.incumbent.to_dict(),
            "basis": self.basis,
            "design": self.design_name,
            "package": self.package,
            "considered": self.considered,
            "incumbent_circuit": None
            if self.incumbent_circuit is None
            else list(self.incumbent_circuit),
            "candidates": [{"rank": k, **c.to_dict()} for k, c in enumerate(self.candidates, 1)],
            "caution": CAUTION,
        }


def _form_pool(frame: pd.DataFrame, inc: int) -> np.ndarray:
    """Rows that could fit the incumbent's footprint: same channels, a shared code:pinout."""
    ch = _num(frame, "channels")
    texts = np.array(_txt(frame, "packages"), dtype=object)
    uniq, inverse = np.unique(texts.astype(str), return_inverse=True)
    mine = {(c.upper(), p.upper()) for c, p in parse_packages(str(texts[inc]))}
    shares_u = np.array(
        [bool(mine & {(c.upper(), p.upper()) for c, p in parse_packages(str(u))}) for u in uniq],
        dtype=bool,
    )
    pool = (ch == ch[inc]) & shares_u[inverse]
    pool[inc] = False
    return np.flatnonzero(pool)


@dataclass
class _Rule:
    """One reason, evaluated for every part at once: its severity per part ('' where it does not
    apply) and a function that words it for part ``j``."""

    aspect: Aspect
    code: str
    severity: np.ndarray  #: (P,) object array of severities or ''
    message: Callable[[int], str]


@dataclass
class _ParamArrays:
    """One parameter compared for every part against part 0 (arrays of shape (P,))."""

    key: str
    unit: str
    worse: Literal["low", "high"]
    inc: np.ndarray
    cand: np.ndarray
    side_inc: np.ndarray
    side_cand: np.ndarray
    change: np.ndarray
    note: np.ndarray
    at_current_a: np.ndarray | None = None

    def comparison(self, j: int) -> ParamComparison:
        at = None if self.at_current_a is None else float(self.at_current_a[j])
        return ParamComparison(
            self.key,
            self.unit,
            self.worse,
            float(self.inc[j]),
            float(self.cand[j]),
            str(self.side_inc[j]),
            str(self.side_cand[j]),
            self.change[j],
            str(self.note[j]),
            at,
        )


def _pair_all(s: _Sides, worst: str, basis: Basis) -> tuple[np.ndarray, ...]:
    """Part 0's and every part's value on a common side where possible (see :func:`_pair_all`)."""
    p = s.vtyp.shape[0]
    other = "max" if worst == "min" else "min"
    first, second = (worst, "typ") if basis == "worst-case" else ("typ", worst)
    a, b = np.full(p, np.nan), np.full(p, np.nan)
    sa, sb = np.full(p, "none", dtype=object), np.full(p, "none", dtype=object)
    note = np.full(p, "", dtype=object)
    done = np.zeros(p, dtype=bool)
    for side in (first, second):
        ai, bc = float(s.side(side)[0]), s.side(side)
        ok = ~done & ~np.isnan(bc) & (not math.isnan(ai))
        a[ok], b[ok], sa[ok], sb[ok] = ai, bc[ok], side, side
        if basis == "worst-case" and side == "typ":
            inc_has = not math.isnan(float(s.side(worst)[0]))
            cand_has = ~np.isnan(s.side(worst))
            note[ok] = np.where(inc_has & ~cand_has[ok], "no-guarantee", "typical")
        done |= ok
    rest = ~done
    if rest.any():
        order = (first, second, other)
        ai, sai = _resolve_one(s, 0, order)
        bv, sbv = np.full(p, np.nan), np.full(p, "none", dtype=object)
        for side in order:
            arr = s.side(side)
            take = np.isnan(bv) & ~np.isnan(arr)
            bv[take], sbv[take] = arr[take], side
        a[rest], sa[rest], b[rest], sb[rest], note[rest] = ai, sai, bv[rest], sbv[rest], "mixed"
    return a, sa, b, sb, note


def _change_all(a: np.ndarray, b: np.ndarray, worse: str) -> np.ndarray:
    """better / equal / worse / unknown / n/a of ``b`` against ``a``, direction-aware."""
    out = np.full(a.shape, "better", dtype=object)
    with np.errstate(invalid="ignore"):
        eq = np.abs(b - a) <= EQUAL_RTOL * np.maximum(np.abs(a), np.abs(b)) + 1e-18
        w = b < a if worse == "low" else b > a
    out[w] = "worse"
    out[eq] = "equal"
    out[np.isnan(b)] = "unknown"
    out[np.isnan(a)] = "n/a"
    return out


def _circuit_change_all(c: CircuitCheck, inc: np.ndarray, cand: np.ndarray) -> np.ndarray:
    """better / equal / worse of in-circuit figures, with the tolerances of CIRCUIT_RTOL/ATOL."""
    out = np.full(cand.shape, "equal", dtype=object)
    with np.errstate(invalid="ignore"):
        fin = np.isfinite(inc)
        tol = np.maximum(
            np.where(fin, CIRCUIT_RTOL * np.abs(inc), 0.0), CIRCUIT_ATOL.get(c.unit, 0)
        )
        diff = cand - inc if c.higher_is_better else inc - cand
        out[diff < -tol] = "worse"
        out[diff > tol] = "better"
        same_inf = np.isinf(inc) & np.isinf(cand) & (np.sign(inc) == np.sign(cand))
    out[same_inf] = "equal"
    out[np.isnan(inc)] = "n/a"
    out[np.isnan(cand)] = "unknown"
    out[np.isnan(inc) & np.isnan(cand)] = "n/a"
    return out


class _Vetting:
    """Every vetting rule for the candidates (rows 1.. of ``sub``) against row 0, as arrays.

    The verdict of every candidate follows from the severities alone; messages, parameter and
    in-circuit comparisons are built only for the candidates reported (:meth:`candidate`).
    """

    def __init__(
        self,
        sub: pd.DataFrame,
        summaries: list[PartSummary],
        basis: Basis,
        design: Design | None,
        package: str | None,
        circ: CircuitResult | None,
        like_circ: CircuitResult | None,
        stage: StageParams,
    ) -> None:
        self.sub, self.s, self.basis, self.design = sub, summaries, basis, design
        self.package, self.circ, self.like, self.stage = package, circ, like_circ, stage
        self.cols = _Cols(sub)
        self.p = len(sub)
        self.rules: list[_Rule] = []
        self.params: list[_ParamArrays] = []
        self.common: list[tuple[str, ...]] = [()] * self.p
        self._form()
        self._fit()
        self._function()
        self._behaviour()
        self.circuit_cmp: list[tuple[CircuitCheck, np.ndarray, np.ndarray, Any, Any, Any]] = []
        self.circuit_pass: np.ndarray | None = None
        if circ is not None and like_circ is not None:
            self._circuit()

    # ---- helpers -----------------------------------------------------------------------------
    def add(
        self,
        aspect: Aspect,
        code: str,
        mask: np.ndarray,
        severity: Severity | np.ndarray,
        message: Callable[[int], str],
    ) -> None:
        sev = np.where(mask, severity, "").astype(object)
        sev[0] = ""
        if (sev != "").any():
            self.rules.append(_Rule(aspect, code, sev, message))

    def _str(self, attr: str) -> np.ndarray:
        return np.array([getattr(x, attr) for x in self.s], dtype=object)

    def _numattr(self, attr: str) -> np.ndarray:
        return np.array([getattr(x, attr) for x in self.s], dtype=float)

    # ---- form ----------------------------------------------------------------------------------
    def _form(self) -> None:
        inc, s, package = self.s[0], self.s, self.package
        ch = np.array([x.channels for x in s])
        self.add(
            "form",
            "channels",
            ch != inc.channels,
            "fail",
            lambda j: f"{s[j].channels} channel(s) per package; the incumbent has {inc.channels}",
        )
        inc_pk = {(c.upper(), p.upper()): c for c, p in inc.packages}
        want = {k for k in inc_pk if package is not None and k[0] == package.upper()}
        status = np.zeros(self.p, dtype=int)  # 0 ok, 1 partial (review), 2 no fit
        for j, x in enumerate(s):
            cand = {(c.upper(), p.upper()) for c, p in x.packages}
            self.common[j] = tuple(inc_pk[k] for k in inc_pk if k in cand)
            if package is not None:
                status[j] = 0 if want & cand else 2
            elif not self.common[j]:
                status[j] = 2
            elif len(self.common[j]) < len(inc_pk):
                status[j] = 1

        def conflicts(j: int) -> list[str]:
            codes = {c.upper(): p for c, p in s[j].packages}
            pk = {(c.upper(), p.upper()) for c, p in s[j].packages}
            return [
                f"{c} ({codes[c.upper()]} instead of {p})"
                for c, p in inc.packages
                if c.upper() in codes and (c.upper(), p.upper()) not in pk
            ]

        def no_fit(j: int) -> str:
            other = conflicts(j)
            if package is not None:
                msg = f"not offered in {package} with the incumbent's pinout"
                return msg + (f"; same package, other pinout: {', '.join(other)}" if other else "")
            msg = "no package with the incumbent's code and pinout"
            if other:
                msg += (
                    f"; same package, other pinout (will not fit the footprint): {', '.join(other)}"
                )
            return msg

        def partial(j: int) -> str:
            missing = [c for k, c in inc_pk.items() if c not in self.common[j]]
            return (
                f"fits the {', '.join(self.common[j])} footprint only; the incumbent also "
                f"comes in {', '.join(missing)}: give the package in use to decide"
            )

        self.add("form", "package", status == 2, "fail", no_fit)
        self.add("form", "package-partial", status == 1, "review", partial)

    # ---- fit -----------------------------------------------------------------------------------
    def _fit(self) -> None:
        inc, s, d, circ = self.s[0], self.s, self.design, self.circ
        lc = self._str("lifecycle")
        self.add("fit", "lifecycle", lc == Lifecycle.OBSOLETE.value, "fail", lambda j: "obsolete")
        self.add(
            "fit",
            "lifecycle",
            lc == Lifecycle.NOT_FOR_NEW_DESIGNS.value,
            "review",
            lambda j: "not for new designs: a lifecycle risk of its own",
        )
        known = {
            Lifecycle.ACTIVE.value,
            Lifecycle.OBSOLETE.value,
            Lifecycle.NOT_FOR_NEW_DESIGNS.value,
        }
        self.add(
            "fit",
            "lifecycle",
            np.array([x not in known for x in lc]),
            "review",
            lambda j: f"lifecycle {s[j].lifecycle or 'unknown'}",
        )
        smin, smax = self._numattr("supply_min_v"), self._numattr("supply_max_v")
        tmin, tmax = self._numattr("temp_min_c"), self._numattr("temp_max_c")
        with np.errstate(invalid="ignore"):
            cover_s = (smin <= inc.supply_min_v) & (smax >= inc.supply_max_v)
            cover_t = (tmin <= inc.temp_min_c) & (tmax >= inc.temp_max_c)

        def rng_s(x: PartSummary) -> str:
            return f"{fmt(x.supply_min_v, 'V')} .. {fmt(x.supply_max_v, 'V')}"

        def rng_t(x: PartSummary) -> str:
            return f"{x.temp_min_c:g} .. {x.temp_max_c:g} degC"

        if d is not None and circ is not None:
            self.add(
                "fit",
                "supply-range",
                ~cover_s & circ.ok["supply_range"],
                "circuit-ok",
                lambda j: (
                    f"supply range {rng_s(s[j])} is narrower than the incumbent's "
                    f"{rng_s(inc)} but covers the design's {fmt(d.supply.total_v, 'V')}"
                ),
            )
            self.add(
                "fit",
                "temperature",
                ~cover_t & circ.ok["temperature"],
                "circuit-ok",
                lambda j: (
                    f"rated {rng_t(s[j])}, narrower than the incumbent's "
                    f"{rng_t(inc)}, but covers the design's {d.t_ambient_min_c:g} .. "
                    f"{d.t_ambient_max_c:g} degC"
                ),
            )
        else:
            self.add(
                "fit",
                "supply-range",
                ~cover_s,
                "review",
                lambda j: f"supply range {rng_s(s[j])} does not cover the incumbent's {rng_s(inc)}",
            )
            self.add(
                "fit",
                "temperature",
                ~cover_t,
                "review",
                lambda j: f"rated {rng_t(s[j])}; does not cover the incumbent's {rng_t(inc)}",
            )

    # ---- function ------------------------------------------------------------------------------
    def _function(self) -> None:
        has_design = self.design is not None
        limits = _requirements(self.design).get("limits") or {}
        topo = self._str("topology")
        other_topo = topo != self.s[0].topology
        typical = np.zeros((self.p, 0), dtype=bool)
        typical_keys: list[str] = []
        for pdef in PARAMS:
            a, sa, b, sb, note = _pair_all(self.cols.sides(pdef.key), pdef.worst_side, self.basis)
            change = _change_all(a, b, pdef.worse)
            if pdef.key == "stage_current":
                # pull-down, sink bias and quiescent current are different things
                mask = other_topo & (change != "unknown") & (change != "n/a")
                change[mask], note[mask] = "n/a", "other-topology"
            pa = _ParamArrays(
                pdef.key,
                _DIM_UNIT.get(pdef.dimension, ""),
                pdef.worse,
                np.broadcast_to(a, (self.p,)),
                b,
                sa,
                sb,
                change,
                note,
            )
            self.params.append(pa)
            typical = np.column_stack([typical, note == "typical"])
            typical_keys.append(pdef.key)
            self._param_rules(pa, has_design, limits)
        for rail, label in (("swing_pos", "V+"), ("swing_neg", "V-")):
            pa = self._swing(rail)
            if pa is None:
                continue
            self.params.append(pa)
            sev: Severity = "circuit-ok" if has_design else "review"
            self.add(
                "function",
                f"worse-{rail}",
                pa.change == "worse",
                sev,
                lambda j, pa=pa, label=label: (
                    f"needs {fmt(pa.cand[j] - pa.inc[j], 'V')} "
                    f"more headroom to {label} at {fmt(float(pa.at_current_a[j]), 'A')} "  # type: ignore[index]
                    f"({fmt(pa.cand[j], 'V')} vs {fmt(pa.inc[j], 'V')})"
                ),
            )
            self.add(
                "function",
                f"unknown-{rail}",
                pa.change == "unknown",
                "review",
                lambda j, label=label: f"no swing curve to {label}",
            )
        # theta_JA is per package (the frame keeps the largest), so it is not compared here;
        # the junction check of the design uses it.
        jm = self.cols.num("junction_max_c")
        jm = np.where(np.isnan(jm), 150.0, jm)
        pa = _ParamArrays(
            "junction_max_c",
            "degC",
            "low",
            np.full(self.p, jm[0]),
            jm,
            np.full(self.p, "value", dtype=object),
            np.full(self.p, "value", dtype=object),
            _change_all(np.full(self.p, jm[0]), jm, "low"),
            np.full(self.p, "", dtype=object),
        )
        self.params.append(pa)
        self.add(
            "function",
            "worse-junction_max_c",
            pa.change == "worse",
            "circuit-ok" if has_design else "review",
            lambda j, pa=pa: pa.comparison(j).text(),
        )
        self.add(
            "function",
            "typical-only",
            typical.any(axis=1),
            "info",
            lambda j: (
                "typical values compared (the incumbent gives no guaranteed value): "
                + ", ".join(k for k, t in zip(typical_keys, typical[j], strict=True) if t)
            ),
        )

    def _param_rules(self, pa: _ParamArrays, has_design: bool, limits: Mapping[str, Any]) -> None:
        """Reasons for a worse, unknown or unguaranteed parameter (module docstring rules)."""
        key = pa.key
        text = pa.comparison
        worse = pa.change == "worse"
        no_g = pa.note == "no-guarantee"
        self.add(
            "function",
            f"unknown-{key}",
            pa.change == "unknown",
            "review",
            lambda j: (
                f"{key}: no value in the catalogue (the incumbent's is "
                f"{fmt(float(pa.inc[j]), pa.unit)})"
            ),
        )
        self.add(
            "function",
            f"no-guarantee-{key}",
            no_g & (pa.change != "unknown") & ~worse,
            "review",
            lambda j: (
                f"{key}: no guaranteed value, the incumbent has one (typicals "
                f"compared: {text(j).text()})"
            ),
        )
        judged = key in _JUDGED_IN_CIRCUIT
        if not has_design or not judged:
            self.add(
                "function",
                f"worse-{key}",
                worse & no_g,
                "review",
                lambda j: (
                    f"worse {text(j).text()} (typicals: no guaranteed value, the incumbent has one)"
                ),
            )
            worse = worse & ~no_g
        if not has_design:
            self.add(
                "function", f"worse-{key}", worse, "review", lambda j: f"worse {text(j).text()}"
            )
            return
        if judged:
            self.add(
                "function",
                f"worse-{key}",
                worse,
                "circuit-ok",
                lambda j: f"worse {text(j).text()}; judged in the circuit",
            )
            return
        req = _REQUIREMENT_LIMIT.get(key)
        lim = limits.get(req) if req else None
        if isinstance(lim, int | float) and math.isfinite(float(lim)):
            within = ~(pa.cand > float(lim))
            self.add(
                "function",
                f"worse-{key}",
                worse & within,
                "circuit-ok",
                lambda j: (
                    f"worse {text(j).text()}; within the design's {req} {fmt(float(lim), pa.unit)}"
                ),
            )
            self.add(
                "function",
                f"worse-{key}",
                worse & ~within,
                "fail",
                lambda j: f"{text(j).text()} exceeds the design's {req} {fmt(float(lim), pa.unit)}",
            )
            return
        self.add(
            "function",
            f"worse-{key}",
            worse,
            "circuit-ok",
            lambda j: f"worse {text(j).text()}; the design sets no limit on it",
        )

    def _swing(self, rail: str) -> _ParamArrays | None:
        """Every part's headroom to ``rail`` at the incumbent's curve currents, worst point kept.

        Currents beyond a part's own source (sink) limit are left out: the curve says nothing
        there, and the limit is compared as a parameter of its own.
        """
        st = self.stage
        ii = st.swing_pos_i_a if rail == "swing_pos" else st.swing_neg_i_a
        vv = st.swing_pos_v if rail == "swing_pos" else st.swing_neg_v
        pts = [
            (float(ii[0, k]), float(vv[0, k]))
            for k in range(ii.shape[1])
            if not (math.isnan(ii[0, k]) or math.isnan(vv[0, k]))
        ]
        if not pts:
            return None
        p = self.p
        used = st.used.get(rail)
        side_c = (
            np.asarray(used, dtype=object) if used is not None else np.full(p, "typ", dtype=object)
        )
        side_i = np.full(p, side_c[0], dtype=object)
        fn = st.headroom_pos if rail == "swing_pos" else st.headroom_neg
        limit = st.source_limit_a if rail == "swing_pos" else st.sink_limit_a
        h = np.column_stack([fn(np.full(p, i_a)) for i_a, _ in pts])  # (P, K)
        cur = np.array([i_a for i_a, _ in pts])
        h_inc = np.array([v for _, v in pts])
        with np.errstate(invalid="ignore"):
            inside = ~(cur[None, :] > limit[:, None])
        diff = np.where(inside, h - h_inc[None, :], -np.inf)
        k = np.argmax(diff, axis=1)
        rows = np.arange(p)
        best = diff[rows, k]
        lo = np.min(np.where(inside, h - h_inc[None, :], np.inf), axis=1)
        tol = 1e-6
        change = np.where(best > tol, "worse", np.where(lo < -tol, "better", "equal")).astype(
            object
        )
        note = np.full(p, "", dtype=object)
        none_inside = ~inside.any(axis=1)
        no_curve = np.all(np.isnan(ii), axis=1)
        k = np.where(none_inside, 0, k)
        cand = h[rows, k]
        change[none_inside], note[none_inside] = "n/a", "beyond-limit"
        cand = np.where(none_inside, np.nan, cand)
        change[no_curve], side_c = "unknown", np.where(no_curve, "none", side_c)
        return _ParamArrays(rail, "V", "high", h_inc[k], cand, side_i, side_c, change, note, cur[k])

    # ---- behaviour -----------------------------------------------------------------------------
    def _behaviour(self) -> None:
        inc, s, d = self.s[0], self.s, self.design
        topo = self._str("topology")
        self.add(
            "behaviour",
            "topology",
            topo != inc.topology,
            "review",
            lambda j: (
                f"another output-stage topology: {s[j].topology} instead of "
                f"{inc.topology}; it is {_TOPOLOGY_TEXT.get(s[j].topology, s[j].topology)}. The "
                "output behaves differently even where its figures are better: check the "
                "circuit around it (a fix resistor or bias chosen for the incumbent's stage)"
            ),
        )
        g = self.cols.sides("gbw")
        gbw = np.where(np.isnan(g.vtyp), np.where(np.isnan(g.vmin), g.vmax, g.vmin), g.vtyp)
        c_load = d.load.c_load_f if d is not None else None
        if gbw[0] > 0 and (c_load is None or c_load > 0):
            where = (
                f"into the design's {fmt(c_load, 'F')} load capacitance"
                if c_load
                else "with any capacitive load (cable, ADC input, long trace)"
            )
            with np.errstate(invalid="ignore"):
                fast = gbw >= GBW_FLAG_RATIO * gbw[0]
            self.add(
                "behaviour",
                "gbw-cap-load",
                fast,
                "review",
                lambda j: (
                    f"gain-bandwidth {gbw[j] / gbw[0]:.3g}x the incumbent's {where}: "
                    "the faster loop has less phase margin against the load pole; check "
                    "stability and ringing"
                ),
            )
        msg = self.cols.num("min_stable_gain")
        msg = np.where(np.isnan(msg), 1.0, msg)
        higher = msg > msg[0] * (1 + EQUAL_RTOL)
        if d is not None and self.circ is not None:
            self.add(
                "behaviour",
                "min-stable-gain",
                higher & self.circ.ok["stability"],
                "circuit-ok",
                lambda j: (
                    f"stable only from a gain of {msg[j]:g} (incumbent "
                    f"{msg[0]:g}); the design's noise gain {d.noise_gain:g} is enough"
                ),
            )
            return
        self.add(
            "behaviour",
            "min-stable-gain",
            higher,
            "review",
            lambda j: (
                f"stable only from a noise gain of {msg[j]:g} (the incumbent from {msg[0]:g})"
            ),
        )
        order = ("max", "typ", "min") if self.basis == "worst-case" else ("typ", "max", "min")
        for key, rail in (("cm_headroom_neg", "V-"), ("cm_headroom_pos", "V+")):
            sd = self.cols.sides(key)
            b = np.full(self.p, np.nan)
            for side in order:
                b = np.where(np.isnan(b), sd.side(side), b)
            with np.errstate(invalid="ignore"):
                lost = (b[0] <= 0) & (b > 0)
            self.add(
                "behaviour",
                f"input-range-{key}",
                lost,
                "review",
                lambda j, b=b, rail=rail: (
                    f"input range no longer reaches {rail} (stops "
                    f"{fmt(b[j], 'V')} from it): a circuit biased near {rail} stops working"
                ),
            )

    # ---- in the circuit ------------------------------------------------------------------------
    def _circuit(self) -> None:
        """Each in-circuit check against the incumbent's.

        ``circ`` holds every part on its own values (what the candidate guarantees); ``like``
        the same parts with the candidates' guaranteed values dropped wherever the incumbent
        gives none, so that the two are compared like with like (see :func:`_like_with_like`).
        """
        circ, like = self.circ, self.like
        assert circ is not None and like is not None
        p = self.p
        passes = np.ones(p, dtype=bool)
        for c in CIRCUIT_CHECKS:
            vi = np.full(p, float(like.value[c.name][0]))
            vc = like.value[c.name]
            has_ok = c.name in circ.ok
            ok_i = bool(like.ok[c.name][0]) if has_ok else None
            ok_c = circ.ok[c.name] if has_ok else None
            ok_cl = like.ok[c.name] if has_ok else None
            change = _circuit_change_all(c, vi, vc)
            self.circuit_cmp.append((c, vi, vc, ok_i, ok_c, change))
            code = f"circuit-{c.name}"

            def msg(j: int, c: CircuitCheck = c) -> str:
                return circ.message(c.name, j)

            if ok_c is not None:
                passes &= ok_c
                fails = ~ok_c
                if c.name == "conduction" and circ.conduction_allowed:
                    # The design accepts a change of mode; glitch and THD are compared instead.
                    self.add(
                        "circuit",
                        code,
                        fails & bool(ok_i),
                        "review",
                        lambda j, m=msg: m(j) + " (the design allows it)",
                    )
                    continue
                if ok_i is not False:
                    self.add(
                        "circuit",
                        code,
                        fails & ok_cl,
                        "review",
                        lambda j, m=msg: (
                            f"{m(j)} on its guaranteed values; the incumbent "
                            "gives only typical values here, and on those both pass"
                        ),
                    )
                    self.add("circuit", code, fails & ~ok_cl, c.fail_severity, msg)
                    rest = ~fails
                else:
                    self.add(
                        "circuit", code, fails, "info", lambda j, m=msg: f"as the incumbent: {m(j)}"
                    )
                    self.add(
                        "circuit",
                        code,
                        ~fails,
                        "info",
                        lambda j, c=c: f"{c.label}: passes where the incumbent fails",
                    )
                    continue
            else:
                rest = np.ones(p, dtype=bool)
            if c.worse_severity == "info":
                continue
            worse = rest & (change == "worse")
            if c.name == "glitch":
                worse &= (vi > 0) | (vc > 0)
            elif c.name == "thd_estimate":
                worse &= np.maximum(vi, vc) > THD_NEGLIGIBLE
            self.add(
                "circuit",
                code,
                worse,
                c.worse_severity,
                lambda j, c=c, vc=vc, vi=vi: (
                    f"{c.label}: {fmt(float(vc[j]), c.unit)} vs "
                    f"{fmt(float(vi[j]), c.unit)} for the incumbent"
                ),
            )
        cf = circ.closed
        marg_i = bool(like.closed.marginal[0]) or bool(like.closed.handover[0])
        self.add(
            "circuit",
            "circuit-marginal",
            np.asarray(cf.marginal, dtype=bool) & (not marg_i),
            "review",
            lambda j: (
                "stays in source mode only barely: least source-device "
                f"current {fmt(float(cf.min_source_a[j]), 'A')} of a stage current of "
                f"{fmt(float(circ.stage.stage_current_a[j]), 'A')} (audible distortion near "
                "the handover level)"
            ),
        )
        self.circuit_pass = passes

    # ---- results -------------------------------------------------------------------------------
    def verdicts(self) -> tuple[np.ndarray, dict[str, np.ndarray]]:
        """Verdict index per part (into VERDICTS) and per-part counts for the ordering."""
        rank = {sev: k for k, sev in enumerate(SEVERITIES)}
        worst = np.full(self.p, len(SEVERITIES), dtype=int)
        n = {k: np.zeros(self.p, dtype=int) for k in ("fail", "heavy", "light")}
        for r in self.rules:
            code = np.select([r.severity == sev for sev in SEVERITIES], list(rank.values()), 4)
            worst = np.minimum(worst, code)
            n["fail"] += r.severity == "fail"
            is_review = r.severity == "review"
            n["heavy" if r.aspect != "function" else "light"] += is_review
        for key in ("better", "worse", "unknown"):
            n[key] = sum((pa.change == key).astype(int) for pa in self.params)
        verdict = np.select(
            [worst == 0, worst == 1, worst == 2], [3, 2, 1], default=0
        )  # fail, review, circuit-ok, else drop-in
        return verdict, n

    def candidate(self, j: int, verdict: Verdict) -> Candidate:
        order = {s: i for i, s in enumerate(SEVERITIES)}
        reasons = [
            Reason(r.aspect, r.severity[j], r.code, r.message(j))
            for r in self.rules
            if r.severity[j]
        ]
        reasons.sort(key=lambda r: order[r.severity])
        circuit = None
        if self.circuit_pass is not None:
            circuit = tuple(
                CircuitComparison(
                    c.name,
                    c.unit,
                    float(vi[j]),
                    float(vc[j]),
                    ok_i,
                    None if ok_c is None else bool(ok_c[j]),
                    change[j],
                )
                for c, vi, vc, ok_i, ok_c, change in self.circuit_cmp
            )
        return Candidate(
            self.s[j],
            verdict,
            tuple(reasons),
            tuple(pa.comparison(j) for pa in self.params),
            circuit,
            self.common[j],
            None if self.circuit_pass is None else bool(self.circuit_pass[j]),
        )


def _like_with_like(sub: pd.DataFrame, basis: Basis) -> pd.DataFrame:
    """``sub`` with the candidates' guaranteed values dropped where the incumbent (row 0) has
    none (worst-case basis only), so that both fall back to their typicals.

    An incumbent without a guaranteed minimum GBW, say, is otherwise judged on its typical
    while a candidate is judged on its guarantee: the candidate would look worse only because
    its datasheet says more.
    """
    if basis != "worst-case" or len(sub) < 2:
        return sub
    out = sub.copy()
    for pdef in PARAMS:
        col = f"{pdef.key}_{pdef.worst_side}"
        typ = f"{pdef.key}_typ"
        if col in out.columns and typ in out.columns and math.isnan(_num(out, col)[0]):
            vals = _num(out, col)
            has_typ = ~np.isnan(_num(out, typ))
            vals[1:] = np.where(has_typ[1:], np.nan, vals[1:])
            out[col] = vals
    for rail in ("swing_pos", "swing_neg"):
        cols = [c for c in out.columns if c.startswith(f"{rail}_v") and c.endswith("_max")]
        if cols and all(math.isnan(_num(out, c)[0]) for c in cols):
            for c in cols:
                typ = c[: -len("_max")] + "_typ"
                vals = _num(out, c)
                has_typ = ~np.isnan(_num(out, typ))
                vals[1:] = np.where(has_typ[1:], np.nan, vals[1:])
                out[c] = vals
    return out


def vet_substitutes(
    frame: pd.DataFrame,
    incumbent: str,
    design: Design | None = None,
    basis: Basis = "worst-case",
    *,
    candidates: Sequence[str] | None = None,
    package: str | None = None,
    include_unsuitable: bool = False,
    limit: int | None = None,
    passing_first: bool = False,
) -> Vetting:
    """Vet substitutes for ``incumbent`` (a part number in ``frame``), best first.

    Parameters
    ----------
    frame: the parts table (:func:`partsel.catalogue.parts_frame`).
    incumbent: part number to replace (case-insensitive).
    design: optional circuit: judges fit against its rails and ambient, and compares the
        in-circuit behaviour of every candidate with the incumbent's.
    basis: ``"worst-case"`` (guaranteed values; default) or ``"typical"``.
    candidates: part numbers to vet (default: every part with the incumbent's channel count and
        a package of the same code and pinout). Named candidates are always reported.
    package: the package code on the board (e.g. ``"SO-8"``); without it a candidate that
        fits only some of the incumbent's packages needs review.
    include_unsuitable: also list unsuitable candidates from the default pool.
    limit: at most this many candidates.
    passing_first: with a design, candidates that pass every in-circuit check come first
        (for a circuit the incumbent itself fails; the BOM check uses it).

    Every rule is evaluated for all candidates at once (arrays along the part axis); the
    reasons and comparisons are worded only for the candidates returned.

    Raises :class:`~partsel.errors.InputError` for an unknown part number, a package the
    incumbent does not come in, or an unknown basis.
    """
    basis = _check_basis(basis)
    inc = find_part(frame, incumbent)
    inc_summary = _summaries(frame.iloc[[inc]])[0]
    if package is not None and not any(
        c.upper() == package.strip().upper() for c, _ in inc_summary.packages
    ):
        offered = ", ".join(c for c, _ in inc_summary.packages) or "none"
        raise InputError(
            f"{inc_summary.part_number} does not come in {package!r} (offered: {offered})",
            pointer="/package",
        )
    package = package.strip() if package is not None else None
    if candidates is not None:
        rows = []
        for pn in candidates:
            k = find_part(frame, pn)
            if k != inc and k not in rows:
                rows.append(k)
        pool = np.array(rows, dtype=int)
        keep_unsuitable = True
    else:
        if include_unsuitable:
            pool = np.flatnonzero(np.arange(len(frame)) != inc)
        else:
            pool = _form_pool(frame, inc)
        keep_unsuitable = include_unsuitable
    sub = frame.iloc[np.concatenate([[inc], pool]).astype(int)].reset_index(drop=True)
    like = _like_with_like(sub, basis)
    stage = StageParams.from_columns(like, basis)
    circ = like_circ = None
    if design is not None:
        circ = evaluate_circuit(sub, design, basis)
        like_circ = evaluate_circuit(like, design, basis) if like is not sub else circ
    summaries = _summaries(sub)
    vet = _Vetting(sub, summaries, basis, design, package, circ, like_circ, stage)
    verdict, n = vet.verdicts()
    idx = np.arange(1, len(sub))
    if not keep_unsuitable:
        idx = idx[verdict[idx] != VERDICTS.index("unsuitable")]
    price = [x.price if math.isfinite(x.price) else math.inf for x in summaries]
    passing = vet.circuit_pass if passing_first else None

    def key(j: int) -> tuple[Any, ...]:
        """The order of :meth:`Candidate.sort_key`, from the arrays."""
        first = (not bool(passing[j]),) if passing is not None else ()
        return (
            *first,
            int(verdict[j]),
            int(n["fail"][j]),
            int(n["heavy"][j] + n["worse"][j] + n["unknown"][j]),
            int(n["light"][j]),
            -int(n["better"][j]),
            price[j],
            summaries[j].part_number.casefold(),
        )

    order = sorted(idx.tolist(), key=key)
    if limit is not None:
        order = order[: max(int(limit), 0)]
    out = [vet.candidate(j, VERDICTS[int(verdict[j])]) for j in order]
    inc_circ = tuple(circ.rows(0)) if circ is not None else None
    return Vetting(
        incumbent=summaries[0],
        basis=basis,
        design_name=design.name if design is not None else None,
        package=package,
        candidates=tuple(out),
        incumbent_circuit=inc_circ,
        considered=int(pool.size),
    )


# ---- side-by-side comparison -------------------------------------------------------------------


@dataclass(frozen=True)
class ComparisonRow:
    """One row of a side-by-side comparison: one value per part."""

    key: str
    group: str  #: identity, fit, function, circuit
    unit: str
    values: tuple[Any, ...]
    sides: tuple[str, ...] | None = None  #: side of the range used per part (parameters)
    better: Literal["low", "high"] | None = None  #: which direction is better (None: no order)
    best: tuple[int, ...] = ()  #: indices of the best parts (empty: no order or all equal)
    ok: tuple[bool | None, ...] | None = None  #: in-circuit pass / fail per part

    @property
    def differs(self) -> bool:
        vals = [
            _float(v) if isinstance(v, float | int) and not isinstance(v, bool) else v
            for v in self.values
        ]
        return len({repr(v) for v in vals}) > 1

    def to_dict(self) -> dict[str, Any]:
        def j(v: Any) -> Any:
            if isinstance(v, bool) or v is None or isinstance(v, str | int):
                return v
            return _float(v)

        return {
            "key": self.key,
            "group": self.group,
            "unit": self.unit,
            "values": [j(v) for v in self.values],
            "sides": None if self.sides is None else list(self.sides),
            "better": self.better,
            "best": list(self.best),
            "ok": None if self.ok is None else list(self.ok),
            "differs": self.differs,
        }


@dataclass(frozen=True)
class Comparison:
    """Result of :func:`compare_parts`."""

    parts: tuple[str, ...]
    basis: Basis
    design_name: str | None
    rows: tuple[ComparisonRow, ...]

    def to_frame(self) -> pd.DataFrame:
        """Rows = attributes, one column per part, plus ``unit`` and ``best`` (part numbers)."""
        data = []
        for r in self.rows:
            rec: dict[str, Any] = {"key": r.key, "group": r.group, "unit": r.unit}
            for pn, v in zip(self.parts, r.values, strict=True):
                rec[pn] = v
            rec["best"] = ", ".join(self.parts[i] for i in r.best)
            data.append(rec)
        return pd.DataFrame(data).set_index("key")

    def to_dict(self) -> dict[str, Any]:
        """The documented JSON form (``data-schema/substitutes.schema.json``, comparison)."""
        return {
            "format": "partsel.comparison/1",
            "parts": list(self.parts),
            "basis": self.basis,
            "design": self.design_name,
            "rows": [r.to_dict() for r in self.rows],
            "caution": CAUTION,
        }


def _best(values: Sequence[float], better: str) -> tuple[int, ...]:
    arr = np.array([np.nan if v is None else float(v) for v in values], dtype=float)
    ok = ~np.isnan(arr)
    if ok.sum() < 2:
        return ()
    target = np.nanmax(arr) if better == "high" else np.nanmin(arr)
    tol = EQUAL_RTOL * max(abs(target), 1e-300)
    idx = tuple(int(i) for i in np.flatnonzero(ok & (np.abs(arr - target) <= tol)))
    return () if len(idx) == ok.sum() else idx


def compare_parts(
    frame: pd.DataFrame,
    parts: Sequence[str],
    design: Design | None = None,
    basis: Basis = "worst-case",
) -> Comparison:
    """Two to four named parts side by side (values on ``basis``, best marked per row).

    With a design, the in-circuit figures of :data:`CIRCUIT_CHECKS` follow (one call of
    predict_closed_form for all the parts).
    """
    basis = _check_basis(basis)
    if not 2 <= len(parts) <= 4:
        raise InputError(f"compare takes 2 to 4 parts, got {len(parts)}", pointer="/parts")
    rows_idx = [find_part(frame, p) for p in parts]
    if len(set(rows_idx)) != len(rows_idx):
        raise InputError("a part is named twice", pointer="/parts")
    sub = frame.iloc[rows_idx].reset_index(drop=True)
    summ = _summaries(sub)
    rows: list[ComparisonRow] = []

    def ident(key: str, vals: Sequence[Any], unit: str = "", better: str | None = None) -> None:
        best = _best(vals, better) if better else ()
        rows.append(
            ComparisonRow(
                key,
                "identity" if key in _IDENT else "fit",
                unit,
                tuple(vals),
                better=better,
                best=best,
            )
        )  # type: ignore[arg-type]

    ident("maker", [s.maker for s in summ])
    ident("lifecycle", [s.lifecycle for s in summ])
    ident("topology", [s.topology for s in summ])
    ident("channels", [s.channels for s in summ])
    ident("packages", [";".join(f"{c}:{p}" for c, p in s.packages) for s in summ])
    same_cur = len({s.currency for s in summ}) == 1
    ident(
        "price",
        [s.price for s in summ],
        summ[0].currency if same_cur else "",
        "low" if same_cur else None,
    )
    ident("supply_min_v", [s.supply_min_v for s in summ], "V", "low")
    ident("supply_max_v", [s.supply_max_v for s in summ], "V", "high")
    ident("temp_min_c", [s.temp_min_c for s in summ], "degC", "low")
    ident("temp_max_c", [s.temp_max_c for s in summ], "degC", "high")
    ident("junction_max_c", list(_num(sub, "junction_max_c")), "degC", "high")
    ident("theta_ja_k_per_w", list(_num(sub, "theta_ja_k_per_w")), "K/W", "low")
    msg = _num(sub, "min_stable_gain")
    ident("min_stable_gain", list(np.where(np.isnan(msg), 1.0, msg)), "V/V", "low")
    n = len(sub)
    for pdef in PARAMS:
        s = _sides(sub, pdef.key)
        order = (pdef.worst_side, "typ") if basis == "worst-case" else ("typ", pdef.worst_side)
        other = "max" if pdef.worst_side == "min" else "min"
        vals, sides = [], []
        for k in range(n):
            v, side = _resolve_one(s, k, (*order, other))
            vals.append(v)
            sides.append(side)
        better = "high" if pdef.worse == "low" else "low"
        rows.append(
            ComparisonRow(
                pdef.key,
                "function",
                _DIM_UNIT.get(pdef.dimension, ""),
                tuple(vals),
                tuple(sides),
                better,
                _best(vals, better),
            )
        )  # type: ignore[arg-type]
    stage = StageParams.from_columns(sub, basis)
    for rail, fn in (("swing_pos", stage.headroom_pos), ("swing_neg", stage.headroom_neg)):
        used = stage.used.get(rail)
        limit = stage.source_limit_a if rail == "swing_pos" else stage.sink_limit_a
        for i_a in SWING_COMPARE_CURRENTS_A:
            # Beyond a part's current limit its curve says nothing: n/a.
            vals = [
                float(v) if not i_a > lim else math.nan
                for v, lim in zip(fn(np.full(n, i_a)), limit, strict=True)
            ]
            sides = tuple(str(used[k]) if used is not None else "typ" for k in range(n))
            rows.append(
                ComparisonRow(
                    f"{rail}_headroom_at_{fmt(i_a, 'A').replace(' ', '')}",
                    "function",
                    "V",
                    tuple(vals),
                    sides,
                    "low",
                    _best(vals, "low"),
                )
            )
    if design is not None:
        circ = evaluate_circuit(sub, design, basis)
        for c in CIRCUIT_CHECKS:
            vals = [float(v) for v in circ.value[c.name]]
            okc = circ.ok.get(c.name)
            better = "high" if c.higher_is_better else "low"
            rows.append(
                ComparisonRow(
                    f"circuit_{c.name}",
                    "circuit",
                    c.unit,
                    tuple(vals),
                    None,
                    better,
                    _best(vals, better),
                    None if okc is None else tuple(bool(x) for x in okc),
                )
            )
    return Comparison(
        tuple(s.part_number for s in summ),
        basis,
        design.name if design is not None else None,
        tuple(rows),
    )


_IDENT = frozenset({"maker", "lifecycle", "topology", "channels", "packages", "price"})
#: Output currents at which a comparison shows the swing headroom, A (no load, 1 mA, 10 mA:
#: the points a datasheet's swing curve usually covers; common practice).
SWING_COMPARE_CURRENTS_A: tuple[float, ...] = (0.0, 1e-3, 10e-3)
