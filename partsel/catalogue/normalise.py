"""A canonical part record (see :mod:`partsel.catalogue.validate`) -> one flat row of SI floats.

The columns are listed once, in :mod:`partsel.catalogue.columns`.
"""

from __future__ import annotations

import math
from typing import Any

from partsel.catalogue.columns import (
    SWING_RAILS,
    swing_current_column,
    swing_headroom_column,
)
from partsel.catalogue.schema import DEFAULT_SPEC_TEMPERATURE_C, TEMPERATURE_POINTS
from partsel.catalogue.validate import validate_document
from partsel.errors import InputError
from partsel.io.textfile import value_at
from partsel.params import MAX_SWING_POINTS, PARAMS, SIDES, TemperatureCurve, Topology, column

#: Junction temperature limit assumed when a record gives none, degC (common practice).
DEFAULT_JUNCTION_MAX_C = 150.0

#: Current that places the second point of a saturation/resistance rail.
_RAIL_LIMIT = {"swing_pos": "source_limit", "swing_neg": "sink_limit"}

NAN = math.nan
_NO_DEAD_BAND = {"min": 0.0, "typ": 0.0, "max": 0.0}
#: Column names per parameter and per swing point, computed once.
_PARAM_NAMES = tuple((p, tuple(column(p.key, s) for s in SIDES)) for p in PARAMS)
_SWING_NAMES = tuple(
    (
        rail,
        tuple(
            (swing_current_column(rail, k), tuple(swing_headroom_column(rail, k, s) for s in SIDES))
            for k in range(MAX_SWING_POINTS)
        ),
    )
    for rail in SWING_RAILS
)


def _spec_side(spec: Any, side: str) -> float:
    if isinstance(spec, dict):
        v = spec.get(side)
        if isinstance(v, float):
            return v
    return NAN


def _limit_current(output: dict[str, Any], rail: str) -> float:
    """Typical source (or sink) limit, falling back to min, then max, A."""
    spec = output.get(_RAIL_LIMIT[rail])
    for side in ("typ", "min", "max"):
        v = _spec_side(spec, side)
        if not math.isnan(v):
            return v
    return NAN


def swing_points(output: dict[str, Any], rail: str) -> list[tuple[float, dict[str, float]]]:
    """The headroom curve of ``rail`` as ``[(current_a, {side: headroom_v})]``.

    A ``{saturation, resistance}`` rail becomes two points: at 0 A and at the typical
    source (``swing_pos``) or sink (``swing_neg``) current limit, with
    headroom = saturation + resistance * current on each side.
    """
    curve = output.get(rail)
    if isinstance(curve, list):
        return [(p["current"], {s: _spec_side(p["headroom"], s) for s in SIDES}) for p in curve]
    if isinstance(curve, dict):
        i_a = _limit_current(output, rail)
        sat, res = curve["saturation"], curve["resistance"]
        return [
            (0.0, {s: _spec_side(sat, s) for s in SIDES}),
            (i_a, {s: _spec_side(sat, s) + _spec_side(res, s) * i_a for s in SIDES}),
        ]
    return []


def _packages_text(packages: list[dict[str, Any]]) -> str:
    return ";".join(f"{p['code']}:{p['pinout']}" for p in packages)


def flatten_canonical(canon: dict[str, Any]) -> dict[str, Any]:
    """Flat row (``FLAT_COLUMN_NAMES`` keys) of a canonical part record."""
    output = canon.get("output", {})
    topology = output.get("topology")
    thetas = [p["theta_ja"] for p in canon["packages"] if "theta_ja" in p]
    price = canon.get("price") or {}
    row: dict[str, Any] = {
        "part_number": canon["part_number"],
        "maker": canon["maker"],
        "family": canon.get("family"),
        "description": canon.get("description"),
        "channels": int(canon["channels"]),
        "lifecycle": canon["lifecycle"],
        "topology": topology,
        "packages": _packages_text(canon["packages"]),
        "theta_ja_k_per_w": max(thetas) if thetas else NAN,
        "temp_min_c": canon["temperature"]["min"],
        "temp_max_c": canon["temperature"]["max"],
        "junction_max_c": canon.get("junction_max", DEFAULT_JUNCTION_MAX_C),
        "price": float(price["unit"]) if "unit" in price else NAN,
        "currency": price.get("currency"),
        "supply_min_v": canon["supply"]["range"]["min"],
        "supply_max_v": canon["supply"]["range"]["max"],
        "rail_to_rail_input": bool(value_at(canon, ("input", "rail_to_rail")) or False),
        "min_stable_gain": float(value_at(canon, ("dynamics", "min_stable_gain")) or NAN),
    }
    for p, names in _PARAM_NAMES:
        spec = value_at(canon, p.path)
        if spec is None and p.key == "dead_band" and topology != Topology.CLASS_B_PULLDOWN:
            spec = _NO_DEAD_BAND  # biased stages: no dead band
        for side, name in zip(SIDES, names, strict=True):
            row[name] = _spec_side(spec, side)
    for rail, points_names in _SWING_NAMES:
        points = swing_points(output, rail)
        for k, (i_name, v_names) in enumerate(points_names):
            i_a, head = points[k] if k < len(points) else (NAN, {})
            row[i_name] = i_a
            for side, name in zip(SIDES, v_names, strict=True):
                row[name] = head.get(side, NAN)
    return row


def temperature_curves(canon: dict[str, Any]) -> dict[str, TemperatureCurve]:
    """The parameters of a canonical part record given at two or more temperatures: its own
    point (at ``at.temperature``, :data:`DEFAULT_SPEC_TEMPERATURE_C` when not given) and its
    :data:`TEMPERATURE_POINTS`, by :data:`partsel.params.PARAMS` key (parameters given at one
    temperature are absent)."""
    out: dict[str, TemperatureCurve] = {}
    for p in PARAMS:
        spec = value_at(canon, p.path)
        if not isinstance(spec, dict) or not spec.get(TEMPERATURE_POINTS):
            continue
        own = value_at(spec, ("at", "temperature"))
        own_t = own if isinstance(own, float) else DEFAULT_SPEC_TEMPERATURE_C
        points = [(own_t, *(_spec_side(spec, s) for s in SIDES))]
        points += [(q["temperature"], *(_spec_side(q, s) for s in SIDES))
                   for q in spec[TEMPERATURE_POINTS]]  # fmt: skip
        out[p.key] = tuple(sorted(points))  # type: ignore[arg-type]
    return out


def normalise_part(record: dict[str, Any], *, file: str | None = None) -> dict[str, Any]:
    """Flat row of SI floats of one part record as given.

    The record is validated first (schema and semantic checks); raises InputError.
    """
    doc, problems = validate_document({"parts": [record]}, file=file or "<record>")
    if doc is None:
        raise InputError(problems=problems)
    return flatten_canonical(doc.canonical_parts[0])
