"""Catalogue validation of hostile values: invisible characters in names, impossible and
implausible values, numbers that cannot be stored, long values in messages; and check / load
agreement (every document the validator accepts, the database stores)."""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import CATALOGUE_DATA
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partsel.catalogue import dump_documents, load_documents, open_catalogue, validate_document
from partsel.errors import InputError, Problem


def problems_of(doc: dict, file: str = "cat.yaml") -> list[Problem]:
    valid, problems = validate_document(doc, file=file)
    assert (valid is None) == bool(problems)
    return problems


@pytest.mark.parametrize(("where", "value", "fragment"), [
    (("parts", 0, "part_number"), "  ", "blank"),
    (("parts", 0, "part_number"), "QFA\u200b-2210", "ZERO WIDTH SPACE"),
    (("parts", 0, "part_number"), "QFA-2210\u202e", "RIGHT-TO-LEFT OVERRIDE"),
    (("parts", 0, "part_number"), "QFA-2210\n", "control character"),
    (("parts", 0, "maker"), "Quillfeather\u2067Analog", "ISOLATE"),
    (("makers", 0, "name"), "Quillfeather Analog\u200d", "ZERO WIDTH JOINER"),
])  # fmt: skip
def test_invisible_characters_refused_with_field_pointer(
    quill_doc: dict, where: tuple, value: str, fragment: str
) -> None:
    quill_doc[where[0]][where[1]][where[2]] = value
    problems = problems_of(quill_doc)
    pointer = "/" + "/".join(map(str, where))
    mine = [p for p in problems if p.pointer == pointer]
    assert mine and fragment in mine[0].message, problems
    assert mine[0].record.startswith("#") or "\u200b" not in mine[0].record


@pytest.mark.parametrize(("path", "value", "fragment"), [
    (("temperature", "min"), "-300 degC", "below absolute zero"),
    (("temperature", "min"), -300, "below absolute zero"),
    (("dynamics", "gbw", "typ"), "5 V * 10 ** 10 ** 10", "without arithmetic"),
    (("dynamics", "gbw", "typ"), "1 'MHz'", "quotes"),
    (("dynamics", "slew_rise", "typ"), "50 percent", "ratio"),
    (("dynamics", "gbw", "typ"), 10**400, "out of range"),
    (("dynamics", "gbw", "typ"), float("inf"), "not finite"),
    (("price", "unit"), 10**400, "out of range"),
    (("price", "unit"), float("nan"), "not finite"),
    (("price", "quantity"), 10**20, "out of range"),
])  # fmt: skip
def test_impossible_values_refused(quill_doc: dict, path: tuple, value: Any, fragment: str) -> None:
    node = quill_doc["parts"][0]
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    problems = problems_of(quill_doc)
    pointer = "/parts/0/" + "/".join(path)
    assert [p.pointer for p in problems] == [pointer], problems
    assert fragment in problems[0].message and len(problems[0].message) < 250


@pytest.mark.parametrize(("path", "value"), [
    (("supply", "range", "max"), "1e30 V"),
    (("dynamics", "gbw", "typ"), "1e30 Hz"),
    (("input", "bias_current"), "1e-30 A"),  # a bare value is the typical one
    (("price", "unit"), 1e9),
])  # fmt: skip
def test_implausible_values_are_warnings(quill_doc: dict, path: tuple, value: Any) -> None:
    node = quill_doc["parts"][0]
    for key in path[:-1]:
        node = node[key]
    node[path[-1]] = value
    doc, problems = validate_document(quill_doc, file="cat.yaml")
    assert doc is not None and not problems
    (w,) = doc.warnings
    assert w.pointer == "/parts/0/" + "/".join(path) and w.record == "QFA-2210"
    assert "implausible" in w.message and "common practice" in w.message


def test_the_fixture_catalogue_has_no_warnings(quill_doc: dict) -> None:
    doc, _ = validate_document(quill_doc, file="cat.yaml")
    assert doc is not None and doc.warnings == []


def test_long_values_are_not_quoted_whole(quill_doc: dict) -> None:
    """A 1 MB string in a wrong place, a huge list where text belongs: messages stay short."""
    quill_doc["parts"][0]["lifecycle"] = "x" * 1_000_000
    quill_doc["parts"][0]["notes"] = [["lol"] * 9] * 1000
    quill_doc["parts"][1]["dynamics"]["gbw"] = "1 " + "M" * 1_000_000
    problems = problems_of(quill_doc)
    assert len(problems) == 3
    assert all(len(p.message) < 300 for p in problems), [len(p.message) for p in problems]


# ---- check and load agree ---------------------------------------------------------------------

_NUMBERS = st.one_of(
    st.integers(min_value=-(10**25), max_value=10**25),
    st.integers(min_value=10**300, max_value=10**400),
    st.floats(),
    st.sampled_from(["1e308 V", "1e-320 A", "-273.15 degC", "9" * 60, "1e4000"]),
)
_FIELDS = [
    ("price", "unit"),
    ("price", "quantity"),
    ("dynamics", "min_stable_gain"),
    ("dynamics", "gbw", "typ"),
    ("temperature", "min"),
    ("junction_max",),
    ("supply", "range", "max"),
    ("packages", 0, "theta_ja"),
    ("output", "swing_neg", 0, "current"),
]


@settings(
    max_examples=40,
    deadline=None,
    # one database for all examples: each load is checked against the validator's verdict
    suppress_health_check=[HealthCheck.function_scoped_fixture],
)
@given(st.lists(st.tuples(st.sampled_from(_FIELDS), _NUMBERS), min_size=1, max_size=3))
def test_what_check_accepts_load_stores(tmp_path: Path, changes: list) -> None:
    base = yaml.safe_load((CATALOGUE_DATA / "quill.yaml").read_text(encoding="utf-8"))
    doc = copy.deepcopy(base)
    for path, value in changes:
        node: Any = doc["parts"][0]
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    valid, problems = validate_document(doc, file="x.yaml")
    engine = open_catalogue(f"sqlite:///{tmp_path / 'agree.sqlite'}")
    try:
        before = dump_documents(engine)
        if valid is None:
            assert problems
            return
        load_documents(engine, [valid])  # must not raise: check said yes
        after = dump_documents(engine)
        assert after != before or before  # stored (or unchanged from an earlier example)
        assert load_documents(engine, [valid], dry_run=True).counts()["changed"] == 0
    finally:
        engine.dispose()


def test_load_refusal_changes_nothing(tmp_path: Path, quill_doc: dict) -> None:
    engine = open_catalogue(f"sqlite:///{tmp_path / 'c.sqlite'}")
    try:
        good, _ = validate_document(copy.deepcopy(quill_doc), file="a.yaml")
        load_documents(engine, [good])
        before = dump_documents(engine)
        quill_doc["parts"][0]["part_number"] = "QFA\u200b-2210"
        with pytest.raises(InputError):
            from partsel.catalogue import validate_documents

            validate_documents([("a.yaml", quill_doc)])
        assert dump_documents(engine) == before
    finally:
        engine.dispose()
