"""Quantity strings to SI floats, with pint, at the edges of the program only.

Inside partsel every quantity is a plain float in SI units (V, A, ohm, F, Hz, s, V/s, W, K/W)
with the unit in the variable name (``r_load_ohm``, ``slew_v_per_s``). Temperatures are the one
exception: they are kept in degrees Celsius (``t_ambient_c``), as engineers state them.

A value may be given as a number (already SI) or as a string such as ``"0.5 V/us"``,
``"50 uA"``, ``"1.2 MHz"``, ``"10 kohm"``, ``"-40 degC"``, ``"12 nV/rtHz"``.
"""

from __future__ import annotations

import math
from functools import lru_cache
from typing import Literal

import pint

from partsel.errors import InputError

#: Dimension names used throughout partsel, mapped to the SI unit partsel stores.
Dimension = Literal[
    "voltage",
    "current",
    "resistance",
    "capacitance",
    "frequency",
    "time",
    "slew",
    "power",
    "thermal_resistance",
    "temperature",
    "noise_voltage",
    "noise_current",
    "dimensionless",
    "price",
]

#: SI unit in which each dimension is stored (pint unit expression).
SI_UNIT: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "resistance": "ohm",
    "capacitance": "F",
    "frequency": "Hz",
    "time": "s",
    "slew": "V/s",
    "power": "W",
    "thermal_resistance": "K/W",
    "temperature": "degC",
    "noise_voltage": "V/rtHz",
    "noise_current": "A/rtHz",
    "dimensionless": "",
    "price": "",
}

#: Unit symbol shown to people and written into the JSON Schemas.
UNIT_LABEL: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "resistance": "ohm",
    "capacitance": "F",
    "frequency": "Hz",
    "time": "s",
    "slew": "V/s",
    "power": "W",
    "thermal_resistance": "K/W",
    "temperature": "degC",
    "noise_voltage": "V/rtHz",
    "noise_current": "A/rtHz",
    "dimensionless": "1",
    "price": "currency unit",
}


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The one pint registry partsel uses (offset units convert automatically)."""
    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    ureg.define("rtHz = Hz ** 0.5 = rthz = sqrtHz")
    return ureg


@lru_cache(maxsize=4096)
def _parse_string(text: str, dimension: str) -> float:
    ureg = registry()
    cleaned = text.strip().replace("Ω", "ohm").replace("µ", "u").replace("μ", "u")
    if not cleaned:
        raise ValueError("empty quantity")
    q = ureg.Quantity(cleaned)
    target = SI_UNIT[dimension]
    if dimension in ("dimensionless", "price"):
        if not q.dimensionless:
            raise ValueError(f"expected a plain number, got a quantity in {q.units:~}")
        return float(q.to("").magnitude)
    if q.dimensionless:
        # A bare number in a string: already SI.
        return float(q.magnitude)
    try:
        return float(q.to(target).magnitude)
    except pint.DimensionalityError:
        raise ValueError(
            f"wrong unit: {text!r} is a {q.dimensionality}, expected {dimension} "
            f"(for example in {UNIT_LABEL[dimension]})"
        ) from None


def parse_quantity(
    value: object,
    dimension: str,
    *,
    field: str = "",
    file: str | None = None,
    record: str | None = None,
) -> float:
    """Parse ``value`` (number or quantity string) to a float in the SI unit of ``dimension``.

    Raises :class:`~partsel.errors.InputError` naming ``field`` (a JSON pointer) when the
    string cannot be read, the unit has the wrong dimension, or the number is not finite.
    """
    if dimension not in SI_UNIT:
        raise KeyError(f"unknown dimension {dimension!r}")
    if isinstance(value, bool):
        raise InputError(
            "expected a number or quantity, got a boolean", file=file, record=record, pointer=field
        )
    if isinstance(value, int | float):
        out = float(value)
    elif isinstance(value, str):
        try:
            out = _parse_string(value, dimension)
        except ValueError as exc:
            raise InputError(str(exc), file=file, record=record, pointer=field) from None
        except (pint.UndefinedUnitError, pint.errors.DefinitionSyntaxError) as exc:
            raise InputError(
                f"unknown unit in {value!r}: {exc}", file=file, record=record, pointer=field
            ) from None
        except Exception as exc:  # pint raises assorted parser errors (tokenizer, syntax)
            raise InputError(
                f"cannot read quantity {value!r} ({type(exc).__name__})",
                file=file,
                record=record,
                pointer=field,
            ) from None
    else:
        raise InputError(
            f"expected a number or quantity string, got {type(value).__name__}",
            file=file,
            record=record,
            pointer=field,
        )
    if not math.isfinite(out):
        raise InputError("value is not finite", file=file, record=record, pointer=field)
    return out


_PREFIXES = [
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


def format_si(value: float, unit: str, digits: int = 3) -> str:
    """Format an SI float with an engineering prefix: ``format_si(4.7e-6, "F") == "4.7 uF"``."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}".strip()
    mag = abs(value)
    for scale, prefix in _PREFIXES:
        if mag >= scale * 0.9995:
            return f"{value / scale:.{digits}g} {prefix}{unit}".strip()
    scale, prefix = _PREFIXES[-1]
    return f"{value / scale:.{digits}g} {prefix}{unit}".strip()


def format_for_people(value: object, unit: str, digits: int = 3, *, symbols: bool = False) -> str:
    """A value with its catalogue unit label for people: engineering prefixes, slew rates in
    V/µs, temperatures in °C, '—' when missing. ``symbols`` (screens) also writes ohm as Ω,
    micro as µ and a bare number for an empty unit."""
    if value is None:
        return "—"
    try:
        v = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return str(value)
    if math.isnan(v):
        return "—"
    if math.isinf(v):
        return "∞" if v > 0 else "-∞"
    if unit == "1" or (symbols and unit == ""):
        return f"{v:.{digits}g}"
    if unit == "degC":
        return f"{v:.4g} °C"
    if unit == "V/s":
        return f"{v * 1e-6:.{digits}g} V/µs"
    if unit == "currency unit":
        return f"{v:.2f}"
    if unit == "V/V":
        return f"{v:.{digits}g} V/V"
    if unit == "V/rtHz":
        return format_si(v, "V/√Hz", digits)
    if symbols and unit == "ohm":
        return format_si(v, "Ω", digits)
    text = format_si(v, unit, digits)
    return text.replace(" u", " µ") if symbols else text
