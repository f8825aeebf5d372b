"""The design-file format: the field table (one source for the schema and the reader) and the
JSON Schema built from it, committed as ``data-schema/design.schema.json``."""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from partsel.solver import requirements as req_mod
from partsel.units import UNIT_LABEL

#: Value of the optional ``format`` field this version reads and writes.
FORMAT = "partsel.design/1"

#: File extensions understood, mapped to the syntax used.
EXTENSIONS: dict[str, str] = {".toml": "TOML", ".yaml": "YAML", ".yml": "YAML", ".json": "JSON"}

#: Lowest ambient temperature that makes physical sense, degC (absolute zero).
_ABSOLUTE_ZERO_C = -273.15


# ---- field table: one source for the schema and the reader ---------------------------------


@dataclass(frozen=True)
class _Quantity:
    """A quantity field: its dimension (a key of ``partsel.units.SI_UNIT``) and description."""

    dimension: str
    description: str
    example: str
    unit: str | None = None  # unit label when not UNIT_LABEL[dimension]
    default: str | None = None
    tolerance: bool = True  #: may carry a tolerance or be a range (partsel.units.Toleranced)

    @property
    def unit_label(self) -> str:
        return self.unit or UNIT_LABEL[self.dimension]


#: Quantity fields by (section, key).
QUANTITY_FIELDS: dict[tuple[str, str], _Quantity] = {
    ("supply", "positive"): _Quantity("voltage", "Positive supply rail V+", "3.3 V"),
    ("supply", "negative"): _Quantity(
        "voltage",
        "Negative supply rail V-; 0 for a single supply, e.g. -15 V for a split one",
        "0 V",
        default="0 V",
    ),
    ("signal", "bias"): _Quantity("voltage", "DC level of the signal source", "1.65 V"),
    ("signal", "amplitude"): _Quantity(
        "voltage", "Peak amplitude of the source's sine (input side, before the gain)", "0.5 V"
    ),
    ("signal", "frequency"): _Quantity("frequency", "Signal frequency, > 0", "1 kHz"),
    ("amplifier", "gain"): _Quantity(
        "dimensionless",
        "Magnitude of the signal gain (non-inverting 1 + R_f/R_g, at least 1; inverting R_f/R_in)",
        "2",
        unit="V/V",
        default="1",
    ),
    ("amplifier", "reference"): _Quantity(
        "voltage",
        "Return point of the gain network (bottom of R_g, or the non-inverting input of an "
        "inverting stage); default: the signal bias, so the output sits at the input bias",
        "1.65 V",
    ),
    ("amplifier", "feedback_resistor"): _Quantity(
        "resistance",
        "Feedback resistor R_f, > 0; adds the feedback network's load on the output",
        "10 kohm",
    ),
    ("load", "resistance"): _Quantity(
        "resistance", "Load resistor R_L, > 0; omit for no resistive load", "10 kohm"
    ),
    ("load", "reference"): _Quantity(
        "voltage",
        "Where R_L returns (DC coupling) or the far end of R_L (AC coupling)",
        "0 V",
        default="0 V",
    ),
    ("load", "coupling_capacitor"): _Quantity(
        "capacitance",
        "Series capacitor C_c between output and R_L, > 0; required for AC coupling",
        "10 uF",
    ),
    ("load", "capacitance"): _Quantity(
        "capacitance",
        "Load capacitance C_L from the output to ground, >= 0",
        "100 pF",
        default="0 F",
    ),
    ("load", "to_negative_rail"): _Quantity(
        "resistance", "Extra resistor from the output to V- (a pull-down), > 0", "22 kohm"
    ),
    ("load", "to_positive_rail"): _Quantity(
        "resistance", "Extra resistor from the output to V+ (a pull-up), > 0", "22 kohm"
    ),
    ("environment", "ambient_min"): _Quantity(
        "temperature",
        "Lowest ambient temperature (numbers are degC)",
        "-40 degC",
        default="25 degC",
        tolerance=False,
    ),
    ("environment", "ambient_max"): _Quantity(
        "temperature",
        "Highest ambient temperature (numbers are degC)",
        "85 degC",
        default="25 degC",
        tolerance=False,
    ),
}

_SECTION_DESCRIPTIONS: dict[str, str] = {
    "supply": "Supply rails.",
    "signal": "Signal source: DC bias plus a sine.",
    "amplifier": "Closed-loop configuration of the amplifier.",
    "load": "Load network on the amplifier output.",
    "environment": "Operating conditions.",
}

_REQUIRED: dict[str, list[str]] = {
    "": ["supply", "signal"],
    "supply": ["positive"],
    "signal": ["bias", "amplitude", "frequency"],
}


#: What the schema says of a quantity that may carry a tolerance.
TOLERANCE_TEXT = (
    " It may carry a tolerance ('±5 %', '+-5 %', '-20/+80 %', or a width in its unit such as "
    "'±20 mV') or be a range ('LOW .. HIGH', the unit at both ends); spread uniformly between "
    "the ends, or as a normal distribution with the ends at k standard deviations when "
    "followed by 'kσ' ('±3 % 3σ'). A relative tolerance lies below 100 %."
)


def _quantity_schema(q: _Quantity) -> dict[str, Any]:
    unit = q.unit_label
    text = (
        f"{q.description}. Unit: {unit}; a number in {unit} or a quantity string"
        f" such as '{q.example}'."
    )
    if q.tolerance:
        text += TOLERANCE_TEXT
    out: dict[str, Any] = {"description": text, "x-unit": unit, "type": ["number", "string"]}
    if q.default is not None:
        out["default"] = q.default
    out["examples"] = [q.example]
    return out


def _requirements_schema() -> dict[str, Any]:
    """Schema of the ``[requirements]`` table, built from the solver's registry
    (:mod:`partsel.solver.requirements`)."""
    limits: dict[str, Any] = {}
    for d in req_mod.LIMITS:
        q = _Quantity(d.dimension, d.description, d.example, tolerance=False)
        node = _quantity_schema(q)
        if d.default is not None:
            node["default"] = d.default
        limits[d.key] = node
    for c in req_mod.CHOICES:
        item: dict[str, Any] = (
            {"type": "string", "minLength": 1} if c.values is None else {"enum": list(c.values)}
        )
        limits[c.key] = {
            "description": f"{c.description}; unitless list (any value when absent).",
            "x-unit": "",
            "type": "array",
            "items": item,
            "minItems": 1,
            "uniqueItems": True,
            "examples": [c.example],
        }
    objectives = {
        d.name: {
            "description": f"Weight of the objective: {d.description} ({d.direction}imise). "
            "Unit: 1 (a weight >= 0).",
            "x-unit": "1",
            "type": "number",
            "minimum": 0,
        }
        for d in req_mod.OBJECTIVES
    }
    defaults = ", ".join(f"{n} = {w:g}" for n, w in req_mod.DEFAULT_OBJECTIVES)
    return {
        "description": "Ranking requirements: value basis, conduction mode, hard limits and "
        "weighted soft objectives (see partsel.solver.requirements); units as stated by their "
        "own fields.",
        "type": "object",
        "properties": {
            "basis": {
                "description": "Value basis: 'worst-case' (guaranteed values, the pessimistic "
                "side of every range) or 'typical'; unitless keyword.",
                "x-unit": "",
                "enum": list(req_mod.BASES),
                "default": "worst-case",
            },
            "conduction": {
                "description": "Output-stage conduction: 'no-change' (must stay in one mode), "
                "'fix-allowed' (or with partsel's fix resistor), 'allowed' (a handover is "
                "accepted; glitch and THD limits still apply); unitless keyword.",
                "x-unit": "",
                "enum": list(req_mod.CONDUCTION_MODES),
                "default": "fix-allowed",
            },
            "fix_series": {
                "description": "IEC 60063 series of the fix resistor; unitless keyword.",
                "x-unit": "",
                "enum": list(req_mod.FIX_SERIES),
                "default": "E24",
            },
            "fix_tolerance": {
                "description": "Relative tolerance of the fix resistor (default: the usual "
                "one of its series, E24 5 %, E96 1 %; IEC 60063 series, tolerances common "
                "practice); the fix is rounded down for it and the spread analysis draws it. "
                "Unit: 1; a number or a percentage such as '1 %', below 100 %.",
                "x-unit": "1",
                "type": ["number", "string"],
                "examples": ["1 %"],
            },
            "yield_samples": {
                "description": "Boards a Monte Carlo yield is estimated from (min_yield, the "
                f"yield objective, partsel yield), {req_mod.YIELD_SAMPLES_RANGE[0]} to "
                f"{req_mod.YIELD_SAMPLES_RANGE[1]:,}. Unit: 1 (a count).",
                "x-unit": "1",
                "type": "integer",
                "minimum": req_mod.YIELD_SAMPLES_RANGE[0],
                "maximum": req_mod.YIELD_SAMPLES_RANGE[1],
                "default": req_mod.DEFAULT_YIELD_SAMPLES,
            },
            "yield_seed": {
                "description": "Seed of the yield's random draws (the same seed, the same "
                "boards and the same yield). Unit: 1 (a whole number).",
                "x-unit": "1",
                "type": "integer",
                "minimum": 0,
                "default": req_mod.DEFAULT_YIELD_SEED,
            },
            "limits": {
                "description": "Hard limits: a part failing one is rejected.",
                "type": "object",
                "additionalProperties": False,
                "properties": limits,
            },
            "objectives": {
                "description": "Soft objectives and their weights (score of feasible parts); "
                f"default {defaults}.",
                "type": "object",
                "additionalProperties": False,
                "properties": objectives,
            },
            "pareto": {
                "description": "Two or three objectives of the Pareto set (default: the "
                "heaviest); unitless list of names.",
                "x-unit": "",
                "type": "array",
                "items": {"enum": [d.name for d in req_mod.OBJECTIVES]},
                "minItems": 2,
                "maxItems": 3,
                "uniqueItems": True,
            },
        },
    }


def design_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of a design file, as committed in ``data-schema/``."""
    sections: dict[str, dict[str, Any]] = {
        name: {
            "description": text,
            "type": "object",
            "additionalProperties": False,
            "properties": {},
        }
        for name, text in _SECTION_DESCRIPTIONS.items()
    }
    for (section, key), q in QUANTITY_FIELDS.items():
        sections[section]["properties"][key] = _quantity_schema(q)
    sections["signal"]["properties"]["waveform"] = {
        "description": "Waveform of the source; unitless keyword (only 'sine' for now).",
        "x-unit": "",
        "enum": ["sine"],
        "default": "sine",
    }
    sections["amplifier"]["properties"] = {
        "configuration": {
            "description": "Amplifier configuration; unitless keyword.",
            "x-unit": "",
            "enum": ["non-inverting", "inverting"],
            "default": "non-inverting",
        },
        **sections["amplifier"]["properties"],
    }
    load_props = sections["load"]["properties"]
    sections["load"]["properties"] = {
        "resistance": load_props.pop("resistance"),
        "reference": load_props.pop("reference"),
        "coupling": {
            "description": "How R_L is connected: 'dc' (directly) or 'ac' (through "
            "coupling_capacitor); unitless keyword.",
            "x-unit": "",
            "enum": ["dc", "ac"],
            "default": "dc",
        },
        **load_props,
    }
    sections["environment"]["properties"]["channels_used"] = {
        "description": "Number of amplifier channels the design uses (1 to 4). Unit: 1 (a count).",
        "x-unit": "1",
        "type": "integer",
        "minimum": 1,
        "maximum": 4,
        "default": 1,
    }
    for section, required in _REQUIRED.items():
        if section:
            sections[section]["required"] = required
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": "urn:partsel:schema:design:1",
        "title": "partsel design file",
        "description": (
            "A circuit in which amplifier parts are judged: supply, signal, closed loop, load "
            "network, environment and ranking requirements. Quantities are SI numbers or "
            "quantity strings with units; temperatures are in degC."
        ),
        "type": "object",
        "additionalProperties": False,
        "required": _REQUIRED[""],
        "properties": {
            "format": {
                "description": f"File format tag; unitless, optional, '{FORMAT}' when present.",
                "x-unit": "",
                "const": FORMAT,
            },
            "name": {
                "description": "Name of the design; unitless text (default: the file stem).",
                "x-unit": "",
                "type": "string",
                "minLength": 1,
            },
            "description": {
                "description": "Free text for people about the design's intent; unitless.",
                "x-unit": "",
                "type": "string",
            },
            **sections,
            "requirements": _requirements_schema(),
        },
    }


def design_schema_json() -> str:
    """The schema as the committed file's text (``json.dumps``, indent 2, final newline)."""
    return json.dumps(design_schema(), indent=2, ensure_ascii=False) + "\n"
