"""Design files: the circuit in which parts are judged (format ``partsel.design/1``).

A design file is TOML, YAML or JSON (chosen by the extension ``.toml``, ``.yaml``/``.yml`` or
``.json``) holding the sections ``supply``, ``signal``, ``amplifier``, ``load``, ``environment``
and ``requirements``; its JSON Schema is built by :func:`design_schema` and committed as
``data-schema/design.schema.json``. Values are SI numbers or quantity strings (``"3.3 V"``,
``"10 kohm"``, ``"-40 degC"``), converted with :func:`partsel.units.parse_quantity`.

Reading runs three stages, each collecting every problem it finds before raising one
:class:`~partsel.errors.InputError` (file, record = design name or file stem, JSON pointer):

1. the JSON Schema (unknown or missing fields, wrong types);
2. quantity parsing (unreadable strings, wrong units);
3. physical sense (positive frequency, rails in order, the ideal output inside the rails, ...).

Omitted optional values mean: negative rail 0 V (single supply), unity gain non-inverting, the
gain network returning to the signal bias, no feedback-network load, no resistive load (when
``load.resistance`` or the whole ``load`` table is absent), DC coupling, no load capacitance,
25 degC ambient and one channel used.

The ``description`` field is free text for people; :class:`~partsel.physics.circuit.Design` does
not hold it, so :func:`save_design` does not write it back.
"""

from __future__ import annotations

import copy
import datetime as _dt
import difflib
import json
import math
import os
import re
import tempfile
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path
from typing import Any

import yaml
from jsonschema import Draft202012Validator

from partsel.errors import InputError, Problem, json_pointer
from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.solver import requirements as req_mod
from partsel.units import UNIT_LABEL, format_si, parse_quantity

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
    ),
    ("environment", "ambient_max"): _Quantity(
        "temperature",
        "Highest ambient temperature (numbers are degC)",
        "85 degC",
        default="25 degC",
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


def _quantity_schema(q: _Quantity) -> dict[str, Any]:
    unit = q.unit_label
    text = (
        f"{q.description}. Unit: {unit}; a number in {unit} or a quantity string"
        f" such as '{q.example}'."
    )
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
        q = _Quantity(d.dimension, d.description, d.example)
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


def _requirements_key_problems(
    data: Mapping[str, Any], file: str | None, record: str | None
) -> list[Problem]:
    """Unknown fields directly under ``[requirements]`` (the schema leaves that table open)."""
    raw = data.get("requirements")
    if not isinstance(raw, Mapping):
        return []
    allowed = list(req_mod.TOP_KEYS)
    out = []
    for key in raw:
        if key not in allowed:
            close = difflib.get_close_matches(str(key), allowed, n=1)
            hint = f"did you mean {close[0]!r}?" if close else "allowed here: " + ", ".join(allowed)
            out.append(
                Problem(
                    f"unknown field {key!r}; {hint}",
                    file,
                    record,
                    json_pointer("requirements", key),
                )
            )
    return out


def _read_requirements(
    data: Mapping[str, Any], file: str | None, record: str | None
) -> tuple[dict[str, Any] | None, list[Problem]]:
    """The ``[requirements]`` table with quantities in SI (the canonical mapping of
    :meth:`partsel.solver.requirements.Requirements.from_mapping`), and its unit problems.

    Only the fields given are kept (defaults are the solver's), so that writing the design
    back gives the same table.
    """
    raw = data.get("requirements")
    if raw is None:
        return None, []
    problems: list[Problem] = []
    out = copy.deepcopy(dict(raw))
    limits = raw.get("limits")
    if isinstance(limits, Mapping):
        parsed: dict[str, Any] = {}
        for key, value in limits.items():
            d = req_mod.LIMIT_BY_KEY.get(key)
            if d is None:
                parsed[key] = copy.deepcopy(value)
                continue
            try:
                parsed[key] = parse_quantity(
                    value,
                    d.dimension,
                    field=json_pointer("requirements", "limits", key),
                    file=file,
                    record=record,
                )
            except InputError as exc:
                problems.extend(exc.problems)
        out["limits"] = parsed
    return out, problems


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


# ---- reading ------------------------------------------------------------------------------


class _UniqueKeyLoader(yaml.SafeLoader):
    """Safe YAML loader that rejects a key given twice in one mapping."""


def _construct_unique_mapping(loader: _UniqueKeyLoader, node: yaml.MappingNode) -> dict:
    loader.flatten_mapping(node)
    seen: set[Any] = set()
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=True)
        if key in seen:
            raise yaml.constructor.ConstructorError(
                None, None, f"key {key!r} given twice", key_node.start_mark
            )
        seen.add(key)
    return loader.construct_mapping(node, deep=True)


_UniqueKeyLoader.add_constructor(
    yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_unique_mapping
)


def _json_unique_pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise ValueError(f"key {key!r} given twice")
        out[key] = value
    return out


def _parse_text(text: str, syntax: str, file: str, record: str) -> Any:
    """Parse file text in ``syntax``; syntax errors become an InputError with the line."""

    def fail(detail: str, line: int | None = None, column: int | None = None) -> InputError:
        where = ""
        if line is not None:
            where = f" at line {line}" + (f", column {column}" if column is not None else "")
        return InputError(f"malformed {syntax}{where}: {detail}", file=file, record=record)

    if syntax == "TOML":
        try:
            return tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            msg = str(exc)
            m = re.search(r"\s*\(at line (\d+), column (\d+)\)", msg)
            if m:
                raise fail(msg[: m.start()], int(m.group(1)), int(m.group(2))) from None
            raise fail(msg) from None
    if syntax == "YAML":
        try:
            return yaml.load(text, Loader=_UniqueKeyLoader)  # a SafeLoader subclass
        except yaml.MarkedYAMLError as exc:
            mark = exc.problem_mark
            detail = exc.problem or exc.context or "syntax error"
            if mark is None:
                raise fail(detail) from None
            raise fail(detail, mark.line + 1, mark.column + 1) from None
        except yaml.YAMLError as exc:
            raise fail(str(exc)) from None
    try:
        return json.loads(text, object_pairs_hook=_json_unique_pairs)
    except json.JSONDecodeError as exc:
        raise fail(exc.msg, exc.lineno, exc.colno) from None
    except ValueError as exc:  # duplicate key from the hook
        raise fail(str(exc)) from None


def load_design(path: str | os.PathLike[str]) -> Design:
    """Read a design file (TOML, YAML or JSON by extension) into a :class:`Design`.

    Raises
    ------
    InputError
        Unknown extension, unreadable or malformed file, or any problem of
        :func:`design_from_mapping`; each names the file, the record and the field.
    """
    p = Path(path)
    file, record = str(p), p.stem
    syntax = EXTENSIONS.get(p.suffix.lower())
    if syntax is None:
        raise InputError(
            f"unknown design file type {p.suffix or '(none)'!r}; use " + ", ".join(EXTENSIONS),
            file=file,
            record=record,
        )
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError("file not found", file=file, record=record) from None
    except UnicodeDecodeError as exc:
        raise InputError(f"not UTF-8 text (byte {exc.start})", file=file, record=record) from None
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror}", file=file, record=record) from None
    data = _parse_text(text, syntax, file, record)
    if data is None:
        raise InputError("design file is empty", file=file, record=record)
    return design_from_mapping(data, source=file)


@lru_cache(maxsize=1)
def _validator() -> Draft202012Validator:
    return Draft202012Validator(design_schema())


def _schema_problems(data: Any, file: str | None, record: str | None) -> list[Problem]:
    """JSON Schema problems of ``data``, one per offending field, in schema order."""
    validator = _validator()
    problems: list[Problem] = []
    for err in validator.iter_errors(data):
        path = list(err.absolute_path)
        kind = err.validator
        if kind == "additionalProperties" and isinstance(err.instance, Mapping):
            allowed = list(err.schema.get("properties", {}))
            for key in err.instance:
                if key in allowed:
                    continue
                close = difflib.get_close_matches(str(key), allowed, n=1)
                hint = (
                    f"did you mean {close[0]!r}?"
                    if close
                    else "allowed here: " + ", ".join(allowed)
                )
                problems.append(
                    Problem(
                        f"unknown field {key!r}; {hint}", file, record, json_pointer(*path, key)
                    )
                )
        elif kind == "required" and isinstance(err.instance, Mapping):
            for key in err.validator_value:
                if key not in err.instance:
                    problems.append(
                        Problem("required field is missing", file, record, json_pointer(*path, key))
                    )
        elif kind == "type" and err.validator_value == ["number", "string"]:
            unit = err.schema.get("x-unit", "")
            problems.append(
                Problem(
                    f"expected a number or a quantity string in {unit}, got "
                    f"{_json_type(err.instance)} {err.instance!r}",
                    file,
                    record,
                    json_pointer(*path),
                )
            )
        elif kind == "const":
            problems.append(
                Problem(
                    f"unsupported format {err.instance!r}; this version reads {FORMAT!r}",
                    file,
                    record,
                    json_pointer(*path),
                )
            )
        else:
            problems.append(Problem(err.message, file, record, json_pointer(*path)))
    return problems


def _json_type(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, Mapping):
        return "a table"
    if isinstance(value, list):
        return "a list"
    return type(value).__name__


class _Reader:
    """Parses quantity fields of a schema-valid mapping, collecting problems."""

    def __init__(self, data: Mapping[str, Any], file: str | None, record: str | None) -> None:
        self.data = data
        self.file = file
        self.record = record
        self.problems: list[Problem] = []

    def has(self, section: str, key: str) -> bool:
        return key in self.data.get(section, {})

    def get(self, section: str, key: str) -> float | None:
        """Value of a quantity field in SI (its default if absent; None if absent w/o default
        or unreadable)."""
        q = QUANTITY_FIELDS[(section, key)]
        raw = self.data.get(section, {}).get(key, q.default)
        if raw is None:
            return None
        try:
            return parse_quantity(
                raw,
                q.dimension,
                field=json_pointer(section, key),
                file=self.file,
                record=self.record,
            )
        except InputError as exc:
            self.problems.extend(exc.problems)
            return None

    def problem(self, message: str, section: str, key: str) -> None:
        self.problems.append(Problem(message, self.file, self.record, json_pointer(section, key)))


def _v(value: float) -> str:
    return format_si(value, "V", digits=4)


def design_from_mapping(data: Mapping[str, Any], source: str | None = None) -> Design:
    """Build a :class:`Design` from a parsed design file (a mapping of sections).

    Parameters
    ----------
    data : the file's content, e.g. from ``tomllib.load``.
    source : file name, used in error messages and kept as ``Design.source``.

    Raises
    ------
    InputError
        Listing every schema, unit and physical-sense problem found (see the module docstring).
    """
    stem = Path(source).stem if source else None
    if not isinstance(data, Mapping):
        raise InputError(
            f"the top level must be a table of sections, got {_json_type(data)}",
            file=source,
            record=stem,
        )
    raw_name = data.get("name")
    name = raw_name if isinstance(raw_name, str) and raw_name.strip() else (stem or "design")
    record = name
    problems = _schema_problems(data, source, record)
    problems += _requirements_key_problems(data, source, record)
    if problems:
        raise InputError(problems=problems)

    r = _Reader(data, source, record)
    v_pos = r.get("supply", "positive")
    v_neg = r.get("supply", "negative")
    bias = r.get("signal", "bias")
    amplitude = r.get("signal", "amplitude")
    freq = r.get("signal", "frequency")
    gain = r.get("amplifier", "gain")
    ref = r.get("amplifier", "reference")
    r_f = r.get("amplifier", "feedback_resistor")
    r_load = r.get("load", "resistance")
    load_ref = r.get("load", "reference")
    c_couple = r.get("load", "coupling_capacitor")
    c_load = r.get("load", "capacitance")
    r_neg = r.get("load", "to_negative_rail")
    r_pos = r.get("load", "to_positive_rail")
    t_min = r.get("environment", "ambient_min")
    t_max = r.get("environment", "ambient_max")
    requirements, req_problems = _read_requirements(data, source, record)
    r.problems.extend(req_problems)
    if r.problems:
        raise InputError(problems=r.problems)

    amp_sec = data.get("amplifier", {})
    load_sec = data.get("load", {})
    configuration = amp_sec.get("configuration", "non-inverting")
    coupling = load_sec.get("coupling", "dc")
    assert v_pos is not None and v_neg is not None and bias is not None  # required / defaulted
    assert amplitude is not None and freq is not None and gain is not None
    assert load_ref is not None and c_load is not None and t_min is not None
    assert t_max is not None

    # ---- physical sense -----------------------------------------------------------------
    if not v_pos > v_neg:
        r.problem(
            f"positive rail {_v(v_pos)} must be above the negative rail {_v(v_neg)}",
            "supply",
            "positive",
        )
    if not freq > 0:
        r.problem(f"frequency must be > 0, got {format_si(freq, 'Hz')}", "signal", "frequency")
    if not amplitude >= 0:
        r.problem(
            f"amplitude is a peak value and must be >= 0, got {_v(amplitude)}",
            "signal",
            "amplitude",
        )
    if not gain > 0:
        r.problem(f"gain is a magnitude and must be > 0, got {gain:g} V/V", "amplifier", "gain")
    elif configuration == "non-inverting" and gain < 1:
        r.problem(
            f"a non-inverting stage has gain 1 + R_f/R_g >= 1, got {gain:g} V/V; use the "
            "inverting configuration or an input divider for attenuation",
            "amplifier",
            "gain",
        )
    for key, value in (("feedback_resistor", r_f),):
        if value is not None and not value > 0:
            r.problem(f"resistance must be > 0, got {format_si(value, 'ohm')}", "amplifier", key)
    for key, value in (
        ("resistance", r_load),
        ("to_negative_rail", r_neg),
        ("to_positive_rail", r_pos),
    ):
        if value is not None and not value > 0:
            r.problem(f"resistance must be > 0, got {format_si(value, 'ohm')}", "load", key)
    if not c_load >= 0:
        r.problem(f"capacitance must be >= 0, got {format_si(c_load, 'F')}", "load", "capacitance")
    if coupling == "ac":
        if c_couple is None:
            r.problem("coupling = 'ac' needs coupling_capacitor", "load", "coupling_capacitor")
        elif not c_couple > 0:
            r.problem(
                f"coupling capacitor must be > 0, got {format_si(c_couple, 'F')}",
                "load",
                "coupling_capacitor",
            )
        if r_load is None:
            r.problem(
                "coupling = 'ac' needs the load resistance it couples into", "load", "resistance"
            )
    elif c_couple is not None:
        r.problem(
            "coupling_capacitor is used only with coupling = 'ac'; set coupling = 'ac' "
            "or remove it",
            "load",
            "coupling_capacitor",
        )
    if t_min < _ABSOLUTE_ZERO_C:
        r.problem(f"{t_min:g} degC is below absolute zero", "environment", "ambient_min")
    if t_min > t_max:
        r.problem(
            f"ambient_min {t_min:g} degC is above ambient_max {t_max:g} degC",
            "environment",
            "ambient_min",
        )
    try:
        req_mod.Requirements.from_mapping(requirements, file=source, record=record)
    except InputError as exc:
        r.problems.extend(exc.problems)

    design = Design(
        name=name,
        supply=Supply(v_pos_v=v_pos, v_neg_v=v_neg),
        signal=Signal(
            bias_v=bias,
            amplitude_v=amplitude,
            frequency_hz=freq,
            waveform=data["signal"].get("waveform", "sine"),
        ),
        closed_loop=ClosedLoop(
            configuration=configuration, gain=gain, reference_v=ref, feedback_ohm=r_f
        ),
        load=Load(
            r_load_ohm=r_load,
            reference_v=load_ref,
            coupling=coupling,
            c_couple_f=c_couple,
            c_load_f=c_load,
            r_to_neg_ohm=r_neg,
            r_to_pos_ohm=r_pos,
        ),
        t_ambient_min_c=t_min,
        t_ambient_max_c=t_max,
        channels_used=int(data.get("environment", {}).get("channels_used", 1)),
        requirements=requirements,
        source=source,
    )

    # ---- levels against the rails (only when the values they depend on are sane) -----------
    levels_ok = v_pos > v_neg and amplitude >= 0 and gain > 0
    levels_ok = levels_ok and (configuration == "inverting" or gain >= 1)
    if v_pos > v_neg:
        rails = f"the rails {_v(v_neg)} … {_v(v_pos)}"
        if not v_neg <= bias <= v_pos:
            r.problem(f"signal bias {_v(bias)} lies outside {rails}", "signal", "bias")
            levels_ok = False
        if ref is not None and not v_neg <= ref <= v_pos:
            r.problem(f"reference {_v(ref)} lies outside {rails}", "amplifier", "reference")
            levels_ok = False
        if levels_ok:
            out_dc, out_pk = design.out_bias_v, design.out_amplitude_v
            if not v_neg <= out_dc <= v_pos:
                r.problem(
                    f"ideal DC output {_v(out_dc)} (= reference + signal gain × (bias − "
                    f"reference)) lies outside {rails}",
                    "amplifier",
                    "reference",
                )
            elif out_dc - out_pk < v_neg or out_dc + out_pk > v_pos:
                r.problem(
                    f"ideal output {_v(out_dc - out_pk)} … {_v(out_dc + out_pk)} "
                    f"({_v(out_dc)} ± {_v(out_pk)} peak, gain {abs(design.signal_gain):g} V/V) "
                    f"goes outside {rails}; lower the amplitude or the gain, or move the bias",
                    "signal",
                    "amplitude",
                )
    if r.problems:
        raise InputError(problems=r.problems)
    return design


# ---- writing ------------------------------------------------------------------------------

_PREFIX_SCALES = [
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1.0, ""),
    (1e-3, "m"),
    (1e-6, "u"),
    (1e-9, "n"),
    (1e-12, "p"),
    (1e-15, "f"),
]


def format_quantity(value: float, dimension: str, unit: str | None = None) -> str | float:
    """Shortest readable quantity string that parses back to exactly ``value``.

    Tries an engineering prefix (``4.7e-06`` F -> ``"4.7 uF"``), then the plain SI unit; if
    neither reads back bit-for-bit, returns the float itself (a number is SI in a design file).
    """
    label = unit or UNIT_LABEL[dimension]
    candidates: list[str] = []
    if dimension != "temperature" and value != 0 and math.isfinite(value):
        mag = abs(value)
        for scale, prefix in _PREFIX_SCALES:
            if mag >= scale * 0.9995:
                scaled = value / scale
                candidates += [f"{scaled:.{d}g} {prefix}{label}" for d in range(1, 18)]
                break
    candidates += [f"{value:.{d}g} {label}" for d in range(1, 18)]
    candidates.sort(key=lambda text: "e" in text.split()[0])  # plain decimals first
    for text in candidates:
        try:
            if parse_quantity(text, dimension) == value:
                return text
        except InputError:
            continue
    return float(value)


def design_to_mapping(design: Design) -> dict[str, Any]:
    """The design as a mapping in the file format (quantity strings), for saving.

    ``design_from_mapping(design_to_mapping(d), d.source) == d`` for every valid design.
    """

    def q(section: str, key: str, value: float) -> str | float:
        spec = QUANTITY_FIELDS[(section, key)]
        return format_quantity(value, spec.dimension)

    cl, ld, env = design.closed_loop, design.load, {}
    gain: float | int = int(cl.gain) if float(cl.gain).is_integer() else cl.gain
    amplifier: dict[str, Any] = {"configuration": cl.configuration, "gain": gain}
    if cl.reference_v is not None:
        amplifier["reference"] = q("amplifier", "reference", cl.reference_v)
    if cl.feedback_ohm is not None:
        amplifier["feedback_resistor"] = q("amplifier", "feedback_resistor", cl.feedback_ohm)
    load: dict[str, Any] = {}
    if ld.r_load_ohm is not None:
        load["resistance"] = q("load", "resistance", ld.r_load_ohm)
    load["reference"] = q("load", "reference", ld.reference_v)
    load["coupling"] = ld.coupling
    if ld.c_couple_f is not None:
        load["coupling_capacitor"] = q("load", "coupling_capacitor", ld.c_couple_f)
    load["capacitance"] = q("load", "capacitance", ld.c_load_f)
    if ld.r_to_neg_ohm is not None:
        load["to_negative_rail"] = q("load", "to_negative_rail", ld.r_to_neg_ohm)
    if ld.r_to_pos_ohm is not None:
        load["to_positive_rail"] = q("load", "to_positive_rail", ld.r_to_pos_ohm)
    env = {
        "ambient_min": q("environment", "ambient_min", design.t_ambient_min_c),
        "ambient_max": q("environment", "ambient_max", design.t_ambient_max_c),
        "channels_used": design.channels_used,
    }
    out: dict[str, Any] = {
        "format": FORMAT,
        "name": design.name,
        "supply": {
            "positive": q("supply", "positive", design.supply.v_pos_v),
            "negative": q("supply", "negative", design.supply.v_neg_v),
        },
        "signal": {
            "bias": q("signal", "bias", design.signal.bias_v),
            "amplitude": q("signal", "amplitude", design.signal.amplitude_v),
            "frequency": q("signal", "frequency", design.signal.frequency_hz),
            "waveform": design.signal.waveform,
        },
        "amplifier": amplifier,
        "load": load,
        "environment": env,
    }
    if design.requirements is not None:
        out["requirements"] = _requirements_to_mapping(design.requirements)
    return out


def _requirements_to_mapping(req: Mapping[str, Any]) -> dict[str, Any]:
    """The canonical requirements with quantity limits as readable strings (for saving)."""
    out = copy.deepcopy(dict(req))
    limits = out.get("limits")
    if isinstance(limits, dict):
        for key, value in limits.items():
            d = req_mod.LIMIT_BY_KEY.get(key)
            if d is not None and d.dimension not in ("dimensionless", "price"):
                limits[key] = format_quantity(value, d.dimension)
    return out


_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def _toml_key(key: Any) -> str:
    key = str(key)
    return key if _BARE_KEY.fullmatch(key) else _toml_string(key)


def _toml_string(text: str) -> str:
    # A JSON string is a valid TOML basic string once DEL (allowed raw in JSON) is escaped.
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def _toml_value(value: Any, pointer: str) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, _dt.date | _dt.time):
        return value.isoformat()
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_toml_value(v, f"{pointer}/{i}") for i, v in enumerate(value)) + "]"
    if isinstance(value, Mapping):
        return (
            "{"
            + ", ".join(
                f"{_toml_key(k)} = {_toml_value(v, pointer + json_pointer(k))}"
                for k, v in value.items()
            )
            + "}"
        )
    what = "a null value" if value is None else f"a {type(value).__name__}"
    raise InputError(f"TOML cannot hold {what}", pointer=pointer)


def _is_table_array(value: Any) -> bool:
    return isinstance(value, list) and bool(value) and all(isinstance(v, Mapping) for v in value)


def _toml_table(out: list[str], path: list[str], table: Mapping[str, Any], array: bool) -> None:
    if path:
        dotted = ".".join(_toml_key(p) for p in path)
        out.append("")
        out.append(f"[[{dotted}]]" if array else f"[{dotted}]")
    subtables, arrays = [], []
    for key, value in table.items():
        if isinstance(value, Mapping):
            subtables.append((key, value))
        elif _is_table_array(value):
            arrays.append((key, value))
        else:
            out.append(f"{_toml_key(key)} = {_toml_value(value, json_pointer(*path, key))}")
    for key, value in subtables:
        _toml_table(out, [*path, str(key)], value, array=False)
    for key, items in arrays:
        for item in items:
            _toml_table(out, [*path, str(key)], item, array=True)


def toml_dumps(data: Mapping[str, Any]) -> str:
    """Write a mapping as TOML: plain key/values, tables and arrays of tables.

    Raises InputError naming the field for values TOML cannot hold (null, other objects).
    """
    out: list[str] = []
    _toml_table(out, [], data, array=False)
    return "\n".join(out).lstrip("\n") + "\n"


def save_design(design: Design, path: str | os.PathLike[str]) -> None:
    """Write ``design`` to ``path`` as TOML, YAML or JSON (by extension).

    The mapping is checked by reading it back with :func:`design_from_mapping` before anything
    is written, and the file is replaced atomically, so a failure leaves the old file intact.
    """
    p = Path(path)
    file = str(p)
    syntax = EXTENSIONS.get(p.suffix.lower())
    if syntax is None:
        raise InputError(
            f"unknown design file type {p.suffix or '(none)'!r}; use " + ", ".join(EXTENSIONS),
            file=file,
            record=design.name,
        )
    data = design_to_mapping(design)
    try:
        design_from_mapping(data)
        if syntax == "TOML":
            text = toml_dumps(data)
        elif syntax == "YAML":
            text = yaml.safe_dump(data, sort_keys=False, allow_unicode=True)
        else:
            text = json.dumps(data, indent=2, ensure_ascii=False) + "\n"
    except InputError as exc:
        raise exc.with_context(file=file, record=design.name) from None
    except (yaml.YAMLError, TypeError, ValueError) as exc:
        raise InputError(
            f"cannot write as {syntax}: {exc}", file=file, record=design.name
        ) from None
    fd, tmp = tempfile.mkstemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
