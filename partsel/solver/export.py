"""One writer for every output of a ranking: JSON-ready dicts, a CSV frame, the JSON Schema.

The JSON form (format ``partsel.ranking/1``) is described by :func:`ranking_schema`, committed as
``data-schema/ranking.schema.json`` (a test fails when the two drift). SI units throughout; a
value that is not a finite number (NaN, infinity) is written as ``null``.
"""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np
import pandas as pd

from partsel import present as P
from partsel.physics.simulate import abandoned_reason
from partsel.solver import checks as C
from partsel.solver.messages import check_message
from partsel.solver.relax import Hint
from partsel.solver.requirements import OBJECTIVE_BY_NAME
from partsel.solver.solve import Ranking
from partsel.solver.table import CORNERS

FORMAT = "partsel.ranking/1"

THD_LABEL = (
    "THD_F estimate of the output stage from partsel's closed-form macro-model (class A / B "
    "handing over: from the glitch or clipping shape; at the boundary: from the device law; "
    "class A / B in one mode, by itself or with the fix resistor fitted: from the follower's "
    "device law and the input stage; class AB / CMOS: an upper bound; a clipping output adds "
    "the clipped sine's THD; not a simulation or a measurement)"
)
CAUTION = (
    "Estimates from partsel's behavioural macro-model: confirm on the bench or in a full "
    "simulation before committing a design."
)
SCORE_FORMULA = (
    "score = 100 * (1 - sum_k w_k u_k / sum_k w_k); u_k = (t_k - min t_k) / (max t_k - min t_k) "
    "over the feasible parts, t_k = log10(clip(metric_k, floor_k, cap_k)), negated for "
    "objectives to maximise; a missing metric counts as u_k = 1"
)

_UNIT_SLUG = {
    "V": "v",
    "A": "a",
    "Hz": "hz",
    "V/s": "v_per_s",
    "F": "f",
    "ohm": "ohm",
    "degC": "c",
    "V/V": "v_per_v",
    "1": "",
    "V/rtHz": "v_per_rthz",
    "currency unit": "currency",
    "": "",
}


def num(x: Any) -> float | None:
    """A finite float, or None."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def check_defs() -> list[dict[str, Any]]:
    """The checks, for the ``checks`` list of the JSON output."""
    return [
        {
            "name": c.name,
            "unit": c.unit,
            "sense": c.sense,
            "description": c.description,
            "requirement": c.requirement,
        }
        for c in C.CHECKS
    ]


def _used_sides(r: Ranking, i: int, c: C.CheckDef, corner: int) -> dict[str, str]:
    used = r.table.stage(r.requirements.basis).used
    out: dict[str, str] = {}
    for p in c.params:
        if p == "stage_current" and corner >= 0:
            out[p] = CORNERS[corner]
        elif p in used:
            out[p] = str(used[p][i])
        elif p in ("offset_voltage", "noise_density", "bias_current"):
            out[p] = str(r.table.param(p, r.requirements.basis)[1][i])
    return out


def part_checks(r: Ranking, i: int) -> list[dict[str, Any]]:
    """Every check of part ``i``: status, value, limit, margin, ratio, unit, sides used."""
    ch = r.checks
    rows = []
    for j, c in enumerate(C.CHECKS):
        st = int(ch.status[i, j])
        row: dict[str, Any] = {
            "check": c.name,
            "status": C.STATUS_NAMES[st],
            "unit": c.unit,
            "value": num(ch.value[i, j]),
            "limit": num(ch.limit[i, j]),
            "margin": num(ch.margin[i, j]),
            "ratio": num(ch.ratio[i, j]),
        }
        if c.name == "lifecycle":
            row["value"] = str(r.table.lifecycle[i])
        elif c.name == "channels":
            row["value"] = num(r.table.channels[i])
        elif c.name == "package":
            row["value"] = str(r.table.text("packages")[i])
        if c.sense == "is":
            accepted = r.requirements.choice(c.requirement or "")
            row["limit"] = None if accepted is None else list(accepted)
        row["values_used"] = _used_sides(r, i, c, int(r.corner[i, j]))
        row["message"] = check_message(r, i, c.name) if st in C.FAILING else None
        rows.append(row)
    return rows


def _binding(r: Ranking, i: int, j: int) -> dict[str, Any] | None:
    if j < 0:
        return None
    c = C.CHECKS[j]
    return {
        "check": c.name,
        "status": C.STATUS_NAMES[int(r.checks.status[i, j])],
        "unit": c.unit,
        "margin": num(r.checks.margin[i, j]),
        "ratio": num(r.checks.ratio[i, j]),
        "message": check_message(r, i, c.name),
    }


def verdict_text(r: Ranking, i: int) -> str:
    """The conduction verdict of part ``i``: one-mode / marginal / changes-mode / biased
    (:func:`partsel.physics.analysis.conduction_verdict`)."""
    return str(r.prediction.conduction[i])


def _int(x: Any) -> int | None:
    v = num(x)
    return None if v is None else int(v)


def thd_is_bound(r: Ranking, i: int) -> bool:
    """The THD the verdict judges is an upper bound (a biased stage), not an estimate: people
    read it as "below X %". A stage kept in one mode, by itself or by the fix resistor, has an
    estimate (the closed form of the circuit as it is built)."""
    return str(r.prediction.conduction[i]) == "biased"


def rail_dict(rf: Any, i: int) -> dict[str, Any]:
    """One remedy (a resistor to one rail) of part ``i`` as plain data."""
    return {
        "rail": rf.rail,
        "r_ohm": num(rf.r_ohm[i]),
        "r_max_ohm": num(rf.r_max_ohm[i]),
        "works": bool(rf.ok[i]),
        "reason": str(rf.reason[i]),
        "extra_supply_a": num(rf.extra_supply_a[i]),
        "extra_dissipation_amp_w": num(rf.extra_dissipation_amp_w[i]),
        "dissipation_resistor_w": num(rf.dissipation_resistor_w[i]),
        "device_peak_a": num(rf.device_peak_a[i]),
        "limit_ok": bool(rf.limit_ok[i]),
        "swing_ok": bool(rf.swing_ok[i]),
    }


def fix_dict(r: Ranking, i: int) -> dict[str, Any]:
    """The fix of part ``i``: the one decision (rail, value, and the rule that chose the rail),
    what it costs, and both remedies."""
    fx = r.fix
    needed = bool(fx.needed[i])
    return {
        "needed": needed,
        "sized": bool(fx.sized[i]),
        "rail": str(fx.rail[i]) or None,
        "resistance_ohm": num(fx.r_ohm[i]),
        "max_resistance_ohm": num(fx.r_max_ohm[i]),
        "works": bool(fx.works[i]) if needed else None,
        "applied": bool(fx.applied[i]),
        "extra_supply_current_a": num(fx.extra_supply_a[i]),
        "extra_dissipation_w": num(fx.extra_dissipation_w[i]),
        "thd_estimate_with_fix": num(fx.thd_with_fix[i]),
        "reason": str(fx.reason[i]),
        "rule": P.fix_rule(fx, i),
        "series": fx.series,
        "tolerance": fx.tolerance,
        "margin": fx.margin,
        "negative": rail_dict(fx.negative, i) if needed else None,
        "positive": rail_dict(fx.positive, i) if needed else None,
    }


def prediction_fields(r: Ranking, i: int) -> dict[str, Any]:
    """The closed-form crossover prediction of part ``i``, as designed."""
    p = r.prediction
    ph = float(p.handover_phase_rad[i])
    corner = int(p.corner[i])
    return {
        "conduction": verdict_text(r, i),
        "handover": bool(p.handover[i]),
        "marginal": bool(p.marginal[i]),
        "biased_crossover": bool(p.crossover_biased[i]),
        "handover_level_v": num(p.handover_out_v[i]),
        "handover_phase_deg": math.degrees(ph) if math.isfinite(ph) else None,
        "flat_level_v": num(p.flat_level_v[i]),
        "slope_v_per_s": num(p.slope_v_per_s[i]),
        "handover_time_s": num(p.handover_time_s[i]),
        "glitch_v": num(p.glitch_v[i]),
        "thd_estimate": num(p.thd_estimate[i]),
        "i_out_min_a": num(p.i_out_min_a[i]),
        "i_out_max_a": num(p.i_out_max_a[i]),
        "min_source_current_a": num(p.min_source_a[i]),
        "stage_current_a": num(p.stage_current_a[i]),
        "stage_current_side": CORNERS[corner] if corner >= 0 else "typ",
        "thd_bound": num(p.thd_bound[i]),
        "clip_depth_v": num(p.clip_depth_v[i]),
        "limited_by": str(p.limited_by[i]) or None,
    }


def part_dict(r: Ranking, i: int, *, checks: bool = True) -> dict[str, Any]:
    """Part ``i`` of a ranking as plain data (one item of ``parts`` in the JSON output; the
    core of ``partsel predict --json`` too)."""
    t = r.table
    out: dict[str, Any] = {
        "rank": int(r.rank[i]) or None,
        "part_number": str(t.part_number[i]),
        "maker": str(t.text("maker")[i]),
        "topology": str(t.topology[i]),
        "channels": _int(t.channels[i]),
        "lifecycle": str(t.lifecycle[i]),
        "basis": r.requirements.basis,
        "verdict": str(r.verdict[i]),
        "feasible": bool(r.feasible[i]),
        "score": num(r.score[i]),
        "pareto": bool(r.pareto[i]),
        "n_failing": int(r.n_failing[i]),
        "binding": _binding(r, i, int(r.binding[i])),
        "tightest": _binding(r, i, int(r.tightest[i])),
        "thd_estimate": num(r.checks.value[i, C.IDX["thd"]]),
        "thd_is_bound": thd_is_bound(r, i),
        "prediction": prediction_fields(r, i),
        "fix": fix_dict(r, i),
        "objectives": {
            name: {"metric": num(r.metrics[name][i]), "utility": num(r.utility[name][i])}
            for name, _ in r.requirements.objectives
        },
    }
    if checks:
        out["checks"] = part_checks(r, i)
    return out


def hint_dict(h: Hint) -> dict[str, Any]:
    """A relaxation hint as plain data."""

    def val(v: Any) -> Any:
        return num(v) if isinstance(v, int | float) and not isinstance(v, bool) else v

    return {
        "requirement": h.requirement,
        "pointer": h.pointer,
        "unit": h.unit,
        "current": val(h.current),
        "change": num(h.change),
        "steps": [
            {"value": val(s.value), "admits": s.admits, "parts": list(s.parts)} for s in h.steps
        ],
    }


def ranking_dict(r: Ranking, top: int | None = None, *, checks: bool = True) -> dict[str, Any]:
    """The whole ranking as plain data (format ``partsel.ranking/1``).

    ``top``: number of parts listed, in ranking order (None or 0: all).
    """
    order = r.order if not top else r.order[:top]
    req = r.requirements
    return {
        "format": FORMAT,
        "design": {"name": r.design.name, "source": r.design.source},
        "basis": req.basis,
        "requirements": req.to_mapping(),
        "caution": CAUTION,
        "thd_definition": THD_LABEL,
        "score": {
            "formula": SCORE_FORMULA,
            "objectives": [
                {
                    "name": name,
                    "weight": w,
                    "direction": OBJECTIVE_BY_NAME[name].direction,
                    "unit": OBJECTIVE_BY_NAME[name].unit,
                    "floor": num(OBJECTIVE_BY_NAME[name].floor),
                    "cap": num(OBJECTIVE_BY_NAME[name].cap),
                }
                for name, w in req.objectives
            ],
        },
        "pareto_objectives": list(req.pareto_objectives),
        "checks": check_defs(),
        "summary": {
            "parts": r.n,
            "feasible": r.n_feasible,
            "pareto": int(r.pareto.sum()),
            "listed": len(order),
        },
        "parts": [part_dict(r, int(i), checks=checks) for i in order],
        "hints": [hint_dict(h) for h in r.hints],
    }


def ranking_frame(r: Ranking, top: int | None = None) -> pd.DataFrame:
    """One CSV row per part in ranking order (SI units, unit in the column name)."""
    order = r.order if not top else r.order[:top]
    t, p, fx, ch = r.table, r.prediction, r.fix, r.checks
    b = r.binding[order]
    has_b = b >= 0
    bj = np.maximum(b, 0)
    names = np.array(C.CHECK_NAMES, dtype=object)
    units = np.array([c.unit for c in C.CHECKS], dtype=object)
    cols: dict[str, Any] = {
        "rank": pd.array(np.where(r.rank[order] > 0, r.rank[order], 0), dtype="Int64"),
        "part_number": t.part_number[order],
        "maker": t.text("maker")[order],
        "topology": t.topology[order],
        "channels": pd.array(
            np.where(np.isfinite(t.channels[order]), t.channels[order], np.nan), dtype="Int64"
        ),
        "lifecycle": t.lifecycle[order],
        "feasible": r.feasible[order],
        "score": r.score[order],
        "pareto": r.pareto[order],
        "n_failing": r.n_failing[order],
        "binding_check": np.where(has_b, names[bj], ""),
        "binding_unit": np.where(has_b, units[bj], ""),
        "binding_margin": np.where(has_b, ch.margin[order, bj], np.nan),
        "binding_ratio": np.where(has_b, ch.ratio[order, bj], np.nan),
        "basis": np.full(order.size, r.requirements.basis, dtype=object),
        "verdict": r.verdict[order],
        "conduction": p.conduction[order],
        "handover_level_v": p.handover_out_v[order],
        "glitch_v": p.glitch_v[order],
        "thd_estimate": ch.value[order, C.IDX["thd"]],
        "thd_estimate_as_designed": p.thd_estimate[order],
        "fix_rail": fx.rail[order],
        "fix_r_ohm": fx.r_ohm[order],
        "fix_applied": fx.applied[order],
        "thd_estimate_with_fix": fx.thd_with_fix[order],
        "supply_current_a": ch.value[order, C.IDX["supply_current"]],
        "price": ch.value[order, C.IDX["price"]],
    }
    status_names = np.array(C.STATUS_NAMES, dtype=object)
    for j, c in enumerate(C.CHECKS):
        cols[f"{c.name}_status"] = status_names[ch.status[order, j]]
        if c.sense != "is":
            slug = _UNIT_SLUG.get(c.unit, "")
            cols[f"{c.name}_margin" + (f"_{slug}" if slug else "")] = ch.margin[order, j]
            cols[f"{c.name}_ratio"] = ch.ratio[order, j]
    df = pd.DataFrame(cols)
    df.loc[df["rank"] == 0, "rank"] = pd.NA
    return df.replace([np.inf, -np.inf], np.nan)


# ---- JSON Schema ------------------------------------------------------------------------------


def _n(description: str, unit: str = "") -> dict[str, Any]:
    text = description + (f" Unit: {unit}." if unit else "")
    return {"description": text, "type": ["number", "null"]}


def _check_schemas() -> tuple[dict[str, Any], dict[str, Any]]:
    """Schemas of a binding / tightest check and of one row of a part's checks."""
    margin_ref = {
        "type": ["object", "null"],
        "additionalProperties": False,
        "required": ["check", "status", "unit", "margin", "ratio"],
        "properties": {
            "check": {"enum": list(C.CHECK_NAMES)},
            "status": {"enum": list(C.STATUS_NAMES)},
            "unit": {"type": "string"},
            "margin": _n("Signed margin in the check's unit (>= 0 passes)."),
            "ratio": _n("Margin ratio (>= 1 passes); null where a ratio means nothing."),
            "message": {"description": "The check in words, for people.", "type": "string"},
        },
    }
    check_row = {
        "type": "object",
        "additionalProperties": False,
        "required": ["check", "status", "unit", "value", "limit", "margin", "ratio"],
        "properties": {
            "check": {"enum": list(C.CHECK_NAMES)},
            "status": {"enum": list(C.STATUS_NAMES)},
            "unit": {"type": "string"},
            "value": {
                "description": "The part's value (a text or list for categorical checks).",
                "type": ["number", "string", "null"],
            },
            "limit": {
                "description": "The limit it is compared with.",
                "type": ["number", "array", "null"],
            },
            "margin": _n("Signed margin in the check's unit."),
            "ratio": _n("Margin ratio."),
            "values_used": {
                "description": "Side of each parameter's range used (min / typ / max / mid).",
                "type": "object",
                "additionalProperties": {"type": "string"},
            },
            "message": {
                "description": "The check in words, for people (failing checks; null else).",
                "type": ["string", "null"],
            },
        },
    }
    return margin_ref, check_row


_RAIL_SCHEMA: dict[str, Any] = {
    "description": "One remedy: a resistor from the output to one rail (null when no fix "
    "is needed).",
    "type": ["object", "null"],
    "additionalProperties": False,
    "required": ["rail", "r_ohm", "r_max_ohm", "works", "reason"],
    "properties": {
        "rail": {"enum": ["negative", "positive"]},
        "r_ohm": _n("E-series value (rounded down allowing for its tolerance).", "ohm"),
        "r_max_ohm": _n("Largest resistor that keeps the stage in one mode.", "ohm"),
        "works": {"type": "boolean"},
        "reason": {"description": "Why it does not work ('' when it does).", "type": "string"},
        "extra_supply_a": _n("Extra mean supply current per channel.", "A"),
        "extra_dissipation_amp_w": _n("Extra dissipation in the amplifier per channel.", "W"),
        "dissipation_resistor_w": _n("Mean dissipation in the resistor.", "W"),
        "device_peak_a": _n("Peak current of the device kept on.", "A"),
        "limit_ok": {"type": "boolean"},
        "swing_ok": {"type": "boolean"},
    },
}


def part_schema() -> dict[str, Any]:
    """JSON Schema of one part's evaluation (an item of ``parts`` of ``partsel rank --json``;
    the core of every item of ``partsel predict --json``)."""
    margin_ref, check_row = _check_schemas()
    return {
        "type": "object",
        "additionalProperties": False,
        "required": [
            "rank",
            "part_number",
            "maker",
            "topology",
            "channels",
            "lifecycle",
            "basis",
            "verdict",
            "feasible",
            "score",
            "pareto",
            "n_failing",
            "binding",
            "tightest",
            "thd_estimate",
            "thd_is_bound",
            "prediction",
            "fix",
            "objectives",
        ],
        "properties": {
            "rank": {
                "description": "1 for the best feasible part; null when rejected.",
                "type": ["integer", "null"],
                "minimum": 1,
            },
            "part_number": {"type": "string"},
            "maker": {"type": "string"},
            "topology": {"type": "string"},
            "channels": {"description": "Channels per package.", "type": ["integer", "null"]},
            "lifecycle": {"type": "string"},
            "basis": {
                "description": "Value basis of the evaluation (the design's unless overridden).",
                "enum": ["worst-case", "typical"],
            },
            "verdict": {
                "description": "feasible, feasible with the fix resistor fitted, or rejected.",
                "enum": ["feasible", "feasible-with-fix", "rejected"],
            },
            "feasible": {"type": "boolean"},
            "score": {
                "description": "0..100 for feasible parts (see score.formula); null else.",
                "type": ["number", "null"],
                "minimum": 0,
                "maximum": 100,
            },
            "pareto": {
                "description": "In the Pareto set of the feasible parts.",
                "type": "boolean",
            },
            "n_failing": {"type": "integer", "minimum": 0},
            "binding": {
                **margin_ref,
                "description": "The check that rejects the part most "
                "severely (smallest ratio); null when feasible.",
            },
            "tightest": {**margin_ref, "description": "The passing check with the smallest ratio."},
            "thd_estimate": _n(
                THD_LABEL + ": the value the verdict judges (with the fix where it is applied).",
                "1",
            ),
            "thd_is_bound": {
                "description": "thd_estimate is an upper bound (a biased stage, or one kept in "
                "one mode by the fix), not an estimate.",
                "type": "boolean",
            },
            "prediction": {
                "type": "object",
                "additionalProperties": False,
                "required": ["conduction", "handover", "glitch_v", "thd_estimate"],
                "properties": {
                    "conduction": {"enum": ["one-mode", "marginal", "changes-mode", "biased"]},
                    "handover": {"type": "boolean"},
                    "marginal": {"type": "boolean"},
                    "biased_crossover": {"type": "boolean"},
                    "handover_level_v": _n("Ideal output level at the handover.", "V"),
                    "handover_phase_deg": _n("Phase of the falling-edge handover.", "degree"),
                    "flat_level_v": _n("Level the load holds the output at meanwhile.", "V"),
                    "slope_v_per_s": _n("Output slope at the handover.", "V/s"),
                    "handover_time_s": _n("Time to cross the dead band.", "s"),
                    "glitch_v": _n("Predicted crossover glitch, as designed.", "V"),
                    "thd_estimate": _n(THD_LABEL + ", as designed.", "1"),
                    "i_out_min_a": _n("Least output current over the period.", "A"),
                    "i_out_max_a": _n("Largest output current over the period.", "A"),
                    "min_source_current_a": _n("Smallest source-device current.", "A"),
                    "stage_current_a": _n("Stage current of the prediction.", "A"),
                    "stage_current_side": {
                        "description": "Side of the stage-current range used: on the "
                        "worst-case basis the one worst for the crossover.",
                        "enum": list(CORNERS),
                    },
                    "thd_bound": _n(
                        "Upper bound of THD_F (biased stages, stages in one mode); null else.",
                        "1",
                    ),
                    "clip_depth_v": _n("How far the ideal output passes the swing limits.", "V"),
                    "limited_by": {
                        "description": "What limits the output (null: nothing).",
                        "enum": ["clipping", "slew", "bandwidth", None],
                    },
                },
            },
            "fix": {
                "type": "object",
                "additionalProperties": False,
                "required": ["needed", "sized", "rail", "resistance_ohm", "works", "applied"],
                "properties": {
                    "needed": {"type": "boolean"},
                    "sized": {"type": "boolean"},
                    "rail": {"enum": ["negative", "positive", "none", None]},
                    "resistance_ohm": _n("E-series fix resistor.", "ohm"),
                    "max_resistance_ohm": _n("Largest resistor that works.", "ohm"),
                    "works": {
                        "description": "A resistor works (null when none is needed).",
                        "type": ["boolean", "null"],
                    },
                    "applied": {
                        "description": "The verdict is for the part with the resistor.",
                        "type": "boolean",
                    },
                    "extra_supply_current_a": _n("Extra supply current per channel.", "A"),
                    "extra_dissipation_w": _n("Extra dissipation per channel.", "W"),
                    "thd_estimate_with_fix": _n(
                        "THD_F estimate with the resistor fitted (the stage kept in one mode; "
                        "the closed form of the circuit with it).",
                        "1",
                    ),
                    "reason": {"type": "string"},
                    "rule": {
                        "description": "Why this rail was chosen, in words.",
                        "type": "string",
                    },
                    "series": {"type": "string"},
                    "tolerance": _n("Tolerance of the series (IEC 60063).", "1"),
                    "margin": _n("Fraction of its stage current the device kept on carries.", "1"),
                    "negative": _RAIL_SCHEMA,
                    "positive": _RAIL_SCHEMA,
                },
            },
            "objectives": {
                "type": "object",
                "propertyNames": {"enum": list(OBJECTIVE_BY_NAME)},
                "additionalProperties": {
                    "type": "object",
                    "additionalProperties": False,
                    "required": ["metric", "utility"],
                    "properties": {
                        "metric": _n("Raw metric."),
                        "utility": _n("u_k, 0 best .. 1 worst."),
                    },
                },
            },
            "checks": {"type": "array", "items": check_row},
        },
    }


def ranking_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of the JSON output of ``partsel rank --json``."""
    part = part_schema()
    hint = {
        "type": "object",
        "additionalProperties": False,
        "required": ["requirement", "pointer", "unit", "current", "change", "steps"],
        "properties": {
            "requirement": {"type": "string"},
            "pointer": {
                "description": "JSON pointer of the requirement in the design file.",
                "type": "string",
            },
            "unit": {"type": "string"},
            "current": {"description": "Present value (number, list or mode)."},
            "change": _n("Relative change of the first step; null for lists and modes."),
            "steps": {
                "type": "array",
                "minItems": 1,
                "items": {
                    "type": "object",
                    "additionalProperties": False,
                    "required": ["value", "admits", "parts"],
                    "properties": {
                        "value": {"description": "Relaxed value (number, list or mode)."},
                        "admits": {"type": "integer", "minimum": 1},
                        "parts": {"type": "array", "items": {"type": "string"}},
                    },
                },
            },
        },
    }
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "urn:partsel:schema:ranking:1",
        "title": "partsel ranking",
        "description": "Output of `partsel rank --json`: every part's verdict for one design. "
        "SI units; null where a value is not a finite number.",
        "type": "object",
        "additionalProperties": False,
        "required": [
            "format",
            "design",
            "basis",
            "requirements",
            "caution",
            "thd_definition",
            "score",
            "pareto_objectives",
            "checks",
            "summary",
            "parts",
            "hints",
        ],
        "properties": {
            "format": {"const": FORMAT},
            "design": {
                "type": "object",
                "additionalProperties": False,
                "required": ["name", "source"],
                "properties": {"name": {"type": "string"}, "source": {"type": ["string", "null"]}},
            },
            "basis": {"enum": ["worst-case", "typical"]},
            "requirements": {
                "description": "Requirements with defaults filled (SI numbers).",
                "type": "object",
            },
            "caution": {"type": "string"},
            "thd_definition": {"type": "string"},
            "score": {
                "type": "object",
                "required": ["formula", "objectives"],
                "properties": {
                    "formula": {"type": "string"},
                    "objectives": {"type": "array", "items": {"type": "object"}},
                },
            },
            "pareto_objectives": {
                "type": "array",
                "items": {"enum": list(OBJECTIVE_BY_NAME)},
                "minItems": 2,
                "maxItems": 3,
            },
            "checks": {"type": "array", "items": {"type": "object"}},
            "summary": {
                "type": "object",
                "additionalProperties": False,
                "required": ["parts", "feasible", "pareto", "listed"],
                "properties": {
                    k: {"type": "integer", "minimum": 0}
                    for k in ("parts", "feasible", "pareto", "listed")
                },
            },
            "parts": {"type": "array", "items": part},
            "hints": {"type": "array", "items": hint},
        },
    }


def ranking_schema_json() -> str:
    """The schema as the committed file's text (indent 2, final newline)."""
    return json.dumps(ranking_schema(), indent=2, ensure_ascii=False) + "\n"


# ---- predictions ------------------------------------------------------------------------------

PREDICTION_FORMAT = "partsel.prediction/2"


def options_dict(r: Ranking) -> dict[str, Any]:
    """The options of an evaluation and where each came from (design file, override, default)."""
    req = r.requirements
    return {
        "basis": req.basis,
        "basis_source": req.source("basis"),
        "conduction": req.conduction,
        "conduction_source": req.source("conduction"),
        "fix_series": req.fix_series,
        "fix_series_source": req.source("fix_series"),
        "margin": req.limit("min_source_fraction"),
        "margin_source": req.source("min_source_fraction"),
    }


def simulation_dict(sim: Any, k: int) -> dict[str, Any]:
    """Part ``k`` of a :class:`partsel.physics.simulate.SimResult` as plain data."""
    abandoned = bool(sim.abandoned[k])
    return {
        "steps_per_period": int(sim.steps_per_period),
        "converged": not abandoned,
        "note": abandoned_reason(sim, k) if abandoned else None,
        "thd_f": num(sim.thd_f[k]),
        "thd_definition": f"THD_F (IEC): RMS of harmonics 2..{sim.harmonics_v.shape[1] - 1}"
        " over the fundamental",
        "residual_peak_v": num(sim.residual_peak_v[k]),
        "deviation_peak_v": num(sim.deviation_peak_v[k]),
        "min_source_a": num(sim.min_source_a[k]),
        "handover": bool(sim.handover[k]),
        "handover_level_v": num(sim.handover_level_v[k]),
        "harmonics_v": [num(x) for x in sim.harmonics_v[k, :11]],
    }


def prediction_dict(
    r: Ranking,
    i: int,
    *,
    sim: Any = None,
    sim_fixed: Any = None,
    k: int = 0,
) -> dict[str, Any]:
    """Part ``i`` of an evaluation with its simulations (part ``k`` of ``sim`` and
    ``sim_fixed``) as plain data: one item of ``partsel predict --json``
    (``data-schema/prediction.schema.json``). The verdict, the fix and the estimates are those
    of the ranking (:func:`part_dict`); SI units throughout."""
    out = part_dict(r, i)
    out["design"] = {"name": r.design.name, "source": r.design.source}
    out["options"] = options_dict(r)
    out["values_used"] = {
        key: str(arr[i]) for key, arr in r.table.stage(r.requirements.basis).used.items()
    }
    out["values_used"]["stage_current"] = out["prediction"]["stage_current_side"]
    out["thd_definition"] = THD_LABEL
    out["simulation"] = None if sim is None else simulation_dict(sim, k)
    out["simulation_fixed"] = None if sim_fixed is None else simulation_dict(sim_fixed, k)
    out["caution"] = CAUTION
    return out


def prediction_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of ``partsel predict --json``: a list of parts."""
    item = part_schema()
    sim = {
        "type": ["object", "null"],
        "additionalProperties": False,
        "required": ["steps_per_period", "thd_f", "handover"],
        "properties": {
            "steps_per_period": {"type": "integer", "minimum": 1},
            "converged": {
                "type": "boolean",
                "description": "False when the simulation was stopped (its figures are null; "
                "the closed form stands); 'note' says why.",
            },
            "note": {"type": ["string", "null"]},
            "thd_f": _n("THD_F of the simulated output (IEC definition).", "1"),
            "thd_definition": {"type": "string"},
            "residual_peak_v": _n("Peak of the output minus its DC and fundamental.", "V"),
            "deviation_peak_v": _n("Peak deviation from the ideal output.", "V"),
            "min_source_a": _n("Smallest source-device current.", "A"),
            "handover": {"type": "boolean"},
            "handover_level_v": _n("Output level at the first handover.", "V"),
            "harmonics_v": {"type": "array", "items": {"type": ["number", "null"]}},
        },
    }
    src = {"enum": ["design file", "override", "default"]}
    item["required"] = [*item["required"], "design", "options", "caution"]
    item["properties"].update(
        {
            "design": {
                "type": "object",
                "additionalProperties": False,
                "required": ["name", "source"],
                "properties": {"name": {"type": "string"}, "source": {"type": ["string", "null"]}},
            },
            "options": {
                "description": "Options of the evaluation and where each came from.",
                "type": "object",
                "additionalProperties": False,
                "required": ["basis", "basis_source", "fix_series", "margin"],
                "properties": {
                    "basis": {"enum": ["worst-case", "typical"]},
                    "basis_source": src,
                    "conduction": {"enum": ["no-change", "fix-allowed", "allowed"]},
                    "conduction_source": src,
                    "fix_series": {"type": "string"},
                    "fix_series_source": src,
                    "margin": _n("min_source_fraction, also the fix's sizing margin.", "1"),
                    "margin_source": src,
                },
            },
            "values_used": {
                "type": "object",
                "additionalProperties": {"type": "string"},
            },
            "thd_definition": {"type": "string"},
            "simulation": sim,
            "simulation_fixed": sim,
            "caution": {"type": "string"},
        }
    )
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "urn:partsel:schema:prediction:2",
        "title": "partsel prediction",
        "description": "Output of `partsel predict --json`: one item per part, with the "
        "verdict, fix and estimates of the ranking for the same design and options, and the "
        "time-domain simulation. SI units; null where a value is not a finite number.",
        "type": "array",
        "items": item,
    }


def prediction_schema_json() -> str:
    """The schema as the committed file's text (indent 2, final newline)."""
    return json.dumps(prediction_schema(), indent=2, ensure_ascii=False) + "\n"
