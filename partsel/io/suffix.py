"""Maker suffix rules: the packing and package suffixes stripped from BOM part numbers.

A maker record lists ``suffix_rules`` such as ``"-TR"``, ``"/R7"``, ``"-[A-Z]"`` or ``"#R"``;
a BOM line ``QFA-2210-TR`` then matches the catalogue's ``QFA-2210``. The rules are a small
language of fixed-length suffixes, not regular expressions, so matching takes one pass over
the rule's length whatever the rule and the part number (a user's regular expression such as
``(a+)+$`` took exponential time).

The language (:func:`compile_rule`):

- a rule is matched against the **end** of the part number, ignoring case, and matches only
  when at least one character is left before it;
- letters, digits and the characters ``- / _ , : ; = ~ ! % & ' " < > @ `` stand for
  themselves;
- ``#`` is any one digit 0-9;
- ``[...]`` is any one of the characters listed, with ranges such as ``A-Z`` or ``0-9``
  (``[A-Z0-9]``, ``[TR]``); no negation;
- ``\\`` before any other printable character takes it literally (``\\.``, ``\\+``,
  ``\\#``, ``\\$``, ``\\[``);
- a trailing ``$`` is allowed and means nothing more (every rule is anchored at the end), so
  rules written as anchored regular expressions of literal text (``"-TR$"``, ``"/R7$"``) keep
  working;
- everything else that means something in a regular expression (``. * + ? ( ) | { } ^`` and a
  ``$`` not at the end) is refused with a message saying how to write it; so is a rule
  longer than :data:`MAX_RULE_ELEMENTS` characters, or empty.
"""

from __future__ import annotations

from dataclasses import dataclass

from partsel.errors import InputError, excerpt

#: Most characters (elements) one rule may match.
MAX_RULE_ELEMENTS = 32

_LITERAL_PUNCTUATION = frozenset("-/_,:;=~!%&'\"<>@")
_DIGITS = frozenset("0123456789")
_REGEX_ONLY = {
    ".": "write \\. for a literal dot ('any character' is not part of the language)",
    "*": "repetition is not part of the language (list each suffix as its own rule)",
    "+": "write \\+ for a literal plus (repetition is not part of the language)",
    "?": "optional parts are not part of the language (list each suffix as its own rule)",
    "(": "groups are not part of the language (list each suffix as its own rule)",
    ")": "groups are not part of the language (list each suffix as its own rule)",
    "|": "alternatives are not part of the language (list each suffix as its own rule)",
    "{": "repetition counts are not part of the language (write the characters out)",
    "}": "repetition counts are not part of the language (write the characters out)",
    "^": "rules match the end of a part number; '^' is not part of the language",
    "$": "'$' may only end a rule (write \\$ for a literal dollar sign)",
    "]": "write \\] for a literal bracket",
}


@dataclass(frozen=True)
class Rule:
    """A compiled suffix rule: one set of allowed (lower-case) characters per position."""

    text: str
    elements: tuple[frozenset[str], ...]

    @property
    def length(self) -> int:
        """Number of characters the rule matches."""
        return len(self.elements)

    def split(self, part_number: str) -> tuple[str, str] | None:
        """``(rest, suffix)`` when the rule matches the end of ``part_number`` with at least
        one character left before it, else None. Time: one pass over the rule's length."""
        n = len(self.elements)
        if len(part_number) <= n:
            return None
        tail = part_number[-n:]
        for ch, allowed in zip(tail, self.elements, strict=True):
            if ch not in allowed and ch.lower() not in allowed:
                return None
        return part_number[:-n], tail

    def strip(self, part_number: str) -> str | None:
        """``part_number`` without the suffix, or None when the rule does not match."""
        found = self.split(part_number)
        return None if found is None else found[0]


def _chars(ch: str) -> frozenset[str]:
    return frozenset({ch, ch.lower(), ch.upper()})


def _class(text: str, start: int) -> tuple[frozenset[str], int]:
    """Parse ``[...]`` starting at ``text[start] == '['``; return the set and the next index."""
    i = start + 1
    members: set[str] = set()
    while i < len(text) and text[i] != "]":
        ch = text[i]
        if ch == "\\" and i + 1 < len(text):
            members |= _chars(text[i + 1])
            i += 2
            continue
        if ch == "^" and i == start + 1:
            raise ValueError("negated classes [^...] are not part of the language")
        if i + 2 < len(text) and text[i + 1] == "-" and text[i + 2] != "]":
            lo, hi = ch, text[i + 2]
            if not (lo.isascii() and hi.isascii() and lo.isalnum() and hi.isalnum() and lo <= hi):
                raise ValueError(f"range {lo}-{hi} must run between two letters or digits")
            if (lo.isdigit()) != (hi.isdigit()):
                raise ValueError(f"range {lo}-{hi} mixes digits and letters")
            for code in range(ord(lo), ord(hi) + 1):
                members |= _chars(chr(code))
            i += 3
            continue
        if not ch.isprintable() or ch.isspace():
            raise ValueError("a class holds printable characters only")
        members |= _chars(ch)
        i += 1
    if i >= len(text):
        raise ValueError("'[' is not closed by ']'")
    if not members:
        raise ValueError("an empty class [] matches nothing")
    return frozenset(members), i + 1


def _parse(text: str) -> tuple[frozenset[str], ...]:
    body = text[:-1] if text.endswith("$") and not text.endswith("\\$") else text
    elements: list[frozenset[str]] = []
    i = 0
    while i < len(body):
        ch = body[i]
        if ch == "\\":
            if i + 1 >= len(body):
                raise ValueError("a rule cannot end in a lone '\\'")
            nxt = body[i + 1]
            if not nxt.isprintable() or nxt.isspace():
                raise ValueError("'\\' must be followed by a printable character")
            elements.append(_chars(nxt))
            i += 2
        elif ch == "[":
            members, i = _class(body, i)
            elements.append(members)
        elif ch == "#":
            elements.append(_DIGITS)
            i += 1
        elif ch in _REGEX_ONLY:
            raise ValueError(f"{ch!r} at character {i + 1}: {_REGEX_ONLY[ch]}")
        elif (ch.isalnum() and ch.isascii()) or ch in _LITERAL_PUNCTUATION:
            elements.append(_chars(ch))
            i += 1
        elif ch.isspace():
            raise ValueError("spaces are not part of suffixes (BOM part numbers are matched "
                             "without their spaces)")  # fmt: skip
        else:
            raise ValueError(f"character {ch!r} at character {i + 1} is not part of the language")
        if len(elements) > MAX_RULE_ELEMENTS:
            raise ValueError(f"longer than {MAX_RULE_ELEMENTS} characters")
    if not elements:
        raise ValueError("an empty rule matches nothing")
    return tuple(elements)


def compile_rule(text: object, *, record: str | None = None, pointer: str = "") -> Rule:
    """Compile one suffix rule (see the module docstring for the language).

    Raises :class:`~partsel.errors.InputError` (with ``record`` and ``pointer`` as given) for
    a rule outside the language, saying why and how to write it instead.
    """
    if not isinstance(text, str):
        raise InputError(
            f"a suffix rule is text such as '-TR', got {excerpt(text)}",
            record=record,
            pointer=pointer,
        )
    try:
        return Rule(text, _parse(text))
    except ValueError as exc:
        raise InputError(
            f"suffix rule {excerpt(text)} is not in partsel's suffix language: {exc} (rules are "
            "literal suffixes with # for a digit and [A-Z] classes, e.g. '-TR', '/R7', '-[A-Z]')",
            record=record,
            pointer=pointer,
        ) from None
