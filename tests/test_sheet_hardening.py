"""Spreadsheet import (partsel.catalogue.sheet) of broken and hostile files: every failure is an
InputError naming the file and the reason (never a zip, XML or key traceback); XML is parsed
through defusedxml; mapping units have the field's dimension; mapping files go through the
bounded reader; invisible characters in part-number cells are dropped."""

from __future__ import annotations

import zipfile
from pathlib import Path

import openpyxl
import pytest
import yaml
from conftest import DATA

from partsel.catalogue.sheet import read_mapping, sheet_documents
from partsel.errors import InputError

SHEET = DATA / "sheet"


def _mapping(tmp_path: Path, **changes: object) -> Path:
    mapping = yaml.safe_load((SHEET / "map.yaml").read_text(encoding="utf-8"))
    mapping.update(changes)
    out = tmp_path / "map.yaml"
    out.write_text(yaml.safe_dump(mapping), encoding="utf-8")
    return out


@pytest.fixture
def good_xlsx(tmp_path: Path) -> Path:
    """The invented test sheet as XLSX, written with openpyxl."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Parts"
    lines = (SHEET / "parts.csv").read_text(encoding="utf-8").splitlines()
    for line in lines:
        ws.append(line.split(","))
    path = tmp_path / "good.xlsx"
    book.save(path)
    return path


def _rebuilt(src: Path, dst: Path, change: dict[str, bytes | None]) -> Path:
    """A copy of the XLSX archive ``src`` with parts replaced (bytes) or dropped (None)."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        names = set()
        for info in zin.infolist():
            names.add(info.filename)
            data = change.get(info.filename, zin.read(info.filename))
            if data is not None:
                zout.writestr(info, data)
        for name, data in change.items():
            if name not in names and data is not None:
                zout.writestr(name, data)
    return dst


def test_defusedxml_is_the_xml_parser() -> None:
    """openpyxl reads worksheets with iterparse and other parts with fromstring; with
    defusedxml installed both are defusedxml's (openpyxl.xml.functions)."""
    import defusedxml.ElementTree as safe
    from openpyxl.xml import functions

    assert openpyxl.DEFUSEDXML is True
    assert functions.iterparse is safe.iterparse
    if not openpyxl.LXML:
        assert functions.fromstring is safe.fromstring


def test_good_xlsx_reads(good_xlsx: Path, tmp_path: Path) -> None:
    docs = sheet_documents(good_xlsx, _mapping(tmp_path, sheet="Parts"))
    assert [p["part_number"] for d in docs for p in d.parts] == ["TWS-301", "TWS-302", "TWS-304"]


def _sheet_xml(good: Path) -> bytes:
    with zipfile.ZipFile(good) as z:
        return z.read("xl/worksheets/sheet1.xml")


@pytest.mark.parametrize("case", [
    "not-a-zip", "truncated-zip", "truncated-xml", "entity-dtd", "external-entity",
    "no-workbook", "no-sheet-part", "no-such-sheet", "empty-file",
])  # fmt: skip
def test_broken_xlsx_names_file_and_reason(good_xlsx: Path, tmp_path: Path, case: str) -> None:
    bad = tmp_path / f"{case}.xlsx"
    xml = _sheet_xml(good_xlsx)
    decl = b'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'
    body = xml.replace(decl.strip(), b"").lstrip()
    fragment = {
        "not-a-zip": "not a zip archive",
        "truncated-zip": "not a zip archive",
        "truncated-xml": "malformed XML",
        "entity-dtd": "XML entities",
        "external-entity": "XML entities",
        "no-workbook": "a part is missing",
        "no-sheet-part": "0 sheet(s)",
        "no-such-sheet": "no sheet 'Amps'",
        "empty-file": "not a zip archive",
    }[case]
    sheet = None
    if case == "not-a-zip":
        bad.write_text("Part No,GBW\nX,1\n", encoding="utf-8")
    elif case == "truncated-zip":
        data = good_xlsx.read_bytes()
        bad.write_bytes(data[: len(data) // 2])
    elif case == "truncated-xml":
        _rebuilt(good_xlsx, bad, {"xl/worksheets/sheet1.xml": xml[: len(xml) // 2]})
    elif case == "entity-dtd":  # the nested-entity expansion pattern, in a worksheet
        dtd = b'<!DOCTYPE w [<!ENTITY a "lol"><!ENTITY b "&a;&a;&a;&a;&a;&a;&a;&a;">]>'
        _rebuilt(good_xlsx, bad, {"xl/worksheets/sheet1.xml": dtd + body})
    elif case == "external-entity":
        dtd = b'<!DOCTYPE w [<!ENTITY x SYSTEM "file:///etc/passwd">]>'
        _rebuilt(good_xlsx, bad, {"xl/worksheets/sheet1.xml": dtd + body})
    elif case == "no-workbook":
        _rebuilt(good_xlsx, bad, {"xl/workbook.xml": None})
    elif case == "no-sheet-part":
        _rebuilt(good_xlsx, bad, {"xl/worksheets/sheet1.xml": None})
    elif case == "no-such-sheet":
        bad = good_xlsx
        sheet = "Amps"
    else:
        bad.write_bytes(b"")
    mapping = _mapping(tmp_path, **({"sheet": sheet} if sheet else {}))
    with pytest.raises(InputError) as info:
        sheet_documents(bad, mapping)
    (p,) = info.value.problems
    assert p.file == str(bad)
    assert fragment in p.message, p.message


def test_zip_that_unpacks_too_large_is_refused(tmp_path: Path, good_xlsx: Path) -> None:
    from partsel.catalogue import sheet as sheet_mod

    big = _rebuilt(good_xlsx, tmp_path / "big.xlsx", {"xl/pad.bin": b"\0" * 300_000})
    old = sheet_mod.MAX_XLSX_UNPACKED
    sheet_mod.MAX_XLSX_UNPACKED = 200_000  # the real cap is 200 MiB; the rule is the same
    try:
        with pytest.raises(InputError, match="would unpack to"):
            sheet_documents(big, _mapping(tmp_path))
    finally:
        sheet_mod.MAX_XLSX_UNPACKED = old


@pytest.mark.parametrize(("unit", "fragment"), [
    (["MHz"], "unit symbol"),  # issue 15: '[MHz]' was read as 1 Hz
    ("%", "ratio"),
    ("ppm", "ratio"),
    ("V", "a unit of a voltage"),
    ("MHz * 10", "not a unit partsel knows"),
    ("'MHz'", "not a unit partsel knows"),
])  # fmt: skip
def test_mapping_units_must_have_the_field_dimension(
    tmp_path: Path, unit: object, fragment: str
) -> None:
    mapping = yaml.safe_load((SHEET / "map.yaml").read_text(encoding="utf-8"))
    mapping["columns"]["GBW (MHz)"] = {"field": "/dynamics/gbw/typ", "unit": unit}
    path = tmp_path / "map.yaml"
    path.write_text(yaml.safe_dump(mapping), encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_mapping(path)
    (p,) = info.value.problems
    assert p.pointer == "/columns/GBW (MHz)/unit" and fragment in p.message


def test_mapping_unit_on_a_field_without_dimension(tmp_path: Path) -> None:
    path = _mapping(tmp_path)
    mapping = yaml.safe_load(path.read_text(encoding="utf-8"))
    mapping["columns"]["Channels"] = {"field": "/channels", "unit": "MHz"}
    path.write_text(yaml.safe_dump(mapping), encoding="utf-8")
    with pytest.raises(InputError, match="takes no unit"):
        read_mapping(path)


@pytest.mark.parametrize(("text", "fragment"), [
    ("columns:\n" + "  a: " + "[" * 5000 + "]" * 5000 + "\n", "nested deeper"),
    ("x: &a [1,1,1,1,1,1,1,1,1,1]\n" + "".join(
        f"y{k}: &y{k} [" + ", ".join([f"*{'a' if k == 0 else f'y{k - 1}'}"] * 10) + "]\n"
        for k in range(6)
    ) + "columns: {}\n", "aliases expand"),
    ("columns: {}\nheader_row: " + "9" * 401 + "\n", "401 characters"),
    ("columns: {}\nheader_row: 99999999\n", "header_row must be"),
    ("columns: {}\nsheet: [1]\n", "sheet must be"),
])  # fmt: skip
def test_mapping_files_are_read_bounded(tmp_path: Path, text: str, fragment: str) -> None:
    path = tmp_path / "map.yaml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(InputError) as info:
        read_mapping(path)
    assert fragment in str(info.value) and info.value.problems[0].file == str(path)


def test_byte_order_marks_in_a_csv_sheet(tmp_path: Path) -> None:
    """A CSV saved with a byte-order mark keeps its first column name; a mark or zero-width
    space pasted inside a part-number cell is dropped (issue 15, class 12)."""
    text = (SHEET / "parts.csv").read_text(encoding="utf-8")
    text = text.replace("TWS-302", "TWS-\ufeff302").replace("TWS-304", "TWS\u200b-304")
    bad = tmp_path / "bom.csv"
    bad.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    docs = sheet_documents(bad, SHEET / "map.yaml")
    assert [p["part_number"] for d in docs for p in d.parts] == ["TWS-301", "TWS-302", "TWS-304"]


def test_undecodable_csv_sheet(tmp_path: Path) -> None:
    bad = tmp_path / "latin1.csv"
    bad.write_bytes((SHEET / "parts.csv").read_bytes().replace(b"TWS-301", b"TWS-3\xe901"))
    with pytest.raises(InputError, match="not UTF-8 text"):
        sheet_documents(bad, SHEET / "map.yaml")
