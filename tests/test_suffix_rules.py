"""Maker suffix rules (partsel.io.suffix) against Python's re as the reference for the rules
both can express, the refusals of everything else, and the BOM-cell cleaning of
partsel.io.partnumber."""

from __future__ import annotations

import re

import pytest
from hypothesis import given
from hypothesis import strategies as st

from partsel.errors import InputError
from partsel.io.partnumber import clean_cell, name_problem
from partsel.io.suffix import MAX_RULE_ELEMENTS, compile_rule

#: Every rule of the sample catalogue and the test fixtures (written as anchored regexes).
LEGACY_RULES = ["-TR$", "/R$", "/T$", "-T7$", "-T13$", "-R7$", "-R13$", "-R$", "/RL$"]


def _reference(pattern: str, part_number: str) -> tuple[str, str] | None:
    """What the old matcher did: re.search, ignoring case, something left before the match."""
    m = re.search(pattern, part_number, re.IGNORECASE)
    if m and m.end() > m.start() and m.start() > 0 and m.end() == len(part_number):
        return part_number[: m.start()], part_number[m.start() :]
    return None


@pytest.mark.parametrize("rule", LEGACY_RULES)
@pytest.mark.parametrize("pn", ["BRQ-612-TR", "brq-612-tr", "MWF-310/R", "QLN-091-T13", "X-TR",
                                "-TR", "TR", "FNK-11-R7", "ABC", "A/RL", "A-T7-TR"])  # fmt: skip
def test_legacy_rules_strip_as_the_regex_did(rule: str, pn: str) -> None:
    assert compile_rule(rule).split(pn) == _reference(rule, pn)


_LITERALS = st.text(alphabet="ABCTRLZ0179-/_", min_size=1, max_size=6)


@given(_LITERALS, st.booleans(), st.text(alphabet="ABCTRtrlz0179-/_ ", max_size=14))
def test_literal_rules_agree_with_re(literal: str, anchor: bool, pn: str) -> None:
    """Any literal rule, with or without '$', strips what re.escape(literal) + '$' finds."""
    rule = compile_rule(literal + ("$" if anchor else ""))
    assert rule.split(pn) == _reference(re.escape(literal) + "$", pn)


@given(
    st.lists(st.sampled_from(["-", "/", "T", "R", "#", "[A-Z]", "[0-9]", "[TR]", "\\."]),
             min_size=1, max_size=5),
    st.text(alphabet="ABTRtr0159-/.", max_size=12),
)  # fmt: skip
def test_classes_agree_with_re(parts: list[str], pn: str) -> None:
    """'#' is [0-9]; classes and escapes mean what they mean in re (ignoring case)."""
    rule = "".join(parts)
    pattern = rule.replace("#", "[0-9]") + "$"
    assert compile_rule(rule).split(pn) == _reference(pattern, pn)


@pytest.mark.parametrize(("rule", "fragment"), [
    ("(a+)+$", "groups"),
    ("-TR.*", "literal dot"),
    ("-T+", "literal plus"),
    ("-TR|/R", "alternatives"),
    ("^AB", "end of a part number"),
    ("-T{2}", "repetition counts"),
    ("-[^A]", "negated"),
    ("-[A-", "not closed"),
    ("-[Z-A]", "range"),
    ("-[]", "empty class"),
    ("", "empty rule"),
    ("-T R", "spaces"),
    ("A$B", "'$' may only end"),
    ("X" * (MAX_RULE_ELEMENTS + 1), "longer than"),
    ("-TR\\", "lone"),
    ("-T\u200b", "not part of the language"),
])  # fmt: skip
def test_rules_outside_the_language_are_refused(rule: str, fragment: str) -> None:
    with pytest.raises(InputError) as info:
        compile_rule(rule, record="Some Maker", pointer="/makers/0/suffix_rules/1")
    (p,) = info.value.problems
    assert fragment in p.message and "suffix language" in p.message
    assert (p.record, p.pointer) == ("Some Maker", "/makers/0/suffix_rules/1")


def test_non_text_rule_is_refused() -> None:
    with pytest.raises(InputError, match="text such as"):
        compile_rule(["-TR"])


def test_matching_cost_is_the_rule_length() -> None:
    """A 32-character class rule against a 100,000-character part number looks at 32
    characters: a miss at the last character and a hit both return."""
    rule = compile_rule("[A-Z]" * 32)
    assert rule.length == 32
    pn = "a" * 100_000
    assert rule.split(pn) == ("a" * 99_968, "a" * 32)
    assert rule.split(pn + "1") is None


# ---- part numbers and BOM cells ---------------------------------------------------------------


@pytest.mark.parametrize(("text", "fragment"), [
    ("", "blank"), ("   ", "blank"),
    ("QFA\u200b-2210", "U+200B ZERO WIDTH SPACE, at character 4"),
    ("QFA-2210\u202e01", "U+202E RIGHT-TO-LEFT OVERRIDE"),
    ("QFA\u2066-2210", "U+2066 LEFT-TO-RIGHT ISOLATE"),
    ("\ufeffQFA-2210", "U+FEFF ZERO WIDTH NO-BREAK SPACE"),
    ("QFA\t2210", "U+0009 control character"),
    ("QFA\x00", "U+0000"),
    ("QFA\u00a02210", "a space other than the plain space"),
    ("QFA\u00ad2210", "U+00AD SOFT HYPHEN"),
    ("Q" * 201, "at most 200"),
])  # fmt: skip
def test_names_with_invisible_characters_are_refused(text: str, fragment: str) -> None:
    why = name_problem(text)
    assert why is not None and fragment in why


@pytest.mark.parametrize("text", ["QFA-2210", "BRQ 622A", "Ωmega-1/R", "Ärger Halbleiter GmbH"])
def test_printable_names_are_accepted(text: str) -> None:
    assert name_problem(text) is None


@pytest.mark.parametrize(("cell", "clean"), [
    ("\ufeffBRQ-612", "BRQ-612"),
    ("BRQ-\ufeff612", "BRQ-612"),  # a byte-order mark inside the cell (issue 15, class 12)
    ("BRQ\u200b-612\u200d", "BRQ-612"),
    ("\u202aBRQ-612\u202c", "BRQ-612"),
    ("BRQ\u00a0612", "BRQ 612"),
    ("  BRQ-612\t", "BRQ-612"),
    ("BRQ-612", "BRQ-612"),
])  # fmt: skip
def test_clean_cell(cell: str, clean: str) -> None:
    assert clean_cell(cell) == clean
