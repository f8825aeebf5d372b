"""One bounded reader for the structured text files partsel reads: YAML, JSON and TOML.

Every catalogue file, design file, sheet mapping and BOM line's design goes through
:func:`read_structured`, and every plain text file partsel parses itself (SPICE model files,
scope captures) through :func:`read_text`, so that all of them share the same limits and the
same errors::

    from partsel.io.textfile import read_structured

    data = read_structured(Path("parts.yaml"))                  # syntax from the name ending
    data = read_structured(text, syntax="TOML", file="edit")    # text given directly
    data = read_structured(path, record=path.stem)              # name the record in errors

What it guarantees, for any input (tests/test_textfile.py, tests/test_fuzz_readers.py):

- the result is JSON-like data: ``dict`` with ``str`` keys, ``list``, ``str``, ``int``,
  ``float``, ``bool``, ``None`` (TOML dates and times stay ``datetime`` objects, as TOML has
  them; YAML dates stay text);
- or an :class:`~partsel.errors.InputError` naming the file (and ``record`` when given) with
  the line and column where it can be known; never another exception, never a hang:

  * size: at most ``max_bytes`` (default :data:`MAX_BYTES`, 20 MiB) read from a file;
  * nesting: at most ``max_depth`` nested lists/mappings (default :data:`MAX_DEPTH`, 64; a
    catalogue part needs 8), checked before the parser recurses, so 100,000 brackets are
    refused at once in all three syntaxes; TOML dotted keys count as nesting;
  * YAML aliases: the nodes that aliases (``*name``, merge keys ``<<``) add when expanded are
    counted while composing; beyond ``max_alias_nodes`` (default :data:`MAX_ALIAS_NODES`) the
    file is refused, so the nested-alias ("billion laughs") pattern stops early, in bounded
    memory;
  * numbers: a number literal longer than :data:`MAX_NUMBER_CHARS` characters is refused (no
    401-digit integers, no 5,000-digit ones past Python's conversion limit); JSON ``NaN`` and
    ``Infinity`` (not JSON) are refused;
  * duplicate keys are refused in every syntax, with the line of the second one;
  * text must be UTF-8 (a leading byte-order mark is dropped); undecodable bytes are refused
    with their line.

YAML is read with the safe loader's rules (no Python objects) minus implicit timestamps; the
tags ``!!binary``, ``!!set``, ``!!omap``, ``!!pairs``, ``!!timestamp`` are refused. A mapping
key that is not a string (``1:``, ``yes:``) is kept as the text written. Keys given explicitly
win over keys merged in with ``<<``.
"""

from __future__ import annotations

import json
import math
import os
import re
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, Literal

from partsel.errors import InputError, excerpt

Syntax = Literal["YAML", "JSON", "TOML"]

#: File name endings and their syntax.
SUFFIX_SYNTAX: dict[str, Syntax] = {
    ".yaml": "YAML",
    ".yml": "YAML",
    ".json": "JSON",
    ".toml": "TOML",
}
#: Largest file read, bytes (20 MiB: a catalogue of 10,000 parts is about 15 MiB of YAML).
MAX_BYTES = 20 * 1024 * 1024
#: Deepest nesting of lists and mappings (the top-level mapping is level 1).
MAX_DEPTH = 64
#: Most nodes that YAML aliases may add to a document when it is expanded.
MAX_ALIAS_NODES = 100_000
#: Longest number literal, characters (a float needs at most 25).
MAX_NUMBER_CHARS = 100


def syntax_for(path: str | os.PathLike[str]) -> Syntax | None:
    """The syntax of a file by its name ending (None when it is not one of SUFFIX_SYNTAX)."""
    return SUFFIX_SYNTAX.get(Path(path).suffix.lower())


def _size_text(n: int) -> str:
    return f"{n / 2**20:g} MiB" if n >= 2**20 else f"{n} bytes"


def _line_col(text: str, pos: int) -> tuple[int, int]:
    line = text.count("\n", 0, pos) + 1
    return line, pos - (text.rfind("\n", 0, pos) + 1) + 1


def _at(line: int | None, column: int | None = None) -> str:
    if line is None:
        return ""
    return f" at line {line}" + (f", column {column}" if column is not None else "")


class _Refusal(Exception):
    """A refusal found while reading: message and position (line, column) if known."""

    def __init__(self, message: str, line: int | None = None, column: int | None = None) -> None:
        super().__init__(message)
        self.message, self.line, self.column = message, line, column


def read_structured(
    source: str | bytes | os.PathLike[str],
    *,
    syntax: Syntax | None = None,
    file: str | None = None,
    record: str | None = None,
    max_bytes: int = MAX_BYTES,
    max_depth: int = MAX_DEPTH,
    max_alias_nodes: int = MAX_ALIAS_NODES,
) -> Any:
    """Read YAML, JSON or TOML into Python data, within limits (see the module docstring).

    Parameters
    ----------
    source:
        A path (``os.PathLike``, e.g. :class:`pathlib.Path`: the file is read), or the text
        itself as ``str`` (never taken as a path) or ``bytes`` (decoded as UTF-8).
    syntax:
        ``"YAML"``, ``"JSON"`` or ``"TOML"``; default: from the path's name ending (required
        for text).
    file:
        Name of the source in errors (default: the path as given).
    record:
        Record named in errors (e.g. the design's name), or None.
    max_bytes, max_depth, max_alias_nodes:
        Limits (defaults :data:`MAX_BYTES`, :data:`MAX_DEPTH`, :data:`MAX_ALIAS_NODES`).

    Returns
    -------
    The document: usually a ``dict``; ``None`` for an empty YAML file.

    Raises
    ------
    InputError
        The file cannot be read, is too large, not UTF-8, malformed, nested too deeply, has a
        duplicate key, too large an alias expansion or too long a number. The message says
        which and where (``line N, column M``); ``file`` and ``record`` are set.
    """
    if isinstance(source, os.PathLike):
        path = Path(source)
        file = file if file is not None else str(source)
        syntax = syntax or syntax_for(path)
        raw: str | bytes = _read_file(path, file, record, max_bytes)
    else:
        raw = source
    if syntax not in ("YAML", "JSON", "TOML"):
        known = ", ".join(SUFFIX_SYNTAX)
        raise InputError(
            f"unknown file type (use one of {known})"
            if syntax is None
            else f"unknown syntax {excerpt(syntax)}",
            file=file,
            record=record,
        )
    if len(raw) > max_bytes:
        raise InputError(
            f"too large: {_size_text(len(raw))}, at most {_size_text(max_bytes)}",
            file=file,
            record=record,
        )
    text = _decode(raw, file, record) if isinstance(raw, bytes) else raw
    if text.startswith("\ufeff"):
        text = text[1:]
    try:
        if _SURROGATE.search(text):  # only text given as str can hold them
            pos = _SURROGATE.search(text).start()  # type: ignore[union-attr]
            raise _Refusal("not UTF-8 text: a lone surrogate code point", *_line_col(text, pos))
        data = _PARSERS[syntax](text, max_depth, max_alias_nodes)
        if _SURROGATE_ESCAPE.search(text):
            _check_no_surrogates(data)
        return data
    except _Refusal as exc:
        raise InputError(
            f"{exc.message}{_at(exc.line, exc.column)}", file=file, record=record
        ) from None


def read_text(
    path: str | os.PathLike[str],
    *,
    file: str | None = None,
    record: str | None = None,
    max_bytes: int = MAX_BYTES,
    fallback: str | None = None,
    what: str = "text",
) -> str:
    """Read a plain text file (a SPICE model, a scope capture) within ``max_bytes``.

    The same limits and errors as :func:`read_structured` for the file itself: too large,
    missing, a folder, unreadable, and text that is not UTF-8 (a leading byte-order mark is
    dropped). ``fallback`` names an 8-bit encoding to decode with instead of refusing
    non-UTF-8 bytes (e.g. ``"latin-1"`` for instrument software that writes ``µ`` as one
    byte). A file holding NUL bytes is refused as not text (``what`` names what was expected
    in that message, e.g. ``"a SPICE model"``).
    """
    p = Path(path)
    label = file if file is not None else str(path)
    data = _read_file(p, label, record, max_bytes)
    nul = data.find(b"\x00")
    if nul >= 0:
        line = data.count(b"\n", 0, nul) + 1
        raise InputError(
            f"not {what}: the file holds NUL bytes (line {line}); is it a binary file?",
            file=label,
            record=record,
        )
    if data.startswith(b"\xef\xbb\xbf"):
        data = data[3:]
    if fallback is None:
        return _decode(data, label, record)
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        return data.decode(fallback)


def _read_file(path: Path, file: str, record: str | None, max_bytes: int) -> bytes:
    try:
        with path.open("rb") as fh:
            data = fh.read(max_bytes + 1)
    except FileNotFoundError:
        raise InputError("file not found", file=file, record=record) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", file=file, record=record) from None
    except OSError as exc:
        raise InputError(
            f"cannot read file: {exc.strerror or exc}", file=file, record=record
        ) from None
    if len(data) > max_bytes:
        raise InputError(f"too large: more than {_size_text(max_bytes)}", file=file, record=record)
    return data


def _decode(data: bytes, file: str | None, record: str | None) -> str:
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        column = exc.start - (data.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError(
            f"not UTF-8 text: byte 0x{data[exc.start]:02x}{_at(line, column)}",
            file=file,
            record=record,
        ) from None


# ---- surrogates -------------------------------------------------------------------------------

_SURROGATE = re.compile("[\ud800-\udfff]")
#: An escape that can make a surrogate code point in a JSON or YAML string.
_SURROGATE_ESCAPE = re.compile(r"\\u[dD][89a-fA-F]|\\U0000[dD][89a-fA-F]")


def _check_no_surrogates(data: Any) -> None:
    """Refuse strings (keys too) holding a lone surrogate (from an escape such as \\udcff):
    such text cannot be stored or written as UTF-8."""
    stack = [data]
    while stack:
        node = stack.pop()
        if isinstance(node, str):
            if _SURROGATE.search(node):
                raise _Refusal(
                    "a string holds a lone surrogate code point (an escape such as \\udcff); "
                    "such text cannot be stored"
                )
        elif isinstance(node, dict):
            stack.extend(node.keys())
            stack.extend(node.values())
        elif isinstance(node, list):
            stack.extend(node)


# ---- nesting depth before parsing (JSON, TOML) -------------------------------------------------

_NOT_BRACKET = re.compile(r"[^\[\]{}]+")
_INNERMOST_PAIR = re.compile(r"\[\]|\{\}")


def _skeleton_within(skeleton: str, max_depth: int) -> bool:
    """True when the brackets of ``skeleton`` (strings removed) nest at most ``max_depth``
    deep; False when deeper or unbalanced (then a precise scan decides). Each pass removes the
    innermost level, at C speed."""
    s = _NOT_BRACKET.sub("", skeleton)
    for _ in range(max_depth):
        if not s:
            return True
        reduced = _INNERMOST_PAIR.sub("", s)
        if reduced == s:
            return False
        s = reduced
    return not s


def _first_too_deep(
    tokens: re.Pattern[str], text: str, max_brackets: int, what: str, max_depth: int = 0
) -> None:
    """Walk the brackets of ``text`` (``tokens`` matches strings, comments and brackets) and
    raise a refusal at the first that opens bracket level ``max_brackets + 1`` (reported as
    ``max_depth``, default ``max_brackets``)."""
    depth = 0
    for m in tokens.finditer(text):
        c = m.group()
        if c in "[{":
            depth += 1
            if depth > max_brackets:
                line, col = _line_col(text, m.start())
                levels = max_depth or max_brackets
                raise _Refusal(f"{what} nested deeper than {levels} levels", line, col)
        elif c in "]}":
            depth = max(0, depth - 1)


# ---- JSON --------------------------------------------------------------------------------------

_STRING = r'"[^"\\]*(?:\\.[^"\\]*)*"'  # a JSON string (unrolled loop: linear, fast)
_JSON_STRING = re.compile(_STRING, re.S)
_JSON_TOKENS = re.compile(_STRING + r"|[\[\]{}]", re.S)
_JSON_KEY_TOKENS = re.compile(_STRING + r"|[\[\]{}:,]", re.S)


class _Duplicate(Exception):
    pass


class _Number(Exception):
    def __init__(self, text: str, why: str) -> None:
        super().__init__(why)
        self.text, self.why = text, why


def _json_pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise _Duplicate(key)
        out[key] = value
    return out


def _json_int(text: str) -> int:
    if len(text) > MAX_NUMBER_CHARS:
        raise _Number(text, f"number is {len(text)} characters long (at most {MAX_NUMBER_CHARS})")
    return int(text)


def _json_float(text: str) -> float:
    if len(text) > MAX_NUMBER_CHARS:
        raise _Number(text, f"number is {len(text)} characters long (at most {MAX_NUMBER_CHARS})")
    value = float(text)
    if not math.isfinite(value):
        raise _Number(text, f"number {excerpt(text)} is too large for a float")
    return value


def _json_constant(text: str) -> Any:
    raise _Number(text, f"{text} is not JSON (write a number or null)")


def _json_duplicate_position(text: str) -> tuple[str, int, int, int] | None:
    """(key, line, column, first line) of the first duplicate key (error path only)."""
    stack: list[dict[str, int] | None] = []
    expect_key = False
    for m in _JSON_KEY_TOKENS.finditer(text):
        tok = m.group()
        if tok == "{":
            stack.append({})
            expect_key = True
        elif tok == "[":
            stack.append(None)
            expect_key = False
        elif tok in "]}":
            if stack:
                stack.pop()
            expect_key = False
        elif tok == ",":
            expect_key = bool(stack) and stack[-1] is not None
        elif tok == ":":
            expect_key = False
        else:
            keys = stack[-1] if stack else None
            if expect_key and keys is not None:
                try:
                    key = json.loads(tok)
                except ValueError:
                    key = tok
                line, col = _line_col(text, m.start())
                if key in keys:
                    return key, line, col, keys[key]
                keys[key] = line
            expect_key = False
    return None


def _parse_json(text: str, max_depth: int, _max_alias_nodes: int) -> Any:
    if not _skeleton_within(_JSON_STRING.sub("", text), max_depth):
        _first_too_deep(_JSON_TOKENS, text, max_depth, "JSON")
    try:
        return json.loads(
            text,
            object_pairs_hook=_json_pairs,
            parse_int=_json_int,
            parse_float=_json_float,
            parse_constant=_json_constant,
        )
    except json.JSONDecodeError as exc:
        raise _Refusal(f"malformed JSON: {exc.msg}", exc.lineno, exc.colno) from None
    except _Duplicate as exc:
        found = _json_duplicate_position(text)
        if found is None:
            raise _Refusal(f"duplicate key {excerpt(str(exc))} (given twice)") from None
        key, line, col, first = found
        raise _Refusal(
            f"duplicate key {excerpt(key)} given twice (first at line {first})", line, col
        ) from None
    except _Number as exc:
        pos = text.find(exc.text)
        line, col = _line_col(text, pos) if pos >= 0 else (None, None)
        raise _Refusal(exc.why, line, col) from None
    except RecursionError:  # not reached: the depth is checked first; kept as a last guard
        raise _Refusal(f"JSON nested deeper than {max_depth} levels") from None


# ---- TOML --------------------------------------------------------------------------------------

# Strings and comments as TOML 1.0 writes them (multi-line ones first, so that the leftmost,
# longest token wins as in TOML itself; a multi-line string may end in up to two extra quotes).
_TOML_SKIP = re.compile(
    r'"""(?:[^\\]|\\[\s\S])*?"""(?!")'
    r"|'''[\s\S]*?'''(?!')"
    r'|"(?:[^"\\\n]|\\.)*"'
    r"|'[^'\n]*'"
    r"|#[^\n]*"
)
_TOML_TOKENS = re.compile(r"S+|[\[\]{}]")  # on the blanked text: string placeholders, brackets
_KEY_SEGMENT = r"[A-Za-z0-9_-]++"


def _blank(m: re.Match[str]) -> str:
    """A string becomes 'S's, a comment spaces; newlines stay (positions are kept)."""
    tok = m.group()
    fill = " " if tok.startswith("#") else "S"
    return re.sub(r"[^\n]", fill, tok)


def _check_toml_structure(text: str, max_depth: int) -> None:
    blanked = _TOML_SKIP.sub(_blank, text)
    levels = max_depth - 1  # the document itself is the table at level 1
    if not _skeleton_within(blanked, levels):
        _first_too_deep(_TOML_TOKENS, blanked, levels, "TOML", max_depth)
    if blanked.count(".") < max_depth:
        return
    # Dotted keys nest too, and tomllib's cost grows with the square of their length: a line
    # (keys never span lines) with max_depth dots or more is looked at closely.
    chain = re.compile(
        rf"(?<![A-Za-z0-9_-]){_KEY_SEGMENT}(?:[ \t]*+\.[ \t]*+{_KEY_SEGMENT}){{{max_depth}}}"
    )
    pos = 0
    for line_text in blanked.split("\n"):
        if line_text.count(".") >= max_depth:
            m = chain.search(line_text)
            if m:
                line, col = _line_col(blanked, pos + m.start())
                raise _Refusal(f"TOML key nested deeper than {max_depth} levels", line, col)
        pos += len(line_text) + 1


def _toml_float(text: str) -> float:
    if len(text) > MAX_NUMBER_CHARS:
        raise _Number(text, f"number is {len(text)} characters long (at most {MAX_NUMBER_CHARS})")
    return float(text)


_LONG_DIGITS = re.compile(rf"[0-9_]{{{MAX_NUMBER_CHARS + 1},}}")


def _check_toml_result(data: Any, text: str, max_depth: int) -> None:
    """Depth (tables of tables included) and integer size of a parsed TOML document."""
    limit = 10**MAX_NUMBER_CHARS
    stack: list[tuple[Any, int]] = [(data, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, dict | list):
            if depth > max_depth:
                raise _Refusal(f"TOML nested deeper than {max_depth} levels")
            children = node.values() if isinstance(node, dict) else node
            stack.extend((c, depth + 1) for c in children)
        elif isinstance(node, int) and not isinstance(node, bool) and abs(node) >= limit:
            m = _LONG_DIGITS.search(text)
            line, col = _line_col(text, m.start()) if m else (None, None)
            raise _Refusal(f"number is longer than {MAX_NUMBER_CHARS} digits", line, col)


_TOML_POSITION = re.compile(r"\s*\(at line (\d+), column (\d+)\)")


def _parse_toml(text: str, max_depth: int, _max_alias_nodes: int) -> Any:
    import tomllib

    _check_toml_structure(text, max_depth)
    try:
        data = tomllib.loads(text, parse_float=_toml_float)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        if msg.startswith(("Cannot overwrite a value", "Cannot declare")):
            msg = f"duplicate key (a key or table is given twice): {msg}"
        m = _TOML_POSITION.search(msg)
        if m:
            raise _Refusal(
                f"malformed TOML: {msg[: m.start()]}", int(m.group(1)), int(m.group(2))
            ) from None
        raise _Refusal(f"malformed TOML: {msg}") from None
    except _Number as exc:
        pos = text.find(exc.text)
        line, col = _line_col(text, pos) if pos >= 0 else (None, None)
        raise _Refusal(exc.why, line, col) from None
    except ValueError:  # an integer past Python's 4,300-digit conversion limit
        m = _LONG_DIGITS.search(text)
        line, col = _line_col(text, m.start()) if m else (None, None)
        raise _Refusal(f"number is longer than {MAX_NUMBER_CHARS} digits", line, col) from None
    except RecursionError:  # not reached: the depth is checked first; kept as a last guard
        raise _Refusal(f"TOML nested deeper than {max_depth} levels") from None
    _check_toml_result(data, text, max_depth)
    return data


# ---- YAML --------------------------------------------------------------------------------------


def _yaml_loader(max_depth: int, max_alias_nodes: int) -> type:
    """A safe YAML loader class with the limits built in (see the module docstring)."""
    import yaml
    from yaml.composer import Composer, ComposerError
    from yaml.constructor import ConstructorError, SafeConstructor
    from yaml.events import AliasEvent, ScalarEvent
    from yaml.nodes import MappingNode, ScalarNode
    from yaml.resolver import Resolver

    class LimitError(yaml.YAMLError):
        def __init__(self, message: str, mark: Any) -> None:
            super().__init__(message)
            self.message, self.mark = message, mark

    class BoundedComposer(Composer):
        """Counts nesting, and the nodes that aliases add, while composing.

        ``_total`` counts the nodes of the document as expanded (each alias adds the size of
        its anchored node); an anchored node's size is the growth of ``_total`` while it was
        composed, so one counter per node is all the bookkeeping.
        """

        def compose_document(self) -> Any:
            self._depth = 0
            self._total = 0
            self._alias_nodes = 0
            self._anchor_sizes: dict[str, int] = {}
            return super().compose_document()

        def compose_node(self, parent: Any, index: Any) -> Any:
            event = self.peek_event()
            if type(event) is AliasEvent:
                node = super().compose_node(parent, index)
                added = self._anchor_sizes.get(event.anchor, 1)
                self._alias_nodes += added
                self._total += added
                if self._alias_nodes > max_alias_nodes:
                    raise LimitError(
                        f"YAML aliases expand to more than {max_alias_nodes:,} nodes (an "
                        "anchor may repeat a small block, not multiply one)",
                        event.start_mark,
                    )
                return node
            before = self._total
            self._total += 1
            if type(event) is ScalarEvent:
                node = super().compose_node(parent, index)
            else:
                self._depth += 1
                if self._depth > max_depth:
                    raise LimitError(
                        f"YAML nested deeper than {max_depth} levels", event.start_mark
                    )
                node = super().compose_node(parent, index)
                self._depth -= 1
            if event.anchor is not None:
                self._anchor_sizes[event.anchor] = self._total - before
            return node

    class BoundedConstructor(SafeConstructor):
        """Safe constructor: unique keys, text keys, bounded numbers, JSON-like tags only."""

        def construct_mapping(self, node: Any, deep: bool = False) -> dict[str, Any]:
            if not isinstance(node, MappingNode):
                raise ConstructorError(
                    None, None, f"expected a mapping, found {node.id}", node.start_mark
                )
            own = [kv for kv in node.value if kv[0].tag != "tag:yaml.org,2002:merge"]
            self.flatten_mapping(node)
            merged = node.value[: len(node.value) - len(own)]
            out: dict[str, Any] = {}
            for key_node, value_node in merged:  # earlier merges win (YAML merge key spec)
                key = self._key(key_node)
                if key not in out:
                    out[key] = self.construct_object(value_node, deep=deep)
            first_line: dict[str, int] = {}
            for key_node, value_node in own:  # explicit keys win over merged ones
                key = self._key(key_node)
                if key in first_line:
                    raise LimitError(
                        f"duplicate key {excerpt(key)} given twice (first at line "
                        f"{first_line[key]})",
                        key_node.start_mark,
                    )
                first_line[key] = key_node.start_mark.line + 1
                out[key] = self.construct_object(value_node, deep=deep)
            return out

        def _key(self, node: Any) -> str:
            if not isinstance(node, ScalarNode):
                raise LimitError("a mapping key must be plain text", node.start_mark)
            if node.tag == "tag:yaml.org,2002:str":
                return str(self.construct_scalar(node))
            return str(node.value)

        def construct_yaml_int(self, node: Any) -> int:
            self._number_length(node)
            return super().construct_yaml_int(node)

        def construct_yaml_float(self, node: Any) -> float:
            self._number_length(node)
            return super().construct_yaml_float(node)

        def _number_length(self, node: Any) -> None:
            if len(node.value) > MAX_NUMBER_CHARS:
                raise LimitError(
                    f"number is {len(node.value)} characters long (at most {MAX_NUMBER_CHARS})",
                    node.start_mark,
                )

        def refuse_tag(self, node: Any) -> Any:
            raise LimitError(
                f"YAML tag {node.tag.rsplit(':', 1)[-1]!r} is not allowed (partsel files hold "
                "text, numbers, true/false, lists and mappings)",
                node.start_mark,
            )

    BoundedConstructor.add_constructor(
        "tag:yaml.org,2002:int", BoundedConstructor.construct_yaml_int
    )
    BoundedConstructor.add_constructor(
        "tag:yaml.org,2002:float", BoundedConstructor.construct_yaml_float
    )
    for tag in ("binary", "set", "omap", "pairs", "timestamp"):
        BoundedConstructor.add_constructor(
            f"tag:yaml.org,2002:{tag}", BoundedConstructor.refuse_tag
        )

    class NoTimestampResolver(Resolver):
        """YAML 1.1 implicit types, except that dates and times stay text."""

    NoTimestampResolver.yaml_implicit_resolvers = {
        first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:timestamp"]
        for first, resolvers in Resolver.yaml_implicit_resolvers.items()
    }

    class Loader(
        yaml.reader.Reader,
        yaml.scanner.Scanner,
        yaml.parser.Parser,
        BoundedComposer,
        BoundedConstructor,
        NoTimestampResolver,
    ):
        def __init__(self, stream: str) -> None:
            yaml.reader.Reader.__init__(self, stream)
            yaml.scanner.Scanner.__init__(self)
            yaml.parser.Parser.__init__(self)
            BoundedComposer.__init__(self)
            BoundedConstructor.__init__(self)
            NoTimestampResolver.__init__(self)

    Loader.LimitError = LimitError  # type: ignore[attr-defined]
    Loader.ComposerError = ComposerError  # type: ignore[attr-defined]
    return Loader


_LOADERS: dict[tuple[int, int], type] = {}


def _parse_yaml(text: str, max_depth: int, max_alias_nodes: int) -> Any:
    import yaml

    key = (max_depth, max_alias_nodes)
    loader_cls = _LOADERS.get(key)
    if loader_cls is None:
        loader_cls = _LOADERS.setdefault(key, _yaml_loader(max_depth, max_alias_nodes))
    try:
        loader = loader_cls(text)
    except yaml.reader.ReaderError as exc:  # a character YAML does not allow, checked up front
        line, col = _line_col(text, exc.position)
        raise _Refusal(
            f"malformed YAML: character U+{exc.character:04X} is not allowed in YAML", line, col
        ) from None
    try:
        return loader.get_single_data()
    except loader_cls.LimitError as exc:  # type: ignore[attr-defined]
        mark = exc.mark
        raise _Refusal(exc.message, mark.line + 1, mark.column + 1) from None
    except yaml.MarkedYAMLError as exc:
        mark = exc.problem_mark or exc.context_mark
        detail = exc.problem or exc.context or "syntax error"
        if mark is None:
            raise _Refusal(f"malformed YAML: {detail}") from None
        raise _Refusal(f"malformed YAML: {detail}", mark.line + 1, mark.column + 1) from None
    except yaml.YAMLError as exc:
        raise _Refusal(f"malformed YAML: {excerpt(str(exc), 200)}") from None
    except RecursionError:  # not reached: the depth is counted while composing
        raise _Refusal(f"YAML nested deeper than {max_depth} levels") from None
    except (ValueError, TypeError, OverflowError) as exc:  # a scalar the safe rules choke on
        raise _Refusal(f"malformed YAML: {excerpt(str(exc), 200)}") from None
    finally:
        loader.dispose()


_PARSERS: dict[str, Callable[[str, int, int], Any]] = {
    "YAML": _parse_yaml,
    "JSON": _parse_json,
    "TOML": _parse_toml,
}


def value_at(doc: Mapping[str, Any], path: tuple[str, ...]) -> Any:
    """The value at key ``path`` of a read document, or None where any key is absent."""
    node: Any = doc
    for key in path:
        if not isinstance(node, Mapping) or key not in node:
            return None
        node = node[key]
    return node
