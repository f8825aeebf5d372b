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

#: Output formats; /2 added the specs interpolated over temperature and those whose spread over
#: temperature is unknown (``temperature``), each parameter's ``over_temperature`` and the
#: ambients each board is judged at (required fields, so a reader of /1 must check).
CORNERS_FORMAT = "partsel.corners/2"
YIELD_FORMAT = "partsel.yield/2"

#: The distributions assumed, stated in every output (see partsel.solver.spread.model).
ASSUMPTIONS: tuple[str, ...] = (
    f"catalogue spec with min, typ and max: split normal, split at typ (its median), min and "
    f"max at ±{SPEC_SIGMAS:g}σ of their own side; typ and one limit: normal with that limit at "
    f"{SPEC_SIGMAS:g}σ, mirrored; min and max only: uniform; one value only: fixed (no spread "
    "known)",
    "design tolerance: uniform between its ends, or a (split) normal with the ends at kσ when "
    "written with 'kσ'",
    "fix resistor: the recommended value, uniform within its series' tolerance (E24 ±5 %, E96 "
    "±1 %, or the requirements' fix_tolerance)",
    "parameters independent of each other; each part draws from its own stream, the design's "
    "tolerances from one stream shared by the parts",
    "temperature: a spec given at two or more ambients has its min, typ and max each "
    "interpolated linearly in the ambient between the temperatures given and held at the end "
    "values outside them (no slope extrapolated); a part keeps its place in the distribution "
    "across temperature (the same normal quantile); a spec stated at one temperature is taken "
    "to hold over the design's ambient range: its spread over temperature is unknown and not "
    "modelled (no temperature coefficient is assumed; listed per part)",
    "ambient: not drawn; a board must work over the design's whole ambient range: each board "
    "is judged at the highest ambient (the junction temperature's worst) and, for a part with "
    "temperature data, also at the lowest and at each temperature of its data inside the "
    "range, and passes only if it passes at all of them; the corner search takes the ambient "
    "between its two ends",
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
            "over_temperature": p.over_temperature,
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
        "temperature": {
            "interpolated": list(a.over_temperature),
            "unknown": list(a.temperature_unknown),
        },
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
                "temperature": {
                    "interpolated": list(p.over_temperature),
                    "unknown": list(p.temperature_unknown),
                    "ambients_judged_c": [_num(t) for t in p.ambients_c],
                },
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


# ---- schema -----------------------------------------------------------------------------------


def _n(description: str) -> dict[str, Any]:
    return {"type": ["number", "null"], "description": description}


def _obj(props: dict[str, Any], required: list[str] | None = None) -> dict[str, Any]:
    return {
        "type": "object",
        "additionalProperties": False,
        "required": list(props) if required is None else required,
        "properties": props,
    }


def spread_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of ``partsel corners --json`` and ``partsel yield --json``
    (data-schema/spread.schema.json; a test keeps the two equal)."""
    checks = [c.name for c in C.CHECKS]
    text = {"type": "string"}
    strings = {"type": "array", "items": text}
    interval = _obj(
        {
            "method": {"enum": ["wilson", "clopper-pearson"]},
            "confidence": {"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1},
            "low": {**_n("Lower end, fraction of 1"), "minimum": 0, "maximum": 1},
            "high": {**_n("Upper end, fraction of 1"), "minimum": 0, "maximum": 1},
        }
    )
    percentiles = {
        "type": "object",
        "propertyNames": {"pattern": "^p[0-9.]+$"},
        "additionalProperties": {"type": ["number", "null"]},
        "description": "Percentiles by name: p1, p5, p50, p95, p99",
    }
    parameter = _obj(
        {
            "key": {
                **text,
                "description": "Catalogue parameter, 'section/key' of the design "
                "file, 'fix_resistor' or 'environment/ambient_max'",
            },
            "origin": {"enum": ["catalogue", "design", "fix", "ambient"]},
            "low": {"type": "number", "description": "Low end of the range, SI"},
            "high": {"type": "number", "description": "High end of the range, SI"},
            "nominal_fraction": _n("Where the nominal value lies in the range, 0 .. 1"),
            "unit": {"type": ["string", "null"], "description": "SI unit of low and high"},
            "over_temperature": {
                "type": "boolean",
                "description": "A catalogue spec given at several ambients: low and high are at "
                "its own temperature, the range moves with the ambient",
            },
        }
    )
    temperature = {
        "interpolated": {
            **strings,
            "description": "Specs the part gives at two or more ambients, interpolated "
            "linearly in the ambient (held at the end values outside the data)",
        },
        "unknown": {
            **strings,
            "description": "Specs the part gives at one temperature: their spread over "
            "temperature is unknown and not modelled",
        },
    }
    corner = _obj(
        {
            "check": {"enum": checks},
            "unit": text,
            "status": {"enum": list(C.STATUS_NAMES)},
            "margin": _n("Margin at the worst corner, in the check's unit (negative: fails)"),
            "value": _n("The check's value at the worst corner"),
            "limit": _n("The check's limit at the worst corner"),
            "method": {"enum": ["vertex", "sampled"]},
            "corner": {
                "type": "object",
                "description": "Place of every parameter: 'low' / 'high' end, or a value",
                "additionalProperties": {"type": ["string", "number", "null"]},
            },
            "set_by": {
                "type": "array",
                "items": _obj(
                    {
                        "parameter": text,
                        "end": {"enum": ["low", "high"]},
                        "effect": _n("How much the parameter moves the margin"),
                    }
                ),
            },
            "non_monotonic": strings,
        }
    )
    corners_doc = _obj(
        {
            "format": {"const": CORNERS_FORMAT},
            "design": text,
            "part_number": text,
            "passes": {"type": "boolean"},
            "parameters": {"type": "array", "items": parameter},
            "corners": {"type": "array", "items": corner},
            "fails_whatever_the_spread": strings,
            "temperature": _obj(temperature),
            "evaluations": {"type": "integer", "minimum": 0},
            "method": text,
            "assumptions": strings,
            "caution": text,
        }
    )
    fix = _obj(
        {
            "rail": {"enum": ["negative", "positive"]},
            "r_ohm": _n("Recommended resistor, ohm"),
            "series": text,
            "tolerance": {"type": "number", "minimum": 0, "exclusiveMaximum": 1},
            "yield": _n("Yield with the recommended resistor"),
            "target": _n("Target yield searched for"),
            "largest_reaching_target_ohm": _n("Largest value of the series reaching the target"),
            "largest_yield": _n("Its yield"),
            "tried": {
                "type": "array",
                "items": _obj({"r_ohm": {"type": "number"}, "yield": _n("Yield")}),
            },
        }
    )
    part = _obj(
        {
            "part_number": text,
            "samples": {"type": "integer", "minimum": 1},
            "passed": {"type": "integer", "minimum": 0},
            "yield": {**_n("Fraction of boards meeting every check"), "minimum": 0, "maximum": 1},
            "interval": interval,
            "exact_interval": interval,
            "one_mode_fraction": _n(
                "Boards whose class-A/B stage stays in one mode (null: a biased stage)"
            ),
            "check_pass_fraction": {
                "type": "object",
                "propertyNames": {"enum": checks},
                "additionalProperties": {"type": ["number", "null"]},
            },
            "checks_always_met": {"type": "integer", "minimum": 0},
            "thd_percentiles": percentiles,
            "thd_is_bound": {"type": "boolean"},
            "handover_fraction": _n("Boards that hand over"),
            "handover_level_percentiles_v": percentiles,
            "correlated_with_failure": {
                "type": "array",
                "items": _obj(
                    {
                        "parameter": text,
                        "correlation": {**_n("Pearson"), "minimum": -1, "maximum": 1},
                    }
                ),
            },
            "no_spread_known": strings,
            "temperature": _obj(
                {
                    **temperature,
                    "ambients_judged_c": {
                        "type": "array",
                        "items": {"type": ["number", "null"]},
                        "description": "Ambients every board is judged at, degC, highest first "
                        "(a board passes only if it passes at all of them)",
                    },
                }
            ),
            "fix": {"oneOf": [{"type": "null"}, fix]},
        }
    )
    yield_doc = _obj(
        {
            "format": {"const": YIELD_FORMAT},
            "design": text,
            "samples": {"type": "integer", "minimum": 1},
            "seed": {"type": "integer", "minimum": 0},
            "interval": {"enum": ["wilson", "clopper-pearson"]},
            "confidence": {"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 1},
            "distributions": {"type": "object", "additionalProperties": text},
            "parts": {"type": "array", "items": part},
            "assumptions": strings,
            "caution": text,
        }
    )
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "urn:partsel:schema:spread:1",
        "title": "partsel spread analysis",
        "description": f"Output of `partsel corners --json` (format {CORNERS_FORMAT}) and "
        f"`partsel yield --json` (format {YIELD_FORMAT}). SI units, ratios as fractions of 1; "
        "null for unknown values. Estimates: confirm on the bench or in simulation.",
        "oneOf": [{"$ref": "#/$defs/corners"}, {"$ref": "#/$defs/yield"}],
        "$defs": {"corners": corners_doc, "yield": yield_doc},
    }


def spread_schema_json() -> str:
    """The schema as the committed file's text (indent 2, final newline)."""
    import json

    return json.dumps(spread_schema(), indent=2, ensure_ascii=False) + "\n"
