"""JSON Schema (draft 2020-12) of the catalogue file format ``partsel.catalogue/1``.

The schema is generated here from :data:`partsel.params.PARAMS` (every parameter becomes a
min/typ/max *spec* at its ``path``) and committed as ``data-schema/catalogue.schema.json``; a
test fails when the committed file drifts from :func:`build_schema`.

Besides standard keywords the schema carries partsel's own annotations, which JSON Schema
validators ignore and :mod:`partsel.catalogue.validate` reads:

- ``x-dimension``: the physical dimension of a quantity (a key of ``partsel.units.SI_UNIT``);
- ``x-unit``: the SI unit the value is stored in (also named in the ``description``);
- ``x-kind: "spec"``: a min/typ/max value (an object, or a bare value meaning typ);
- ``x-nonnegative``: a negative value makes no physical sense;
- ``x-words``: strings accepted in place of a quantity (e.g. ``"full-range"``);
- ``x-message``: the message shown when an ``anyOf`` fails.
"""

from __future__ import annotations

import json
from functools import lru_cache
from pathlib import Path
from typing import Any

from partsel.params import MAX_SWING_POINTS, PARAMS, Lifecycle, Topology
from partsel.units import SI_UNIT, UNIT_LABEL

FORMAT_NAME = "partsel.catalogue/1"
SCHEMA_ID = "urn:partsel:schema:catalogue:1"
#: Where the generated schema is committed, relative to the project root.
SCHEMA_RELPATH = Path("data-schema") / "catalogue.schema.json"

_EXAMPLES: dict[str, str] = {
    "voltage": "'1.5 V', '200 mV'",
    "current": "'50 uA', '20 mA'",
    "resistance": "'60 ohm', '10 kohm'",
    "capacitance": "'100 pF'",
    "frequency": "'1 MHz', '1 kHz'",
    "time": "'2 us'",
    "slew": "'0.5 V/us'",
    "power": "'250 mW'",
    "thermal_resistance": "'160 K/W'",
    "temperature": "'-40 degC', '85 degC'",
    "noise_voltage": "'40 nV/rtHz'",
    "noise_current": "'0.5 pA/rtHz'",
}

Schema = dict[str, Any]


def _unit_text(dimension: str) -> str:
    return UNIT_LABEL[dimension]


def quantity(
    dimension: str, description: str, *, nonnegative: bool = False, words: tuple[str, ...] = ()
) -> Schema:
    """A field holding one quantity of ``dimension`` (number in SI or quantity string)."""
    unit = _unit_text(dimension)
    node: Schema = {
        "$ref": f"#/$defs/quantity_{dimension}",
        "description": f"{description} [{unit}]",
        "x-unit": unit,
    }
    if nonnegative:
        node["x-nonnegative"] = True
    if words:
        node["x-words"] = list(words)
    return node


#: The optional list of a parameter's spec giving it at other ambient temperatures.
TEMPERATURE_POINTS = "temperature_points"
#: Most temperature points a spec may list (besides its own).
MAX_TEMPERATURE_POINTS = 8
#: Ambient a spec with temperature points is taken at when its ``at`` gives none, degC (the
#: usual datasheet condition; an assumption stated in DEVELOPERS.md).
DEFAULT_SPEC_TEMPERATURE_C = 25.0


def spec(
    dimension: str, description: str, *, nonnegative: bool = False, points: bool = False
) -> Schema:
    """A field holding a min/typ/max spec of ``dimension`` (``points``: it may list
    :data:`TEMPERATURE_POINTS`, the spec at other ambient temperatures)."""
    unit = _unit_text(dimension)
    node: Schema = {
        "$ref": f"#/$defs/{'param_spec' if points else 'spec'}_{dimension}",
        "description": f"{description} [{unit}]",
        "x-unit": unit,
    }
    if nonnegative:
        node["x-nonnegative"] = True
    return node


def _obj(description: str, properties: dict[str, Schema], required: tuple[str, ...] = ()) -> Schema:
    node: Schema = {
        "type": "object",
        "description": description,
        "properties": properties,
        "additionalProperties": False,
    }
    if required:
        node["required"] = list(required)
    return node


def _text(description: str, **extra: Any) -> Schema:
    return {"type": "string", "description": description, **extra}


def _quantity_def(dimension: str) -> Schema:
    unit = _unit_text(dimension)
    return {
        "description": (
            f"A {dimension.replace('_', ' ')}: a number in {unit} or a quantity string "
            f"such as {_EXAMPLES[dimension]} [{unit}]"
        ),
        "type": ["number", "string"],
        "x-dimension": dimension,
        "x-unit": unit,
    }


def _temperature_point_def(dimension: str) -> Schema:
    unit = _unit_text(dimension)
    props: dict[str, Schema] = {
        "temperature": quantity("temperature", "Ambient temperature of these values"),
        **{
            side: {
                "$ref": f"#/$defs/quantity_{dimension}",
                "description": f"{text} at this temperature [{unit}]",
                "x-unit": unit,
            }
            for side, text in (("min", "Minimum"), ("typ", "Typical"), ("max", "Maximum"))
        },
    }
    return {
        "description": (
            f"The spec at another ambient temperature: the temperature and the same sides "
            f"(min, typ, max) as the spec itself [{unit}]"
        ),
        "type": "object",
        "properties": props,
        "required": ["temperature"],
        "additionalProperties": False,
        "anyOf": [{"required": ["min"]}, {"required": ["typ"]}, {"required": ["max"]}],
        "x-message": "a temperature point needs at least one of min, typ, max",
    }


def _param_spec_def(dimension: str) -> Schema:
    """A parameter's spec: a spec that may also list itself at other temperatures."""
    node = _spec_def(dimension)
    node["description"] += (
        f"; optionally '{TEMPERATURE_POINTS}': the same sides at other ambient temperatures "
        f"(the spec's own temperature is its at.temperature, {DEFAULT_SPEC_TEMPERATURE_C:g} "
        "degC when not given), interpolated linearly in temperature by the spread analysis"
    )
    node["properties"][TEMPERATURE_POINTS] = {
        "type": "array",
        "description": "The spec at other ambient temperatures (distinct temperatures)",
        "items": {"$ref": f"#/$defs/temperature_point_{dimension}"},
        "minItems": 1,
        "maxItems": MAX_TEMPERATURE_POINTS,
    }
    return node


def _spec_def(dimension: str) -> Schema:
    unit = _unit_text(dimension)
    side_text = {
        "min": "Minimum (guaranteed low)",
        "typ": "Typical",
        "max": "Maximum (guaranteed high)",
    }
    props: dict[str, Schema] = {
        side: {
            "$ref": f"#/$defs/quantity_{dimension}",
            "description": f"{text} [{unit}]",
            "x-unit": unit,
        }
        for side, text in side_text.items()
    }
    props["at"] = {"$ref": "#/$defs/conditions", "description": "Conditions the values hold at"}
    return {
        "description": (
            f"A {dimension.replace('_', ' ')} spec: an object with at least one of min, typ, "
            f"max (min <= typ <= max) and optional conditions 'at', or a bare value meaning "
            f"typ [{unit}]"
        ),
        "type": ["number", "string", "object"],
        "x-kind": "spec",
        "x-dimension": dimension,
        "x-unit": unit,
        "properties": props,
        "additionalProperties": False,
        "anyOf": [{"required": ["min"]}, {"required": ["typ"]}, {"required": ["max"]}],
        "x-message": "a spec needs at least one of min, typ, max",
    }


def _conditions_def() -> Schema:
    return _obj(
        "Conditions of a spec (datasheet test conditions)",
        {
            "supply": quantity("voltage", "Total supply voltage", nonnegative=True),
            "temperature": quantity(
                "temperature",
                "Ambient temperature, or 'full-range' for the whole rated range",
                words=("full-range",),
            ),
            "load": quantity("resistance", "Load resistance", nonnegative=True),
            "frequency": quantity("frequency", "Frequency", nonnegative=True),
            "note": _text("Other conditions, free text"),
        },
    )


def _swing_def() -> Schema:
    point = _obj(
        "One point of the headroom curve",
        {
            "current": quantity("current", "Output current (magnitude)", nonnegative=True),
            "headroom": spec("voltage", "Headroom to the rail at this current", nonnegative=True),
        },
        ("current", "headroom"),
    )
    return {
        "description": (
            f"Output swing headroom to a rail versus output current: a list of 2..."
            f"{MAX_SWING_POINTS} points with increasing current, or an object with "
            "'saturation' and 'resistance' (headroom = saturation + resistance * current)"
        ),
        "type": ["array", "object"],
        "items": point,
        "minItems": 2,
        "maxItems": MAX_SWING_POINTS,
        "properties": {
            "saturation": spec("voltage", "Headroom at zero current", nonnegative=True),
            "resistance": spec(
                "resistance", "Output resistance towards the rail", nonnegative=True
            ),
        },
        "required": ["saturation", "resistance"],
        "additionalProperties": False,
    }


def _part_skeleton() -> Schema:
    """The part record without the PARAMS specs (inserted by :func:`build_schema`)."""
    package = _obj(
        "One package option",
        {
            "code": _text("Package code, e.g. SO-8", minLength=1),
            "pinout": _text(
                "Pinout name, e.g. DUAL-8A; parts with equal pinouts fit one footprint", minLength=1
            ),
            "theta_ja": quantity(
                "thermal_resistance", "Junction-to-ambient thermal resistance", nonnegative=True
            ),
        },
        ("code", "pinout"),
    )
    swing = {"$ref": "#/$defs/swing"}
    return _obj(
        "One amplifier part",
        {
            "part_number": _text(
                "Orderable part number, unique in the catalogue (case-insensitive); printable "
                "characters and plain spaces, at most 200",
                minLength=1,
            ),
            "maker": _text("Maker name (printable characters and plain spaces)", minLength=1),
            "family": _text("Part family"),
            "description": _text("Short description"),
            "channels": {
                "type": "integer",
                "enum": [1, 2, 4],
                "description": "Amplifiers per package [1]",
                "x-unit": "1",
            },
            "lifecycle": _text("Production status", enum=[v.value for v in Lifecycle]),
            "packages": {
                "type": "array",
                "minItems": 1,
                "items": package,
                "description": "Package options (at least one)",
            },
            "temperature": _obj(
                "Rated ambient temperature range",
                {
                    "min": quantity("temperature", "Lowest rated ambient temperature"),
                    "max": quantity("temperature", "Highest rated ambient temperature"),
                },
                ("min", "max"),
            ),
            "junction_max": quantity(
                "temperature", "Largest junction temperature (default 150 degC)"
            ),
            "price": _obj(
                "Unit price",
                {
                    "unit": {
                        "type": "number",
                        "minimum": 0,
                        "x-unit": "currency unit",
                        "description": "Price of one part [currency unit]",
                    },
                    "currency": _text("ISO 4217 currency code", pattern="^[A-Z]{3}$"),
                    "quantity": {
                        "type": "integer",
                        "minimum": 1,
                        "x-unit": "1",
                        "description": "Order quantity the price holds for [1]",
                    },
                },
                ("unit", "currency"),
            ),
            "supply": _obj(
                "Supply",
                {
                    "range": _obj(
                        "Total supply voltage range V+ - V-",
                        {
                            "min": quantity(
                                "voltage", "Lowest total supply voltage", nonnegative=True
                            ),
                            "max": quantity(
                                "voltage", "Highest total supply voltage", nonnegative=True
                            ),
                        },
                        ("min", "max"),
                    )
                },
                ("range",),
            ),
            "input": _obj(
                "Input stage",
                {
                    "rail_to_rail": {
                        "type": "boolean",
                        "description": "Input common-mode range includes both rails "
                        "(default false)",
                    }
                },
            ),
            "dynamics": _obj(
                "Dynamics",
                {
                    "min_stable_gain": {
                        "type": "number",
                        "minimum": 1,
                        "x-unit": "V/V",
                        "description": "Lowest stable closed-loop (noise) gain; "
                        "1 = unity-gain stable [V/V]",
                    }
                },
            ),
            "output": _obj(
                "Output stage",
                {
                    "topology": _text("Output-stage topology", enum=[v.value for v in Topology]),
                    "swing_pos": {**swing, "description": "Headroom to V+ versus SOURCE current"},
                    "swing_neg": {**swing, "description": "Headroom to V- versus SINK current"},
                },
                ("topology",),
            ),
            "notes": _text("Free text"),
        },
        (
            "part_number",
            "maker",
            "channels",
            "lifecycle",
            "packages",
            "temperature",
            "supply",
            "output",
        ),
    )


def build_schema() -> Schema:
    """Build the catalogue file JSON Schema from :data:`partsel.params.PARAMS`."""
    part = _part_skeleton()
    for p in PARAMS:
        node = part
        for name in p.path[:-1]:
            node = node["properties"][name]
        node["properties"][p.path[-1]] = spec(
            p.dimension, p.description, nonnegative=p.nonnegative, points=True
        )
    dims = [d for d in SI_UNIT if d not in ("dimensionless", "price")]
    defs: dict[str, Schema] = {}
    for d in dims:
        defs[f"quantity_{d}"] = _quantity_def(d)
    for d in dims:
        defs[f"spec_{d}"] = _spec_def(d)
    for d in sorted({p.dimension for p in PARAMS}, key=dims.index):
        defs[f"param_spec_{d}"] = _param_spec_def(d)
        defs[f"temperature_point_{d}"] = _temperature_point_def(d)
    defs["conditions"] = _conditions_def()
    defs["swing"] = _swing_def()
    defs["maker"] = _obj(
        "A maker",
        {
            "name": _text("Maker name", minLength=1),
            "suffix_rules": {
                "type": "array",
                "items": _text(
                    "Suffix rule: literal characters, '#' for a digit, '[A-Z]' classes, an "
                    "optional trailing '$' (see partsel.io.suffix); not a regular expression"
                ),
                "description": "Packing or package suffixes stripped from the end of BOM part "
                "numbers when matching them to catalogue part numbers (e.g. '-TR', '/R7')",
            },
        },
        ("name",),
    )
    defs["part"] = part
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": "partsel catalogue file",
        "description": (
            f"Catalogue file format {FORMAT_NAME}: maker records and amplifier part records. "
            "Quantities are SI numbers or quantity strings; temperatures in degC."
        ),
        "type": "object",
        "properties": {
            "format": {"const": FORMAT_NAME, "description": "File format name and version"},
            "makers": {
                "type": "array",
                "items": {"$ref": "#/$defs/maker"},
                "description": "Maker records",
            },
            "parts": {
                "type": "array",
                "items": {"$ref": "#/$defs/part"},
                "description": "Part records",
            },
        },
        "additionalProperties": False,
        "$defs": defs,
    }


@lru_cache(maxsize=1)
def catalogue_schema() -> Schema:
    """The generated schema, built once and shared (callers must not modify it)."""
    return build_schema()


def schema_text() -> str:
    """The generated schema as committed (2-space indented JSON, trailing newline)."""
    return json.dumps(build_schema(), indent=2, ensure_ascii=False) + "\n"


def write_schema(path: Path) -> None:
    """Write the generated schema to ``path`` (to regenerate the committed file)."""
    path.write_text(schema_text(), encoding="utf-8")


if __name__ == "__main__":  # python -m partsel.catalogue.schema data-schema/catalogue.schema.json
    import sys

    write_schema(Path(sys.argv[1]) if len(sys.argv) > 1 else SCHEMA_RELPATH)
