"""Formatting of values for the terminal UI: units, verdicts and the symbols that carry meaning
without colour (every coloured mark also has a symbol)."""

from __future__ import annotations

import math
from typing import Any

from partsel.units import format_for_people

#: Symbols used wherever a colour also marks a state (so the screen reads without colour).
OK = "✓"
BAD = "✗"
WARN = "⚠"
BETTER = "▲"
WORSE = "▼"
SAME = "="
MARK = "◆"

#: Short labels of the output-stage topologies.
TOPOLOGY_SHORT: dict[str, str] = {
    "class-a": "A",
    "class-b-pulldown": "B+pd",
    "class-ab": "AB",
    "cmos-rail-to-rail": "CMOS",
}

#: Conduction verdicts of the prediction, for people.
CONDUCTION_LABEL: dict[str, str] = {
    "changes-mode": "hands over",
    "marginal": "marginal",
    "biased-crossover": "biased (AB)",
    "one-mode": "one mode",
}


def finite(value: Any) -> bool:
    """True for a finite real number."""
    try:
        return math.isfinite(float(value))
    except (TypeError, ValueError):
        return False


def quantity(value: Any, unit: str, digits: int = 3) -> str:
    """A value with its unit for people ('—' when missing; units as in the catalogue)."""
    return format_for_people(value, unit, digits, symbols=True)


def percent(value: Any, digits: int = 2) -> str:
    """A ratio as a percentage ('—' when missing)."""
    if not finite(value):
        return "—"
    return f"{100 * float(value):.{digits}g} %"


def ratio(value: Any) -> str:
    """A margin ratio: ``×1.23`` ('∞' for an unbounded pass, '' when missing)."""
    if value is None:
        return ""
    v = float(value)
    if math.isnan(v):
        return ""
    if math.isinf(v):
        return "×∞"
    return f"×{v:.3g}"


def rail_label(rail: str) -> str:
    """``negative`` -> ``V−``, ``positive`` -> ``V+``."""
    return {"negative": "V−", "positive": "V+"}.get(rail, rail)


def check_label(name: str) -> str:
    """A check name for people: ``swing_high`` -> ``swing high``."""
    return name.replace("_", " ")
