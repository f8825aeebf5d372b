"""The documented JSON of the spread analysis (``partsel corners --json``, ``partsel yield
--json``; schemas in data-schema/corners.schema.json and data-schema/yield.schema.json).

Numbers are SI (ratios as fractions of 1); NaN becomes null when written.
"""

from __future__ import annotations

import math
from typing import Any

from partsel.solver import checks as C
from partsel.solver.spread.corners import CornerAnalysis
from partsel.solver.spread.model import SPEC_SIGMAS
from partsel.solver.spread.yields import YieldAnalysis

CORNERS_FORMAT = "partsel.corners/1"
YIELD_FORMAT = "partsel.yield/1"

#: The distributions assumed, stated in every output (see partsel.solver.spread.model).
ASSUMPTIONS: tuple[str, ...] = (
    f"catalogue spec with min, typ and max: split normal, mode at typ, min and max at "
    f"±{SPEC_SIGMAS:g}σ on their own side; typ and one limit: normal with that limit at "
    f"{SPEC_SIGMAS:g}σ, mirrored; min and max only: uniform; one value only: fixed (no spread "
    "known)",
    "design tolerance: uniform between its ends, or a (split) normal with the ends at kσ when "
    "written with 'kσ'",
    "fix resistor: the recommended value, uniform within its series' tolerance (E24 ±5 %, E96 "
    "±1 %, or the requirements' fix_tolerance)",
    "parameters independent of each other; each part draws from its own stream, the design's "
    "tolerances from one stream shared by the parts",
    "temperature: each catalogue spec is taken to hold over the design's ambient range; where a "
    "spec is stated at one temperature its spread over temperature is unknown and not modelled "
    "(no temperature coefficient is assumed); the junction temperature is judged at the "
    "highest ambient",
)

#: Said by every output of the spread analysis.
CAUTION = (
    "Estimates from partsel's behavioural macro-model and the distributions stated: confirm "
    "the worst corners and the yield on the bench or in simulation."
)


def _num(x: Any) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _unit(check: str) -> str:
    return C.CHECKS[C.IDX[check]].unit


def _place(p: Any, t: float) -> str | float | None:
    """A parameter's place at a corner: ``"low"`` / ``"high"`` at an end, else its value."""
    if t in (0.0, 1.0):
        return "high" if t == 1.0 else "low"
    return _num(p.low + t * (p.high - p.low))


def corners_dict(
    a: CornerAnalysis, *, design_name: str = "", units: dict[str, str] | None = None
) -> dict[str, Any]:
    """The corners of one part as the documented JSON (``units``: SI unit of the design's
    parameters, by ``"section/key"``)."""
    params = [
        {
            "key": p.key,
            "origin": p.origin,
            "low": p.low,
            "high": p.high,
            "nominal_fraction": _num(p.nominal_t),
            "unit": p.unit or (units or {}).get(p.key) or None,
        }
        for p in a.params
    ]
    out = []
    for c in a.corners:
        out.append(
            {
                "check": c.check,
                "unit": _unit(c.check),
                "status": c.status,
                "margin": _num(c.margin),
                "value": _num(c.value),
                "limit": _num(c.limit),
                "method": c.method,
                "corner": {p.key: _place(p, t) for p, t in zip(a.params, c.t, strict=True)},
                "set_by": [
                    {"parameter": k, "end": "high" if t >= 0.5 else "low", "effect": _num(e)}
                    for k, t, e in c.setters
                ],
                "non_monotonic": list(c.non_monotonic),
            }
        )
    return {
        "format": CORNERS_FORMAT,
        "design": design_name,
        "part_number": a.part_number,
        "passes": a.passes,
        "parameters": params,
        "corners": out,
        "fails_whatever_the_spread": list(a.fixed_failures),
        "evaluations": a.evaluations,
        "method": "monotonicity of each check in each parameter checked numerically (5 probes), "
        "the vertex of the worse ends, a neighbour search flipping one parameter at a time; "
        "random sampling of the whole box where a check is not monotonic",
        "assumptions": list(ASSUMPTIONS),
        "caution": CAUTION,
    }


def _percentiles(d: dict[float, float]) -> dict[str, float | None]:
    return {f"p{k:g}": _num(v) for k, v in d.items()}


def yield_dict(y: YieldAnalysis, *, design_name: str = "") -> dict[str, Any]:
    """The yields of some parts as the documented JSON."""
    parts = []
    for p in y.parts:
        fix = None
        if p.fix is not None:
            f = p.fix
            fix = {
                "rail": f.rail,
                "r_ohm": _num(f.r_ohm),
                "series": f.series,
                "tolerance": f.tolerance,
                "yield": _num(f.yield_fraction),
                "target": _num(f.target),
                "largest_reaching_target_ohm": _num(f.largest_ohm),
                "largest_yield": _num(f.largest_yield),
                "tried": [{"r_ohm": r, "yield": _num(v)} for r, v in f.tried],
            }
        parts.append(
            {
                "part_number": p.part_number,
                "samples": p.samples,
                "passed": p.passed,
                "yield": _num(p.value),
                "interval": {
                    "method": p.interval.method,
                    "confidence": p.interval.confidence,
                    "low": _num(p.interval.low),
                    "high": _num(p.interval.high),
                },
                "exact_interval": {
                    "method": p.exact.method,
                    "confidence": p.exact.confidence,
                    "low": _num(p.exact.low),
                    "high": _num(p.exact.high),
                },
                "one_mode_fraction": _num(p.one_mode),
                "check_pass_fraction": {k: _num(v) for k, v in p.check_pass.items()},
                "checks_always_met": p.checks_always_met,
                "thd_percentiles": _percentiles(p.thd_percentiles),
                "thd_is_bound": p.thd_bound,
                "handover_fraction": _num(p.handover),
                "handover_level_percentiles_v": _percentiles(p.handover_level_percentiles),
                "correlated_with_failure": [
                    {"parameter": k, "correlation": _num(r)} for k, r in p.correlated
                ],
                "no_spread_known": list(p.fixed_params),
                "fix": fix,
            }
        )
    return {
        "format": YIELD_FORMAT,
        "design": design_name,
        "samples": y.samples,
        "seed": y.seed,
        "interval": y.interval,
        "confidence": y.confidence,
        "distributions": dict(y.distributions),
        "parts": parts,
        "assumptions": list(ASSUMPTIONS),
        "caution": CAUTION,
    }
