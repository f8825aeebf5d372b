"""Oscilloscope captures: a CSV file of time and one or two voltages, to SI arrays.

Read with the bounded reader (:func:`partsel.io.textfile.read_text`, at most
:data:`MAX_CAPTURE_BYTES`; UTF-8, or Latin-1 / Windows-1252 text such as a one-byte ``µ``).
The usual shapes are read:

* a block of header lines first (instrument, sample interval, trigger...: anything before the
  column header is skipped);
* a column header (``Time (s), CH1 (V), CH2 (mV)``; units in parentheses or brackets, after a
  slash, or in a row of their own right under the header: ``second, Volt, Volt``), or no
  header at all (columns ``1``, ``2``...; seconds and volts);
* separators ``,``, ``;``, tab or spaces (the one that splits the data rows alike), with a
  decimal comma where the separator is not a comma (``-0,0012;1,25``);
* units of time (``s``, ``ms``, ``us``/``µs``, ``ns``, ``second``) and voltage (``V``,
  ``mV``, ``uV``/``µV``, ``Volt``), read by :mod:`partsel.units`.

Anything else is refused with an :class:`~partsel.errors.InputError` naming the file and the
line: a data row with text, too few or too many cells, a time that does not increase, a unit
that is not one of time or voltage, fewer than :data:`MIN_SAMPLES` rows.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from partsel.errors import InputError, excerpt
from partsel.io.textfile import read_text

#: Largest capture read, bytes (a million samples of three columns is about 45 MB).
MAX_CAPTURE_BYTES = 64 * 2**20
#: Fewest data rows of a capture.
MIN_SAMPLES = 32
#: Separators tried, in order of preference.
SEPARATORS = (",", ";", "\t", " ")
#: Words instruments write for units, and partsel's symbol for them.
UNIT_WORDS = {
    "second": "s", "seconds": "s", "sec": "s", "secs": "s",
    "volt": "V", "volts": "V", "millivolt": "mV", "millivolts": "mV",
}  # fmt: skip

_UNIT_IN_NAME = re.compile(
    r"^(?P<name>.*?)\s*(?:\((?P<p>[^()]*)\)|\[(?P<b>[^\[\]]*)\]|/\s*(?P<s>\S+))\s*$"
)


@dataclass(frozen=True)
class Column:
    """One column: its name (without the unit), its unit as written, SI scale."""

    name: str
    unit: str
    scale: float


@dataclass(frozen=True)
class Capture:
    """A capture in SI units: times (s) and the chosen voltages (V)."""

    file: str
    t_s: np.ndarray
    v_out: np.ndarray
    v_in: np.ndarray | None
    columns: tuple[Column, ...]  #: time, [input,] output as chosen
    first_line: int  #: line of the first data row

    @property
    def n(self) -> int:
        return int(self.t_s.size)


def _split(line: str, sep: str) -> list[str]:
    cells = line.split() if sep == " " else [c.strip() for c in line.split(sep)]
    while cells and cells[-1] == "":
        cells.pop()
    return cells


def _clean(cell: str) -> str:
    return cell.strip().strip('"').strip()


def _number(cell: str, decimal_comma: bool) -> float | None:
    s = _clean(cell)
    if decimal_comma:
        s = s.replace(",", ".")
    try:
        v = float(s)
    except ValueError:
        return None
    return v if math.isfinite(v) else None


def _pattern(cells: list[str], decimal_comma: bool) -> tuple[int, ...] | None:
    """Positions of the numbers of a data row (empty cells allowed elsewhere), or None when a
    cell holds text or fewer than two cells hold numbers."""
    pos = []
    for k, c in enumerate(cells):
        if not _clean(c):
            continue
        if _number(c, decimal_comma) is None:
            return None
        pos.append(k)
    return tuple(pos) if len(pos) >= 2 else None


def _pick_separator(lines: list[str]) -> tuple[str, bool]:
    """The separator (and decimal comma) under which the most rows at the end of the file
    split alike into numbers (the first of :data:`SEPARATORS` on a tie)."""
    tail = [ln for ln in lines if ln.strip()][-200:][::-1]
    best, best_run = (",", False), 0
    for sep in SEPARATORS:
        for comma in (False, True) if sep != "," else (False,):
            first = _pattern(_split(tail[0], sep), comma) if tail else None
            run = 0
            if first is not None:
                for ln in tail:
                    if _pattern(_split(ln, sep), comma) != first:
                        break
                    run += 1
            if run > best_run:
                best, best_run = (sep, comma), run
    return best


def _unit_of(text: str) -> tuple[str, str]:
    """(name, unit) of a header cell: ``Time (s)``, ``CH1 [mV]``, ``t/us``; unit '' if none."""
    s = _clean(text)
    m = _UNIT_IN_NAME.match(s)
    if m:
        unit = next(g for g in (m.group("p"), m.group("b"), m.group("s")) if g is not None)
        return m.group("name").strip() or s, unit.strip()
    return s, ""


def _si_scale(unit: str, dimension: str) -> float | None:
    from partsel.units import parse_quantity

    symbol = UNIT_WORDS.get(unit.casefold(), unit)
    if not symbol:
        return 1.0
    try:
        return parse_quantity(f"1 {symbol}", dimension)
    except InputError:
        return None


def _is_unit(cell: str) -> bool:
    u = _clean(cell).strip("()[]")
    return bool(u) and any(_si_scale(u, d) is not None for d in ("time", "voltage"))


def _scale(unit: str, dimension: str, where: str, file: str) -> float:
    s = _si_scale(unit, dimension)
    if s is None:
        noun = "time" if dimension == "time" else "voltage"
        raise InputError(
            f"{where}: unit {excerpt(unit)} is not a unit of {noun} (use e.g. "
            + ("s, ms, us" if dimension == "time" else "V, mV")
            + ")",
            file=file,
        )
    return s


def _choose(spec: str | None, names: list[str], file: str) -> tuple[int, int | None, int]:
    """Indices of the time, input (or None) and output columns."""
    n = len(names)
    if spec is None:
        if n == 2:
            return 0, None, 1
        return 0, 1, 2
    parts = [p.strip() for p in spec.split(",")]
    if len(parts) not in (2, 3):
        raise InputError(
            "--columns names two columns (time,out) or three (time,in,out), by name or "
            "number from 1",
            file=file,
            pointer="/columns",
        )

    def index(p: str) -> int | None:
        if p == "":
            return None
        if p.isdigit():
            k = int(p) - 1
            if not 0 <= k < n:
                raise InputError(f"--columns: there is no column {p} (the file has {n})",
                                 file=file, pointer="/columns")  # fmt: skip
            return k
        hits = [k for k, name in enumerate(names) if name.casefold() == p.casefold()]
        if len(hits) != 1:
            raise InputError(
                f"--columns: {excerpt(p)} names {'no' if not hits else 'more than one'} "
                f"column (the columns are {', '.join(repr(x) for x in names)})",
                file=file,
                pointer="/columns",
            )
        return hits[0]

    ks = [index(p) for p in parts]
    if len(ks) == 2:
        ks = [ks[0], None, ks[1]]
    t, i, o = ks
    if t is None or o is None:
        raise InputError("--columns: the time and output columns are needed", file=file,
                         pointer="/columns")  # fmt: skip
    return t, i, o


def read_capture(path: str | Path, columns: str | None = None) -> Capture:
    """Read a scope CSV (see the module docstring); ``columns`` as ``--columns`` takes it."""
    file = str(path)
    text = read_text(Path(path), file=file, max_bytes=MAX_CAPTURE_BYTES, fallback="cp1252",
                     what="a scope capture")  # fmt: skip
    lines = text.splitlines()
    if not any(ln.strip() for ln in lines):
        raise InputError("the capture is empty", file=file)
    sep, comma = _pick_separator(lines)
    start = next(
        (k for k, ln in enumerate(lines) if _pattern(_split(ln, sep), comma) is not None), None
    )
    if start is None:
        raise InputError(
            "no rows of numbers: a capture has a time column and one or two voltage columns",
            file=file,
        )
    pos = _pattern(_split(lines[start], sep), comma)
    assert pos is not None
    # the column header: the nearest line above the data with no numbers in it, with a row
    # of units under it or units in its cells
    above = [k for k in range(start) if lines[k].strip()]
    named = [(str(j + 1), "") for j in range(len(pos))]
    head_line = start
    if above:
        last = _split(lines[above[-1]], sep)

        def cells_at(row: list[str]) -> list[str] | None:
            if len(row) == len(pos):
                return row
            if len(row) > max(pos):
                return [row[j] for j in pos]
            return None

        def textual(row: list[str]) -> bool:  # names, not numbers (channel "1" may be one)
            return any(_number(c, comma) is None for c in row if _clean(c))

        units = cells_at(last)
        head = cells_at(_split(lines[above[-2]], sep)) if len(above) >= 2 else None
        if units and head and textual(head) and all(_is_unit(c) for c in units):
            named = [(_unit_of(h)[0], _clean(u).strip("()[]")) for h, u in
                     zip(head, units, strict=True)]  # fmt: skip
            head_line = above[-2] + 1
        elif units and textual(last):
            named = [_unit_of(c) for c in units]
            head_line = above[-1] + 1
    names = [nm for nm, _ in named]
    ti, ii, oi = _choose(columns, names, file)
    cols = []
    for k, dim in ((ti, "time"), (ii, "voltage"), (oi, "voltage")):
        if k is None:
            continue
        nm, unit = named[k]
        cols.append(Column(nm, unit, _scale(unit, dim, f"line {head_line}, column {nm!r}", file)))
    rows: list[int] = []
    data = np.empty((len(lines) - start, len(pos)))
    for k in range(start, len(lines)):
        cells = _split(lines[k], sep)
        if not cells:
            continue
        got = _pattern(cells, comma)
        if got != pos:
            bad = next((c for c in cells if _clean(c) and _number(c, comma) is None), None)
            why = (
                f"cell {excerpt(bad)} is not a number"
                if bad is not None
                else f"{len(got or ())} numbers where the data rows have {len(pos)} "
                f"(separator {sep!r})"
            )
            raise InputError(f"line {k + 1}: {why}", file=file)
        data[len(rows)] = [_number(cells[j], comma) for j in pos]
        rows.append(k + 1)
    data = data[: len(rows)]
    if len(rows) < MIN_SAMPLES:
        raise InputError(f"only {len(rows)} rows of data (at least {MIN_SAMPLES})", file=file)
    t = data[:, ti] * cols[0].scale
    bad_t = np.flatnonzero(np.diff(t) <= 0)
    if bad_t.size:
        j = int(bad_t[0])
        raise InputError(
            f"line {rows[j + 1]}: the time does not increase ({t[j]:.6g} s, then {t[j + 1]:.6g} s)",
            file=file,
        )
    v_in = data[:, ii] * cols[1].scale if ii is not None else None
    v_out = data[:, oi] * cols[-1].scale
    return Capture(file, t, v_out, v_in, tuple(cols), rows[0])
