"""Design files: schema, reader, writer, example designs and the derived closed-loop values."""

from __future__ import annotations

import copy
import dataclasses
import json
import tomllib
from pathlib import Path
from typing import Any

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from jsonschema import Draft202012Validator

from partsel.design import (
    design_from_mapping,
    design_schema_json,
    design_to_mapping,
    format_quantity,
    load_design,
    save_design,
)
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.units import parse_quantity

ROOT = Path(__file__).resolve().parents[1]
SCHEMA_FILE = ROOT / "data-schema" / "design.schema.json"
EXAMPLES = sorted((ROOT / "sample-catalog" / "designs").glob("*.toml"))


def base() -> dict[str, Any]:
    """A valid design mapping: 5 V single supply, gain-2 non-inverting, 10 kohm load."""
    return {
        "name": "test stage",
        "supply": {"positive": "5 V"},
        "signal": {"bias": "2.5 V", "amplitude": "0.5 V", "frequency": "1 kHz"},
        "amplifier": {"configuration": "non-inverting", "gain": 2, "feedback_resistor": "10 kohm"},
        "load": {"resistance": "10 kohm", "coupling": "dc"},
    }


def changed(**sections: dict[str, Any]) -> dict[str, Any]:
    """``base()`` with the given keys of each section replaced (None deletes the key)."""
    data = base()
    for section, fields in sections.items():
        target = data.setdefault(section, {})
        for key, value in fields.items():
            if value is None:
                target.pop(key, None)
            else:
                target[key] = value
    return data


def pointers(exc: pytest.ExceptionInfo[InputError]) -> list[str]:
    return [p.pointer for p in exc.value.problems]


# ---- schema --------------------------------------------------------------------------------


def test_schema_is_valid_draft_2020_12() -> None:
    """The committed schema is itself valid under the JSON Schema 2020-12 meta-schema."""
    schema = json.loads(SCHEMA_FILE.read_text(encoding="utf-8"))
    Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"


def test_committed_schema_matches_code() -> None:
    """data-schema/design.schema.json is generated from partsel.design; regenerate on drift:
    python -c "from partsel.design import design_schema_json as s;
    open('data-schema/design.schema.json', 'w').write(s())"
    """
    assert SCHEMA_FILE.read_text(encoding="utf-8") == design_schema_json()


def _walk(node: dict[str, Any], pointer: str = "") -> list[tuple[str, dict[str, Any]]]:
    out = [(pointer, node)]
    for key, sub in node.get("properties", {}).items():
        out += _walk(sub, f"{pointer}/{key}")
    return out


def test_every_field_has_description_and_unit() -> None:
    """Every field is described; every leaf names its unit in x-unit and in the description;
    objects are closed except the reserved requirements table."""
    schema = json.loads(SCHEMA_FILE.read_text(encoding="utf-8"))
    nodes = _walk(schema)
    assert len(nodes) > 20
    for pointer, node in nodes:
        assert node.get("description"), pointer
        if node.get("type") == "object":
            if pointer == "/requirements":
                assert "additionalProperties" not in node
            else:
                assert node["additionalProperties"] is False, pointer
        else:
            assert "x-unit" in node, pointer
            if node["x-unit"]:
                assert f"Unit: {node['x-unit']}" in node["description"], pointer
            else:
                assert "unitless" in node["description"], pointer


# ---- example designs -----------------------------------------------------------------------


def test_there_are_example_designs() -> None:
    names = {p.name for p in EXAMPLES}
    assert {
        "adc-buffer-3v3.toml",
        "line-driver-5v.toml",
        "actuator-12v.toml",
        "micropower-filter-3v.toml",
        "split-supply-driver.toml",
    } <= names


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_example_loads_and_matches_schema(path: Path) -> None:
    with path.open("rb") as fh:
        raw = tomllib.load(fh)
    schema = json.loads(SCHEMA_FILE.read_text(encoding="utf-8"))
    assert list(Draft202012Validator(schema).iter_errors(raw)) == []
    design = load_design(path)
    assert design.name == raw["name"]
    assert design.source == str(path)
    # The ideal output stays inside the rails (checked by the reader as well).
    lo = design.out_bias_v - design.out_amplitude_v
    hi = design.out_bias_v + design.out_amplitude_v
    assert design.supply.v_neg_v <= lo <= hi <= design.supply.v_pos_v


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_round_trip_mapping(path: Path) -> None:
    design = load_design(path)
    assert design_from_mapping(design_to_mapping(design), source=design.source) == design


@pytest.mark.parametrize("suffix", [".toml", ".yaml", ".json"])
@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_save_and_reload(path: Path, suffix: str, tmp_path: Path) -> None:
    design = load_design(path)
    out = tmp_path / f"copy{suffix}"
    save_design(design, out)
    assert load_design(out) == dataclasses.replace(design, source=str(out))


def test_example_values_parsed_in_si() -> None:
    """Quantity strings of the line-driver example in SI units (unit prefixes per SI)."""
    d = load_design(ROOT / "sample-catalog" / "designs" / "line-driver-5v.toml")
    assert d.supply.v_pos_v == 5.0
    assert d.supply.v_neg_v == 0.0
    assert d.signal.frequency_hz == pytest.approx(1e3)
    assert d.load.r_load_ohm == pytest.approx(2e3)
    assert d.load.coupling == "ac"
    assert d.load.c_couple_f == pytest.approx(10e-6)
    assert d.load.c_load_f == pytest.approx(220e-12)
    assert d.t_ambient_min_c == 0.0
    assert d.channels_used == 2
    assert d.requirements is not None and d.requirements["basis"] == "worst-case"


def test_defaults_of_omitted_fields() -> None:
    d = design_from_mapping(
        {
            "supply": {"positive": 3.3},
            "signal": {"bias": 1.65, "amplitude": 0.1, "frequency": 100},
        },
        source="designs/minimal.toml",
    )
    assert d.name == "minimal"  # file stem
    assert d.supply.v_neg_v == 0.0
    assert d.closed_loop.configuration == "non-inverting"
    assert d.closed_loop.gain == 1.0
    assert d.closed_loop.reference_v is None
    assert d.load.r_load_ohm is None  # no [load]: no resistive load
    assert d.load.coupling == "dc"
    assert d.load.c_load_f == 0.0
    assert (d.t_ambient_min_c, d.t_ambient_max_c, d.channels_used) == (25.0, 25.0, 1)


def test_gain_as_quantity_string() -> None:
    d = design_from_mapping(changed(amplifier={"gain": "2 V/V"}))
    assert d.closed_loop.gain == 2.0


def test_requirements_round_trip_through_a_file(tmp_path: Path) -> None:
    """Requirements survive load -> save -> load unchanged (the solver checks their content)."""
    req = {
        "basis": "worst-case",
        "conduction": "fix-allowed",
        "limits": {"max_thd": "0.1 %", "lifecycle": ["active"]},
        "objectives": {"price": 2, "thd": 1.5},
    }
    data = base() | {"requirements": copy.deepcopy(req)}
    d = design_from_mapping(data)
    assert d.requirements is not None
    assert d.requirements["limits"]["max_thd"] == pytest.approx(1e-3)  # "0.1 %" in SI
    assert d.requirements["objectives"] == req["objectives"]
    out = tmp_path / "with-req.toml"
    save_design(d, out)
    assert load_design(out).requirements == d.requirements


def test_unknown_requirement_is_refused_with_its_field() -> None:
    data = base() | {"requirements": {"limits": {"max_thdd": "0.1 %"}}}
    with pytest.raises(InputError) as exc:
        design_from_mapping(data)
    assert "/requirements/limits/max_thdd" in str(exc.value)


# ---- derived closed-loop values, against hand calculation ----------------------------------
# Formulas of the ideal op-amp feedback amplifier (op-amp application literature):
#   non-inverting: V_out = V_ref + (1 + R_f/R_g)(V_in - V_ref), noise gain 1 + R_f/R_g;
#   inverting:     V_out = V_ref (1 + R_f/R_in) - V_in R_f/R_in, noise gain 1 + R_f/R_in;
#   the inverting input draws no current, so the feedback network loads the output with
#   R_f + R_g to V_ref (non-inverting) or R_f to the virtual ground at V_ref (inverting).


def test_noise_gain_inverting_gain_3_is_4() -> None:
    d = design_from_mapping(
        changed(
            signal={"bias": "2.5 V", "amplitude": "0.5 V"},
            amplifier={"configuration": "inverting", "gain": 3, "reference": "2.5 V"},
        )
    )
    assert d.noise_gain == pytest.approx(4.0)  # 1 + R_f/R_in = 1 + 3
    assert d.beta == pytest.approx(0.25)
    assert d.signal_gain == pytest.approx(-3.0)


def test_noise_gain_non_inverting_equals_signal_gain() -> None:
    d = design_from_mapping(base())
    assert d.noise_gain == pytest.approx(2.0)


def test_ideal_output_non_inverting_with_reference() -> None:
    # V_in = 1.0 V +/- 0.3 V, V_ref = 0.25 V, G = 2: V_out = 0.25 + 2 (1.0 - 0.25) = 1.75 V,
    # amplitude 2 * 0.3 = 0.6 V.
    d = design_from_mapping(
        changed(
            signal={"bias": "1.0 V", "amplitude": "0.3 V"},
            amplifier={"reference": "0.25 V"},
        )
    )
    assert d.out_bias_v == pytest.approx(1.75)
    assert d.out_amplitude_v == pytest.approx(0.6)


def test_ideal_output_inverting() -> None:
    # R_f/R_in = 3, V_ref = 1.65 V, V_in = 1.0 V +/- 0.2 V:
    # V_out = 1.65 * (1 + 3) - 3 * 1.0 = 3.6 V; amplitude 3 * 0.2 = 0.6 V.
    d = design_from_mapping(
        changed(
            supply={"positive": "5 V"},
            signal={"bias": "1.0 V", "amplitude": "0.2 V"},
            amplifier={"configuration": "inverting", "gain": 3, "reference": "1.65 V"},
        )
    )
    assert d.out_bias_v == pytest.approx(3.6)
    assert d.out_amplitude_v == pytest.approx(0.6)


def test_feedback_load_non_inverting_gain_2() -> None:
    # G = 1 + R_f/R_g = 2 with R_f = 10 kohm gives R_g = 10 kohm: R_f + R_g = 20 kohm.
    d = design_from_mapping(base())
    assert d.feedback_load_ohm == pytest.approx(20e3)


def test_feedback_load_inverting_is_r_f() -> None:
    d = design_from_mapping(
        changed(amplifier={"configuration": "inverting", "gain": 1, "reference": "2.5 V"})
    )
    assert d.feedback_load_ohm == pytest.approx(10e3)


# ---- bad designs ---------------------------------------------------------------------------


def test_negative_frequency(tmp_path: Path) -> None:
    p = tmp_path / "neg-freq.toml"
    p.write_text(
        'name = "neg"\n[supply]\npositive = "5 V"\n'
        '[signal]\nbias = "2.5 V"\namplitude = "0.5 V"\nfrequency = "-1 kHz"\n',
        encoding="utf-8",
    )
    with pytest.raises(InputError) as exc:
        load_design(p)
    assert pointers(exc) == ["/signal/frequency"]
    prob = exc.value.problems[0]
    assert prob.file == str(p)
    assert prob.record == "neg"
    assert "> 0" in prob.message


def test_zero_frequency() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(signal={"frequency": 0}))
    assert pointers(exc) == ["/signal/frequency"]


def test_amplitude_beyond_rails() -> None:
    # 2.5 V +/- 2 * 1.5 V = -0.5 .. 5.5 V on a 0 .. 5 V supply.
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(signal={"amplitude": "1.5 V"}))
    assert pointers(exc) == ["/signal/amplitude"]
    msg = exc.value.problems[0].message
    assert "-500 mV … 5.5 V" in msg
    assert "rails 0 V … 5 V" in msg


def test_output_touching_the_rails_is_accepted() -> None:
    d = design_from_mapping(changed(signal={"amplitude": "1.25 V"}))  # 0 .. 5 V exactly
    assert d.out_bias_v - d.out_amplitude_v == pytest.approx(0.0)


def test_unknown_field_named_with_suggestion() -> None:
    data = changed(signal={"frequncy": "1 kHz"})
    data["lod"] = {}
    with pytest.raises(InputError) as exc:
        design_from_mapping(data, source="x.toml")
    assert pointers(exc) == ["/lod", "/signal/frequncy"]
    assert "did you mean 'frequency'" in str(exc.value)
    assert "x.toml: record test stage: field /lod: unknown field 'lod'" in str(exc.value)


def test_missing_required_field() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(supply={"positive": None}))
    assert pointers(exc) == ["/supply/positive"]


def test_wrong_unit_for_resistance() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(load={"resistance": "5 mA"}))
    assert pointers(exc) == ["/load/resistance"]
    assert "wrong unit" in exc.value.problems[0].message


def test_boolean_is_not_a_quantity() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(signal={"frequency": True}))
    assert pointers(exc) == ["/signal/frequency"]


def test_several_problems_collected() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(
            changed(
                signal={"frequency": "-50 Hz"},
                load={"resistance": "-1 kohm", "capacitance": "-1 nF"},
                environment={"ambient_min": "90 degC", "ambient_max": "85 degC"},
            )
        )
    assert set(pointers(exc)) == {
        "/signal/frequency",
        "/load/resistance",
        "/load/capacitance",
        "/environment/ambient_min",
    }


@pytest.mark.parametrize(
    ("sections", "pointer"),
    [
        ({"supply": {"positive": "0 V"}}, "/supply/positive"),
        ({"supply": {"positive": "-15 V", "negative": "-5 V"}}, "/supply/positive"),
        ({"signal": {"amplitude": "-0.1 V"}}, "/signal/amplitude"),
        ({"signal": {"bias": "6 V"}}, "/signal/bias"),
        ({"signal": {"waveform": "square"}}, "/signal/waveform"),
        ({"amplifier": {"gain": 0.5}}, "/amplifier/gain"),
        ({"amplifier": {"gain": 0}}, "/amplifier/gain"),
        ({"amplifier": {"configuration": "differential"}}, "/amplifier/configuration"),
        ({"amplifier": {"reference": "7 V"}}, "/amplifier/reference"),
        ({"amplifier": {"feedback_resistor": "0 ohm"}}, "/amplifier/feedback_resistor"),
        ({"load": {"coupling": "ac"}}, "/load/coupling_capacitor"),
        ({"load": {"coupling_capacitor": "1 uF"}}, "/load/coupling_capacitor"),
        ({"load": {"coupling": "ac", "coupling_capacitor": "0 F"}}, "/load/coupling_capacitor"),
        ({"load": {"to_negative_rail": "-2 kohm"}}, "/load/to_negative_rail"),
        ({"environment": {"channels_used": 5}}, "/environment/channels_used"),
        ({"environment": {"channels_used": 0}}, "/environment/channels_used"),
        ({"environment": {"ambient_min": "-300 degC"}}, "/environment/ambient_min"),
    ],
)
def test_physically_impossible_values(sections: dict[str, Any], pointer: str) -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(changed(**sections))
    assert pointers(exc) == [pointer]


def test_inverting_attenuator_is_accepted() -> None:
    d = design_from_mapping(
        changed(amplifier={"configuration": "inverting", "gain": 0.5, "reference": "2.5 V"})
    )
    assert d.noise_gain == pytest.approx(1.5)


def test_inverting_dc_output_outside_rails() -> None:
    # V_out = 2.5 (1 + 3) - 3 * 0.5 = 8.5 V > 5 V: the DC level, not the amplitude, is wrong.
    with pytest.raises(InputError) as exc:
        design_from_mapping(
            changed(
                signal={"bias": "0.5 V", "amplitude": "0.1 V"},
                amplifier={"configuration": "inverting", "gain": 3, "reference": "2.5 V"},
            )
        )
    assert pointers(exc) == ["/amplifier/reference"]


def test_wrong_format_tag() -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(base() | {"format": "partsel.design/9"})
    assert pointers(exc) == ["/format"]


def test_top_level_not_a_table() -> None:
    with pytest.raises(InputError):
        design_from_mapping([1, 2], source="list.json")  # type: ignore[arg-type]


@pytest.mark.parametrize(
    ("name", "text", "line"),
    [
        ("bad.toml", 'name = "x"\n[supply]\npositive = \n', 3),
        ("bad.yaml", "name: x\nsupply:\n  positive: [5 V\n", 4),
        ("bad.json", '{"name": "x",\n "supply": {"positive": }\n}\n', 2),
        ("dup.yaml", "name: x\nname: y\n", 2),
    ],
)
def test_malformed_file_names_file_and_line(
    tmp_path: Path, name: str, text: str, line: int
) -> None:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_design(p)
    prob = exc.value.problems[0]
    assert prob.file == str(p)
    assert prob.record == p.stem
    assert "malformed" in prob.message or "given twice" in prob.message
    assert f"line {line}" in prob.message


def test_duplicate_json_key(tmp_path: Path) -> None:
    p = tmp_path / "dup.json"
    p.write_text('{"name": "a", "name": "b"}', encoding="utf-8")
    with pytest.raises(InputError, match="given twice"):
        load_design(p)


def test_unknown_extension_and_missing_file(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="unknown design file type"):
        load_design(tmp_path / "design.ini")
    with pytest.raises(InputError, match="no such design file"):
        load_design(tmp_path / "absent.toml")


def test_failed_save_leaves_file_unchanged(tmp_path: Path) -> None:
    p = tmp_path / "keep.toml"
    p.write_text("# original\n", encoding="utf-8")
    good = design_from_mapping(base())
    # A coupling capacitor on a DC-coupled load is rejected on reading, so also on saving.
    bad = dataclasses.replace(good, load=dataclasses.replace(good.load, c_couple_f=1e-6))
    with pytest.raises(InputError) as exc:
        save_design(bad, p)
    assert pointers(exc) == ["/load/coupling_capacitor"]
    assert exc.value.problems[0].file == str(p)
    assert p.read_text(encoding="utf-8") == "# original\n"
    assert list(tmp_path.iterdir()) == [p]


# ---- saving keeps what did not change --------------------------------------------------------

LINE_DRIVER = (
    Path(__file__).resolve().parents[1] / "sample-catalog" / "designs" / "line-driver-5v.toml"
)


def test_save_keeps_comments_description_and_unchanged_text(tmp_path: Path) -> None:
    """Saving a design over its file keeps the comments, the description, unknown fields and
    the text of every value that still means the same; a changed value is rewritten; a THD
    limit is written back as a percentage, as engineers write it."""
    p = tmp_path / "d.toml"
    text = (
        "# my line driver\n"
        'name = "driver"\n'
        'description = "keeps 2 V of headroom"  # why\n'
        "[supply]\n"
        'positive = "5000 mV"  # the 5 V rail\n'
        "[signal]\n"
        'bias = "2.5 V"\n'
        'amplitude = "0.5 V"\n'
        'frequency = "1 kHz"\n'
        "[amplifier]\n"
        "gain = 2\n"
        "[load]\n"
        'resistance = "2 kohm"\n'
        'coupling = "ac"\n'
        'coupling_capacitor = "10 uF"\n'
        "[requirements.limits]\n"
        'max_thd = "0.1 %"\n'
    )
    p.write_text(text, encoding="utf-8")
    d = load_design(p)
    changed = dataclasses.replace(d, load=dataclasses.replace(d.load, r_load_ohm=4.7e3))
    save_design(changed, p)
    out = p.read_text(encoding="utf-8")
    assert "# my line driver" in out and "# the 5 V rail" in out and "# why" in out
    assert 'description = "keeps 2 V of headroom"' in out
    assert 'positive = "5000 mV"' in out  # same value: the user's own text stays
    assert 'resistance = "4.7 kohm"' in out  # changed: rewritten
    assert 'max_thd = "0.1 %"' in out
    again = load_design(p)
    assert again.load.r_load_ohm == 4.7e3 and again.requirements == d.requirements


def test_save_as_writes_percent_limits(tmp_path: Path) -> None:
    d = load_design(LINE_DRIVER)
    p = tmp_path / "copy.toml"
    save_design(d, p)
    text = p.read_text(encoding="utf-8")
    assert "max_thd = " in text and " %" in text.split("max_thd = ", 1)[1].splitlines()[0]
    assert load_design(p) == dataclasses.replace(d, source=str(p))


@settings(max_examples=100, deadline=None, database=None)
@given(
    st.sampled_from(["voltage", "resistance", "capacitance", "frequency", "temperature"]),
    st.floats(min_value=-1e12, max_value=1e12, allow_nan=False),
)
def test_format_quantity_reads_back_exactly(dimension: str, value: float) -> None:
    assume(dimension != "temperature" or value >= -273.15)  # below absolute zero is refused
    assert parse_quantity(format_quantity(value, dimension), dimension) == value


@pytest.mark.parametrize(
    ("value", "dimension", "text"),
    [
        (4.7e-6, "capacitance", "4.7 uF"),
        (10e3, "resistance", "10 kohm"),
        (3.3, "voltage", "3.3 V"),
        (-40.0, "temperature", "-40 degC"),
        (0.0, "voltage", "0 V"),
    ],
)
def test_format_quantity_is_readable(value: float, dimension: str, text: str) -> None:
    assert format_quantity(value, dimension) == text


def test_design_type() -> None:
    assert isinstance(design_from_mapping(base()), Design)
