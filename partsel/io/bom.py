"""Reading a BOM: a CSV file (or a pandas frame) into cells, the column of each role, and the
cell readers for designators and quantities. The edge of the BOM check
(:mod:`partsel.solver.bom` judges what is read here).

Columns are found by name (case, spaces, dashes and underscores ignored); the roles and their
default names are partsel's own (:class:`BomColumns`):

=========== ================== ==========================================================
role        default name       other names accepted
=========== ================== ==========================================================
designators ``designators``    designator, refdes, references, reference
part_number ``part_number``    part, pn, mpn (required)
quantity    ``quantity``       qty
maker       ``maker``          manufacturer (optional: narrows ambiguous matches)
design      ``design``         (optional: a design file per line, relative to the BOM)
=========== ================== ==========================================================

A file that cannot be read as a BOM at all (empty, no part-number column, not text) raises
:class:`~partsel.errors.InputError`; a malformed line is a :class:`Finding` of that line.
"""

from __future__ import annotations

import csv
import io
import math
import os
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

from partsel.errors import InputError, json_pointer

if TYPE_CHECKING:
    import pandas as pd

FindingSeverity = Literal["error", "warning", "info"]
#: Dash characters ignored in header names and by the normalised match: hyphen-minus, the
#: Unicode hyphens and dashes U+2010..U+2015, and the minus sign U+2212 (spreadsheets turn one
#: into another).
DASHES = "-\u2010\u2011\u2012\u2013\u2014\u2015\u2212"
#: Delimiters tried when none is given (the one that splits the header most is used).
DELIMITERS: tuple[str, ...] = (",", ";", "\t", "|")


def _header_key(name: str) -> str:
    """A header cell as compared with the role names: case, spaces, dashes, underscores and
    the marks '#', '.', '/' and a byte-order mark ignored ("Mfr Part #" -> "mfrpart")."""
    text = str(name).replace("\ufeff", "")
    return re.sub(f"[\\s{re.escape(DASHES)}_#./]+", "", text).casefold()


# ---- columns -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class BomColumns:
    """Column name of each role in the BOM (matched ignoring case, spaces, dashes, '_').

    A role left at its default also accepts the other names of :data:`ALIASES`.
    """

    designators: str = "designators"
    part_number: str = "part_number"
    quantity: str = "quantity"
    maker: str = "maker"
    design: str = "design"

    @classmethod
    def from_mapping(cls, mapping: Mapping[str, str] | None) -> BomColumns:
        """From ``{role: column name}``; raises InputError naming an unknown role."""
        if not mapping:
            return cls()
        roles = [f.name for f in fields(cls)]
        bad = [k for k in mapping if k not in roles]
        if bad:
            raise InputError(
                f"unknown BOM column role(s) {', '.join(bad)}: use {', '.join(roles)}",
                pointer="/columns",
            )
        return cls(**{k: str(v) for k, v in mapping.items()})


ROLES: tuple[str, ...] = tuple(f.name for f in fields(BomColumns))
#: Other column names accepted for a role left at its default name.
ALIASES: dict[str, tuple[str, ...]] = {
    "designators": (
        "designator",
        "refdes",
        "ref des",
        "references",
        "reference",
        "reference designator",
        "reference designators",
        "refs",
        "ref",
        "part reference",
    ),
    "part_number": (  # the maker's part number first: "Part" may be an in-house number
        "mpn",
        "mfr part #",
        "mfr part number",
        "mfr pn",
        "mfg part number",
        "mfg pn",
        "manufacturer part number",
        "manufacturer part no",
        "manufacturer pn",
        "part number",
        "part no",
        "part #",
        "pn",
        "part",
    ),
    "quantity": ("qty", "qty per board", "quantity per board", "count", "pcs"),
    "maker": ("manufacturer", "manufacturer name", "mfr", "mfg", "make"),
    "design": (),
}
#: Header words that suggest a designator column (warned about when none was recognised).
_DESIGNATOR_HINTS = ("ref", "desig")


# ---- reading -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Finding:
    """Something a BOM line needs attention for."""

    code: str  #: stable identifier, see :data:`partsel.solver.bom.FINDING_CODES`
    severity: FindingSeverity
    message: str
    column: str | None = None  #: the BOM column concerned, if any
    check: str | None = None  #: the ranking check behind an in-circuit finding, if any

    def to_dict(self) -> dict[str, Any]:
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "column": self.column,
            "check": self.check,
        }


#: Every finding code, with what it means.
@dataclass(frozen=True)
class BomTable:
    """A BOM read into cells: the header, the lines and the column of each role."""

    source: str  #: file name (or ``"<frame>"``)
    header: tuple[str, ...]
    lines: tuple[tuple[int, tuple[str, ...]], ...]  #: (line number in the file, cells)
    role_index: dict[str, int | None]
    delimiter: str
    encoding: str
    line_findings: dict[int, tuple[Finding, ...]] = field(default_factory=dict)
    folder: Path | None = None  #: where per-line design paths are resolved
    warnings: tuple[str, ...] = ()  #: about the BOM as a whole (e.g. a column not recognised)
    line_ending: str = "\n"  #: the file's line ending (kept when the BOM is written back)
    had_bom: bool = False  #: the file began with a byte-order mark (kept when written back)

    def cell(self, cells: Sequence[str], role: str) -> str:
        k = self.role_index.get(role)
        if k is None or k >= len(cells):
            return ""
        return cells[k]

    def column_name(self, role: str) -> str | None:
        k = self.role_index.get(role)
        return None if k is None else self.header[k]


def _decode(raw: bytes, encoding: str, source: str) -> tuple[str, str]:
    """Text of the file; undecodable bytes become surrogates (found per cell later)."""
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        enc = "utf-16"
    elif raw.startswith(b"\xef\xbb\xbf") and encoding.replace("_", "-").lower() in (
        "utf-8",
        "utf8",
    ):
        enc = "utf-8-sig"
    else:
        enc = encoding
    try:
        text = raw.decode(enc, errors="surrogateescape")
    except LookupError:
        raise InputError(
            f"unknown text encoding {encoding!r}", file=source, pointer="/encoding"
        ) from None
    except UnicodeDecodeError as exc:  # utf-16 with an odd byte count, say
        raise InputError(
            f"not valid {enc} text at byte {exc.start}", file=source, pointer="/encoding"
        ) from None
    if "\x00" in text:
        raise InputError(
            "not a text CSV file (it holds NUL bytes); export the BOM as CSV", file=source
        )
    return text, enc


def _pick_delimiter(header_line: str) -> str:
    counts = [(header_line.count(d), -k, d) for k, d in enumerate(DELIMITERS)]
    best = max(counts)
    return best[2] if best[0] > 0 else ","


def _find_roles(header: Sequence[str], columns: BomColumns, source: str) -> dict[str, int | None]:
    keys = [_header_key(h) for h in header]
    out: dict[str, int | None] = {}
    defaults = BomColumns()
    for role in ROLES:
        wanted = getattr(columns, role)
        names = [wanted]
        if wanted == getattr(defaults, role):
            names += list(ALIASES[role])
        hit = None
        for name in names:
            k = _header_key(name)
            idx = [i for i, h in enumerate(keys) if h == k]
            if len(idx) > 1:
                raise InputError(
                    f"the header names the {role} column {header[idx[0]]!r} {len(idx)} times",
                    file=source,
                    record="header",
                    pointer=json_pointer("columns", role),
                )
            if idx:
                hit = idx[0]
                break
        out[role] = hit
    if out["part_number"] is None:
        found = ", ".join(repr(h) for h in header) or "none"
        raise InputError(
            f"no part-number column (looked for {columns.part_number!r}"
            + (
                " or " + ", ".join(ALIASES["part_number"])
                if columns.part_number == "part_number"
                else ""
            )
            + f"; the header has {found}); name the column with "
            '--column part_number="NAME"',
            file=source,
            record="header",
            pointer="/columns/part_number",
        )
    return out


def read_bom(
    source: str | os.PathLike[str] | bytes | io.IOBase | pd.DataFrame,
    columns: BomColumns | Mapping[str, str] | None = None,
    *,
    encoding: str = "utf-8",
    delimiter: str | None = None,
    name: str | None = None,
) -> BomTable:
    """Read a BOM from a CSV file (path, bytes, a binary or text stream) or a pandas frame.

    ``encoding`` applies to bytes (a byte-order mark wins: UTF-8 or UTF-16); ``delimiter``
    is picked from :data:`DELIMITERS` by the header line when not given. Raises
    :class:`~partsel.errors.InputError` for a file that is empty, not text, has no header or
    no lines, or no part-number column.
    """
    cols = columns if isinstance(columns, BomColumns) else BomColumns.from_mapping(columns)
    folder: Path | None = None
    import pandas as pd  # only for a frame given as the BOM

    if isinstance(source, pd.DataFrame):
        label = name or "<frame>"
        header = tuple(str(c) for c in source.columns)
        rows = []
        for k, rec in enumerate(source.itertuples(index=False, name=None)):
            cells = tuple(
                "" if (v is None or (isinstance(v, float) and math.isnan(v))) else str(v)
                for v in rec
            )
            rows.append((k + 2, cells))
        if not header:
            raise InputError("the BOM frame has no columns", file=label)
        if not rows:
            raise InputError("the BOM has no lines below the header", file=label)
        roles = _find_roles(header, cols, label)
        return BomTable(
            label,
            header,
            tuple(rows),
            roles,
            delimiter or ",",
            "n/a",
            warnings=_role_warnings(header, roles),
        )
    if isinstance(source, bytes):
        raw, label = source, name or "<bytes>"
    elif isinstance(source, io.TextIOBase):
        raw, label = source.read().encode("utf-8", "surrogateescape"), name or "<stream>"
        encoding = "utf-8"
    elif isinstance(source, io.IOBase):
        raw, label = source.read(), name or "<stream>"
    else:
        path = Path(source)
        label = name or str(path)
        folder = path.parent
        try:
            raw = path.read_bytes()
        except FileNotFoundError:
            raise InputError("no such BOM file", file=label) from None
        except IsADirectoryError:
            raise InputError("is a folder, not a BOM file", file=label) from None
        except OSError as exc:
            raise InputError(f"cannot read the BOM: {exc.strerror}", file=label) from None
    had_bom = raw.startswith((b"\xef\xbb\xbf", b"\xff\xfe", b"\xfe\xff"))
    text, enc = _decode(raw, encoding, label)
    first_break = text.find("\n")
    line_ending = "\r\n" if first_break > 0 and text[first_break - 1] == "\r" else "\n"
    if not text.strip():
        raise InputError("the BOM file is empty", file=label)
    first = next((ln for ln in text.splitlines() if ln.strip()), "")
    delim = delimiter or _pick_delimiter(first)
    if len(delim) != 1:
        raise InputError(
            f"the delimiter must be one character, got {delim!r}", pointer="/delimiter"
        )
    try:
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim, strict=True)
        parsed: list[tuple[int, list[str]]] = []
        for cells in reader:
            parsed.append((reader.line_num, cells))
    except csv.Error as exc:
        raise InputError(
            f"not a readable CSV file: {exc}", file=label, record=f"line {reader.line_num}"
        ) from None
    parsed = [(n, c) for n, c in parsed if any(x.strip() for x in c)]
    if not parsed:
        raise InputError("the BOM file is empty", file=label)
    header_line, header_cells = parsed[0]
    header = tuple(h.strip() for h in header_cells)
    roles = _find_roles(header, cols, label)
    lines: list[tuple[int, tuple[str, ...]]] = []
    findings: dict[int, tuple[Finding, ...]] = {}
    for n, cells in parsed[1:]:
        f: list[Finding] = []
        bad = [
            header[k] if k < len(header) else f"cell {k + 1}"
            for k, c in enumerate(cells)
            if _has_surrogates(c)
        ]
        if bad:
            f.append(
                Finding(
                    "encoding",
                    "error",
                    f"not valid {enc} text in {', '.join(repr(b) for b in bad)}; bytes shown "
                    "as U+FFFD (save the BOM as UTF-8, or give its encoding)",
                    bad[0],
                )
            )
            cells = [_clean(c) for c in cells]
        if len(cells) < len(header):
            f.append(
                Finding(
                    "short-row",
                    "warning",
                    f"{len(cells)} cells, the header has {len(header)}: the missing ones "
                    "read as empty",
                )
            )
            cells = cells + [""] * (len(header) - len(cells))
        elif len(cells) > len(header):
            extra = [c for c in cells[len(header) :] if c.strip()]
            if extra:
                f.append(
                    Finding(
                        "extra-cells",
                        "warning",
                        f"{len(cells)} cells, the header has {len(header)}: "
                        f"{len(cells) - len(header)} ignored",
                    )
                )
            cells = cells[: len(header)]
        lines.append((n, tuple(cells)))
        if f:
            findings[n] = tuple(f)
    if not lines:
        raise InputError(
            "the BOM has a header but no lines below it", file=label, record=f"line {header_line}"
        )
    return BomTable(
        label,
        header,
        tuple(lines),
        roles,
        delim,
        enc,
        findings,
        folder,
        warnings=_role_warnings(header, roles),
        line_ending=line_ending,
        had_bom=had_bom,
    )


def _role_warnings(header: Sequence[str], roles: Mapping[str, int | None]) -> tuple[str, ...]:
    """Warn when a column looks like designators but none was recognised as such."""
    if roles.get("designators") is not None:
        return ()
    used = {k for k in roles.values() if k is not None}
    looks = [
        h
        for k, h in enumerate(header)
        if k not in used and any(w in _header_key(h) for w in _DESIGNATOR_HINTS)
    ]
    if not looks:
        return ()
    return (
        f"column {looks[0]!r} looks like designators but was not recognised; name it with "
        f'--column designators="{looks[0]}"',
    )


def _has_surrogates(text: str) -> bool:
    return any("\udc80" <= ch <= "\udcff" for ch in text)


def _clean(text: str) -> str:
    return "".join("\ufffd" if "\udc80" <= ch <= "\udcff" else ch for ch in text)


# ---- designators and quantities ----------------------------------------------------------------

_RANGE = re.compile(r"^([A-Za-z_]+)(\d+)\s*[-\u2013]\s*(?:([A-Za-z_]+))?(\d+)$")
#: Largest designator range expanded (U1-U999 is a typing error rather than a BOM line).
MAX_RANGE = 1000


def parse_designators(text: str) -> tuple[tuple[str, ...], str | None]:
    """Designators of a cell (``"U1, U3-U5"`` -> U1, U3, U4, U5) and a problem text or None.

    Separators: commas, semicolons and whitespace; ``U3-U5`` and ``U3-5`` are ranges.
    """
    out: list[str] = []
    problem = None
    for tok in re.split(r"[,;\s]+", str(text).strip()):
        if not tok:
            continue
        m = _RANGE.match(tok)
        if m and (m.group(3) is None or m.group(3).upper() == m.group(1).upper()):
            a, b = int(m.group(2)), int(m.group(4))
            if b < a or b - a >= MAX_RANGE:
                problem = f"designator range {tok!r} cannot be read"
                out.append(tok)
                continue
            out.extend(f"{m.group(1)}{k}" for k in range(a, b + 1))
        else:
            out.append(tok)
    return tuple(out), problem


#: Count words a quantity cell may end with ("1 pcs", "2 pc", "3x", "4 ea"): common practice.
_COUNT_WORDS = re.compile(r"\s*(pcs|pc|pieces|piece|ea|each|x|stk|units?)\.?$", re.IGNORECASE)


def parse_quantity(text: str) -> tuple[int | None, str | None]:
    """A quantity cell as a whole number above zero ("2", "2 pcs", "3x"); (None, problem)
    when it is not one."""
    t = str(text).strip()
    if not t:
        return None, None
    number = _COUNT_WORDS.sub("", t) if len(t) < 64 else t
    try:
        v = float(number.replace("\u2009", "").replace(" ", ""))
    except ValueError:
        return None, f"quantity {t!r} is not a number"
    if not math.isfinite(v) or v != int(v):
        return None, f"quantity {t!r} is not a whole number"
    if v < 1:
        return None, f"quantity {t!r} must be at least 1"
    return int(v), None
