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
sheet) and the field, and the column the value came from. A column's ``unit`` must be a unit of
the field's dimension (:func:`partsel.units.check_unit`: no ``[MHz]``, no ``%`` for a
frequency); the mapping file is read with the bounded reader (:mod:`partsel.io.textfile`).

Reading is bounded and every failure is an InputError naming the file and the reason, never a
parser traceback: a sheet file of at most :data:`partsel.io.textfile.MAX_BYTES`; an XLSX file
must be a zip archive whose parts unpack to at most :data:`MAX_XLSX_UNPACKED` bytes, and its XML
is parsed by openpyxl through defusedxml (no entity declarations, no external references;
without defusedxml installed XLSX files are refused). A byte-order mark or zero-width character
pasted into a part-number or maker cell is dropped (:func:`partsel.io.partnumber.clean_cell`).
"""

from __future__ import annotations

import math
import re
import zipfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from partsel.catalogue.schema import Schema, catalogue_schema
from partsel.catalogue.validate import CatalogueDocument, validate_documents
from partsel.errors import InputError, Problem, excerpt, json_pointer
from partsel.io.partnumber import clean_cell
from partsel.io.textfile import MAX_BYTES, read_structured, syntax_for
from partsel.units import check_unit

if TYPE_CHECKING:
    import pandas as pd

MAP_FORMAT = "partsel.sheet-map/1"
#: Largest total size the parts of an XLSX archive may unpack to, bytes.
MAX_XLSX_UNPACKED = 200 * 1024 * 1024
#: Most parts (files) in an XLSX archive.
MAX_XLSX_PARTS = 10_000
#: Largest header row (the last row of a worksheet in the XLSX format).
MAX_HEADER_ROW = 1_048_576
#: Fields whose cells are cleaned of invisible characters before checking.
_NAME_FIELDS = ("/part_number", "/maker")
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
    data = read_structured(Path(path), syntax=syntax_for(path) or "YAML", file=file)
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
    if (
        not isinstance(header_row, int)
        or isinstance(header_row, bool)
        or not 1 <= header_row <= MAX_HEADER_ROW
    ):
        problems.append(
            Problem(
                f"header_row must be a whole number from 1 to {MAX_HEADER_ROW:,}",
                file,
                None,
                "/header_row",
            )
        )
        header_row = 1
    sheet = data.get("sheet")
    if sheet is not None and not (
        (isinstance(sheet, str) and sheet.strip())
        or (isinstance(sheet, int) and not isinstance(sheet, bool) and sheet >= 0)
    ):
        problems.append(
            Problem("sheet must be a worksheet name or a 0-based index", file, None, "/sheet")
        )
        sheet = None
    columns: list[ColumnMap] = []
    for name, entry in data["columns"].items():
        where = json_pointer("columns", str(name))
        spec = {"field": entry} if isinstance(entry, str) else entry
        if not isinstance(spec, dict) or not isinstance(spec.get("field"), str):
            problems.append(Problem("give a field pointer, or {field, unit}", file, None, where))
            continue
        unknown = [k for k in spec if k not in ("field", "unit")]
        if unknown:
            problems.append(Problem(f"unknown entry {excerpt(str(unknown[0]))}", file, None, where))
            continue
        field_ptr, unit = spec["field"], spec.get("unit")
        leaf = _leaf_schema(field_ptr) if field_ptr.startswith("/") else None
        if leaf is None:
            problems.append(
                Problem(
                    f"{excerpt(field_ptr)} is not a field of a part record",
                    file,
                    None,
                    where + "/field",
                )
            )
            continue
        if unit is not None:
            dim = leaf.get("x-dimension")
            if dim is None:
                problems.append(
                    Problem(f"field {field_ptr} takes no unit", file, None, where + "/unit")
                )
                continue
            try:
                check_unit(unit, dim)
            except InputError as exc:
                problems.append(Problem(exc.problems[0].message, file, None, where + "/unit"))
                continue
            unit = unit.strip()
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
                    f"{excerpt(ptr)} is not a field of a part record",
                    file,
                    None,
                    json_pointer("defaults", str(ptr)),
                )
            )
    if problems:
        raise InputError(problems=problems)
    return SheetMapping(columns, dict(defaults), sheet, header_row)


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


def _finite(num: str, cell: Any) -> float:
    """The number text as a finite float (ValueError beyond the float range)."""
    value = float(num)
    if not math.isfinite(value):
        raise ValueError(f"number out of range, got {excerpt(cell)}")
    return value


def _convert(cell: Any, cm: ColumnMap) -> Any:
    """A cell as the value its field takes (raises ValueError with a message)."""
    leaf = cm.leaf
    num = _number_text(cell)
    if leaf.get("x-dimension") is not None:
        if num is None:
            return str(cell).strip()
        value = _finite(num, cell)
        return f"{num} {cm.unit}" if cm.unit else value
    kind = leaf.get("type")
    if kind == "integer":
        if num is None or _finite(num, cell) != int(float(num)):
            raise ValueError(f"expected a whole number, got {excerpt(cell)}")
        return int(float(num))
    if kind == "number":
        if num is None:
            raise ValueError(f"expected a number, got {excerpt(cell)}")
        return _finite(num, cell)
    if kind == "boolean":
        text = str(cell).strip().casefold()
        if isinstance(cell, bool):
            return cell
        if text in _TRUE or text in _FALSE:
            return text in _TRUE
        raise ValueError(f"expected yes/no, got {excerpt(cell)}")
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    if cm.field in _NAME_FIELDS:
        return clean_cell(str(cell))
    return str(cell).strip()


def _xlsx_reason(exc: BaseException) -> str:
    """Why an XLSX file could not be read, from the exception and its causes."""
    import xml.parsers.expat
    import zlib
    from xml.etree.ElementTree import ParseError

    try:
        from defusedxml import DefusedXmlException
    except ImportError:  # pragma: no cover - refused before reading
        DefusedXmlException = ()  # type: ignore[assignment,misc]
    seen: list[BaseException] = []
    e: BaseException | None = exc
    while e is not None and len(seen) < 10:
        seen.append(e)
        e = e.__cause__ or e.__context__
    for e in seen:
        if isinstance(e, DefusedXmlException):
            return (
                "the XLSX file declares XML entities or external references, which are refused "
                "(they can expand without bound or reach outside the file)"
            )
    for e in seen:
        if isinstance(e, zipfile.BadZipFile | zlib.error | EOFError):
            return f"damaged XLSX file: the zip archive is truncated or corrupt ({excerpt(str(e))})"
        if isinstance(e, ParseError | xml.parsers.expat.ExpatError):
            return f"damaged XLSX file: malformed XML ({excerpt(str(e), 80)})"
        if isinstance(e, KeyError):
            part = e.args[0] if e.args else "?"
            return f"damaged XLSX file: a part is missing ({excerpt(str(part), 80)})"
    return f"damaged XLSX file ({type(exc).__name__}: {excerpt(str(exc), 80)})"


def _check_xlsx_archive(path: Path) -> None:
    """A zip archive of bounded size, read through defusedxml (raises InputError)."""
    file = str(path)
    import openpyxl

    if not getattr(openpyxl, "DEFUSEDXML", False):
        raise InputError(
            "XLSX import needs the defusedxml package (pip install defusedxml) so that the "
            "sheet's XML is read safely; or export the sheet as CSV",
            file=file,
        )
    try:
        if not zipfile.is_zipfile(path):
            raise InputError("not an XLSX file: not a zip archive (or a truncated one)", file=file)
        with zipfile.ZipFile(path) as archive:
            infos = archive.infolist()
    except (OSError, zipfile.BadZipFile) as exc:
        raise InputError(f"cannot read sheet: {_xlsx_reason(exc)}", file=file) from None
    if len(infos) > MAX_XLSX_PARTS:
        raise InputError(
            f"not read: the XLSX archive has {len(infos):,} parts (at most {MAX_XLSX_PARTS:,})",
            file=file,
        )
    unpacked = sum(i.file_size for i in infos)
    if unpacked > MAX_XLSX_UNPACKED:
        raise InputError(
            f"not read: the XLSX archive would unpack to {unpacked / 2**20:.0f} MiB (at most "
            f"{MAX_XLSX_UNPACKED / 2**20:.0f} MiB)",
            file=file,
        )


def _header_names(cells: tuple[Any, ...]) -> list[str]:
    """Column names as pandas makes them: 'Unnamed: k' for blanks, '.1' for repeats."""
    names: list[str] = []
    seen: dict[str, int] = {}
    for k, c in enumerate(cells):
        name = f"Unnamed: {k}" if _is_blank(c) else str(c)
        if isinstance(c, float) and c.is_integer():
            name = str(int(c))
        if name in seen:
            seen[name] += 1
            name = f"{name}.{seen[name]}"
        else:
            seen[name] = 0
        names.append(name)
    return names


def _xlsx_rows(openpyxl: Any, fh: Any, mapping: SheetMapping, file: str) -> list[tuple[Any, ...]]:
    """The rows of the mapping's worksheet of an open XLSX file."""
    book = openpyxl.load_workbook(fh, read_only=True, data_only=True, keep_links=False)
    try:
        wanted = mapping.sheet if mapping.sheet is not None else 0
        if isinstance(wanted, str):
            if wanted not in book.sheetnames:
                names = ", ".join(repr(n) for n in book.sheetnames[:10])
                raise InputError(
                    f"the workbook has no sheet {excerpt(wanted)} (it has {names})", file=file
                )
            sheet = book[wanted]
        else:
            if wanted >= len(book.worksheets):
                raise InputError(
                    f"the workbook has {len(book.worksheets)} sheet(s); sheet index {wanted} "
                    "does not exist",
                    file=file,
                )
            sheet = book.worksheets[wanted]
        return [tuple(r) for r in sheet.iter_rows(values_only=True)]
    finally:
        book.close()


def _read_xlsx(path: Path, mapping: SheetMapping) -> pd.DataFrame:
    import openpyxl
    import pandas as pd

    file = str(path)
    _check_xlsx_archive(path)
    try:
        with path.open("rb") as fh:  # closed here even when openpyxl fails half-way
            rows = _xlsx_rows(openpyxl, fh, mapping, file)
    except InputError:
        raise
    except Exception as exc:  # openpyxl's and zipfile's assorted errors, read as a reason
        raise InputError(f"cannot read sheet: {_xlsx_reason(exc)}", file=file) from None
    k = mapping.header_row - 1
    if k >= len(rows):
        raise InputError(
            f"the sheet has {len(rows)} row(s); header_row {mapping.header_row} is past the end",
            file=file,
        )
    width = max(len(r) for r in rows[k:])
    header = _header_names(rows[k] + (None,) * (width - len(rows[k])))
    body = [r + (None,) * (width - len(r)) for r in rows[k + 1 :]]
    return pd.DataFrame(body, columns=header, dtype=object)


def read_sheet(path: Path, mapping: SheetMapping) -> pd.DataFrame:
    import pandas as pd

    """The sheet's cells (CSV, or XLSX by its name ending) with the mapping's header row.

    Raises InputError naming the file and the reason for a file that cannot be read (see the
    module docstring for the limits).
    """
    file = str(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise InputError(f"cannot read sheet: {exc.strerror or exc}", file=file) from None
    if size > MAX_BYTES:
        raise InputError(
            f"too large: {size / 2**20:.1f} MiB, at most {MAX_BYTES / 2**20:g} MiB", file=file
        )
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        return _read_xlsx(path, mapping)
    try:
        return pd.read_csv(
            path,
            header=mapping.header_row - 1,
            dtype=str,
            keep_default_na=False,
            encoding="utf-8-sig",
        )
    except UnicodeDecodeError as exc:
        raise InputError(
            f"cannot read sheet: not UTF-8 text (byte 0x{exc.object[exc.start]:02x} at offset "
            f"{exc.start}); save the sheet as UTF-8 CSV",
            file=file,
        ) from None
    except (OSError, ValueError, KeyError, pd.errors.ParserError) as exc:
        raise InputError(f"cannot read sheet: {excerpt(str(exc), 120)}", file=file) from None


def sheet_documents(
    sheet: Path,
    mapping_file: Path,
    *,
    progress: Callable[[int, int], None] | None = None,
) -> list[CatalogueDocument]:
    """Turn a sheet's rows into part records and validate them (InputError: every problem).

    Problems name the sheet, the row as ``row N`` (its row number in the sheet) and the field;
    the mapped column is added to the message. ``progress(done, total)`` follows the rows.
    """
    mapping = read_mapping(mapping_file)
    df = read_sheet(sheet, mapping)
    file = str(sheet)
    missing = [cm.column for cm in mapping.columns if cm.column not in df.columns]
    if missing:
        raise InputError(
            problems=[Problem(f"the sheet has no column {excerpt(c)}", file) for c in missing]
        )
    first_row = mapping.header_row + 1
    problems: list[Problem] = []
    records: list[dict[str, Any]] = []
    rows: list[int] = []
    all_rows = df.to_dict("records")
    for i, cells in enumerate(all_rows):
        if progress is not None and i % 100 == 0:
            progress(i, len(all_rows))
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
