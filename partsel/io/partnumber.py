"""Characters of part numbers and maker names, and the cleaning of BOM cells before matching.

Pure (standard library only), for the catalogue validator and the BOM matcher alike.

A part number or maker name is refused (:func:`name_problem`) when it is blank, longer than
:data:`MAX_NAME_CHARS`, or holds a character that is invisible or changes how the text around
it is shown, so that two look-alike part numbers could be told apart only by a byte dump:

- control characters (Unicode category Cc: tab, newline, NUL, DEL, ...);
- format characters (Cf): zero-width space / joiners, word joiner, byte-order mark, soft
  hyphen, and the bidirectional embeddings, overrides, isolates and marks (U+202A..U+202E,
  U+2066..U+2069, U+200E, U+200F, U+061C);
- surrogates, private-use and unassigned code points (Cs, Co, Cn), line and paragraph
  separators (Zl, Zp), and spaces other than the plain space U+0020 (Zs: no-break space, thin
  space, ideographic space, ...).

BOM cells come from other tools: :func:`clean_cell` drops format characters (a byte-order mark
pasted inside a cell, a zero-width space), turns other spaces into plain ones and trims, so
that the cell matches the part number it shows.
"""

from __future__ import annotations

import unicodedata

#: Longest part number or maker name, characters.
MAX_NAME_CHARS = 200

_REFUSED_CATEGORIES = frozenset({"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"})


def describe_char(ch: str) -> str:
    """``U+200B ZERO WIDTH SPACE`` style name of one character."""
    name = unicodedata.name(ch, "")
    if not name and unicodedata.category(ch) == "Cc":
        name = "control character"
    return f"U+{ord(ch):04X} {name or 'unnamed character'}"


def bad_character(text: str) -> tuple[int, str] | None:
    """(0-based position, character) of the first refused character of ``text``, or None."""
    for i, ch in enumerate(text):
        if ch == " " or ch.isalnum():
            continue
        cat = unicodedata.category(ch)
        if cat in _REFUSED_CATEGORIES or cat == "Zs":
            return i, ch
    return None


def name_problem(text: str, what: str = "part number") -> str | None:
    """Why ``text`` cannot be a ``what`` (e.g. "part number", "maker name"), or None.

    The message never quotes the text (it may be long or hold the invisible character); it
    names the character and its position.
    """
    if not text.strip():
        return f"{what} is blank"
    if len(text) > MAX_NAME_CHARS:
        return f"{what} is {len(text)} characters long (at most {MAX_NAME_CHARS})"
    found = bad_character(text)
    if found is not None:
        i, ch = found
        kind = (
            "a space other than the plain space"
            if unicodedata.category(ch) == "Zs"
            else ("an invisible or control character")
        )
        return (
            f"{what} holds {kind}, {describe_char(ch)}, at character {i + 1}; use printable "
            "characters and plain spaces only (look-alike part numbers are refused)"
        )
    return None


def clean_cell(text: str) -> str:
    """A BOM cell as matching should see it: format characters (byte-order mark U+FEFF,
    zero-width spaces and joiners, bidirectional controls, soft hyphen) removed, other spaces
    and line breaks made plain spaces, surrounding spaces trimmed."""
    out = []
    for ch in str(text):
        if ch.isalnum() or ch == " ":
            out.append(ch)
            continue
        cat = unicodedata.category(ch)
        if cat == "Cf":
            continue
        out.append(" " if cat in ("Zs", "Zl", "Zp", "Cc") else ch)
    return "".join(out).strip()
