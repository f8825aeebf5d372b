"""One regression test per hostile-input class of issue 15, each run in a subprocess under a
CPU-time and memory limit (tests/limited.py: 10 s CPU, 1 GiB address space), so that a hang or
a blow-up fails the test instead of stalling CI. Each child asserts what it must (an InputError
naming file and field, a warning, an inert CSV cell), prints PASS and exits 0; the database it
uses is unchanged after every refusal. Class 10 (the first run) is in tests/test_first_run.py,
under the same limits; class 7 (bounded computation) in tests/test_bounded_computation.py."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest
from limited import describe, run_limited

PRELUDE = """
import copy, csv, io, json, os, time, zipfile
from pathlib import Path
import yaml
from partsel.errors import InputError
from partsel.catalogue import (dump_documents, load_paths, open_catalogue, parts_frame,
                               read_and_validate)
TMP = Path(os.environ["HOSTILE_TMP"])
DATA = Path(os.environ["HOSTILE_DATA"])
QUILL = yaml.safe_load((DATA / "catalogue" / "quill.yaml").read_text(encoding="utf-8"))

def refused(path, *fragments):
    '''check and load both refuse the file, naming it; the database does not change.'''
    t0 = time.perf_counter()
    try:
        read_and_validate([path])
    except InputError as exc:
        text = str(exc)
        assert all(p.file == str(path) for p in exc.problems), text
        for f in fragments:
            assert f in text, (f, text[:500])
        assert len(text) < 2000, len(text)
    else:
        raise AssertionError(f"{path} was accepted")
    engine = open_catalogue(f"sqlite:///{TMP / 'c.sqlite'}")
    load_paths(engine, [DATA / "catalogue" / "brightwater.json"])
    before = dump_documents(engine)
    try:
        load_paths(engine, [path])
    except InputError:
        pass
    else:
        raise AssertionError(f"{path} was loaded")
    assert dump_documents(engine) == before
    engine.dispose()
    print(f"TIME {path.name} {time.perf_counter() - t0:.3f} s")

def part_with(**fields):
    doc = copy.deepcopy(QUILL)
    doc["parts"] = [doc["parts"][0]]
    for dotted, value in fields.items():
        node = doc["parts"][0]
        keys = dotted.split("__")
        for k in keys[:-1]:
            node = node[k]
        node[keys[-1]] = value
    return doc

def write(name, text):
    p = TMP / name
    p.write_text(text, encoding="utf-8")
    return p
"""


def _run(tmp_path: Path, body: str) -> str:
    from conftest import DATA

    code = PRELUDE + textwrap.dedent(body) + "\nprint('PASS')\n"
    proc = run_limited(code, env={"HOSTILE_TMP": str(tmp_path), "HOSTILE_DATA": str(DATA)})
    assert proc.returncode == 0 and "PASS" in proc.stdout, describe(proc)
    return proc.stdout


def test_class_1_depth(tmp_path: Path) -> None:
    """100,000 brackets in a real field, in JSON, YAML and TOML, and in a sheet mapping."""
    _run(
        tmp_path,
        r"""
    from partsel.io.textfile import read_structured
    from partsel.catalogue.sheet import read_mapping
    n = 100_000
    doc = json.dumps(part_with(notes="X")).replace('"X"', "[" * n + "]" * n)
    refused(write("deep.json", doc), "nested deeper than 64 levels at line 1")
    text = yaml.safe_dump(part_with(notes="X")).replace("notes: X", "notes: " + "[" * n)
    refused(write("deep.yaml", text), "nested deeper than 64 levels")
    for text in ("a = " + "[" * n + "]" * n, "a" + ".a" * n + " = 1"):
        try:
            read_structured(text, syntax="TOML", file="design.toml")
        except InputError as exc:
            assert "nested deeper" in str(exc) and exc.problems[0].file == "design.toml"
        else:
            raise AssertionError("deep TOML accepted")
    try:
        read_mapping(write("map.yaml", "columns: {}\ndefaults:\n  /notes: " + "[" * n + "\n"))
    except InputError as exc:
        assert "nested deeper" in str(exc)
    else:
        raise AssertionError("deep mapping accepted")
    """,
    )


LAUGHS = r"""
def laughs(field):
    lines = ['l0: &l0 "lol"']
    lines += [f"l{k}: &l{k} [" + ", ".join([f"*l{k - 1}"] * 9) + "]" for k in range(1, 10)]
    return "\n".join(lines) + "\n"
"""


def test_class_2_expansion(tmp_path: Path) -> None:
    """The nested-alias pattern in a part's notes and part number, and in mapping defaults."""
    _run(
        tmp_path,
        LAUGHS
        + r"""
    from partsel.catalogue.sheet import read_mapping
    body = yaml.safe_dump(part_with(notes="NOTES", part_number="PN"), sort_keys=False)
    for field in ("NOTES", "PN"):
        text = "x-anchors: " + "\n".join("  " + l for l in ["", *laughs(field).splitlines()])
        doc = body.replace(field, "*l9")
        refused(write(f"laughs-{field}.yaml", text + "\n" + doc), "aliases expand")
    try:
        read_mapping(write("map.yaml", laughs("d") + "columns: {}\ndefaults: {/notes: *l9}\n"))
    except InputError as exc:
        assert "aliases expand" in str(exc)
    else:
        raise AssertionError("expanding mapping accepted")
    """,
    )


def test_class_3_arithmetic(tmp_path: Path) -> None:
    """A quantity written as an expression is refused at once, in a file and in the parser."""
    _run(
        tmp_path,
        r"""
    from partsel.units import parse_quantity
    doc = part_with(dynamics__gbw__typ="5 V * 10 ** 10 ** 10")
    refused(write("arith.yaml", yaml.safe_dump(doc)), "without arithmetic", "/dynamics/gbw/typ")
    t0 = time.perf_counter()
    for k in range(10_000):
        try:
            parse_quantity(f"{k} V * 10 ** 10 ** {k}", "voltage")
        except InputError:
            pass
        else:
            raise AssertionError("arithmetic accepted")
    print(f"TIME 10000 expressions {time.perf_counter() - t0:.3f} s")
    """,
    )


def test_class_4_number_size(tmp_path: Path) -> None:
    """401- and 5,000-digit integers in JSON and YAML; check and load agree."""
    _run(
        tmp_path,
        r"""
    for digits in (401, 5000):
        big = "9" * digits
        doc = json.dumps(part_with(price__unit=1)).replace('"unit": 1', f'"unit": {big}')
        refused(write(f"big{digits}.json", doc), "characters long", "line 1")
        text = yaml.safe_dump(part_with(dynamics__gbw__typ="X")).replace("X", big)
        refused(write(f"big{digits}.yaml", text), "characters long")
    refused(write("huge-int.yaml", yaml.safe_dump(part_with(price__quantity=10**30))),
            "out of range", "/parts/0/price/quantity")
    """,
    )


def test_class_5_dimensionless_units(tmp_path: Path) -> None:
    """Quoted units, percent for a slew rate, ppm for a voltage, '[MHz]' in a sheet mapping."""
    _run(
        tmp_path,
        r"""
    from partsel.catalogue.sheet import read_mapping
    cases = [("dynamics__gbw__typ", "1 'MHz'", "quotes"),
             ("dynamics__slew_rise__typ", "50 percent", "is a ratio, not a slew rate"),
             ("supply__range__max", "30 ppm", "is a ratio, not a voltage")]
    for field, value, fragment in cases:
        refused(write(f"unit-{field}.yaml", yaml.safe_dump(part_with(**{field: value}))), fragment)
    mapping = yaml.safe_load((DATA / "sheet" / "map.yaml").read_text(encoding="utf-8"))
    mapping["columns"]["GBW (MHz)"] = {"field": "/dynamics/gbw/typ", "unit": ["MHz"]}
    try:
        read_mapping(write("map.yaml", yaml.safe_dump(mapping)))
    except InputError as exc:
        assert exc.problems[0].pointer == "/columns/GBW (MHz)/unit", str(exc)
    else:
        raise AssertionError("unit [MHz] accepted")
    """,
    )


def test_class_6_plausibility(tmp_path: Path) -> None:
    """Impossible values refused; implausible ones loaded with warnings."""
    _run(
        tmp_path,
        r"""
    from partsel.catalogue import validate_document
    refused(write("blank.yaml", yaml.safe_dump(part_with(part_number="   "))), "blank")
    refused(write("cold.yaml", yaml.safe_dump(part_with(temperature__min="-300 degC"))),
            "below absolute zero")
    for name, pn in (("zw", "QFA\u200b-2210"), ("bidi", "QFA-2210\u202e"), ("ctl", "QFA\x1b[31m")):
        doc = yaml.safe_dump(part_with(part_number=pn), allow_unicode=True)
        refused(write(f"{name}.yaml", doc), "/parts/0/part_number")
    doc = part_with(supply__range__max="1e30 V", dynamics__gbw__typ="1e30 Hz")
    valid, problems = validate_document(doc, file="implausible.yaml")
    assert valid is not None and not problems
    assert sorted(w.pointer for w in valid.warnings) == [
        "/parts/0/dynamics/gbw/typ", "/parts/0/supply/range/max"], valid.warnings
    """,
    )


def test_class_8_suffix_rules(tmp_path: Path) -> None:
    """'(a+)+$' is refused at check/load; matching any rule is linear in the rule's length."""
    _run(
        tmp_path,
        r"""
    from partsel.io.suffix import compile_rule
    doc = copy.deepcopy(QUILL)
    doc["makers"][0]["suffix_rules"] = ["-TR$", "(a+)+$"]
    refused(write("rules.yaml", yaml.safe_dump(doc)), "/makers/0/suffix_rules/1", "groups")
    rule = compile_rule("[A-Z]" * 31 + "!")
    t0 = time.perf_counter()
    for k in range(100_000):
        assert rule.split("a" * 30 + "!" * (k % 3)) is None or k % 3 == 1
    print(f"TIME 100000 matches {time.perf_counter() - t0:.3f} s")
    """,
    )


def test_class_9_formula_injection(tmp_path: Path) -> None:
    """Hostile part numbers in a stored catalogue are inert in the CSV export."""
    _run(
        tmp_path,
        r"""
    from partsel.io.csvout import FORMULA_START, NUMBER, write_frame
    doc = copy.deepcopy(QUILL)
    hostile = ['=HYPERLINK("x")', "+SUM(1)", "-2+3", "@cmd", "=1+1"]
    doc["parts"] = []
    for k, pn in enumerate(hostile):
        part = copy.deepcopy(QUILL["parts"][0])
        part["part_number"] = pn
        part["notes"] = "=cmd|' /C calc'!A0"
        doc["parts"].append(part)
    engine = open_catalogue(f"sqlite:///{TMP / 'csv.sqlite'}")
    load_paths(engine, [write("hostile.yaml", yaml.safe_dump(doc))])
    out = TMP / "export.csv"
    write_frame(parts_frame(engine), out)
    rows = list(csv.reader(out.open(newline="", encoding="utf-8")))
    cells = [c for row in rows for c in row]
    assert not [c for c in cells if c.startswith(FORMULA_START) and not NUMBER.fullmatch(c)]
    assert sorted(r[0] for r in rows[1:]) == sorted("'" + pn for pn in hostile)
    engine.dispose()
    """,
    )


def test_class_11_xlsx(tmp_path: Path) -> None:
    """A worksheet with the nested-entity pattern and a truncated archive: InputErrors."""
    _run(
        tmp_path,
        r"""
    import openpyxl
    from partsel.catalogue.sheet import sheet_documents
    book = openpyxl.Workbook()
    book.active.append(["Part No"])
    book.active.append(["X-1"])
    good = TMP / "good.xlsx"
    book.save(good)
    ents = "".join(f'<!ENTITY e{k} "' + f"&e{k - 1};" * 10 + '">' for k in range(1, 10))
    dtd = ('<!DOCTYPE w [<!ENTITY e0 "lol">' + ents + "]>").encode()
    bomb = TMP / "bomb.xlsx"
    with zipfile.ZipFile(good) as zin, zipfile.ZipFile(bomb, "w") as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                body = data.split(b"?>", 1)[1] if data.startswith(b"<?xml") else data
                data = dtd + body  # the declarations alone must be refused
            zout.writestr(info, data)
    trunc = TMP / "trunc.xlsx"
    trunc.write_bytes(good.read_bytes()[:300])
    for path, fragment in ((bomb, "XML entities"), (trunc, "not a zip archive")):
        t0 = time.perf_counter()
        try:
            sheet_documents(path, DATA / "sheet" / "map.yaml")
        except InputError as exc:
            assert fragment in str(exc) and exc.problems[0].file == str(path), str(exc)
        else:
            raise AssertionError(f"{path} accepted")
        print(f"TIME {path.name} {time.perf_counter() - t0:.3f} s")
    """,
    )


def test_class_12_byte_order_mark_in_cells(tmp_path: Path) -> None:
    """A byte-order mark inside a BOM or sheet cell does not hide the part number."""
    _run(
        tmp_path,
        r"""
    from partsel.io.partnumber import clean_cell
    from partsel.catalogue.sheet import sheet_documents
    assert clean_cell("BRQ-\ufeff612\ufeff") == "BRQ-612"
    text = (DATA / "sheet" / "parts.csv").read_text(encoding="utf-8")
    sheet = write("bom.csv", "\ufeff" + text.replace("TWS-301", "\ufeffTWS-301"))
    docs = sheet_documents(sheet, DATA / "sheet" / "map.yaml")
    assert docs[0].parts[0]["part_number"] == "TWS-301"
    """,
    )


@pytest.mark.parametrize("limit", ["cpu", "memory"])
def test_the_limits_bite(tmp_path: Path, limit: str) -> None:
    """The harness itself: a busy loop ends by the CPU limit, a 2 GiB allocation by the memory
    limit, so a real hang or blow-up would fail the tests above."""
    code = "while True: pass" if limit == "cpu" else "x = bytearray(2 * 1024**3)"
    proc = run_limited(code, cpu_seconds=1)
    assert proc.returncode != 0
