"""partsel.io.textfile.read_structured: the same data as the reference parsers (json, PyYAML's
safe loader, tomllib) for valid documents, and InputError naming file and line for everything
it refuses: duplicate keys, size, depth, alias expansion, long numbers, bad bytes, syntax."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pytest
import yaml
from hypothesis import given
from hypothesis import strategies as st

from partsel.errors import InputError
from partsel.io.textfile import MAX_DEPTH, read_structured, syntax_for

# ---- same data as the reference parsers -------------------------------------------------------

_SCALARS = (
    st.none()
    | st.booleans()
    | st.integers(min_value=-(10**30), max_value=10**30)
    | st.floats(allow_nan=False, allow_infinity=False)
    | st.text(max_size=20)
)
_DOCS = st.dictionaries(
    st.text(min_size=1, max_size=8),
    st.recursive(
        _SCALARS,
        lambda inner: st.lists(inner, max_size=4) | st.dictionaries(st.text(max_size=8), inner),
        max_leaves=20,
    ),
    max_size=5,
)


@given(_DOCS)
def test_json_reads_as_the_json_module_does(doc: dict) -> None:
    text = json.dumps(doc)
    assert read_structured(text, syntax="JSON") == json.loads(text)


@given(_DOCS)
def test_yaml_reads_as_pyyaml_safe_load_does(doc: dict) -> None:
    """PyYAML's safe loader is the reference (dates cannot occur: safe_dump quotes strings
    that look like dates)."""
    text = yaml.safe_dump(doc, allow_unicode=True)
    assert read_structured(text, syntax="YAML") == yaml.safe_load(text)


def test_toml_reads_as_tomllib_does() -> None:
    text = Path(__file__).parents[1].joinpath("sample-catalog/designs/line-driver-5v.toml")
    data = text.read_text(encoding="utf-8")
    assert read_structured(text) == tomllib.loads(data)


def test_sample_catalogue_reads_as_pyyaml_does() -> None:
    for f in sorted(Path(__file__).parents[1].glob("sample-catalog/parts/*.yaml")):
        assert read_structured(f) == yaml.safe_load(f.read_text(encoding="utf-8")), f


def test_yaml_merge_keys_and_text_keys() -> None:
    text = "base: &b {x: 1, y: 2}\nc:\n  <<: *b\n  y: 3\n1: one\nyes: no\nd: 2024-01-02\n"
    assert read_structured(text, syntax="YAML") == {
        "base": {"x": 1, "y": 2},
        "c": {"x": 1, "y": 3},  # the key given explicitly wins over the merged one
        "1": "one",  # keys are the text written
        "yes": False,
        "d": "2024-01-02",  # dates stay text (JSON-like data)
    }


def test_syntax_from_name_and_byte_order_mark(tmp_path: Path) -> None:
    assert syntax_for("a.YML") == "YAML" and syntax_for("b.toml") == "TOML"
    assert syntax_for("c.txt") is None
    f = tmp_path / "x.json"
    f.write_bytes(b'\xef\xbb\xbf{"a": 1}')
    assert read_structured(f) == {"a": 1}


# ---- refusals: file, line, reason -------------------------------------------------------------


@pytest.mark.parametrize(("syntax", "text", "line", "fragment"), [
    ("JSON", '{"a": 1,\n "a": 2}', 2, "duplicate key 'a' given twice (first at line 1)"),
    ("JSON", '{"x": {"a": 1}, "y": {"a": 1, "b": {"c": 1, "c": 2}}}', 1, "duplicate key 'c'"),
    ("YAML", "a: 1\nb:\n  c: 1\n  c: 2\n", 4, "duplicate key 'c'"),
    ("TOML", "a = 1\nb = 2\na = 3\n", 3, "duplicate key"),
    ("JSON", '{"a": [1, 2,]}', 1, "malformed JSON"),
    ("YAML", "a: [1, 2\n", 2, "malformed YAML"),
    ("TOML", "a = \n", 1, "malformed TOML"),
    ("JSON", '{"a": NaN}', 1, "NaN is not JSON"),
    ("JSON", '{"a": 1e999}', 1, "too large for a float"),
    ("JSON", "\n\n" + "9" * 401, 3, "401 characters"),
    ("YAML", "a: " + "9" * 5000, 1, "5000 characters"),
    ("TOML", "a = " + "9" * 5000, 1, "longer than 100 digits"),
    ("TOML", "a = " + "9" * 401, 1, "longer than 100 digits"),
    ("YAML", "a: !!binary aGVsbG8=\n", 1, "not allowed"),
    ("YAML", "a: !!python/object/apply:os.system [ls]\n", 1, "malformed YAML"),
    ("YAML", "? [a, b]\n: 1\n", 1, "key must be plain text"),
])  # fmt: skip
def test_refusals_name_file_and_line(syntax: str, text: str, line: int, fragment: str) -> None:
    with pytest.raises(InputError) as info:
        read_structured(text, syntax=syntax, file="f.x", record="r")  # type: ignore[arg-type]
    (p,) = info.value.problems
    assert (p.file, p.record) == ("f.x", "r")
    assert fragment in p.message and f"line {line}" in p.message
    assert len(p.message) < 200


def test_undecodable_bytes_name_the_line(tmp_path: Path) -> None:
    f = tmp_path / "bad.yaml"
    f.write_bytes(b"a: 1\nb: caf\xe9\n")
    with pytest.raises(InputError, match=r"not UTF-8 text: byte 0xe9 at line 2, column 7"):
        read_structured(f)


def test_missing_file_folder_and_unknown_type(tmp_path: Path) -> None:
    with pytest.raises(InputError, match="file not found"):
        read_structured(tmp_path / "nope.yaml")
    with pytest.raises(InputError, match="folder"):
        read_structured(tmp_path, syntax="YAML")
    (tmp_path / "a.txt").write_text("x")
    with pytest.raises(InputError, match="unknown file type"):
        read_structured(tmp_path / "a.txt")


def test_size_cap(tmp_path: Path) -> None:
    f = tmp_path / "big.json"
    f.write_text("[" + "0," * 600 + "0]")
    assert len(read_structured(f)) == 601
    with pytest.raises(InputError, match="too large"):
        read_structured(f, max_bytes=1000)
    with pytest.raises(InputError, match="too large"):
        read_structured("x" * 1001, syntax="YAML", max_bytes=1000)


def _nested(syntax: str, depth: int) -> str:
    if syntax == "JSON":
        return "[" * depth + "]" * depth
    if syntax == "YAML":
        return "a:\n" + "".join(" " * (i + 1) + "a:\n" for i in range(depth - 1))
    return "a = " + "[" * (depth - 1) + "]" * (depth - 1)  # the top-level table is level 1


@pytest.mark.parametrize("syntax", ["JSON", "YAML", "TOML"])
def test_depth_cap_is_exact(syntax: str) -> None:
    """MAX_DEPTH levels are read, one more is refused, with its line."""
    read_structured(_nested(syntax, MAX_DEPTH), syntax=syntax)  # type: ignore[arg-type]
    with pytest.raises(InputError, match=f"nested deeper than {MAX_DEPTH} levels at line"):
        read_structured(_nested(syntax, MAX_DEPTH + 1), syntax=syntax)  # type: ignore[arg-type]


@pytest.mark.parametrize("text", [
    "[" * 100_000 + "]" * 100_000,
    "{" + '"a":{' * 100_000 + "}" * 100_001,
    '["]", ' * 70 + "[" * 70 + "]" * 140,  # brackets inside strings do not hide depth
])  # fmt: skip
def test_json_depth_with_strings_and_many_brackets(text: str) -> None:
    with pytest.raises(InputError, match="nested deeper"):
        read_structured(text, syntax="JSON")


@pytest.mark.parametrize("text", [
    "a = " + "[" * 100_000 + "]" * 100_000,
    "a = " + "{b = " * 100_000 + "1" + "}" * 100_000,
    "a" + ".a" * 100_000 + " = 1",  # dotted keys: tomllib's cost grows with their square
    "[" + "a." * 100_000 + "a]\n",
    "[x]\n" + "a = 'a.a.a'\n" * 10 + "[y]\n" + ".".join(['"k"'] * 70) + " = 1\n",
])  # fmt: skip
def test_toml_depth_and_dotted_keys(text: str) -> None:
    with pytest.raises(InputError, match="nested deeper than"):
        read_structured(text, syntax="TOML")


def test_toml_dots_in_strings_and_floats_are_not_keys() -> None:
    text = 'a = "' + "x." * 200 + '"\nb = [' + ", ".join(["1.5"] * 200) + "]\n# " + "." * 99
    data = read_structured(text, syntax="TOML")
    assert data["a"] == "x." * 200 and len(data["b"]) == 200


def _laughs(levels: int) -> str:
    """The nested-alias pattern: each level lists the previous one nine times."""
    lines = ['l0: &l0 "lol"']
    lines += [f"l{k}: &l{k} [" + ", ".join([f"*l{k - 1}"] * 9) + "]" for k in range(1, levels)]
    return "\n".join(lines) + f"\nnotes: *l{levels - 1}\n"


def test_alias_expansion_is_capped() -> None:
    """9**3 = 729 nodes per level-3 list: small repetition is read; the classic nine-level
    pattern (9**9, about 387 million strings) is refused at the alias that crosses the cap."""
    data = read_structured(_laughs(4), syntax="YAML")
    assert len(data["notes"]) == 9 and data["notes"][0][0][0] == "lol"
    with pytest.raises(InputError, match=r"expand to more than 100,000 nodes .* at line 7,"):
        read_structured(_laughs(10), syntax="YAML")
    with pytest.raises(InputError, match="aliases expand"):
        read_structured(_laughs(4), syntax="YAML", max_alias_nodes=100)


def test_merge_keys_count_as_aliases() -> None:
    keys = ", ".join(f"k{i}: {i}" for i in range(50))
    text = f"a: &a {{{keys}}}\n" + "".join(f"b{i}:\n  <<: *a\n" for i in range(30))
    assert len(read_structured(text, syntax="YAML")) == 31
    with pytest.raises(InputError, match="aliases expand"):
        read_structured(text, syntax="YAML", max_alias_nodes=500)
