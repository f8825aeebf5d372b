"""Writing design files: a :class:`~partsel.physics.circuit.Design` back to TOML, YAML or JSON.

Saving over an existing file (or with the file it was read from as ``base``) keeps what the
design does not hold and what did not change: comments, the description, unknown fields, and
each value's own text (``"4k7"`` stays ``"4k7"`` while it means the same resistance). TOML is
edited in place with tomlkit (a round-trip TOML library), so its layout survives too.
"""

from __future__ import annotations

import copy
import json
import math
import os
import tempfile
from collections.abc import Mapping, MutableMapping
from pathlib import Path
from typing import Any

import yaml

from partsel import present as P
from partsel.design.read import design_from_mapping, parse_structured
from partsel.design.schema import EXTENSIONS, FORMAT, QUANTITY_FIELDS
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.solver import requirements as req_mod
from partsel.units import UNIT_LABEL, Toleranced, parse_quantity, parse_toleranced

#: Dimensionless limits that engineers write as a percentage (THD, gain error).
PERCENT_LIMITS = frozenset({"max_thd", "max_gain_error", "min_yield"})


def format_quantity(value: float, dimension: str, unit: str | None = None) -> str | float:
    """Shortest readable quantity string that parses back to exactly ``value``.

    Tries an engineering prefix (``4.7e-06`` F -> ``"4.7 uF"``, prefixes of
    :data:`partsel.present.PREFIXES`), then the plain SI unit; if neither reads back
    bit-for-bit, returns the float itself (a number is SI in a design file).
    """
    label = unit or UNIT_LABEL[dimension]
    candidates: list[str] = []
    if dimension != "temperature" and value != 0 and math.isfinite(value):
        mag = abs(value)
        for scale, prefix in P.PREFIXES:
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


def format_percent(value: float) -> str | float:
    """A ratio as the percentage string that reads back to exactly ``value`` ("0.1 %",
    "10 %": plain decimals before exponents)."""
    candidates = [f"{100.0 * value:.{d}g} %" for d in range(1, 18)]
    candidates.sort(key=lambda text: "e" in text)
    for text in candidates:
        try:
            if parse_quantity(text, "dimensionless") == value:
                return text
        except InputError:
            continue
    return float(value)


def format_toleranced(tol: Toleranced, dimension: str) -> str | float:
    """A quantity with its tolerance as design-file text: the text it was read from, else
    ``"2 kohm ±10 %"``, ``"10 uF -20/+80 %"``, ``"1.65 V ±20 mV"`` or ``"1.8 kohm .. 2.2
    kohm"``, with ``" 3σ"`` when the ends lie at 3 standard deviations (an exact value: its
    quantity string)."""
    if tol.text is not None:
        return tol.text
    if tol.form == "exact":
        return format_quantity(tol.nominal, dimension)

    def fq(v: float) -> str:
        text = format_quantity(v, dimension)
        return text if isinstance(text, str) else repr(text)

    def pct(frac: float) -> str:
        text = format_percent(frac)
        return text if isinstance(text, str) else f"{100 * frac!r} %"

    if tol.form == "range":
        out = f"{fq(tol.low)} .. {fq(tol.high)}"
    elif tol.relative is not None:
        below, above = tol.relative
        out = (
            f"{fq(tol.nominal)} ±{pct(below)}"
            if below == above
            else f"{fq(tol.nominal)} -{pct(below)[:-2]}/+{pct(above)}"
        )
    else:
        below, above = tol.nominal - tol.low, tol.high - tol.nominal
        unit = UNIT_LABEL[dimension]
        out = (
            f"{fq(tol.nominal)} ±{fq(below)}"
            if below == above
            else f"{fq(tol.nominal)} -{below!r}/+{above!r} {unit}"
        )
    if tol.sigmas is not None:
        out += f" {tol.sigmas:g}σ"
    return out


def design_to_mapping(design: Design) -> dict[str, Any]:
    """The design as a mapping in the file format (quantity strings), for saving.

    ``design_from_mapping(design_to_mapping(d), d.source) == d`` for every valid design.
    Quantities with a tolerance or a range are written with it (as they were read, while the
    value is the same).
    """

    def q(section: str, key: str, value: float) -> str | float:
        spec = QUANTITY_FIELDS[(section, key)]
        tol = design.tolerances.get((section, key))
        if tol is not None:
            if tol.nominal != value:
                tol = tol.scaled(value)
            return format_toleranced(tol, spec.dimension)
        return format_quantity(value, spec.dimension)

    cl, ld = design.closed_loop, design.load
    gain: float | int | str = int(cl.gain) if float(cl.gain).is_integer() else cl.gain
    if ("amplifier", "gain") in design.tolerances:
        gain = q("amplifier", "gain", cl.gain)
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
    """The canonical requirements with limits as readable strings (a THD as "0.1 %")."""
    out = copy.deepcopy(dict(req))
    tol = out.get("fix_tolerance")
    if isinstance(tol, int | float) and not isinstance(tol, bool):
        out["fix_tolerance"] = format_percent(float(tol))
    limits = out.get("limits")
    if isinstance(limits, dict):
        for key, value in limits.items():
            d = req_mod.LIMIT_BY_KEY.get(key)
            if d is None or not isinstance(value, int | float) or isinstance(value, bool):
                continue
            if key in PERCENT_LIMITS:
                limits[key] = format_percent(float(value))
            elif d.dimension not in ("dimensionless", "price"):
                limits[key] = format_quantity(float(value), d.dimension)
    return out


# ---- keeping what did not change ------------------------------------------------------------


def _dimension(path: tuple[str, ...]) -> str | None:
    """The dimension of the quantity field at ``path`` (None: not a quantity)."""
    if len(path) == 2 and path in QUANTITY_FIELDS:
        return QUANTITY_FIELDS[path].dimension  # type: ignore[index]
    if len(path) == 3 and path[:2] == ("requirements", "limits"):
        d = req_mod.LIMIT_BY_KEY.get(path[2])
        return d.dimension if d is not None else None
    return None


def _same(old: Any, new: Any, path: tuple[str, ...]) -> bool:
    """``old`` (as written in the file) means the same as ``new``."""
    dim = _dimension(path)
    if dim is not None:
        try:
            if len(path) == 2:  # a design quantity: the same value and the same tolerance
                a, b = parse_toleranced(_plain(old), dim), parse_toleranced(_plain(new), dim)
                return (a.nominal, a.low, a.high, a.sigmas, a.form) == (
                    b.nominal,
                    b.low,
                    b.high,
                    b.sigmas,
                    b.form,
                )
            return parse_quantity(_plain(old), dim) == parse_quantity(_plain(new), dim)
        except InputError:
            return False
    return bool(_plain(old) == _plain(new))


def _plain(value: Any) -> Any:
    """A tomlkit item as a plain Python value."""
    unwrap = getattr(value, "unwrap", None)
    return unwrap() if callable(unwrap) else value


#: Fields the design model holds: absent from the new mapping means "removed" there.
_HELD: frozenset[tuple[str, ...]] = frozenset(QUANTITY_FIELDS) | {
    ("name",),
    ("format",),
    ("signal", "waveform"),
    ("amplifier", "configuration"),
    ("amplifier", "gain"),
    ("load", "coupling"),
    ("environment", "channels_used"),
}


def _merge(old: MutableMapping[str, Any], new: Mapping[str, Any], path: tuple[str, ...]) -> None:
    """Update ``old`` (in place) to mean ``new``, keeping every item that already does."""
    for key, value in new.items():
        p = (*path, str(key))
        if key in old:
            cur = old[key]
            if isinstance(cur, MutableMapping) and isinstance(value, Mapping):
                _merge(cur, value, p)
                continue
            if _same(cur, value, p):
                continue
        old[key] = value
    for key in list(old.keys()):
        p = (*path, str(key))
        if key in new:
            continue
        if p in _HELD or path[:1] == ("requirements",):
            del old[key]


def _base_document(base: Path, syntax: str) -> Any:
    """The base file's content as an editable document (tomlkit for TOML)."""
    text = base.read_text(encoding="utf-8")
    if syntax == "TOML":
        import tomlkit

        return tomlkit.parse(text)
    return parse_structured(text, syntax, str(base), None)


def save_design(
    design: Design,
    path: str | os.PathLike[str],
    *,
    base: str | os.PathLike[str] | None = None,
) -> None:
    """Write ``design`` to ``path`` as TOML, YAML or JSON (by extension).

    ``base``: a design file to start from (default: ``path`` itself when it exists in the same
    syntax): its comments, description, unknown fields and the text of every value that still
    means the same are kept. The mapping is checked by reading it back with
    :func:`design_from_mapping` before anything is written, and the file is replaced
    atomically, so a failure leaves the old file intact.
    """
    p = Path(path)
    file = str(p)
    syntax = EXTENSIONS.get(p.suffix.lower())
    if syntax is None:
        raise InputError(
            f"unknown design file type {p.suffix or '(none)'!r}; use " + ", ".join(EXTENSIONS),
            file=file,
        )
    data = design_to_mapping(design)
    b = Path(base) if base is not None else (p if p.is_file() else None)
    doc: Any = None
    if b is not None and b.is_file() and EXTENSIONS.get(b.suffix.lower()) == syntax:
        try:
            doc = _base_document(b, syntax)
        except (InputError, OSError, ValueError):
            doc = None  # an unreadable base is replaced, not merged
    try:
        if isinstance(doc, MutableMapping):
            _merge(doc, data, ())
            merged = _plain(doc) if syntax == "TOML" else doc
        else:
            doc, merged = None, data
        design_from_mapping(copy.deepcopy(merged))
        if syntax == "TOML":
            import tomlkit

            text = tomlkit.dumps(doc if doc is not None else data)
        elif syntax == "YAML":
            text = yaml.safe_dump(merged, sort_keys=False, allow_unicode=True)
        else:
            text = json.dumps(merged, indent=2, ensure_ascii=False) + "\n"
    except InputError as exc:
        raise exc.with_context(file=file, record=design.name) from None
    except (yaml.YAMLError, TypeError, ValueError) as exc:
        raise InputError(
            f"cannot write as {syntax}: {exc}", file=file, record=design.name
        ) from None
    try:
        fd, tmp = tempfile.mkstemp(dir=p.parent, prefix=f".{p.name}.", suffix=".tmp")
    except OSError as exc:
        raise InputError(f"cannot write here: {exc.strerror or exc}", file=file) from None
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


__all__ = [
    "PERCENT_LIMITS",
    "design_to_mapping",
    "format_percent",
    "format_quantity",
    "format_toleranced",
    "save_design",
]
