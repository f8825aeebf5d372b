"""Quantity strings to SI floats, at the edges of the program only.

Inside partsel every quantity is a plain float in SI units (V, A, ohm, F, Hz, s, V/s, W, K/W)
with the unit in the variable name (``r_load_ohm``, ``slew_v_per_s``). Temperatures are the one
exception: they are kept in degrees Celsius (``t_ambient_c``), as engineers state them.

Accepted forms (:func:`parse_quantity`); nothing else is read, so no text is ever evaluated:

- **a bare number** (``5e-05``, ``"0.47"``): already SI (degC for a temperature);
- **number [space] [prefix]unit**, the unit one of the expected dimension's (table
  :data:`UNITS`): ``"0.5 V/us"``, ``"50 uA"``, ``"1.2 MHz"``, ``"4.7kΩ"``, ``"-40 degC"``,
  ``"12 nV/rtHz"``, ``"160 K/W"``, ``"0.1 %"``. SI prefixes a f p n u (µ, μ) m k M G T P are
  case-sensitive as in the SI (BIPM SI Brochure, 9th ed., table 7): ``m`` is milli, ``M`` mega;
- **number [space] prefix** with the unit left out, for the one-symbol units (V, A, ohm, F, Hz,
  s, W): ``"10u"`` in a capacitance field is 10 uF, in a current field 10 uA; ``"100n"``,
  ``"1M"`` (mega in every dimension);
- **letter-for-decimal-point codes** (IEC 60062 RKM code for resistance and capacitance, and the
  same habit for the other one-symbol units, common practice): ``"4k7"``, ``"2R2"``, ``"R47"``,
  ``"4n7"``, ``"2u2"``, ``"p68"``, ``"3V3"``; a trailing unit symbol is allowed (``"4k7Ω"``).

Resistance uses the RKM letters of IEC 60062 where a prefix stands alone: ``L`` (milli),
``R`` (unit), ``K``/``k`` (kilo), ``M`` (mega), ``G`` (giga), ``T`` (tera). A lone ``m`` in a
resistance field is refused as ambiguous (SPICE and some BOMs read it as milli, people often
mean mega): write ``1M`` or ``1 Mohm`` for megohms, ``1 mohm`` or ``1L`` for milliohms.

Dimensionless units (``%``, ``percent``, ``ppm``, ``V/V``, ``A/A``) are read only in dimensionless
fields; a price is a bare number. Temperatures may be given in degC (``°C``, ``C``), K or degF
and are refused below absolute zero. Numbers and their exponent are bounded: a value that does
not fit a float (``1e400``, a 401-digit integer) or would be stored as zero (``1e-400``) is
refused, never rounded to infinity or zero.

Why no unit library at run time: the accepted grammar is a closed table of units whose factors
are powers of ten (prefixes) and three temperature scales, so the parser computes each value in
:mod:`decimal` arithmetic and rounds once to the nearest float; ``tests/test_units.py`` checks
every table entry against pint's own definitions. Importing this module builds nothing; the
per-dimension tables are built on first use.

:func:`plausibility` is the table of values that parse but are unlikely in an op-amp catalogue
or design (1e30 V, a GBW of 1e30 Hz): the catalogue validator and the design reader report them
as warnings, not errors.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from decimal import Decimal, localcontext
from functools import cache, lru_cache
from typing import Literal

from partsel.errors import InputError, Problem, excerpt

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

#: SI unit in which each dimension is stored.
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

#: Unit symbol shown to people and written into the JSON Schemas: the SI unit, with "1" for a
#: plain ratio and "currency unit" for a price.
UNIT_LABEL: dict[str, str] = {**SI_UNIT, "dimensionless": "1", "price": "currency unit"}

#: What a value of each dimension is called in messages.
NOUN: dict[str, str] = {
    "voltage": "a voltage",
    "current": "a current",
    "resistance": "a resistance",
    "capacitance": "a capacitance",
    "frequency": "a frequency",
    "time": "a time",
    "slew": "a slew rate",
    "power": "a power",
    "thermal_resistance": "a thermal resistance",
    "temperature": "a temperature",
    "noise_voltage": "a noise voltage density",
    "noise_current": "a noise current density",
    "dimensionless": "a plain number or ratio",
    "price": "a price (a plain number)",
}

#: Examples offered in messages ("write e.g. ...").
EXAMPLES: dict[str, tuple[str, ...]] = {
    "voltage": ("1.5 V", "200 mV"),
    "current": ("50 uA", "20 mA"),
    "resistance": ("4.7 kohm", "4k7"),
    "capacitance": ("100 nF", "4n7"),
    "frequency": ("1 MHz", "10 kHz"),
    "time": ("2 us", "10 ms"),
    "slew": ("0.5 V/us",),
    "power": ("250 mW",),
    "thermal_resistance": ("160 K/W",),
    "temperature": ("-40 degC", "85 degC"),
    "noise_voltage": ("40 nV/rtHz",),
    "noise_current": ("0.5 pA/rtHz",),
    "dimensionless": ("2", "0.1 %", "50 ppm"),
    "price": ("0.24",),
}

#: Longest quantity string read (longer text is refused without looking further).
MAX_QUANTITY_CHARS = 64

#: SI prefixes accepted before a unit, as powers of ten (BIPM SI Brochure, 9th ed., table 7).
PREFIX_EXPONENT: dict[str, int] = {
    "a": -18,
    "f": -15,
    "p": -12,
    "n": -9,
    "u": -6,
    "m": -3,
    "": 0,
    "k": 3,
    "M": 6,
    "G": 9,
    "T": 12,
    "P": 15,
}

#: Prefixes that may stand alone for the unit (``"10u"``, ``"100m"``), every dimension with a
#: one-symbol unit except resistance.
_BARE_PREFIXES = ("f", "p", "n", "u", "m", "k", "M", "G", "T")
#: IEC 60062 (RKM) resistance letters; ``k`` besides ``K`` is common practice.
_RKM_RESISTANCE: dict[str, int] = {"L": -3, "R": 0, "r": 0, "K": 3, "k": 3, "M": 6, "G": 9, "T": 12}

#: One-symbol units, the spellings of each, and the letter that may replace the decimal point
#: (``3V3``) besides the prefixes.
_SIMPLE: dict[str, tuple[tuple[str, ...], str | None]] = {
    "voltage": (("V",), "V"),
    "current": (("A",), "A"),
    "resistance": (("ohm", "Ohm", "ohms"), None),  # "R" is an RKM letter already
    "capacitance": (("F",), "F"),
    "frequency": (("Hz",), None),
    "time": (("s",), None),
    "power": (("W",), "W"),
}

#: Temperature units: kind of scale.
_TEMPERATURE_UNITS: dict[str, str] = {"degC": "C", "C": "C", "K": "K", "degF": "F"}
_ABSOLUTE_ZERO_C = Decimal("-273.15")

#: Dimensionless units and their powers of ten.
_RATIO_UNITS: dict[str, int] = {"%": -2, "percent": -2, "ppm": -6, "V/V": 0, "A/A": 0}

# Replacements applied before reading (the text quoted in messages is the original).
_SPELLINGS = (
    ("\u00b5", "u"),  # micro sign
    ("\u03bc", "u"),  # Greek small letter mu
    ("\u2126", "ohm"),  # ohm sign
    ("\u03a9", "ohm"),  # Greek capital letter omega
    ("\u00b0C", "degC"),
    ("\u2103", "degC"),
    ("\u00b0F", "degF"),
    ("\u2109", "degF"),
    ("\u221aHz", "rtHz"),  # square root sign
    ("sqrt(Hz)", "rtHz"),
    ("sqrtHz", "rtHz"),
    ("Hz**0.5", "rtHz"),
    ("Hz^0.5", "rtHz"),
    ("\u2212", "-"),  # minus sign
    ("\u00a0", " "),  # no-break space
    ("\u202f", " "),  # narrow no-break space
    ("\u2009", " "),  # thin space
)

_NUMBER = r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]{1,4})?"
_NUMBER_RE = re.compile(_NUMBER)
#: number, optional spaces, unit text (no spaces in a unit).
_WITH_UNIT_RE = re.compile(rf"({_NUMBER}) *([^ ]*)")
#: letter-for-decimal-point code: sign, digits, one letter, digits, optional unit symbol.
_INFIX_RE = re.compile(r"([+-]?)([0-9]*)([A-Za-z])([0-9]+)([A-Za-z]*)")
_ARITHMETIC_RE = re.compile(r"[*^()=]|[0-9] *[+/-] *[0-9]")


@dataclass(frozen=True)
class _Unit:
    """A unit of one dimension: power of ten to SI, or a temperature scale."""

    exponent: int = 0
    scale: str | None = None  # temperature scale "C" / "K" / "F"


@cache
def _table(dimension: str) -> dict[str, _Unit]:
    """Unit text -> unit, for one dimension (built on first use)."""
    out: dict[str, _Unit] = {}
    if dimension in _SIMPLE:
        names, _letter = _SIMPLE[dimension]
        for p, e in PREFIX_EXPONENT.items():
            for n in names:
                out[p + n] = _Unit(e)
        if dimension == "resistance":
            for n in names:
                out["K" + n] = _Unit(3)  # RKM heritage: "4.7 Kohm"
    elif dimension == "slew":
        for p, e in PREFIX_EXPONENT.items():
            for q in ("", "m", "u", "n"):
                out[f"{p}V/{q}s"] = _Unit(e - PREFIX_EXPONENT[q])
    elif dimension in ("noise_voltage", "noise_current"):
        base = "V" if dimension == "noise_voltage" else "A"
        for p, e in PREFIX_EXPONENT.items():
            out[f"{p}{base}/rtHz"] = _Unit(e)
    elif dimension == "thermal_resistance":
        for k in ("K", "degC", "C"):
            out[f"{k}/W"] = _Unit(0)
            out[f"{k}/mW"] = _Unit(3)
    elif dimension == "temperature":
        out.update({u: _Unit(0, scale) for u, scale in _TEMPERATURE_UNITS.items()})
    elif dimension == "dimensionless":
        out.update({u: _Unit(e) for u, e in _RATIO_UNITS.items()})
    return out


@cache
def _bare(dimension: str) -> dict[str, int]:
    """Letters standing for prefix-and-unit after a number (``10u``), and in RKM codes."""
    if dimension == "resistance":
        return dict(_RKM_RESISTANCE)
    if dimension not in _SIMPLE:
        return {}
    out = {p: PREFIX_EXPONENT[p] for p in _BARE_PREFIXES}
    letter = _SIMPLE[dimension][1]
    if letter:
        out[letter] = 0
    return out


def units_of(dimension: str) -> tuple[str, ...]:
    """Every unit spelling read after a number in a ``dimension`` field (prefixed forms
    included; the spellings of :data:`_SPELLINGS` such as ``Ω`` and ``°C`` map onto these)."""
    return tuple(_table(dimension))


def bare_letters(dimension: str) -> dict[str, int]:
    """Letters that may follow a number alone or replace its decimal point (``10u``, ``4k7``)
    in a ``dimension`` field, with their powers of ten (empty: none)."""
    return dict(_bare(dimension))


def _dimension_of_unit(unit: str) -> str | None:
    """The dimension whose table holds ``unit`` (for "is a voltage, expected ..." messages)."""
    for d in SI_UNIT:
        if unit in _table(d):
            return d
    return None


def _examples(dimension: str) -> str:
    ex = [f"'{e}'" for e in EXAMPLES[dimension]]
    return ex[0] if len(ex) == 1 else ", ".join(ex[:-1]) + " or " + ex[-1]


def _refusal(text: str, dimension: str, why: str = "") -> str:
    """The message for a string that is not a quantity of ``dimension``."""
    head = f"{excerpt(text)} is not {NOUN[dimension]}"
    return f"{head}{': ' + why if why else ''}; write e.g. {_examples(dimension)}"


class _Refused(ValueError):
    """A quantity string that cannot be read (message for people)."""


def _to_float(value: Decimal, text: str, dimension: str) -> float:
    out = float(value)
    if math.isinf(out):
        raise _Refused(f"{excerpt(text)} is out of range (larger than any float)")
    if out == 0.0 and value != 0:
        raise _Refused(f"{excerpt(text)} is too small to store (it would be 0)")
    return out


def _with_exponent(number: str, exponent: int, text: str, dimension: str) -> float:
    return _to_float(Decimal(number).scaleb(exponent), text, dimension)


def _temperature(number: str, scale: str, text: str) -> float:
    with localcontext() as ctx:
        ctx.prec = 34
        x = Decimal(number)
        if scale == "K":
            c = x + _ABSOLUTE_ZERO_C
        elif scale == "F":
            c = (x - 32) * 5 / 9
        else:
            c = x
        if c < _ABSOLUTE_ZERO_C:
            raise _Refused(f"{excerpt(text)} is below absolute zero (-273.15 degC, 0 K)")
        return _to_float(c, text, "temperature")


def _why_not(unit: str, dimension: str, text: str, original: str) -> str:
    """The message for a number followed by ``unit`` that is not a unit of ``dimension``."""
    other = _dimension_of_unit(unit)
    if other == "dimensionless":
        return (
            f"{excerpt(original)} is a ratio, not {NOUN[dimension]} (wrong unit: only a bare "
            f"number is taken as SI); write e.g. {_examples(dimension)}"
        )
    if other is not None:
        return (
            f"{excerpt(original)} is {NOUN[other]}, not {NOUN[dimension]} (wrong unit); "
            f"write e.g. {_examples(dimension)}"
        )
    if any(q in unit for q in "'\"`"):
        why = "quotes are not part of a unit"
    elif _ARITHMETIC_RE.search(text):
        why = "a quantity is one number and one unit, without arithmetic"
    elif dimension == "resistance" and unit == "m":
        why = (
            "a lone 'm' is ambiguous for a resistance (write '1M' or '1 Mohm' for megohms, "
            "'1 mohm' or '1L' for milliohms)"
        )
    elif unit in _BARE_PREFIXES and not _bare(dimension):
        why = f"a prefix alone needs its unit for {NOUN[dimension]}"
    else:
        why = f"unknown unit {excerpt(unit)}"
    return _refusal(original, dimension, why)


@lru_cache(maxsize=4096)
def _parse_string(text: str, dimension: str) -> float:
    if len(text) > MAX_QUANTITY_CHARS:
        raise _Refused(
            f"{excerpt(text)} is too long for a quantity ({len(text)} characters, at most "
            f"{MAX_QUANTITY_CHARS}); write e.g. {_examples(dimension)}"
        )
    s = text.strip()
    for old, new in _SPELLINGS:
        if old in s:
            s = s.replace(old, new).strip()
    if not s:
        raise _Refused(f"empty quantity; write e.g. {_examples(dimension)}")
    if _NUMBER_RE.fullmatch(s):  # a bare number: SI
        if dimension == "temperature":
            return _temperature(s, "C", text)
        return _with_exponent(s, 0, text, dimension)
    m = _WITH_UNIT_RE.fullmatch(s)
    if m:
        number, unit = m.groups()
        u = _table(dimension).get(unit)
        if u is not None:
            if u.scale is not None:
                return _temperature(number, u.scale, text)
            return _with_exponent(number, u.exponent, text, dimension)
        bare = _bare(dimension)
        if unit in bare:
            return _with_exponent(number, bare[unit], text, dimension)
    m2 = _INFIX_RE.fullmatch(s)
    if m2:
        sign, whole, letter, frac, unit = m2.groups()
        bare = _bare(dimension)
        names = _SIMPLE.get(dimension, ((), None))[0]
        if letter in bare and (unit == "" or unit in names):
            number = f"{sign}{whole or '0'}.{frac}"
            return _with_exponent(number, bare[letter], text, dimension)
    if _tolerance_form(s) is not None:
        raise _Refused(
            f"{excerpt(text)} has a tolerance or a range; only the circuit quantities of a "
            "design take one (a catalogue spec gives min / typ / max instead); write the "
            f"value alone, e.g. {_examples(dimension)}"
        )
    if m:
        raise _Refused(_why_not(m.group(2), dimension, s, text))
    if _ARITHMETIC_RE.search(s) or "**" in s:
        raise _Refused(
            _refusal(text, dimension, "a quantity is one number and one unit, without arithmetic")
        )
    if any(q in s for q in "'\"`"):
        raise _Refused(_refusal(text, dimension, "quotes are not part of a quantity"))
    if not any(c.isdigit() for c in s):
        raise _Refused(_refusal(text, dimension, "it has no number"))
    raise _Refused(_refusal(text, dimension))


def parse_quantity(
    value: object,
    dimension: str,
    *,
    field: str = "",
    file: str | None = None,
    record: str | None = None,
) -> float:
    """Parse ``value`` (number or quantity string) to a float in the SI unit of ``dimension``.

    See the module docstring for the accepted forms. Raises
    :class:`~partsel.errors.InputError` naming ``field`` (a JSON pointer), ``file`` and
    ``record`` when the string is not one of those forms, the unit belongs to another dimension,
    the number is not finite or does not fit a float, or a temperature is below absolute zero.
    Never raises anything else for any ``value``; a ``KeyError`` only for an unknown
    ``dimension`` (a programming error).
    """
    if dimension not in SI_UNIT:
        raise KeyError(f"unknown dimension {dimension!r}")
    if isinstance(value, bool):
        raise InputError(
            "expected a number or quantity, got a boolean", file=file, record=record, pointer=field
        )
    if isinstance(value, int | float):
        try:
            out = float(value)
        except OverflowError:
            raise InputError(
                f"{excerpt(value)} is out of range (larger than any float)",
                file=file,
                record=record,
                pointer=field,
            ) from None
        if not math.isfinite(out):
            raise InputError(
                f"value is not finite ({excerpt(value)})", file=file, record=record, pointer=field
            )
        if dimension == "temperature" and out < float(_ABSOLUTE_ZERO_C):
            raise InputError(
                f"{out:g} degC is below absolute zero (-273.15 degC, 0 K)",
                file=file,
                record=record,
                pointer=field,
            )
        return out
    if isinstance(value, str):
        try:
            return _parse_string(value, dimension)
        except _Refused as exc:
            raise InputError(str(exc), file=file, record=record, pointer=field) from None
    raise InputError(
        f"expected a number or quantity string, got {excerpt(value)}",
        file=file,
        record=record,
        pointer=field,
    )


# ---- tolerances and ranges (design quantities) -------------------------------------------------

#: How a design quantity's spread is given: a plain value, a tolerance around a nominal value
#: (symmetric or not, relative or absolute), or a range of two values.
ToleranceForm = Literal["exact", "tolerance", "range"]

#: Largest relative tolerance on either side (a tolerance of 100 % or more would take a value
#: through zero: a range is the way to state such a spread).
MAX_RELATIVE_TOLERANCE = 1.0

_PLUS_MINUS = ("\u00b1", "+/-", "+-")  # the sign, then the two ASCII spellings
_SIGMA_RE = re.compile(r"\(?\s*(?P<k>[0-9]+(?:\.[0-9]*)?)?\s*(?:\u03c3|sigma)\s*\)?$")
_UNSIGNED = r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]{1,4})?"
_ASYM_RE = re.compile(
    rf"(?P<nom>.*?\S)\s*(?P<s1>[+-])\s*(?P<x1>{_UNSIGNED})\s*/\s*(?P<s2>[+-])\s*"
    rf"(?P<x2>{_UNSIGNED})\s*(?P<unit>\S*)"
)
_RELATIVE_UNITS = ("%", "percent", "ppm")


@dataclass(frozen=True)
class Toleranced:
    """A design quantity with its tolerance or range, SI (see :func:`parse_toleranced`).

    ``nominal`` is the value the circuit is designed for (the middle of a range), ``low`` and
    ``high`` the ends of its spread (equal for an exact value). ``sigmas``: the ends lie at
    that many standard deviations of a normal distribution (``"±1 % 1σ"``; a split normal
    when the two sides differ); None: the value is spread uniformly between them (the
    assumption for a tolerance stated without σ). ``relative``: the (below, above) fractions
    when the tolerance was given in percent. ``text``: the string as written (None for a
    number).
    """

    nominal: float
    low: float
    high: float
    form: ToleranceForm = "exact"
    sigmas: float | None = None
    relative: tuple[float, float] | None = None
    text: str | None = None

    @property
    def spread(self) -> bool:
        """True when the value may differ from its nominal (a range of non-zero width)."""
        return self.high > self.low

    @classmethod
    def exact(cls, value: float) -> Toleranced:
        """A value without tolerance."""
        return cls(value, value, value)

    def scaled(self, nominal: float) -> Toleranced:
        """The same tolerance around another nominal value (a relative tolerance keeps its
        fractions, an absolute one its widths; a range moves with the nominal)."""
        if self.relative is not None:
            below, above = self.relative
            lo = _offset(nominal, -abs(nominal), below)
            hi = _offset(nominal, abs(nominal), above)
            return Toleranced(nominal, lo, hi, self.form, self.sigmas, self.relative, None)
        lo = _offset(nominal, -1.0, self.nominal - self.low)
        hi = _offset(nominal, 1.0, self.high - self.nominal)
        return Toleranced(nominal, lo, hi, self.form, self.sigmas, None, None)


def _tolerance_form(s: str) -> str | None:
    """Which tolerance form the (spelling-normalised) text ``s`` has, if any (a trailing
    ``kσ`` is left out of the look)."""
    sm = _SIGMA_RE.search(s)
    if sm is not None:
        s = s[: sm.start()].rstrip()
    if any(pm in s for pm in _PLUS_MINUS):
        return "tolerance"
    if ".." in s:
        return "range"
    if _ASYM_RE.fullmatch(s.strip()):
        return "asymmetric"
    return None


def has_tolerance(text: str) -> bool:
    """True when ``text`` is written with a tolerance or as a range (``"±5 %"``,
    ``"-20/+80 %"``, ``"1 .. 2"``), whether or not the rest of it reads."""
    s = text.replace("\u2026", "..")
    for old, new in _SPELLINGS:
        s = s.replace(old, new)
    return _tolerance_form(s) is not None


def _tol_refusal(text: str, why: str) -> _Refused:
    return _Refused(f"{excerpt(text)}: {why}")


def _tolerance_width(amount: str, unit: str, dimension: str, text: str) -> tuple[float, bool]:
    """One side of a tolerance: (width, relative?) from a number and its unit (``%`` and
    ``ppm`` relative; a unit of ``dimension``, or none, absolute SI)."""
    if unit in _RELATIVE_UNITS:
        frac = _parse_string(f"{amount} {unit}", "dimensionless")
        if not 0 <= frac < MAX_RELATIVE_TOLERANCE:
            raise _tol_refusal(
                text,
                f"a tolerance of {100 * frac:g} % is not possible (a relative tolerance lies "
                "from 0 up to below 100 %; give a range 'LOW .. HIGH' for a wider spread)",
            )
        return frac, True
    try:
        width = _parse_string(f"{amount} {unit}".strip(), dimension)
    except _Refused:
        raise _tol_refusal(
            text,
            f"the tolerance {excerpt(f'{amount} {unit}'.strip())} is neither a percentage "
            f"nor {NOUN[dimension]}; write e.g. '±5 %', or a width in the value's unit",
        ) from None
    if width < 0:
        raise _tol_refusal(text, "a tolerance is a width, >= 0")
    return width, False


@lru_cache(maxsize=1024)
def _parse_toleranced(text: str, dimension: str) -> Toleranced:
    if len(text) > 2 * MAX_QUANTITY_CHARS:
        raise _Refused(
            f"{excerpt(text)} is too long for a quantity with its tolerance ({len(text)} "
            f"characters, at most {2 * MAX_QUANTITY_CHARS})"
        )
    s = text.strip().replace("\u2026", "..")
    for old, new in _SPELLINGS:
        s = s.replace(old, new)
    for pm in _PLUS_MINUS[1:]:
        s = s.replace(pm, _PLUS_MINUS[0])
    form = _tolerance_form(s)
    if form is None:
        v = _parse_string(text, dimension)
        return Toleranced(v, v, v, "exact", None, None, text)
    if dimension == "temperature":
        raise _tol_refusal(
            text,
            "a temperature takes no tolerance here (the ambient range is given by "
            "ambient_min and ambient_max)",
        )
    sigmas: float | None = None
    sm = _SIGMA_RE.search(s)
    if sm is not None:
        k = float(sm.group("k")) if sm.group("k") else 1.0
        if not 0 < k <= 10:
            raise _tol_refusal(text, "the ends of a spread lie at 1 to 10 σ (e.g. '±3 % 3σ')")
        sigmas = k
        s = s[: sm.start()].rstrip()
    form = _tolerance_form(s)  # again, without the σ
    if form is None:
        raise _tol_refusal(text, "σ belongs after a tolerance or a range ('±3 % 3σ')")
    if form == "range":
        lo_text, _, hi_text = s.partition("..")
        lo_text, hi_text = lo_text.strip(), hi_text.strip()
        if not lo_text or not hi_text or ".." in hi_text:
            raise _tol_refusal(text, "a range is 'LOW .. HIGH', e.g. '1.8 kohm .. 2.2 kohm'")
        bare = [bool(_NUMBER_RE.fullmatch(t)) for t in (lo_text, hi_text)]
        if bare[0] != bare[1]:
            raise _tol_refusal(
                text, "write the unit at both ends of a range (e.g. '1.8 kohm .. 2.2 kohm')"
            )
        lo = _parse_string(lo_text, dimension)
        hi = _parse_string(hi_text, dimension)
        if lo > hi:
            raise _tol_refusal(
                text, f"the range's low end {lo_text} is above its high end {hi_text}"
            )
        return Toleranced(0.5 * (lo + hi), lo, hi, "range", sigmas, None, text)
    if form == "tolerance":
        nom_text, _, tol_text = s.partition(_PLUS_MINUS[0])
        nom_text, tol_text = nom_text.strip(), tol_text.strip()
        tm = re.fullmatch(rf"({_UNSIGNED})\s*(\S*)", tol_text)
        if not nom_text or tm is None or _PLUS_MINUS[0] in tol_text:
            raise _tol_refusal(text, "a tolerance is 'VALUE ±WIDTH', e.g. '2 kohm ±10 %'")
        below, relative = _tolerance_width(tm.group(1), tm.group(2), dimension, text)
        above = below
    else:
        am = _ASYM_RE.fullmatch(s)
        assert am is not None
        if am.group("s1") == am.group("s2"):
            raise _tol_refusal(
                text, "an uneven tolerance has one side below and one above, e.g. '-20/+80 %'"
            )
        nom_text = am.group("nom").strip()
        unit = am.group("unit")
        a, rel_a = _tolerance_width(am.group("x1"), unit, dimension, text)
        b, _ = _tolerance_width(am.group("x2"), unit, dimension, text)
        below, above = (a, b) if am.group("s1") == "-" else (b, a)
        relative = rel_a
    nominal = _parse_string(nom_text, dimension)
    if relative:
        if nominal == 0:
            raise _tol_refusal(
                text,
                f"a tolerance in percent of 0 is 0; give it as {NOUN[dimension]} "
                f"(e.g. '0 V ±10 mV')",
            )
        lo, hi = _offset(nominal, -abs(nominal), below), _offset(nominal, abs(nominal), above)
        return Toleranced(nominal, lo, hi, "tolerance", sigmas, (below, above), text)
    lo, hi = _offset(nominal, -1.0, below), _offset(nominal, 1.0, above)
    return Toleranced(nominal, lo, hi, "tolerance", sigmas, None, text)


def _offset(nominal: float, scale: float, width: float) -> float:
    """``nominal + scale * width`` in decimal arithmetic, rounded once (so that "10 uF -20 %"
    ends at 8 uF exactly, not 8.000000000000001 uF)."""
    with localcontext() as ctx:
        ctx.prec = 34
        return float(Decimal(repr(nominal)) + Decimal(repr(scale)) * Decimal(repr(width)))


def parse_toleranced(
    value: object,
    dimension: str,
    *,
    field: str = "",
    file: str | None = None,
    record: str | None = None,
) -> Toleranced:
    """Parse a design quantity that may carry a tolerance or a range.

    Accepted, besides every form of :func:`parse_quantity` (an exact value):

    - ``"2 kohm ±10 %"`` (also ``+-`` and ``+/-``): a symmetric tolerance, relative (``%``,
      ``ppm``) or absolute in a unit of the dimension (``"1.65 V ±20 mV"``);
    - ``"10 uF -20/+80 %"`` (either side first): an uneven tolerance;
    - ``"1.8 kohm .. 2.2 kohm"``: a range (the nominal value is its middle), the unit written
      at both ends;
    - any of these followed by ``kσ`` (``sigma``, ``σ`` alone is 1σ): the ends lie at ``k``
      standard deviations of a normal distribution (``"2 kohm ±3 % 3σ"``); without it the
      value is spread uniformly between the ends.

    A relative tolerance lies from 0 to below 100 % (a wider spread is a range), a range's
    low end may not lie above its high end, a percentage of 0 is refused, and a temperature
    takes none. Raises :class:`~partsel.errors.InputError` naming ``field``; the value's own
    grammar is :func:`parse_quantity`'s (one parser: each number and unit goes through it).
    """
    if isinstance(value, str):
        try:
            return _parse_toleranced(value, dimension)
        except _Refused as exc:
            raise InputError(str(exc), file=file, record=record, pointer=field) from None
    return Toleranced.exact(parse_quantity(value, dimension, field=field, file=file, record=record))


def check_unit(
    unit: object,
    dimension: str,
    *,
    field: str = "",
    file: str | None = None,
    record: str | None = None,
) -> None:
    """Check that ``unit`` (e.g. a sheet column's ``"MHz"``) is a unit of ``dimension``.

    Accepts exactly the units :func:`parse_quantity` reads after a number (with a prefix,
    ``°C``, ``Ω`` and the other spellings). Raises InputError naming ``field`` otherwise: a
    unit that is not a string, an unknown unit, a unit of another dimension, a dimensionless
    unit for a dimensioned field.
    """
    if not isinstance(unit, str) or not unit.strip():
        raise InputError(
            f"a unit is a unit symbol such as {_unit_examples(dimension)}, got {excerpt(unit)}",
            file=file,
            record=record,
            pointer=field,
        )
    try:
        parse_quantity(f"1 {unit.strip()}", dimension)
    except InputError:
        s = unit.strip()
        for old, new in _SPELLINGS:
            s = s.replace(old, new)
        other = _dimension_of_unit(s)
        what = f"a unit of {NOUN[other]}" if other else "not a unit partsel knows"
        raise InputError(
            f"unit {excerpt(unit)} is {what}; this field takes {NOUN[dimension]}, e.g. "
            f"{_unit_examples(dimension)}",
            file=file,
            record=record,
            pointer=field,
        ) from None


def _unit_examples(dimension: str) -> str:
    units = [e.split(" ", 1)[1] for e in EXAMPLES[dimension] if " " in e]
    return " or ".join(f"'{u}'" for u in units) if units else "none (a bare number)"


# ---- plausibility ------------------------------------------------------------------------------


@dataclass(frozen=True)
class Plausible:
    """Range of magnitudes (of non-zero values) that is plausible for one dimension.

    ``low`` / ``high`` bound ``abs(value)`` (temperatures: the value itself, degC); ``source``
    says where the range comes from.
    """

    low: float
    high: float
    source: str


#: Plausible ranges per dimension. Values outside parse, but are reported as warnings: they
#: are almost always a wrong prefix or unit. The ranges are wide on purpose (a decade or more
#: beyond the extremes of op-amp datasheets) so that no real part is flagged.
PLAUSIBLE: dict[str, Plausible] = {
    "voltage": Plausible(1e-12, 1e3, "common practice for op-amp datasheets: supplies and "
                         "levels up to a few hundred volts, offsets down to nanovolts"),
    "current": Plausible(1e-18, 100.0, "common practice for op-amp datasheets: femtoampere "
                         "bias currents up to power-amplifier outputs of about 10 A"),
    "resistance": Plausible(1e-6, 1e15, "common practice: milliohm outputs and shunts up to "
                            "electrometer-grade input resistances of about 1e13 ohm"),
    "capacitance": Plausible(1e-15, 1.0, "common practice: femtofarad parasitics up to "
                             "millifarad supply reservoirs"),
    "frequency": Plausible(1e-3, 1e11, "common practice for op-amp datasheets: 0.1 Hz noise "
                           "bands up to a GBW of about 10 GHz"),
    "time": Plausible(1e-15, 1e4, "common practice: picosecond edges up to settling and "
                      "warm-up times of minutes"),
    "slew": Plausible(1.0, 1e11, "common practice for op-amp datasheets: about 1e-3 V/us "
                      "(micropower) up to about 1e4 V/us (current feedback)"),
    "power": Plausible(1e-12, 1e3, "common practice: picowatt quiescent powers up to "
                       "power-amplifier dissipations of a few hundred watts"),
    "thermal_resistance": Plausible(0.1, 1e4, "common practice for package data: about "
                                    "1 K/W (power tabs) up to about 1000 K/W (tiny packages)"),
    "temperature": Plausible(-200.0, 400.0, "common practice: rated ranges lie within "
                             "-55 to +225 degC; cryogenic and very hot use are rare"),
    "noise_voltage": Plausible(1e-12, 1e-3, "common practice for op-amp datasheets: about "
                               "0.3 nV/rtHz up to a few uV/rtHz"),
    "noise_current": Plausible(1e-18, 1e-6, "common practice for op-amp datasheets: about "
                               "0.1 fA/rtHz up to tens of pA/rtHz"),
    "price": Plausible(1e-4, 1e5, "common practice: unit prices from a fraction of a cent "
                       "to a few thousand currency units"),
}  # fmt: skip


def _ranges() -> dict[str, tuple[float, float, bool]]:
    return {d: (r.low, r.high, d == "temperature") for d, r in PLAUSIBLE.items()}


_RANGES = _ranges()


def is_plausible(value: float, dimension: str) -> bool:
    """True when ``value`` lies in the plausible range of ``dimension`` (zero, NaN and
    dimensions without a range count as plausible). The test behind :func:`plausibility`."""
    rng = _RANGES.get(dimension)
    if rng is None or value == 0 or value != value:
        return True
    lo, hi, signed = rng
    return lo <= (value if signed else abs(value)) <= hi


def plausibility(
    value: float,
    dimension: str,
    *,
    field: str = "",
    file: str | None = None,
    record: str | None = None,
) -> Problem | None:
    """A warning when ``value`` (SI, degC for temperatures) is implausible for ``dimension``.

    Returns None when the value is plausible, zero, NaN or the dimension has no range
    (dimensionless). The warning names ``field`` like an error does, states the range and
    where it comes from (:data:`PLAUSIBLE`), and is for people to look at: callers keep the
    value.
    """
    if not math.isfinite(value) or is_plausible(value, dimension):
        return None
    rng = PLAUSIBLE[dimension]
    label = UNIT_LABEL[dimension]
    if dimension == "temperature":
        message = (
            f"{value:g} degC is outside the plausible range {rng.low:g} .. {rng.high:g} degC "
            f"({rng.source}); check the value and its unit"
        )
    else:
        message = (
            f"{format_si(value, label)} is an implausible {_short_noun(dimension)} "
            f"(expected a magnitude from {format_si(rng.low, label)} to "
            f"{format_si(rng.high, label)}: {rng.source}); check the value and its unit"
        )
    return Problem(message, file, record, field)


def _short_noun(dimension: str) -> str:
    return NOUN[dimension].split(" ", 1)[1].split(" (", 1)[0]


# ---- formatting --------------------------------------------------------------------------------

#: Units written without an engineering prefix (a prefix would not read back, or means little).
_NO_PREFIX = {"degC", "K/W", "1", "currency unit", "%", "V/V"}


def format_si(value: float, unit: str, digits: int = 3) -> str:
    """Format an SI float with an engineering prefix: ``format_si(4.7e-6, "F") == "4.7 uF"``.

    Units in which a prefix makes no sense (degC, K/W, the ratio unit "1", currency) are
    written with the plain number; "1" and "currency unit" as the bare number. The text reads
    back with :func:`parse_quantity` to ``value`` within ``digits`` significant digits.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if unit in _NO_PREFIX:
        shown = "" if unit in ("1", "currency unit") else unit
        return f"{value:.{digits}g} {shown}".strip()
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}".strip()
    from partsel.present import si  # the one SI-prefix formatter

    return si(value, unit, digits)
