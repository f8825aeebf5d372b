"""The one CSV writer: every CSV partsel writes (catalogue export, rankings, BOM write-back)
goes through :func:`write_rows` or :func:`write_frame`.

**Formula injection.** A spreadsheet opening a CSV runs a cell that starts with ``=``, ``+``,
``-`` or ``@`` as a formula (and some also after a leading tab or carriage return), so a part
number or BOM cell such as ``=HYPERLINK(...)`` would run on the reader's machine. Every text
cell that starts with one of :data:`FORMULA_START` (and the full-width forms of ``= + - @``) is
written with a single quote in front (``'=HYPERLINK(...)``), the usual convention: the quote
shows the text as text and most spreadsheets hide it. A plain number keeps its form, so
``-3.3``, ``+5`` and ``-1e-06`` stay numbers (:data:`NUMBER`); ``-inf`` or ``-3.3 V`` are text
and get the quote. Columns named in ``keep_raw`` are written unchanged, for trusted pipelines
that read the CSV with a program rather than a spreadsheet (e.g. a BOM's own cells echoed back).

**Form.** ``delimiter`` (default ``,``), ``line_ending`` (default ``"\\n"``; ``"\\r\\n"`` for
RFC 4180 or to keep a Windows input's endings), ``bom=True`` to start with a UTF-8 byte-order
mark (as the input had); cells are quoted only when they hold the delimiter, a quote, a CR or
a LF (RFC 4180; a lone CR is quoted under a LF ending too). Numbers are
written as Python writes them (``repr``: shortest round trip), missing values (None, NaN) as
empty cells, as pandas does.

**Files.** A path is written through a temporary file in the same folder, then renamed, so a
failed write leaves no half-written file; an unwritable path raises InputError naming the path
and the reason. A text stream (``sys.stdout``) is written as it is.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
import tempfile
from collections.abc import Collection, Iterable, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import IO, Any

from partsel.errors import InputError

#: Characters that make a spreadsheet read a cell as a formula when they start it.
FORMULA_START: tuple[str, ...] = ("=", "+", "-", "@", "\t", "\r")
#: The same with the full-width forms (read as formulas by spreadsheets in East Asian locales).
_FORMULA_START_ALL = (*FORMULA_START, "\uff1d", "\uff0b", "\uff0d", "\uff20")
#: A plain number (left as it is even when it starts with + or -).
NUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")


def neutralise(text: str) -> str:
    """``text`` made inert for spreadsheets: a leading ``'`` when it starts like a formula,
    unless it is a plain number (see the module docstring)."""
    if text.startswith(_FORMULA_START_ALL) and not NUMBER.fullmatch(text):
        return "'" + text
    return text


def cell_text(value: object) -> str:
    """The text of one cell: '' for None and NaN, ``repr`` for floats, ``str`` otherwise."""
    if value is None:
        return ""
    if isinstance(value, float):
        return "" if math.isnan(value) else repr(float(value))
    if type(value).__name__ in ("NAType", "NaTType"):
        return ""
    return str(value)


@contextmanager
def _open_target(target: str | os.PathLike[str] | IO[str], bom: bool) -> Any:
    """A text handle for ``target``: a stream as is, or a temporary file renamed on success."""
    if not isinstance(target, str | os.PathLike):
        if bom:
            target.write("\ufeff")
        yield target
        return
    path = Path(target)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent or ".")
    except OSError as exc:
        raise InputError(f"cannot write: {exc.strerror or exc}", file=str(path)) from None
    try:
        with open(fd, "w", encoding="utf-8", newline="") as fh:
            if bom:
                fh.write("\ufeff")
            yield fh
        os.replace(tmp, path)
    except OSError as exc:
        Path(tmp).unlink(missing_ok=True)
        raise InputError(f"cannot write: {exc.strerror or exc}", file=str(path)) from None
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_rows(
    target: str | os.PathLike[str] | IO[str],
    rows: Iterable[Sequence[object]],
    *,
    header: Sequence[str] | None = None,
    delimiter: str = ",",
    line_ending: str = "\n",
    bom: bool = False,
    keep_raw: Collection[str] = (),
) -> int:
    """Write ``header`` and ``rows`` as CSV to ``target`` (path or text stream); return the
    number of rows written.

    Cells are made inert (:func:`neutralise`) except in the columns whose header is in
    ``keep_raw``. A cell holding a delimiter, a quote, a carriage return or a line feed is
    quoted whatever ``line_ending`` is (Python's csv module alone would leave a lone CR
    unquoted under a "\\n" ending, splitting the row for the reader). Raises InputError
    naming the path when it cannot be written.
    """
    raw = [name in keep_raw for name in header] if header is not None else []
    line = io.StringIO()
    # "\r\n" as the csv terminator makes every CR and LF inside a cell quoted; each row's
    # own terminator is then replaced by the ending asked for.
    writer = csv.writer(line, delimiter=delimiter, lineterminator="\r\n")

    def one(cells: list[str]) -> str:
        line.seek(0)
        line.truncate()
        writer.writerow(cells)
        return line.getvalue()[:-2] + line_ending

    count = 0
    with _open_target(target, bom) as fh:
        if header is not None:
            names = zip(header, raw, strict=True)
            fh.write(one([h if r else neutralise(str(h)) for h, r in names]))
        for row in rows:
            cells = [cell_text(v) for v in row]
            fh.write(
                one(
                    [c if (k < len(raw) and raw[k]) else neutralise(c) for k, c in enumerate(cells)]
                )
            )
            count += 1
    return count


def write_frame(
    frame: Any,
    target: str | os.PathLike[str] | IO[str],
    *,
    columns: Sequence[str] | None = None,
    delimiter: str = ",",
    line_ending: str = "\n",
    bom: bool = False,
    keep_raw: Collection[str] = (),
) -> int:
    """Write a pandas frame (its ``columns``, default all; no index) with :func:`write_rows`.

    Cells are written as pandas' ``to_csv`` writes them for ordinary data (numbers by
    ``repr``, missing values empty), so switching a ``to_csv`` call to this writer changes
    only the cells that needed neutralising. Returns the number of rows written.
    """
    names = [str(c) for c in (frame.columns if columns is None else columns)]
    df = frame if columns is None else frame[list(columns)]
    return write_rows(
        target,
        df.itertuples(index=False, name=None),
        header=names,
        delimiter=delimiter,
        line_ending=line_ending,
        bom=bom,
        keep_raw=keep_raw,
    )
