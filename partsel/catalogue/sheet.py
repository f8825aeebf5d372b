"""Import parts from a spreadsheet (CSV or XLSX) with a column mapping file.

A mapping file (YAML or JSON, format ``partsel.sheet-map/1``) says which sheet column fills
which field of a part record, in which unit the column's numbers are, and default values::

    format: partsel.sheet-map/1
    sheet: Parts                 # XLSX worksheet (default: the first)
    header_row: 1                # 1-based row holding the column names (default 1)
    columns:
      Part No: /part_number      # short form: just the field
      GBW (MHz): {field: /dynamics/gbw/typ, unit: MHz}
      SR: {field: /dynamics/slew_rise/typ, unit: V/us}
      Package: /packages/0/code
    defaults:
      /maker: Example Maker
      /lifecycle: active
      /packages/0/pinout: SINGLE-5A

Fields are JSON pointers into a part record (see DEVELOPERS.md). Each row becomes one record,
checked exactly like a catalogue file; problems name the sheet, the row (its number in the
sheet) and the field, and the column the value came from.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from partsel.catalogue.files import read_document
from partsel.catalogue.schema import Schema, catalogue_schema
from partsel.catalogue.validate import CatalogueDocument, validate_documents
from partsel.errors import InputError, Problem, json_pointer
from partsel.units import parse_quantity

MAP_FORMAT = "partsel.sheet-map/1"
_TRUE = {"true", "yes", "y", "1", "x"}
_FALSE = {"false", "no", "n", "0", ""}


@dataclass(frozen=True)
class ColumnMap:
    """One mapped column: sheet column name, target field pointer, unit of bare numbers."""

    column: str
    field: str
    unit: str | None
    leaf: Schema


@dataclass(frozen=True)
class SheetMapping:
    """A parsed mapping file."""

    columns: list[ColumnMap]
    defaults: dict[str, Any]
    sheet: str | None = None
    header_row: int = 1


def _split(pointer: str) -> list[str]:
    return [s.replace("~1", "/").replace("~0", "~") for s in pointer.split("/")[1:]]


def _leaf_schema(pointer: str) -> Schema | None:
    """The schema node a part-record pointer ends at, or None if the pointer is not a field."""
    schema = catalogue_schema()
    defs = schema["$defs"]
    node: Schema = defs["part"]
    for seg in _split(pointer):
        if "$ref" in node:
            node = {**defs[node["$ref"].rsplit("/", 1)[-1]], **node}
            node.pop("$ref", None)
        if seg.isdigit() and "items" in node:
            node = node["items"]
        elif seg in node.get("properties", {}):
            node = node["properties"][seg]
        else:
            return None
    if "$ref" in node:
        node = {**defs[node["$ref"].rsplit("/", 1)[-1]], **node}
    return node


def read_mapping(path: Path) -> SheetMapping:
    """Read and check a mapping file; raise InputError naming its bad entries."""
    file = str(path)
    data = read_document(path)
    if not isinstance(data, dict) or not isinstance(data.get("columns"), dict):
        raise InputError(
            "a mapping needs an object 'columns' (sheet column -> field)",
            file=file,
            pointer="/columns",
        )
    problems: list[Problem] = []
    known = {"format", "sheet", "header_row", "columns", "defaults"}
    problems += [
        Problem(f"unknown entry {k!r}", file, None, json_pointer(k)) for k in data if k not in known
    ]
    if data.get("format", MAP_FORMAT) != MAP_FORMAT:
        problems.append(Problem(f"format must be {MAP_FORMAT!r}", file, None, "/format"))
    header_row = data.get("header_row", 1)
    if not isinstance(header_row, int) or isinstance(header_row, bool) or header_row < 1:
        problems.append(
            Problem("header_row must be a whole number >= 1", file, None, "/header_row")
        )
        header_row = 1
    columns: list[ColumnMap] = []
    for name, entry in data["columns"].items():
        where = json_pointer("columns", str(name))
        spec = {"field": entry} if isinstance(entry, str) else entry
        if not isinstance(spec, dict) or not isinstance(spec.get("field"), str):
            problems.append(Problem("give a field pointer, or {field, unit}", file, None, where))
            continue
        field_ptr, unit = spec["field"], spec.get("unit")
        leaf = _leaf_schema(field_ptr) if field_ptr.startswith("/") else None
        if leaf is None:
            problems.append(
                Problem(
                    f"{field_ptr!r} is not a field of a part record", file, None, where + "/field"
                )
            )
            continue
        if unit is not None:
            dim = leaf.get("x-dimension")
            try:
                if dim is None:
                    raise InputError(f"field {field_ptr} takes no unit")
                parse_quantity(f"1 {unit}", dim)
            except InputError as exc:
                problems.append(Problem(str(exc.problems[0].message), file, None, where + "/unit"))
                continue
        columns.append(ColumnMap(str(name), field_ptr, unit, leaf))
    defaults = data.get("defaults") or {}
    if not isinstance(defaults, dict):
        problems.append(
            Problem("defaults must map field pointers to values", file, None, "/defaults")
        )
        defaults = {}
    for ptr in defaults:
        if not (isinstance(ptr, str) and ptr.startswith("/") and _leaf_schema(ptr)):
            problems.append(
                Problem(
                    f"{ptr!r} is not a field of a part record",
                    file,
                    None,
                    json_pointer("defaults", str(ptr)),
                )
            )
    if problems:
        raise InputError(problems=problems)
    return SheetMapping(columns, dict(defaults), data.get("sheet"), header_row)


def _set(record: dict[str, Any], pointer: str, value: Any) -> None:
    segs = _split(pointer)
    node: Any = record
    for seg, nxt in zip(segs, [*segs[1:], None], strict=True):
        if nxt is None:
            break
        child: Any = [] if nxt.isdigit() else {}
        if isinstance(node, list):
            k = int(seg)
            while len(node) <= k:
                node.append(None)
            if not isinstance(node[k], (dict, list)):
                node[k] = child
            node = node[k]
        else:
            if not isinstance(node.get(seg), (dict, list)):
                node[seg] = child
            node = node[seg]
    last = segs[-1]
    if isinstance(node, list):
        k = int(last)
        while len(node) <= k:
            node.append(None)
        node[k] = value
    else:
        node[last] = value


def _is_blank(cell: Any) -> bool:
    return (
        cell is None
        or (isinstance(cell, float) and math.isnan(cell))
        or (isinstance(cell, str) and not cell.strip())
    )


def _number_text(cell: Any) -> str | None:
    """The cell as a number's text, or None when it is not a bare number."""
    if isinstance(cell, bool):
        return None
    if isinstance(cell, int | float):
        return f"{cell:.15g}"
    text = str(cell).strip()
    return text if re.fullmatch(r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?", text) else None


def _convert(cell: Any, cm: ColumnMap) -> Any:
    """A cell as the value its field takes (raises ValueError with a message)."""
    leaf = cm.leaf
    num = _number_text(cell)
    if leaf.get("x-dimension") is not None:
        if num is None:
            return str(cell).strip()
        return f"{num} {cm.unit}" if cm.unit else float(num)
    kind = leaf.get("type")
    if kind == "integer":
        if num is None or float(num) != int(float(num)):
            raise ValueError(f"expected a whole number, got {cell!r}")
        return int(float(num))
    if kind == "number":
        if num is None:
            raise ValueError(f"expected a number, got {cell!r}")
        return float(num)
    if kind == "boolean":
        text = str(cell).strip().casefold()
        if isinstance(cell, bool):
            return cell
        if text in _TRUE or text in _FALSE:
            return text in _TRUE
        raise ValueError(f"expected yes/no, got {cell!r}")
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return str(cell).strip()


def read_sheet(path: Path, mapping: SheetMapping) -> pd.DataFrame:
    """The sheet's cells (CSV, or XLSX by its name ending) with the mapping's header row."""
    file = str(path)
    try:
        if path.suffix.lower() in (".xlsx", ".xlsm"):
            return pd.read_excel(
                path, sheet_name=mapping.sheet or 0, header=mapping.header_row - 1, dtype=object
            )
        return pd.read_csv(path, header=mapping.header_row - 1, dtype=str, keep_default_na=False)
    except (OSError, ValueError, KeyError, pd.errors.ParserError) as exc:
        raise InputError(f"cannot read sheet: {exc}", file=file) from None


def sheet_documents(sheet: Path, mapping_file: Path) -> list[CatalogueDocument]:
    """Turn a sheet's rows into part records and validate them (InputError: every problem).

    Problems name the sheet, the row as ``row N`` (its row number in the sheet) and the field;
    the mapped column is added to the message.
    """
    mapping = read_mapping(mapping_file)
    df = read_sheet(sheet, mapping)
    file = str(sheet)
    missing = [cm.column for cm in mapping.columns if cm.column not in df.columns]
    if missing:
        raise InputError(
            problems=[Problem(f"the sheet has no column {c!r}", file) for c in missing]
        )
    first_row = mapping.header_row + 1
    problems: list[Problem] = []
    records: list[dict[str, Any]] = []
    rows: list[int] = []
    for i, cells in enumerate(df.to_dict("records")):
        if all(_is_blank(cells[cm.column]) for cm in mapping.columns):
            continue
        record: dict[str, Any] = {}
        for ptr, value in mapping.defaults.items():
            _set(record, ptr, value)
        for cm in mapping.columns:
            cell = cells[cm.column]
            if _is_blank(cell):
                continue
            try:
                _set(record, cm.field, _convert(cell, cm))
            except ValueError as exc:
                problems.append(
                    Problem(f"{exc} (column {cm.column!r})", file, f"row {first_row + i}", cm.field)
                )
        records.append(record)
        rows.append(first_row + i)
    if problems:
        raise InputError(problems=problems)
    try:
        return validate_documents([(file, {"parts": records})])
    except InputError as exc:
        raise InputError(
            problems=[_row_problem(p, rows, records, mapping) for p in exc.problems]
        ) from None


def _row_problem(
    p: Problem, rows: list[int], records: list[dict[str, Any]], mapping: SheetMapping
) -> Problem:
    m = re.match(r"^/parts/(\d+)(.*)$", p.pointer)
    if not m:
        return p
    i, field_ptr = int(m.group(1)), m.group(2)
    pn = records[i].get("part_number")
    label = f"row {rows[i]}" + (f" ({pn})" if isinstance(pn, str) else "")
    cols = [
        cm.column
        for cm in mapping.columns
        if cm.field == field_ptr
        or cm.field.startswith(field_ptr + "/")
        or field_ptr.startswith(cm.field + "/")
    ]
    message = p.message + (f" (column {cols[0]!r})" if cols else "")
    message = re.sub(r"/parts/\d+", "", message)
    return Problem(message, p.file, label, field_ptr)
