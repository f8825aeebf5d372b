"""Tolerances and ranges of design quantities: the grammar (partsel.units.parse_toleranced),
refusals with their field, the design reader and writer keeping them, the form of the terminal
UI, and bad tolerances at the command line (exit 2, JSON pointer, nothing changed).

The expected ends are the definitions of a tolerance: a relative tolerance ``-a/+b`` of a
nominal value ``x`` spans ``x (1 - a) .. x (1 + b)``, an absolute one ``x - a .. x + b``, a range
its two ends with the middle as nominal. Exact decimal values (the parser rounds once from
decimal arithmetic), so the comparisons are exact unless stated.
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from partsel.design import (
    design_from_mapping,
    design_to_mapping,
    format_toleranced,
    load_design,
    save_design,
)
from partsel.errors import InputError
from partsel.units import has_tolerance, parse_quantity, parse_toleranced

ROOT = Path(__file__).resolve().parents[1]
LINE = ROOT / "sample-catalog" / "designs" / "line-driver-5v.toml"


@pytest.mark.parametrize(
    ("text", "dimension", "nominal", "low", "high", "sigmas"),
    [
        ("2 kohm ±10 %", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("2 kohm +-10 %", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("2k +/- 10%", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("4k7 ±1%", "resistance", 4.7e3, 4.653e3, 4.747e3, None),
        ("1.8 kohm .. 2.2 kohm", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("1k8..2k2", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("1.8 kohm … 2.2 kohm", "resistance", 2e3, 1.8e3, 2.2e3, None),
        ("10 uF -20/+80 %", "capacitance", 10e-6, 8e-6, 18e-6, None),
        ("10u +80/-20 %", "capacitance", 10e-6, 8e-6, 18e-6, None),
        ("1.65 V ±20 mV", "voltage", 1.65, 1.63, 1.67, None),
        ("2.5 V -10/+30 mV", "voltage", 2.5, 2.49, 2.53, None),
        ("-15 V ±5 %", "voltage", -15.0, -15.75, -14.25, None),
        ("2 kohm ±3 % 3σ", "resistance", 2e3, 1.94e3, 2.06e3, 3.0),
        ("2 kohm ±1 % σ", "resistance", 2e3, 1.98e3, 2.02e3, 1.0),
        ("2 kohm ±1 % (1 sigma)", "resistance", 2e3, 1.98e3, 2.02e3, 1.0),
        ("1 kHz ±50 ppm", "frequency", 1e3, 999.95, 1000.05, None),
        ("2 ±1 %", "dimensionless", 2.0, 1.98, 2.02, None),
        ("2 kohm ±0 %", "resistance", 2e3, 2e3, 2e3, None),
    ],
)
def test_tolerance_forms(
    text: str, dimension: str, nominal: float, low: float, high: float, sigmas: float | None
) -> None:
    t = parse_toleranced(text, dimension)
    assert (t.nominal, t.low, t.high, t.sigmas) == (nominal, low, high, sigmas)
    assert t.text == text
    assert has_tolerance(text)


def test_exact_values_are_the_quantity_grammar() -> None:
    """Without a tolerance the one quantity parser answers (every shorthand it reads)."""
    for text, dim in (("4k7", "resistance"), ("10u", "capacitance"), ("3V3", "voltage")):
        t = parse_toleranced(text, dim)
        assert t.form == "exact" and not t.spread
        assert t.nominal == t.low == t.high == parse_quantity(text, dim)
    assert parse_toleranced(2.5, "voltage").nominal == 2.5
    assert not has_tolerance("4.7 kohm")


@pytest.mark.parametrize(
    ("text", "dimension", "words"),
    [
        ("2 kohm ±120 %", "resistance", "120 % is not possible"),
        ("2 kohm ±100 %", "resistance", "100 % is not possible"),
        ("10 uF -120/+80 %", "capacitance", "120 % is not possible"),
        ("2.2 kohm .. 1.8 kohm", "resistance", "low end 2.2 kohm is above its high end"),
        ("1.8 .. 2.2 kohm", "resistance", "unit at both ends"),
        ("10 uF -20/-80 %", "capacitance", "one side below and one above"),
        ("0 V ±5 %", "voltage", "percent of 0"),
        ("2 kohm ±", "resistance", "VALUE ±WIDTH"),
        ("2 kohm ±5 kg", "resistance", "neither a percentage nor a resistance"),
        ("2 kohm ±1 % 20σ", "resistance", "1 to 10 σ"),
        ("25 degC ±2 degC", "temperature", "takes no tolerance"),
        ("2 kohm ±10 % ±5 %", "resistance", "VALUE ±WIDTH"),
    ],
)
def test_bad_tolerances_are_refused_with_their_field(text: str, dimension: str, words: str) -> None:
    with pytest.raises(InputError) as exc:
        parse_toleranced(text, dimension, field="/load/resistance", file="d.toml")
    (problem,) = exc.value.problems
    assert problem.pointer == "/load/resistance" and problem.file == "d.toml"
    assert words in problem.message


def test_a_tolerance_where_only_a_value_is_read() -> None:
    """A catalogue spec or a requirement limit is one value: the message says why."""
    with pytest.raises(InputError, match="has a tolerance or a range"):
        parse_quantity("50 uA ±10 %", "current", field="/output/stage_current")


def _line() -> dict[str, Any]:
    with LINE.open("rb") as fh:
        return tomllib.load(fh)


def _with(**load: Any) -> dict[str, Any]:
    data = _line()
    data["load"].update(load)
    return data


def test_design_keeps_nominal_and_tolerances() -> None:
    d = design_from_mapping(
        _with(resistance="2 kohm ±10 %", coupling_capacitor="10 uF -20/+80 %"), "d.toml"
    )
    assert d.load.r_load_ohm == 2e3 and d.load.c_couple_f == 10e-6
    assert d.tolerances[("load", "resistance")].low == 1.8e3
    assert d.tolerances[("load", "coupling_capacitor")].high == 18e-6
    # a range: the design is built on its middle
    d = design_from_mapping(_with(resistance="1.6 kohm .. 2.4 kohm"), "d.toml")
    assert d.load.r_load_ohm == 2e3


@pytest.mark.parametrize(
    ("section", "key", "value", "pointer", "words"),
    [
        ("load", "coupling", "ac ±5 %", "/load/coupling", "keyword"),
        ("load", "resistance", "2 kohm ±120 %", "/load/resistance", "120 %"),
        ("load", "resistance", "2.2 kohm .. 1.8 kohm", "/load/resistance", "above its high end"),
        ("load", "to_negative_rail", "0 kohm .. 2 kohm", "/load/to_negative_rail",
         "low end of its tolerance"),
        ("amplifier", "gain", "1 ±5 %", "/amplifier/gain", "low end of its tolerance"),
        ("environment", "ambient_max", "50 degC ±5 degC", "/environment/ambient_max",
         "no tolerance"),
        ("requirements", "limits", "0.1 % ±5 %", "/requirements/limits/max_thd",
         "has a tolerance"),
    ],
)  # fmt: skip
def test_bad_tolerances_in_a_design(
    section: str, key: str, value: str, pointer: str, words: str
) -> None:
    data = _line()
    if section == "requirements":
        data["requirements"]["limits"]["max_thd"] = value
    else:
        data[section][key] = value
    with pytest.raises(InputError) as exc:
        design_from_mapping(data, "d.toml")
    found = [p for p in exc.value.problems if p.pointer == pointer]
    assert found, exc.value.problems
    assert words in found[0].message


def test_mapping_round_trip_with_tolerances() -> None:
    data = _with(resistance="2 kohm ±10 %", coupling_capacitor="10u -20/+80 %")
    data["signal"]["amplitude"] = "0.45 V .. 0.55 V"
    data["amplifier"]["gain"] = "2 ±1 % 3σ"
    d = design_from_mapping(data, "d.toml")
    m = design_to_mapping(d)
    assert m["load"]["resistance"] == "2 kohm ±10 %"  # the text as written
    assert m["load"]["coupling_capacitor"] == "10u -20/+80 %"
    assert m["amplifier"]["gain"] == "2 ±1 % 3σ"
    assert design_from_mapping(m, "d.toml") == d


def test_changed_nominal_keeps_its_tolerance() -> None:
    import dataclasses

    d = design_from_mapping(_with(resistance="2 kohm ±10 %"), "d.toml")
    moved = dataclasses.replace(d, load=dataclasses.replace(d.load, r_load_ohm=4.7e3))
    text = design_to_mapping(moved)["load"]["resistance"]
    assert text == "4.7 kohm ±10 %"
    t = parse_toleranced(text, "resistance")
    assert (t.low, t.high) == (4.23e3, 5.17e3)


@settings(max_examples=60, deadline=None, database=None)
@given(
    nominal=st.sampled_from([1.0, 2.2, 4.7, 10.0, 33.0, 680.0]),
    exponent=st.integers(-2, 5),
    below=st.integers(0, 99),
    above=st.integers(0, 99),
    sigmas=st.sampled_from([None, 1.0, 3.0]),
    form=st.sampled_from(["relative", "range"]),
)
def test_written_tolerances_read_back(
    nominal: float, exponent: int, below: int, above: int, sigmas: float | None, form: str
) -> None:
    """A tolerance without its text (a value moved by a program) is written so that it reads
    back to the same ends (within 1e-12 relative: the nominal is formatted to 12 digits)."""
    from partsel.units import Toleranced

    x = nominal * 10.0**exponent
    if form == "relative":
        t = Toleranced(x, x * (1 - below / 100), x * (1 + above / 100), "tolerance", sigmas,
                       (below / 100, above / 100))  # fmt: skip
    else:
        t = Toleranced(x, x * (1 - below / 100), x * (1 + above / 100), "range", sigmas)
        t = Toleranced(0.5 * (t.low + t.high), t.low, t.high, "range", sigmas)
    text = format_toleranced(t, "resistance")
    back = parse_toleranced(text, "resistance")
    assert back.sigmas == sigmas
    for a, b in ((back.nominal, t.nominal), (back.low, t.low), (back.high, t.high)):
        assert a == pytest.approx(b, rel=1e-12)


def test_save_keeps_tolerance_text_and_comments(tmp_path: Path) -> None:
    src = LINE.read_text(encoding="utf-8").replace(
        'resistance = "2 kohm"', 'resistance = "2 kohm ±10 %"   # the worst line input'
    )
    path = tmp_path / "line.toml"
    path.write_text(src, encoding="utf-8")
    d = load_design(path)
    save_design(d, path)
    text = path.read_text(encoding="utf-8")
    assert 'resistance = "2 kohm ±10 %"   # the worst line input' in text
    assert load_design(path) == d


def test_form_shows_and_reads_tolerances() -> None:
    from partsel.tui.fields import FIELD_BY_PATH, validate_values, values_from_design

    d = design_from_mapping(_with(resistance="2 kohm ±10 %"), "d.toml")
    values = values_from_design(d)
    spec = FIELD_BY_PATH[("load", "resistance")]
    assert values[spec.id] == "2 kohm ±10 %"
    values[spec.id] = "1.8 kohm .. 2.2 kohm"
    res = validate_values(values, "d.toml")
    assert res.design is not None
    assert res.design.tolerances[("load", "resistance")].form == "range"
    values[spec.id] = "2 kohm ±120 %"
    res = validate_values(values, "d.toml")
    assert res.design is None and "120 %" in res.problems[spec.id][0]


def test_cli_bad_tolerance_exits_2_with_pointer(cli: Any, tmp_path: Path) -> None:
    """A bad tolerance stops the command with exit 2 and the field's pointer; the design file
    is left as it was."""
    src = LINE.read_text(encoding="utf-8").replace(
        'resistance = "2 kohm"', 'resistance = "2 kohm ±120 %"'
    )
    path = tmp_path / "bad.toml"
    path.write_text(src, encoding="utf-8")
    before = path.read_bytes()
    res = cli("rank", str(path))
    assert res.exit_code == 2
    assert "/load/resistance" in res.stderr and "120 %" in res.stderr
    assert path.read_bytes() == before
