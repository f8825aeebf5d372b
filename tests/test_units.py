"""partsel.units against pint's own conversions (a fresh, default pint registry is the
reference) and the error contract (InputError naming the field)."""

from __future__ import annotations

import math

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from partsel.errors import InputError
from partsel.units import SI_UNIT, format_si, parse_quantity

REF = pint.UnitRegistry()  # reference: pint's default definitions, not partsel's registry

CASES = [
    ("0.5 V/us", "slew", "V/us", 0.5),
    ("13 V/ms", "slew", "V/ms", 13.0),
    ("50 uA", "current", "uA", 50.0),
    ("2.5 mA", "current", "mA", 2.5),
    ("1.2 MHz", "frequency", "MHz", 1.2),
    ("10 kohm", "resistance", "kohm", 10.0),
    ("4.7 uF", "capacitance", "uF", 4.7),
    ("100 pF", "capacitance", "pF", 100.0),
    ("250 mW", "power", "mW", 250.0),
    ("160 K/W", "thermal_resistance", "K/W", 160.0),
    ("2 us", "time", "us", 2.0),
    ("200 mV", "voltage", "mV", 200.0),
]


@pytest.mark.parametrize(("text", "dimension", "unit", "magnitude"), CASES)
def test_parse_matches_pint(text: str, dimension: str, unit: str, magnitude: float) -> None:
    """parse_quantity equals pint's Quantity(magnitude, unit).to(SI unit)."""
    expected = REF.Quantity(magnitude, unit).to(SI_UNIT[dimension]).magnitude
    assert parse_quantity(text, dimension) == pytest.approx(expected, rel=1e-12)


def test_noise_density_root_hertz() -> None:
    """'nV/rtHz' is nV/Hz**0.5 in pint's terms."""
    expected = REF.Quantity(40, "nV / Hz ** 0.5").to("V / Hz ** 0.5").magnitude
    assert parse_quantity("40 nV/rtHz", "noise_voltage") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("text", "magnitude", "unit"), [
    ("-40 degF", -40.0, "degF"),
    ("300 K", 300.0, "K"),
    ("85 degC", 85.0, "degC"),
])  # fmt: skip
def test_temperature_to_celsius(text: str, magnitude: float, unit: str) -> None:
    """Temperatures are kept in degC (offset conversion as pint does it)."""
    expected = REF.Quantity(magnitude, unit).to("degC").magnitude
    assert parse_quantity(text, "temperature") == pytest.approx(expected, abs=1e-9)


def test_numbers_are_si() -> None:
    assert parse_quantity(5e-05, "current") == 5e-05
    assert parse_quantity("5e-05", "current") == pytest.approx(5e-05, rel=1e-15)


@given(st.floats(min_value=1e-3, max_value=1e3), st.sampled_from(["p", "n", "u", "m", "k", "M"]))
def test_prefixed_current_matches_pint(x: float, prefix: str) -> None:
    text = f"{x!r} {prefix}A"
    expected = REF.Quantity(x, f"{prefix}A").to("A").magnitude
    assert parse_quantity(text, "current") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("value", "dimension", "fragment"), [
    ("3 V", "current", "wrong unit"),
    ("1 MHz", "slew", "wrong unit"),
    ("5 furlongz", "voltage", "unknown unit"),
    (True, "voltage", "boolean"),
    ([1], "voltage", "list"),
    ("", "voltage", "empty"),
    (math.inf, "voltage", "not finite"),
])  # fmt: skip
def test_bad_quantities_name_the_field(value: object, dimension: str, fragment: str) -> None:
    with pytest.raises(InputError) as info:
        parse_quantity(value, dimension, field="/parts/0/x", file="f.yaml", record="P1")
    (problem,) = info.value.problems
    assert (problem.file, problem.record, problem.pointer) == ("f.yaml", "P1", "/parts/0/x")
    assert fragment in problem.message


@pytest.mark.parametrize(("value", "unit", "text"), [
    (4.7e-6, "F", "4.7 uF"), (1e6, "Hz", "1 MHz"), (0.0, "V", "0 V"), (-3e-3, "A", "-3 mA"),
])  # fmt: skip
def test_format_si(value: float, unit: str, text: str) -> None:
    """Engineering prefixes per SI (BIPM SI Brochure, table 7)."""
    assert format_si(value, unit) == text
