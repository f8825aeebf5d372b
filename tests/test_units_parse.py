"""The quantity grammar of partsel.units: IEC 60062 (RKM) codes, engineers' shorthand, every
unit of the table against pint, refusals (messages in the expected quantity), bounded numbers,
and properties: accepted strings round-trip through format_si; any text or value gives a float
or InputError, never another exception."""

from __future__ import annotations

import math
import time

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from partsel.errors import InputError
from partsel.units import (
    PLAUSIBLE,
    SI_UNIT,
    UNIT_LABEL,
    bare_letters,
    check_unit,
    format_si,
    parse_quantity,
    plausibility,
    units_of,
)

REF = pint.UnitRegistry()  # reference: pint's default definitions
DIMENSIONS = sorted(SI_UNIT)

# ---- IEC 60062 and shorthand ------------------------------------------------------------------

#: IEC 60062:2016 resistance examples (letter as decimal marker), as reproduced in public
#: secondary sources on the RKM code (the standard's own tables were not at hand).
IEC_60062_RESISTANCE = [
    ("R47", 0.47),
    ("4R7", 4.7),
    ("470R", 470.0),
    ("4K7", 4.7e3),
    ("47K", 47e3),
    ("47K3", 47.3e3),
    ("470K", 470e3),
    ("4M7", 4.7e6),
]
#: IEC 60062 capacitance letters p, n, µ, m, F in place of the decimal marker (same sources):
#: 4n7, 10p and 1µ0 are given there; p68, 6n8, 4µ7 and 2m2 follow the same rule.
IEC_60062_CAPACITANCE = [
    ("4n7", 4.7e-9),
    ("10p", 10e-12),
    ("1µ0", 1e-6),
    ("p68", 0.68e-12),
    ("6n8", 6.8e-9),
    ("4µ7", 4.7e-6),
    ("2m2", 2.2e-3),
    ("4F7", 4.7),
]
#: IEC 60062:2016 adds L for milliohm and G, T for giga- and teraohm (from memory of the
#: standard's letter table).
IEC_60062_MORE = [("1L5", 1.5e-3), ("2G2", 2.2e9), ("1T0", 1e12)]
#: Engineers' shorthand (common practice, not in the standard): lowercase k, a unit symbol
#: after the code, SI prefix letters alone, rail names such as 3V3.
SHORTHAND = [
    ("4k7", "resistance", 4.7e3),
    ("600R", "resistance", 600.0),
    ("2R2", "resistance", 2.2),
    ("1M", "resistance", 1e6),  # mega, never milli
    ("1 M", "resistance", 1e6),
    ("10k", "resistance", 10e3),
    ("4.7kΩ", "resistance", 4.7e3),
    ("4.7 kΩ", "resistance", 4.7e3),
    ("4.7 kohm", "resistance", 4.7e3),
    ("4k7Ω", "resistance", 4.7e3),
    ("4k7 ohm".replace(" ", ""), "resistance", 4.7e3),
    ("1 Mohm", "resistance", 1e6),
    ("1 mohm", "resistance", 1e-3),  # SI: m is milli when the unit is written
    ("4.7 Kohm", "resistance", 4.7e3),
    ("10u", "capacitance", 10e-6),
    ("2u2", "capacitance", 2.2e-6),
    ("100n", "capacitance", 100e-9),
    ("100 n", "capacitance", 100e-9),
    ("4.7 µF", "capacitance", 4.7e-6),
    ("4.7 μF", "capacitance", 4.7e-6),  # Greek mu as well as the micro sign
    ("4.7uF", "capacitance", 4.7e-6),
    ("1M", "frequency", 1e6),
    ("10u", "current", 10e-6),
    ("100m", "voltage", 0.1),
    ("3V3", "voltage", 3.3),
    ("1V8", "voltage", 1.8),
    ("2u", "time", 2e-6),
    ("0.5 V/µs", "slew", 0.5e6),
    ("13 V/ms", "slew", 13e3),
    ("40 nV/√Hz", "noise_voltage", 40e-9),
    ("40 nV/sqrt(Hz)", "noise_voltage", 40e-9),
    ("40 nV/Hz**0.5", "noise_voltage", 40e-9),  # a fixed spelling, not arithmetic
    ("0.5 pA/rtHz", "noise_current", 0.5e-12),
    ("160 °C/W", "thermal_resistance", 160.0),
    ("160 C/W", "thermal_resistance", 160.0),
    ("-40 °C", "temperature", -40.0),
    ("85C", "temperature", 85.0),
    ("−40 degC", "temperature", -40.0),  # U+2212 minus sign
    ("0.1 %", "dimensionless", 1e-3),
    ("50 ppm", "dimensionless", 50e-6),
    ("2 V/V", "dimensionless", 2.0),
    ("1e3", "frequency", 1e3),
    (".5", "voltage", 0.5),
]


@pytest.mark.parametrize(("text", "value"), IEC_60062_RESISTANCE + IEC_60062_MORE)
def test_iec_60062_resistance_codes(text: str, value: float) -> None:
    """IEC 60062 letter-and-digit code for resistance; exact to the nearest float."""
    assert parse_quantity(text, "resistance") == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize(("text", "value"), IEC_60062_CAPACITANCE)
def test_iec_60062_capacitance_codes(text: str, value: float) -> None:
    """IEC 60062 letter-and-digit code for capacitance; exact to the nearest float."""
    assert parse_quantity(text, "capacitance") == pytest.approx(value, rel=1e-15)


@pytest.mark.parametrize(("text", "dimension", "value"), SHORTHAND)
def test_shorthand(text: str, dimension: str, value: float) -> None:
    assert parse_quantity(text, dimension) == pytest.approx(value, rel=1e-15)


def test_values_are_the_nearest_float() -> None:
    """Decimal arithmetic, one rounding: '50 uA' is the float nearest 5e-5 (Python's float()
    of the decimal text is the reference, correctly rounded per IEEE 754)."""
    assert parse_quantity("50 uA", "current") == float("5e-5")
    assert parse_quantity("0.1 mV", "voltage") == float("1e-4")
    assert parse_quantity("4k7", "resistance") == 4700.0


def test_lone_m_in_a_resistance_is_refused_as_ambiguous() -> None:
    """The rule for 'M': mega in every dimension; a lone 'm' for a resistance is refused
    because SPICE and some BOMs read it as milli while people often mean mega."""
    with pytest.raises(InputError, match="ambiguous"):
        parse_quantity("1m", "resistance")
    assert parse_quantity("1m", "capacitance") == pytest.approx(1e-3, rel=1e-15)


# ---- every table entry against pint -----------------------------------------------------------


def _pint_unit(unit: str) -> str:
    """partsel's unit spelling in pint's terms (pint's definitions are the reference)."""
    out = unit.replace("rtHz", "Hz**0.5").replace("Ohm", "ohm")
    if out.startswith("Kohm"):  # RKM's capital K for kilo
        out = "k" + out[1:]
    if out.split("/")[0] in ("K", "degC", "C"):  # K/W, degC/W, C/W: temperature difference / W
        out = "delta_degC/" + out.split("/", 1)[1]
    return out.replace("%", "percent")


@pytest.mark.parametrize("dimension", [d for d in DIMENSIONS if d not in ("temperature", "price")])
def test_every_unit_matches_pint(dimension: str) -> None:
    """'1.5 <unit>' equals pint's Quantity(1.5, unit) in the SI unit, for every spelling in
    the table (relative 1e-12: pint converts in floats, partsel in decimals)."""
    target = SI_UNIT[dimension].replace("rtHz", "Hz**0.5") or "dimensionless"
    if dimension == "thermal_resistance":
        target = "delta_degC/W"
    units = units_of(dimension)
    assert units  # every dimension but price has units
    for unit in units:
        expected = REF.Quantity(1.5, _pint_unit(unit)).to(target).magnitude
        assert parse_quantity(f"1.5 {unit}", dimension) == pytest.approx(expected, rel=1e-12), unit


@pytest.mark.parametrize(("unit", "pint_unit", "magnitude"), [
    (unit, pint_unit, magnitude)
    for unit, pint_unit in (("degC", "degC"), ("C", "degC"), ("K", "kelvin"), ("degF", "degF"))
    for magnitude in (-40.0, 0.0, 25.0, 300.0)
    if not (unit == "K" and magnitude < 0)
])  # fmt: skip
def test_temperature_units_match_pint(unit: str, pint_unit: str, magnitude: float) -> None:
    """Offset scales converted as pint does (to degC; absolute 1e-9 degC: float noise)."""
    expected = REF.Quantity(magnitude, pint_unit).to("degC").magnitude
    assert parse_quantity(f"{magnitude} {unit}", "temperature") == pytest.approx(expected, abs=1e-9)


# ---- refusals ---------------------------------------------------------------------------------


@pytest.mark.parametrize(("text", "dimension", "fragments"), [
    ("10 kg", "resistance", ["'10 kg' is not a resistance", "'4.7 kohm' or '4k7'"]),
    ("3 V", "current", ["'3 V' is a voltage, not a current", "wrong unit"]),
    ("1 MHz", "slew", ["a frequency, not a slew rate"]),
    ("5 V * 10 ** 10 ** 10", "voltage", ["without arithmetic"]),
    ("1+2 V", "voltage", ["without arithmetic"]),
    ("1 'MHz'", "frequency", ["quotes"]),
    ('1 "MHz"', "frequency", ["quotes"]),
    ("50 percent", "slew", ["is a ratio, not a slew rate", "only a bare number"]),
    ("1 ppm", "voltage", ["ratio"]),
    ("1 rad", "dimensionless", ["unknown unit 'rad'"]),
    ("20 dB", "dimensionless", ["unknown unit 'dB'"]),
    ("2 V", "dimensionless", ["a voltage, not a plain number"]),
    ("1 USD", "price", ["not a price"]),
    ("10u", "slew", ["prefix alone"]),
    ("-300 degC", "temperature", ["below absolute zero"]),
    ("-1 K", "temperature", ["below absolute zero"]),
    ("-500 degF", "temperature", ["below absolute zero"]),
    ("1e400 V", "voltage", ["out of range"]),
    ("1e-400 V", "voltage", ["too small"]),
    ("9" * 70 + " V", "voltage", ["too long"]),
    ("", "voltage", ["empty"]),
    ("V", "voltage", ["no number"]),
    ("1.2.3 V", "voltage", ["not a voltage"]),
    ("٣ V", "voltage", ["not a voltage"]),  # Arabic-Indic digit: ASCII digits only
    ("2R2", "capacitance", ["not a capacitance"]),  # R is a resistance letter only
])  # fmt: skip
def test_refusals_speak_in_the_expected_quantity(
    text: str, dimension: str, fragments: list[str]
) -> None:
    with pytest.raises(InputError) as info:
        parse_quantity(text, dimension, field="/x", file="f.yaml", record="P1")
    (problem,) = info.value.problems
    assert (problem.file, problem.record, problem.pointer) == ("f.yaml", "P1", "/x")
    for fragment in fragments:
        assert fragment in problem.message
    assert "[" not in problem.message  # never base-dimension algebra such as [mass]
    assert len(problem.message) < 250  # never the whole of a long value


@pytest.mark.parametrize(
    "value",
    [10**400, -(10**400), 10**5000, math.nan, -math.inf, 1e308 * 10],
    ids=["401-digit", "negative-401-digit", "5001-digit", "nan", "-inf", "overflowed-float"],
)
def test_huge_and_non_finite_numbers_are_input_errors(value: float) -> None:
    """A 401-digit or 5,000-digit integer (beyond Python's 4,300-digit text limit) and
    non-finite floats give InputError, never OverflowError / ValueError; the message does not
    spell out the number."""
    with pytest.raises(InputError) as info:
        parse_quantity(value, "voltage")
    assert len(str(info.value)) < 120


def test_arithmetic_is_refused_at_once() -> None:
    """Nothing is evaluated: the classic power tower is refused in well under a millisecond
    per call (a loose bound against a hang, not a speed target: 0.1 s for 100 calls)."""
    t0 = time.perf_counter()
    for k in range(100):
        with pytest.raises(InputError):
            parse_quantity(f"5 V * 10 ** 10 ** {k}", "voltage")
    assert time.perf_counter() - t0 < 0.1


def test_check_unit() -> None:
    check_unit("MHz", "frequency")
    check_unit("°C", "temperature")
    check_unit("kΩ", "resistance")
    for unit, fragment in ((["MHz"], "unit symbol"), ("%", "ratio"), ("V", "voltage"),
                           ("furlong", "not a unit"), ("", "unit symbol")):  # fmt: skip
        with pytest.raises(InputError, match=fragment):
            check_unit(unit, "frequency", field="/columns/GBW/unit")


# ---- plausibility -----------------------------------------------------------------------------


@pytest.mark.parametrize(("value", "dimension"), [
    (1e30, "voltage"), (1e30, "frequency"), (1e-30, "current"), (1e20, "resistance"),
    (-250.0, "temperature"), (1e15, "slew"), (2.0, "noise_voltage"),
])  # fmt: skip
def test_implausible_values_warn(value: float, dimension: str) -> None:
    w = plausibility(value, dimension, field="/dynamics/gbw/typ", file="f.yaml", record="P")
    assert w is not None and w.pointer == "/dynamics/gbw/typ" and w.file == "f.yaml"
    assert "common practice" in w.message


@pytest.mark.parametrize(("text", "dimension"), [
    ("1 MHz", "frequency"), ("10 GHz", "frequency"), ("32 V", "voltage"), ("1 fA", "current"),
    ("1e13 ohm", "resistance"), ("-55 degC", "temperature"), ("225 degC", "temperature"),
    ("0.001 V/us", "slew"), ("10000 V/us", "slew"), ("0.9 nV/rtHz", "noise_voltage"),
    ("160 K/W", "thermal_resistance"), ("0 V", "voltage"),
])  # fmt: skip
def test_datasheet_extremes_are_plausible(text: str, dimension: str) -> None:
    """Extremes of op-amp datasheets (common practice) raise no warning."""
    assert plausibility(parse_quantity(text, dimension), dimension) is None


def test_every_dimension_with_units_has_a_plausible_range_and_source() -> None:
    for d in DIMENSIONS:
        if d != "dimensionless":
            assert PLAUSIBLE[d].low < PLAUSIBLE[d].high and PLAUSIBLE[d].source


# ---- properties -------------------------------------------------------------------------------

_MANTISSA = st.floats(min_value=-1e4, max_value=1e4, allow_nan=False).filter(
    lambda x: x == 0 or abs(x) > 1e-4
)


@st.composite
def accepted(draw: st.DrawFn) -> tuple[str, str]:
    """(text, dimension) in one of the accepted forms."""
    dimension = draw(st.sampled_from(DIMENSIONS))
    x = draw(_MANTISSA)
    number = draw(st.sampled_from([repr(x), f"{x:g}", f"{x:.3e}", f"{x:f}"]))
    forms = ["bare"]
    if units_of(dimension):
        forms.append("unit")
    if bare_letters(dimension):
        forms += ["letter", "code"]
    form = draw(st.sampled_from(forms))
    space = draw(st.sampled_from(["", " "]))
    if form == "unit":
        unit = draw(st.sampled_from(units_of(dimension)))
        if dimension == "temperature":
            floor = {"K": 0.0, "degF": -459.67}.get(unit, -273.15)
            number = repr(abs(x) + floor + 1e-3)
        text = f"{number}{space}{unit}"
    elif form == "letter":
        text = f"{number}{space}{draw(st.sampled_from(sorted(bare_letters(dimension))))}"
    elif form == "code":
        whole = draw(st.integers(0, 999))
        frac = draw(st.integers(0, 999))
        letter = draw(st.sampled_from(sorted(bare_letters(dimension))))
        text = f"{whole or ''}{letter}{frac}"
    else:
        if dimension == "temperature":
            number = repr(abs(x) - 273.15 + 1e-3)
        text = number
    return text, dimension


@given(accepted())
def test_accepted_strings_round_trip_through_format_si(case: tuple[str, str]) -> None:
    """parse -> format_si -> parse gives the value back: within 3 significant digits with the
    default digits=3 (relative 5e-3: half a unit of the third digit of a mantissa >= 100),
    and within relative 1e-13 with 15 digits (a few ulp of decimal/float rounding)."""
    text, dimension = case
    value = parse_quantity(text, dimension)
    label = UNIT_LABEL[dimension]
    again = parse_quantity(format_si(value, label), dimension)
    assert again == pytest.approx(value, rel=5e-3, abs=1e-300)
    precise = parse_quantity(format_si(value, label, digits=15), dimension)
    assert precise == pytest.approx(value, rel=1e-13, abs=1e-300)


_QUANTITY_ALPHABET = st.sampled_from(
    [*"0123456789.eE+-*/^() kKmMunpµμΩRLVAFWHzs%'\"°√", "ohm", "degC", "rtHz", "**", "\x00"]
)


@given(
    st.one_of(st.text(max_size=80), st.lists(_QUANTITY_ALPHABET, max_size=30).map("".join)),
    st.sampled_from(DIMENSIONS),
)
def test_any_text_gives_a_float_or_input_error(text: str, dimension: str) -> None:
    """Arbitrary text: a finite float (storable, i.e. accepted by float() round trip) or
    partsel's InputError; never another exception."""
    try:
        value = parse_quantity(text, dimension)
    except InputError as exc:
        assert exc.problems and len(str(exc)) < 400
        return
    assert isinstance(value, float) and math.isfinite(value)
    if dimension == "temperature":
        assert value >= -273.15


_JSONISH = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats() | st.text(max_size=20),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner),
    max_leaves=8,
)


@given(st.one_of(_JSONISH, st.integers(min_value=10**300, max_value=10**1000)))
def test_any_value_gives_a_float_or_input_error(value: object) -> None:
    try:
        out = parse_quantity(value, "current")
    except InputError:
        return
    assert math.isfinite(out)
