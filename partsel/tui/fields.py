"""The fields of the design form: one table built from the design reader's and the solver's
registries, and the conversion between form text and a design mapping (no textual here).

Every field has a JSON pointer path into the design file (``/load/resistance``,
``/requirements/limits/max_thd``); the problems that :func:`partsel.design.design_from_mapping`
raises carry the same pointers, so each one is shown beside its own field.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

from partsel.design import PERCENT_LIMITS as _PERCENT_LIMITS
from partsel.design import QUANTITY_FIELDS, design_from_mapping, design_to_mapping
from partsel.errors import InputError, Problem, json_pointer
from partsel.io.textfile import value_at
from partsel.physics.circuit import Design
from partsel.solver import requirements as req_mod

FieldKind = Literal["quantity", "choice", "integer", "text", "list", "weight", "names"]


@dataclass(frozen=True)
class FieldSpec:
    """One field of the design form.

    Attributes
    ----------
    path: location in the design mapping, e.g. ``("load", "resistance")``.
    label: short label for people.
    unit: unit shown after the input ('' for none).
    kind: how the text is read (quantity strings are read by the design reader itself).
    help: one line shown as the tooltip.
    group: the form section the field sits in.
    choices: the allowed values of a ``choice`` field.
    placeholder: shown in an empty input (an example, or the default used).
    """

    path: tuple[str, ...]
    label: str
    unit: str
    kind: FieldKind
    help: str
    group: str
    choices: tuple[str, ...] = ()
    placeholder: str = ""

    @property
    def id(self) -> str:
        """Widget id: ``f-load-resistance``."""
        return "f-" + "-".join(self.path).replace("_", "-")

    @property
    def pointer(self) -> str:
        """JSON pointer of the field in a design file."""
        return json_pointer(*self.path)


_LABELS: dict[tuple[str, str], str] = {
    ("supply", "positive"): "V+ rail",
    ("supply", "negative"): "V− rail",
    ("signal", "bias"): "bias",
    ("signal", "amplitude"): "amplitude (peak)",
    ("signal", "frequency"): "frequency",
    ("amplifier", "gain"): "gain",
    ("amplifier", "reference"): "gain reference",
    ("amplifier", "feedback_resistor"): "R feedback",
    ("load", "resistance"): "R load",
    ("load", "reference"): "R load return",
    ("load", "coupling_capacitor"): "C coupling",
    ("load", "capacitance"): "C load",
    ("load", "to_negative_rail"): "R to V−",
    ("load", "to_positive_rail"): "R to V+",
    ("environment", "ambient_min"): "ambient min",
    ("environment", "ambient_max"): "ambient max",
}

_GROUPS: dict[str, str] = {
    "supply": "Supply",
    "signal": "Signal",
    "amplifier": "Amplifier",
    "load": "Load",
    "environment": "Environment",
}

_UNIT_SHOWN: dict[str, str] = {
    "ohm": "Ω",
    "degC": "°C",
    "1": "",
    "currency unit": "",
    "V/rtHz": "V/√Hz",
}

#: Labels of the limits (the design file's key in the tooltip): what is held, and which way.
_LIMIT_LABELS: dict[str, str] = {
    "min_swing_margin": "swing margin ≥",
    "min_cm_margin": "input-CM margin ≥",
    "min_slew_ratio": "slew ratio ≥",
    "min_bandwidth_ratio": "bandwidth ratio ≥",
    "max_cap_load_ratio": "cap-load ratio ≤",
    "max_gain_error": "gain error ≤",
    "max_thd": "THD estimate ≤",
    "max_glitch": "glitch ≤",
    "min_source_fraction": "source fraction ≥",
    "min_fix_resistance": "fix resistor ≥",
    "max_supply_current": "supply current ≤",
    "max_price": "price ≤",
    "max_offset": "offset ≤",
    "max_noise": "noise density ≤",
    "max_bias_current": "bias current ≤",
    "min_yield": "yield ≥",
    "lifecycle": "lifecycle in",
    "packages": "package in",
    "channels": "channels in",
}
#: Placeholder of a limit that has no default (nothing is checked while it is empty).
NO_LIMIT = "no limit"


def limit_label(key: str) -> str:
    """The form label of limit ``key`` (its key in words when not listed)."""
    return _LIMIT_LABELS.get(key, key.replace("_", " "))


def _shown_text(text: str) -> str:
    """A quantity for the form's hints, with the screen's unit symbols ("25 degC" -> "25 °C")."""
    return text.replace(" degC", " °C")


#: Limits shown as percentages in the form (ratios that engineers state in %): the design
#: file's own rule (partsel.design.PERCENT_LIMITS).
PERCENT_LIMITS = tuple(sorted(_PERCENT_LIMITS))


def _quantity_unit(section: str, key: str) -> str:
    unit = QUANTITY_FIELDS[(section, key)].unit_label
    return _UNIT_SHOWN.get(unit, unit)


def _build_fields() -> tuple[FieldSpec, ...]:
    out: list[FieldSpec] = [
        FieldSpec(("name",), "name", "", "text", "Name of the design", "Design"),
    ]

    def quantity(section: str, key: str) -> FieldSpec:
        q = QUANTITY_FIELDS[(section, key)]
        hint = (
            f"default {_shown_text(q.default)}"
            if q.default is not None
            else f"e.g. {_shown_text(q.example)}"
        )
        return FieldSpec(
            (section, key),
            _LABELS[(section, key)],
            _quantity_unit(section, key),
            "quantity",
            q.description,
            _GROUPS[section],
            placeholder=hint,
        )

    for key in ("positive", "negative"):
        out.append(quantity("supply", key))
    for key in ("bias", "amplitude", "frequency"):
        out.append(quantity("signal", key))
    out.append(
        FieldSpec(
            ("amplifier", "configuration"),
            "configuration",
            "",
            "choice",
            "Amplifier configuration",
            "Amplifier",
            choices=("non-inverting", "inverting"),
        )
    )
    for key in ("gain", "reference", "feedback_resistor"):
        out.append(quantity("amplifier", key))
    out.append(quantity("load", "resistance"))
    out.append(
        FieldSpec(
            ("load", "coupling"),
            "coupling",
            "",
            "choice",
            "How R load is connected: directly (dc) or through C coupling (ac)",
            "Load",
            choices=("dc", "ac"),
        )
    )
    for key in ("coupling_capacitor", "reference", "capacitance", "to_negative_rail"):
        out.append(quantity("load", key))
    out.append(quantity("load", "to_positive_rail"))
    for key in ("ambient_min", "ambient_max"):
        out.append(quantity("environment", key))
    out.append(
        FieldSpec(
            ("environment", "channels_used"),
            "channels used",
            "",
            "integer",
            "Number of amplifier channels the design uses (1 to 4)",
            "Environment",
            placeholder="default 1",
        )
    )
    # requirements
    group = "Requirements"
    out.append(
        FieldSpec(
            ("requirements", "basis"),
            "basis",
            "",
            "choice",
            "Value basis: worst-case (guaranteed values, the pessimistic side of every range) "
            "or typical",
            group,
            choices=tuple(req_mod.BASES),
        )
    )
    out.append(
        FieldSpec(
            ("requirements", "conduction"),
            "conduction",
            "",
            "choice",
            "no-change: the stage must stay in one mode; fix-allowed: or with the fix "
            "resistor; allowed: a handover is accepted (glitch and THD limits still apply)",
            group,
            choices=tuple(req_mod.CONDUCTION_MODES),
        )
    )
    out.append(
        FieldSpec(
            ("requirements", "fix_series"),
            "fix series",
            "",
            "choice",
            "IEC 60063 series of the fix resistor",
            group,
            choices=tuple(req_mod.FIX_SERIES),
        )
    )
    limits = "Limits"
    for d in req_mod.LIMITS:
        unit = "%" if d.key in PERCENT_LIMITS else _UNIT_SHOWN.get(d.unit, d.unit)
        if d.default is not None:
            hint = f"default {_shown_text(_limit_text(d.key, d.default))}"
        else:
            hint = NO_LIMIT
        out.append(
            FieldSpec(
                ("requirements", "limits", d.key),
                limit_label(d.key),
                unit,
                "quantity",
                f"{d.description} (design file: requirements.limits.{d.key})",
                limits,
                placeholder=hint,
            )
        )
    for c in req_mod.CHOICES:
        allowed = "any" if c.values is None else ", ".join(map(str, c.values))
        out.append(
            FieldSpec(
                ("requirements", "limits", c.key),
                limit_label(c.key),
                "",
                "list",
                f"{c.description}; comma-separated ({allowed}; design file: "
                f"requirements.limits.{c.key})",
                limits,
                placeholder="any",
            )
        )
    objectives = "Objectives (weights)"
    for o in req_mod.OBJECTIVES:
        out.append(
            FieldSpec(
                ("requirements", "objectives", o.name),
                o.name.replace("_", " "),
                "",
                "weight",
                f"Weight of: {o.description} ({o.direction}imise); 0 or empty: not counted",
                objectives,
                placeholder="0",
            )
        )
    out.append(
        FieldSpec(
            ("requirements", "pareto"),
            "pareto set",
            "",
            "names",
            "Two or three objectives of the Pareto set, comma-separated (default: the heaviest)",
            objectives,
            placeholder="heaviest",
        )
    )
    return tuple(out)


def _limit_text(key: str, value: float) -> str:
    """A limit's SI value as form text."""
    d = req_mod.LIMIT_BY_KEY[key]
    if key in PERCENT_LIMITS:
        return f"{100 * value:.6g}"
    if d.dimension in ("dimensionless", "price"):
        return f"{value:.6g}"
    from partsel.design import format_quantity

    text = format_quantity(value, d.dimension)
    return text if isinstance(text, str) else f"{text:.6g}"


#: Every field of the form, in display order.
FIELDS: tuple[FieldSpec, ...] = _build_fields()
FIELD_BY_ID: dict[str, FieldSpec] = {f.id: f for f in FIELDS}
FIELD_BY_PATH: dict[tuple[str, ...], FieldSpec] = {f.path: f for f in FIELDS}


def _text(spec: FieldSpec, value: Any) -> str:
    if value is None:
        return ""
    if spec.kind in ("list", "names"):
        return ", ".join(str(v) for v in value)
    if spec.kind == "weight":
        return f"{float(value):g}"
    if len(spec.path) == 3 and spec.path[1] == "limits" and isinstance(value, int | float):
        return _limit_text(spec.path[2], float(value))
    if spec.path == ("amplifier", "gain") and isinstance(value, int | float):
        return f"{value:g}"
    return str(value)


def values_from_design(design: Design) -> dict[str, str]:
    """Form text of every field for ``design`` (quantity strings with units).

    The objectives are spelled out with their weights (the solver's defaults when the design
    gives none), so that a weight typed into the form never silently drops the others.
    """
    data = design_to_mapping(design)
    out = {f.id: _text(f, value_at(data, f.path)) for f in FIELDS}
    req = req_mod.Requirements.from_mapping(design.requirements)
    out[FIELD_BY_PATH[("requirements", "basis")].id] = req.basis
    out[FIELD_BY_PATH[("requirements", "conduction")].id] = req.conduction
    out[FIELD_BY_PATH[("requirements", "fix_series")].id] = req.fix_series
    weights = dict(req.objectives)
    for o in req_mod.OBJECTIVES:
        spec = FIELD_BY_PATH[("requirements", "objectives", o.name)]
        out[spec.id] = f"{weights[o.name]:g}" if o.name in weights else ""
    return out


def _put(mapping: dict[str, Any], path: tuple[str, ...], value: Any) -> None:
    node = mapping
    for p in path[:-1]:
        node = node.setdefault(p, {})
    node[path[-1]] = value


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def mapping_from_values(values: Mapping[str, str]) -> tuple[dict[str, Any], list[Problem]]:
    """A design mapping from form text, and the problems found while reading it.

    Empty fields are left out (the design reader's and the solver's defaults apply). Quantity
    text is passed on as typed: the design reader parses it and reports bad units itself.
    """
    data: dict[str, Any] = {}
    problems: list[Problem] = []
    for spec in FIELDS:
        text = (values.get(spec.id) or "").strip()
        if not text:
            continue
        if spec.kind in ("quantity", "text", "choice"):
            value: Any = text
            if spec.kind == "quantity" and spec.path[-1] in PERCENT_LIMITS and _is_number(text):
                value = f"{text} %"  # a bare number in a percent field is a percentage
            _put(data, spec.path, value)
        elif spec.kind == "integer":
            try:
                _put(data, spec.path, int(text))
            except ValueError:
                problems.append(
                    Problem(f"expected a whole number, got {text!r}", None, None, spec.pointer)
                )
        elif spec.kind == "weight":
            try:
                w = float(text)
            except ValueError:
                problems.append(
                    Problem(f"expected a number >= 0, got {text!r}", None, None, spec.pointer)
                )
                continue
            if not math.isfinite(w):
                problems.append(Problem("expected a finite number", None, None, spec.pointer))
                continue
            if w != 0:
                _put(data, spec.path, w)
        elif spec.kind in ("list", "names"):
            items: list[Any] = [t.strip() for t in text.split(",") if t.strip()]
            if spec.path[-1] == "channels":
                try:
                    items = [int(t) for t in items]
                except ValueError:
                    problems.append(
                        Problem("expected whole numbers, e.g. 1, 2", None, None, spec.pointer)
                    )
                    continue
            _put(data, spec.path, items)
    return data, problems


def field_for_pointer(pointer: str) -> FieldSpec | None:
    """The form field a problem's JSON pointer belongs to (longest matching path), or None."""
    parts = [p.replace("~1", "/").replace("~0", "~") for p in pointer.split("/")[1:]]
    for n in range(len(parts), 0, -1):
        spec = FIELD_BY_PATH.get(tuple(parts[:n]))
        if spec is not None:
            return spec
    return None


@dataclass(frozen=True)
class FormResult:
    """A validated form: the design, or the problems by field id (``""``: not a field's)."""

    design: Design | None
    problems: dict[str, list[str]]


def validate_values(values: Mapping[str, str], source: str | None = None) -> FormResult:
    """Read the form text into a :class:`Design`, with every problem placed at its field."""
    data, problems = mapping_from_values(values)
    design: Design | None = None
    if not problems:
        try:
            design = design_from_mapping(data, source=source)
        except InputError as exc:
            problems = list(exc.problems)
    else:
        try:  # report the reader's problems too, for the fields it can read
            design_from_mapping(data, source=source)
        except InputError as exc:
            problems += exc.problems
    by_field: dict[str, list[str]] = {}
    for p in problems:
        spec = field_for_pointer(p.pointer)
        key = spec.id if spec is not None else ""
        msg = p.message if spec is not None or not p.pointer else f"{p.pointer}: {p.message}"
        if msg not in by_field.get(key, []):
            by_field.setdefault(key, []).append(msg)
    return FormResult(design if not by_field else None, by_field)
