"""Fuzz suite over every reader of the input edge: catalogue files (YAML and JSON), sheets with
their mapping files, edited records, and the text reader on TOML designs. Inputs are the
invented fixtures mutated with hostile fragments (brackets, anchors and aliases, tags, quotes,
long numbers, invisible characters, arithmetic, odd units) and free-form documents.

Property: every input gives a result or partsel's own InputError (with a message and the file
where one exists), never another exception; after a refusal the database is unchanged (a dump
before and after compared)."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import yaml
from conftest import CATALOGUE_DATA, DATA, PROJECT
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from partsel.catalogue import (
    dump_documents,
    edit_part,
    get_part,
    load_documents,
    load_paths,
    open_catalogue,
    read_and_validate,
)
from partsel.catalogue.sheet import sheet_documents
from partsel.errors import InputError
from partsel.io.textfile import read_structured

FRAGMENTS = [
    "[", "]", "{", "}", "[[[[[[[[", "&a ", "*a", "<<: *a", "!!set ", "!!binary ",
    "!!python/name:os.system ",
    "'", '"', "\\", "\n", "\n  ", "\t", ": ", "- ", "# ", ",", "9" * 450, "-" + "9" * 120, "1e999",
    "NaN", ".inf", "\ufeff", "\u200b", "\u202e", "\x00", "\x7f", "\udcff", "5 V * 10 ** 10 ** 10",
    "1 'MHz'", "50 percent", "-300 degC", "4k7", "1e30 V", "\u00b5", "Ω", "(a+)+$", "=cmd|' /C'!A0",
    "~", "null", "true", "2024-13-45", "0x" + "f" * 200, "1:2:3:4:5", "---\n", "...\n",
    "%YAML 1.1\n",
]  # fmt: skip

SETTINGS = settings(
    max_examples=60,
    deadline=None,
    # one database for the examples of a test: each refusal is checked against a dump of it
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
)


@st.composite
def mutated(draw: st.DrawFn, text: str) -> str:
    """``text`` with a few hostile fragments inserted, parts deleted or replaced."""
    out = text
    for _ in range(draw(st.integers(1, 4))):
        pos = draw(st.integers(0, len(out)))
        op = draw(st.sampled_from(["insert", "delete", "replace"]))
        frag = draw(st.one_of(st.sampled_from(FRAGMENTS), st.text(max_size=6)))
        if op == "insert":
            out = out[:pos] + frag + out[pos:]
        elif op == "delete":
            out = out[:pos] + out[pos + draw(st.integers(1, 30)) :]
        else:
            out = out[:pos] + frag + out[pos + len(frag) :]
    return out


def _check_problems(exc: InputError, file: str | None = None) -> None:
    assert exc.problems
    for p in exc.problems:
        assert p.message and len(p.message) < 1000
        if file is not None:
            assert p.file is not None


def _engine(tmp_path: Path, name: str) -> Any:
    return open_catalogue(f"sqlite:///{tmp_path / name}")


QUILL = (CATALOGUE_DATA / "quill.yaml").read_text(encoding="utf-8")
BRIGHT = (CATALOGUE_DATA / "brightwater.json").read_text(encoding="utf-8")


@SETTINGS
@given(st.one_of(mutated(QUILL), mutated(BRIGHT)), st.sampled_from([".yaml", ".json"]))
def test_catalogue_files(tmp_path: Path, text: str, suffix: str) -> None:
    f = tmp_path / f"fuzz{suffix}"
    f.write_text(text, encoding="utf-8", errors="surrogatepass")
    engine = _engine(tmp_path, "cat.sqlite")
    try:
        load_paths(engine, [CATALOGUE_DATA / "brightwater.json"])
        before = dump_documents(engine)
        try:
            read_and_validate([f])
        except InputError as exc:
            _check_problems(exc, str(f))
        try:
            load_paths(engine, [f])
        except InputError as exc:
            _check_problems(exc, str(f))
            assert dump_documents(engine) == before
    finally:
        engine.dispose()


_LEAF = st.one_of(
    st.sampled_from(FRAGMENTS),
    st.text(max_size=10),
    st.integers(min_value=-(10**500), max_value=10**500),
    st.floats(),
    st.booleans(),
    st.none(),
    st.lists(st.integers(), max_size=3),
    st.dictionaries(st.text(max_size=4), st.integers(), max_size=2),
)


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = [prefix]
    if isinstance(node, dict):
        for k, v in node.items():
            out += _paths(v, (*prefix, k))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out += _paths(v, (*prefix, i))
    return out


@st.composite
def edited(draw: st.DrawFn, record: dict[str, Any]) -> dict[str, Any]:
    """``record`` with a few fields replaced by hostile values (structure-aware mutation)."""
    out = copy.deepcopy(record)
    paths = [p for p in _paths(out) if p]
    for _ in range(draw(st.integers(1, 3))):
        path = draw(st.sampled_from(paths))
        node = out
        try:
            for key in path[:-1]:
                node = node[key]
            node[path[-1]] = draw(_LEAF)
        except (KeyError, IndexError, TypeError):
            continue
    return out


_QUILL_PART = yaml.safe_load(QUILL)["parts"][0]


@SETTINGS
@given(edited(_QUILL_PART))
def test_edited_records(tmp_path: Path, record: dict[str, Any]) -> None:
    engine = _engine(tmp_path, "edit.sqlite")
    try:
        if get_part(engine, "QFA-2210") is None:
            load_paths(engine, [CATALOGUE_DATA])
        before = dump_documents(engine)
        version = get_part(engine, "QFA-2210").version
        try:
            edit_part(engine, record, version if record.get("part_number") == "QFA-2210" else 0)
        except InputError as exc:
            _check_problems(exc)
            assert dump_documents(engine) == before
    finally:
        engine.dispose()


SHEET = DATA / "sheet"
MAP_TEXT = (SHEET / "map.yaml").read_text(encoding="utf-8")
CSV_TEXT = (SHEET / "parts.csv").read_text(encoding="utf-8")


# A number beyond the float range in an integer cell (found by this fuzz test in CI)
HUGE_CHANNELS = CSV_TEXT.replace("TWS-302,2,", "TWS-302," + "9" * 450 + ",")


@SETTINGS
@given(
    st.one_of(mutated(MAP_TEXT), st.just(MAP_TEXT)), st.one_of(mutated(CSV_TEXT), st.just(CSV_TEXT))
)
@example(MAP_TEXT, HUGE_CHANNELS)
@example(MAP_TEXT, CSV_TEXT.replace(",45,1.4", ",1e999,1.4"))
def test_sheets_and_mappings(tmp_path: Path, mapping: str, sheet: str) -> None:
    m, s = tmp_path / "map.yaml", tmp_path / "parts.csv"
    m.write_text(mapping, encoding="utf-8", errors="surrogatepass")
    s.write_text(sheet, encoding="utf-8", errors="surrogatepass")
    engine = _engine(tmp_path, "sheet.sqlite")
    try:
        before = dump_documents(engine)
        try:
            docs = sheet_documents(s, m)
        except InputError as exc:
            _check_problems(exc, "file")
            assert dump_documents(engine) == before
            return
        load_documents(engine, docs)
    finally:
        engine.dispose()


DESIGNS = sorted((PROJECT / "sample-catalog" / "designs").glob("*.toml"))
DESIGN_TEXT = DESIGNS[0].read_text(encoding="utf-8")


@settings(max_examples=150, deadline=None)
@given(mutated(DESIGN_TEXT))
def test_text_reader_on_toml_designs(text: str) -> None:
    try:
        data = read_structured(text, syntax="TOML", file="design.toml", record="design")
    except InputError as exc:
        _check_problems(exc, "design.toml")
        assert exc.problems[0].file == "design.toml" and exc.problems[0].record == "design"
        return
    assert isinstance(data, dict)


@settings(max_examples=150, deadline=None)
@given(
    st.one_of(mutated(QUILL), mutated(json.dumps(yaml.safe_load(QUILL)))),
    st.sampled_from(["YAML", "JSON", "TOML"]),
)
def test_text_reader_any_syntax(text: str, syntax: str) -> None:
    try:
        read_structured(text, syntax=syntax, file="x")  # type: ignore[arg-type]
    except InputError as exc:
        _check_problems(exc, "x")
