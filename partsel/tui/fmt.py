"""The terminal UI's symbols, and its view of :mod:`partsel.present` (the one formatter of
values, labels and verdict words for people): quantities with µ and Ω, and every coloured
mark also carries a symbol so that the screen reads without colour."""

from __future__ import annotations

from typing import Any

from partsel import present as P
from partsel.present import TOPOLOGY_SHORT, check_label, finite, ratio, thd

#: Symbols used wherever a colour also marks a state (so the screen reads without colour).
OK = "✓"
BAD = "✗"
WARN = "⚠"
BETTER = "▲"
WORSE = "▼"
SAME = "="
MARK = "◆"

#: Conduction verdicts of the prediction, short (table cells).
CONDUCTION_LABEL: dict[str, str] = P.CONDUCTION_SHORT

__all__ = [
    "BAD",
    "BETTER",
    "CONDUCTION_LABEL",
    "MARK",
    "OK",
    "SAME",
    "TOPOLOGY_SHORT",
    "WARN",
    "WORSE",
    "check_label",
    "finite",
    "percent",
    "quantity",
    "rail_label",
    "ratio",
    "thd",
]


def quantity(value: Any, unit: str, digits: int = 3) -> str:
    """A value with its unit for the screen (µ, Ω; '—' when missing)."""
    return P.quantity(value, unit, digits, symbols=True)


def percent(value: Any, digits: int = 2) -> str:
    """A ratio as a percentage ('—' when missing)."""
    return P.percent(value, digits)


def rail_label(rail: str) -> str:
    """``negative`` -> ``V−``, ``positive`` -> ``V+``."""
    return P.rail(rail)
