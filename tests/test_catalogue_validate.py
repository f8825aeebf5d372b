"""Validation of catalogue documents: every problem names file, record and JSON pointer
(RFC 6901), and all problems of a file are reported together. The rules checked are those of
the catalogue format in DEVELOPERS.md."""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
from conftest import CATALOGUE_DATA

from partsel.catalogue import read_and_validate, validate_document, validate_documents
from partsel.errors import InputError, Problem


def problems_of(doc: dict, file: str = "cat.yaml") -> list[Problem]:
    valid, problems = validate_document(doc, file=file)
    assert (valid is None) == bool(problems)
    return problems


def pointers(problems: list[Problem]) -> set[str]:
    return {p.pointer for p in problems}


def test_fixture_catalogue_is_valid() -> None:
    docs = read_and_validate([CATALOGUE_DATA])
    assert sorted(len(d.parts) for d in docs) == [1, 2]


def test_canonical_form_holds_si_floats(quill_doc: dict) -> None:
    (doc,) = validate_documents([("q.yaml", quill_doc)])
    canon = doc.canonical_parts[0]
    # 0.5 V/us = 5e5 V/s, 50 uA = 5e-5 A (SI prefixes, BIPM SI Brochure)
    assert canon["dynamics"]["slew_rise"]["typ"] == pytest.approx(5e5)
    assert canon["output"]["stage_current"]["typ"] == pytest.approx(5e-5)
    assert canon["supply"]["current_per_channel"]["at"]["supply"] == pytest.approx(5.0)
    # a bare value means typ
    assert doc.canonical_parts[1]["output"]["dead_band"] == {"typ": pytest.approx(1.3)}
    # the record as given is kept untouched
    assert doc.parts[0]["dynamics"]["slew_rise"]["typ"] == "0.5 V/us"


def test_schema_violation_names_record_and_field(quill_doc: dict) -> None:
    quill_doc["parts"][0]["channels"] = 3
    quill_doc["parts"][1]["output"]["topology"] = "class-z"
    del quill_doc["parts"][1]["maker"]
    quill_doc["parts"][0]["dynamics"]["slew_rise"]["tpy"] = "1 V/us"
    probs = problems_of(quill_doc)
    assert pointers(probs) == {
        "/parts/0/channels", "/parts/1/output/topology", "/parts/1/maker",
        "/parts/0/dynamics/slew_rise/tpy",
    }  # fmt: skip
    by_ptr = {p.pointer: p for p in probs}
    assert by_ptr["/parts/1/maker"].record == "QFA-2214"
    assert by_ptr["/parts/1/maker"].message == "required field is missing"
    assert "unknown field" in by_ptr["/parts/0/dynamics/slew_rise/tpy"].message
    assert all(p.file == "cat.yaml" for p in probs)


def test_record_without_part_number_is_named_by_index(quill_doc: dict) -> None:
    del quill_doc["parts"][1]["part_number"]
    (p,) = problems_of(quill_doc)
    assert (p.record, p.pointer) == ("#1", "/parts/1/part_number")


def test_spec_needs_a_side(quill_doc: dict) -> None:
    quill_doc["parts"][0]["dynamics"]["gbw"] = {"at": {"supply": "5 V"}}
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/0/dynamics/gbw"
    assert "min, typ, max" in p.message


def test_unknown_unit(quill_doc: dict) -> None:
    quill_doc["parts"][0]["input"]["bias_current"]["max"] = "250 nQ"
    (p,) = problems_of(quill_doc)
    assert (p.record, p.pointer) == ("QFA-2210", "/parts/0/input/bias_current/max")
    assert "unknown unit" in p.message


def test_wrong_dimension_names_the_field(quill_doc: dict) -> None:
    quill_doc["parts"][0]["dynamics"]["slew_rise"]["min"] = "0.3 V"
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/0/dynamics/slew_rise/min"
    assert "a voltage, not a slew rate" in p.message


def test_min_greater_than_typ(quill_doc: dict) -> None:
    quill_doc["parts"][0]["output"]["stage_current"] = {"min": "60 uA", "typ": "50 uA"}
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/0/output/stage_current/min"
    assert "greater than typ" in p.message


def test_typ_greater_than_max_in_swing_headroom(quill_doc: dict) -> None:
    quill_doc["parts"][0]["output"]["swing_neg"][1]["headroom"] = {"typ": "0.5 V", "max": "0.4 V"}
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/0/output/swing_neg/1/headroom/typ"


def test_negative_slew_rate(quill_doc: dict) -> None:
    quill_doc["parts"][0]["dynamics"]["slew_rise"]["min"] = "-0.3 V/us"
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/0/dynamics/slew_rise/min"
    assert "negative" in p.message


def test_negative_allowed_where_the_param_says_so(quill_doc: dict) -> None:
    """cm_headroom_neg is negative when the input range extends below the rail."""
    quill_doc["parts"][0]["input"]["cm_headroom_neg"] = {"min": "-0.5 V", "typ": "-0.3 V"}
    assert problems_of(quill_doc) == []


def test_swing_points_count_and_order(quill_doc: dict) -> None:
    out = quill_doc["parts"][0]["output"]
    out["swing_pos"] = out["swing_pos"][:1]
    out["swing_neg"][2]["current"] = "20 uA"  # below the previous point's 50 uA
    probs = problems_of(quill_doc)
    assert pointers(probs) == {"/parts/0/output/swing_pos", "/parts/0/output/swing_neg/2/current"}


def test_swing_saturation_needs_a_current_limit(quill_doc: dict) -> None:
    out = quill_doc["parts"][1]["output"]
    out["swing_pos"] = {"saturation": "20 mV", "resistance": "60 ohm"}
    assert problems_of(quill_doc) == []
    del out["source_limit"]
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/1/output/swing_pos"


def test_dead_band_required_for_class_b(quill_doc: dict) -> None:
    del quill_doc["parts"][1]["output"]["dead_band"]
    (p,) = problems_of(quill_doc)
    assert p.pointer == "/parts/1/output/dead_band"
    quill_doc["parts"][1]["output"]["topology"] = "class-ab"
    assert problems_of(quill_doc) == []


def test_ranges_must_be_ordered(quill_doc: dict) -> None:
    quill_doc["parts"][0]["supply"]["range"] = {"min": "32 V", "max": "3 V"}
    quill_doc["parts"][0]["temperature"] = {"min": "85 degC", "max": "-40 degC"}
    quill_doc["parts"][1]["junction_max"] = "60 degC"
    assert pointers(problems_of(quill_doc)) == {
        "/parts/0/supply/range/min", "/parts/0/temperature/min", "/parts/1/junction_max",
    }  # fmt: skip


def test_bad_suffix_rule(quill_doc: dict) -> None:
    quill_doc["makers"][0]["suffix_rules"].append("-(TR$")
    (p,) = problems_of(quill_doc)
    assert (p.record, p.pointer) == ("Quillfeather Analog", "/makers/0/suffix_rules/2")


def test_all_problems_of_a_file_are_collected(quill_doc: dict) -> None:
    quill_doc["parts"][0]["dynamics"]["slew_rise"]["min"] = "-1 V/us"
    quill_doc["parts"][0]["input"]["offset_voltage"]["typ"] = "2 mA"
    quill_doc["parts"][1]["channels"] = 0
    quill_doc["parts"][1]["dynamics"]["gbw"] = "1 MHz"  # fine
    assert len(problems_of(quill_doc)) == 3


def test_duplicate_part_numbers_across_files_ignore_case(quill_doc: dict) -> None:
    other = copy.deepcopy(quill_doc)
    other["parts"] = [other["parts"][1]]
    other["parts"][0]["part_number"] = "qfa-2210"
    with pytest.raises(InputError) as info:
        validate_documents([("a.yaml", quill_doc), ("b.yaml", other)])
    (p,) = info.value.problems
    assert (p.file, p.record, p.pointer) == ("b.yaml", "qfa-2210", "/parts/0/part_number")
    assert "a.yaml" in p.message


def test_duplicate_within_one_file(quill_doc: dict) -> None:
    quill_doc["parts"][1]["part_number"] = "QFA-2210"
    with pytest.raises(InputError) as info:
        validate_documents([("a.yaml", quill_doc)])
    assert pointers(info.value.problems) == {"/parts/1/part_number"}


def test_conflicting_maker_records(quill_doc: dict) -> None:
    other = {"makers": [{"name": "QUILLFEATHER ANALOG", "suffix_rules": []}]}
    with pytest.raises(InputError) as info:
        validate_documents([("a.yaml", quill_doc), ("b.yaml", other)])
    assert pointers(info.value.problems) == {"/makers/0/suffix_rules"}


@pytest.mark.parametrize(("name", "text", "fragment"), [
    ("bad.json", '{"parts": [', "malformed JSON"),
    ("bad.yaml", "parts:\n  - part_number: [QFA\n", "malformed YAML"),
    ("dup.yaml", "parts:\n  - part_number: A\n    part_number: B\n", "duplicate key"),
    ("empty.yaml", "", "file is empty"),
    ("list.yaml", "- 1\n", "top level"),
])  # fmt: skip
def test_unreadable_files(tmp_path: Path, name: str, text: str, fragment: str) -> None:
    f = tmp_path / name
    f.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_and_validate([f])
    (p,) = info.value.problems
    assert p.file == str(f)
    assert fragment in p.message


def test_problems_of_several_files_together(tmp_path: Path, quill_doc: dict) -> None:
    (tmp_path / "a.json").write_text("{", encoding="utf-8")
    quill_doc["parts"][0]["lifecycle"] = "retired"
    (tmp_path / "b.json").write_text(json.dumps(quill_doc), encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_and_validate([tmp_path, tmp_path / "missing.yaml"])
    files = sorted(Path(p.file).name for p in info.value.problems)
    assert files == ["a.json", "b.json", "missing.yaml"]


def test_fast_validity_check_agrees_with_jsonschema(quill_doc: dict) -> None:
    """Valid documents skip jsonschema when jsonschema-rs says valid; the two independent
    implementations of draft 2020-12 must agree on valid and invalid documents."""
    import jsonschema_rs
    from jsonschema import Draft202012Validator

    from partsel.catalogue.schema import build_schema

    slow = Draft202012Validator(build_schema())
    fast = jsonschema_rs.Draft202012Validator(build_schema())
    variants = [copy.deepcopy(quill_doc) for _ in range(6)]
    variants[1]["parts"][0]["channels"] = 3
    variants[2]["parts"][0]["dynamics"]["gbw"] = {"at": {}}
    variants[3]["parts"][0]["output"]["swing_pos"] = variants[3]["parts"][0]["output"]["swing_pos"][
        :1
    ]
    variants[4]["parts"][0]["price"]["currency"] = "usd"
    variants[5]["parts"][1]["input"] = {"rail_to_rail": "yes"}
    verdicts = [(slow.is_valid(v), fast.is_valid(v)) for v in variants]
    assert verdicts == [(True, True)] + [(False, False)] * 5
