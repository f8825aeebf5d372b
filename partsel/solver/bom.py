"""BOM check: match every line of a bill of materials to the catalogue and report on it.

The BOM is a CSV file (or a pandas frame) with one line per part number. Columns are found by
name (case, spaces and dashes ignored); the roles and their default names are partsel's own
(:class:`BomColumns`):

========== ================== ===========================================================
role       default name       other names accepted
========== ================== ===========================================================
designators ``designators``   designator, refdes, references, reference
part_number ``part_number``   part, pn, mpn (required)
quantity   ``quantity``       qty
maker      ``maker``          manufacturer (optional: narrows ambiguous matches)
design     ``design``         (optional: a design file per line, relative to the BOM)
========== ================== ===========================================================

Matching, in order (:class:`PartMatcher`):

1. **exact**: the part number as written (surrounding whitespace ignored);
2. **normalised**: case, spaces and dashes ignored (``"brq 622a"`` and ``"BRQ622A"`` match
   ``BRQ-622A``);
3. **suffix**: a package or packing suffix removed by one of the maker's ``suffix_rules``
   (regular expressions kept in the catalogue per maker, e.g. ``"-TR$"``), up to
   :data:`MAX_SUFFIX_STRIPS` times, then 1 and 2 among that maker's parts.

Per line the check reports (:class:`Finding`): an unknown or ambiguous part, a lifecycle risk
(obsolete; not for new designs), out of spec for the design given for the BOM or for the line
(the in-circuit checks of :func:`partsel.solver.substitute.evaluate_circuit`), malformed cells
(quantity, designators, encoding, short rows) and suggested substitutes
(:func:`partsel.solver.substitute.vet_substitutes`). Malformed lines are findings of that line;
a file that cannot be read as a BOM at all (empty, no part-number column, not text) raises
:class:`~partsel.errors.InputError`.

Output: :meth:`BomReport.to_frame` (the BOM's own columns unchanged plus ``partsel_*`` columns,
so that a BOM tool can merge it back by line or designators), :meth:`BomReport.to_dict` (the
JSON form of ``data-schema/bom-check.schema.json``) and :attr:`BomReport.exit_code`
(0 all clear, 1 findings).
"""

from __future__ import annotations

import csv
import difflib
import io
import math
import os
import re
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field, fields
from pathlib import Path
from typing import Any, Literal

import pandas as pd

from partsel.errors import InputError, json_pointer
from partsel.params import Lifecycle
from partsel.physics.circuit import Design
from partsel.physics.stage import Basis
from partsel.solver.substitute import (
    CAUTION,
    CIRCUIT_CHECK_BY_NAME,
    CircuitResult,
    _check_basis,
    evaluate_circuit,
    vet_substitutes,
)

FindingSeverity = Literal["error", "warning", "info"]
MatchRule = Literal["exact", "normalised", "suffix", "none"]
#: Matching rules, in the order they are tried.
MATCH_RULES: tuple[MatchRule, ...] = ("exact", "normalised", "suffix")
#: Most suffixes removed from one part number (a package code then a packing code, say).
MAX_SUFFIX_STRIPS = 3
#: Dash characters ignored by the normalised match: hyphen-minus, the Unicode hyphens and dashes
#: U+2010..U+2015, and the minus sign U+2212 (spreadsheets turn one into another).
_DASHES = "-\u2010\u2011\u2012\u2013\u2014\u2015\u2212"
_NORMALISE = re.compile(f"[\\s{re.escape(_DASHES)}]+")
#: Delimiters tried when none is given (the one that splits the header most is used).
DELIMITERS: tuple[str, ...] = (",", ";", "\t", "|")
#: Prefix of the columns added to the BOM in the CSV output.
OUT_PREFIX = "partsel_"
FORMAT = "partsel.bom-check/1"


def normalise(part_number: str) -> str:
    """Part number with case, whitespace and dashes ignored (the 'normalised' rule)."""
    return _NORMALISE.sub("", str(part_number)).casefold()


def _header_key(name: str) -> str:
    return re.sub(f"[\\s{re.escape(_DASHES)}_]+", "", str(name)).casefold()


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
    "designators": ("designator", "refdes", "references", "reference"),
    "part_number": ("part", "pn", "mpn"),
    "quantity": ("qty",),
    "maker": ("manufacturer",),
    "design": (),
}


# ---- reading -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Finding:
    """Something a BOM line needs attention for."""

    code: str  #: stable identifier, see :data:`FINDING_CODES`
    severity: FindingSeverity
    message: str
    column: str | None = None  #: the BOM column concerned, if any

    def to_dict(self) -> dict[str, Any]:
        return {
            "code": self.code,
            "severity": self.severity,
            "message": self.message,
            "column": self.column,
        }


#: Every finding code, with what it means.
FINDING_CODES: dict[str, str] = {
    "unknown-part": "no catalogue part matches the part number",
    "ambiguous-part": "more than one catalogue part matches",
    "no-part-number": "the part-number cell is empty",
    "obsolete": "the part is obsolete (lifecycle risk)",
    "not-for-new-designs": "the part is not for new designs (lifecycle risk)",
    "out-of-spec": "the part fails an in-circuit check of the line's design",
    "marginal": "the stage stays in one conduction mode only barely in the design",
    "bad-quantity": "the quantity is not a whole number above zero",
    "no-quantity": "the quantity cell is empty",
    "quantity-mismatch": "the quantity differs from the number of designators",
    "bad-designators": "a designator range cannot be read",
    "duplicate-designator": "a designator appears on an earlier line too",
    "maker-mismatch": "the matched part's maker differs from the BOM's maker cell",
    "encoding": "a cell is not valid text in the BOM's encoding",
    "short-row": "the line has fewer cells than the header",
    "extra-cells": "the line has more cells than the header (ignored)",
    "bad-design": "the line's design file cannot be read",
}


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
            + f"; the header has {found}); name it with columns={{'part_number': ...}} or "
            "--column part_number=NAME",
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
        return BomTable(label, header, tuple(rows), roles, delimiter or ",", "n/a")
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
    text, enc = _decode(raw, encoding, label)
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
    return BomTable(label, header, tuple(lines), roles, delim, enc, findings, folder)


def _has_surrogates(text: str) -> bool:
    return any("\udc80" <= ch <= "\udcff" for ch in text)


def _clean(text: str) -> str:
    return "".join("\ufffd" if "\udc80" <= ch <= "\udcff" else ch for ch in text)


# ---- matching ----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Match:
    """How a BOM part number matched the catalogue."""

    rule: MatchRule
    index: int | None = None  #: row in the catalogue frame (None: no match)
    part_number: str | None = None
    maker: str | None = None
    stripped: tuple[str, ...] = ()  #: suffixes removed (rule 'suffix')
    candidates: tuple[str, ...] = ()  #: the part numbers matched when ambiguous

    def to_dict(self) -> dict[str, Any]:
        return {
            "rule": self.rule,
            "part_number": self.part_number,
            "maker": self.maker,
            "stripped_suffixes": list(self.stripped),
            "ambiguous": list(self.candidates),
        }


class PartMatcher:
    """Match BOM part numbers to catalogue rows: exact, normalised, per-maker suffix rules.

    ``makers`` is a list of ``{"name": ..., "suffix_rules": [regex, ...]}`` as returned by
    :func:`partsel.catalogue.makers`; the rules are applied case-insensitively.
    """

    def __init__(self, frame: pd.DataFrame, makers: Iterable[Mapping[str, Any]] = ()) -> None:
        pns = [str(p) for p in frame["part_number"].tolist()]
        mk = (
            [str(m) for m in frame["maker"].tolist()]
            if "maker" in frame.columns
            else [""] * len(pns)
        )
        self._pns, self._makers = pns, mk
        self._exact: dict[str, int] = {p.strip(): k for k, p in enumerate(pns)}
        self._norm: dict[str, list[int]] = {}
        for k, p in enumerate(pns):
            self._norm.setdefault(normalise(p), []).append(k)
        self._rules: list[tuple[str, list[re.Pattern[str]]]] = []
        for m_i, m in enumerate(makers):
            name = str(m.get("name", ""))
            rules = []
            for r_i, rule in enumerate(m.get("suffix_rules") or []):
                try:
                    rules.append(re.compile(str(rule), re.IGNORECASE))
                except re.error as exc:
                    raise InputError(
                        f"suffix rule {rule!r} is not a regular expression: {exc}",
                        record=name,
                        pointer=json_pointer("makers", m_i, "suffix_rules", r_i),
                    ) from None
            if rules:
                self._rules.append((name.strip().casefold(), rules))

    def _result(self, rule: MatchRule, hits: list[int], stripped: tuple[str, ...]) -> Match:
        hits = sorted(set(hits))
        if len(hits) == 1:
            k = hits[0]
            return Match(rule, k, self._pns[k], self._makers[k], stripped)
        return Match(rule, None, None, None, stripped, tuple(self._pns[k] for k in hits))

    def match(self, text: str, maker: str | None = None) -> Match:
        """Match one BOM part number (``maker``: the BOM's maker cell, narrows ties)."""
        t = str(text).strip()
        if not t:
            return Match("none")
        if t in self._exact:
            return self._result("exact", [self._exact[t]], ())
        hits = self._norm.get(normalise(t), [])
        if hits:
            return self._narrow(self._result("normalised", hits, ()), maker, hits, "normalised")
        # Suffix rules of each maker: strip, then look among that maker's parts.
        found: dict[int, tuple[str, ...]] = {}
        compact = re.sub(r"\s+", "", t)
        for mkey, rules in self._rules:
            cur, stripped = compact, ()
            for _ in range(MAX_SUFFIX_STRIPS):
                for rx in rules:
                    m = rx.search(cur)
                    if m and m.end() > m.start() and m.start() > 0:
                        stripped = (*stripped, cur[m.start() : m.end()])
                        cur = cur[: m.start()] + cur[m.end() :]
                        break
                else:
                    break
                ks = [
                    k
                    for k in self._norm.get(normalise(cur), [])
                    if self._makers[k].strip().casefold() == mkey
                ]
                if ks:
                    for k in ks:
                        found.setdefault(k, stripped)
                    break
        if found:
            ks = list(found)
            res = self._result("suffix", ks, found[ks[0]] if len(ks) == 1 else ())
            return self._narrow(res, maker, ks, "suffix")
        return Match("none")

    def _narrow(self, res: Match, maker: str | None, hits: list[int], rule: MatchRule) -> Match:
        if res.index is not None or not maker:
            return res
        key = maker.strip().casefold()
        mine = [k for k in hits if self._makers[k].strip().casefold() == key]
        return self._result(rule, mine, res.stripped) if len(mine) == 1 else res

    def close_matches(self, text: str, n: int = 3) -> list[str]:
        """Catalogue part numbers that look like ``text`` (a hint for unknown parts)."""
        key = normalise(text)
        if not key:
            return []
        pool = [k for k in self._norm if k[:2] == key[:2]] or list(self._norm)
        hits = difflib.get_close_matches(key, pool, n=n, cutoff=0.75)
        return [self._pns[self._norm[h][0]] for h in hits]


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


def parse_quantity(text: str) -> tuple[int | None, str | None]:
    """A quantity cell as a whole number above zero; (None, problem) when it is not one."""
    t = str(text).strip()
    if not t:
        return None, None
    try:
        v = float(t.replace("\u2009", "").replace(" ", ""))
    except ValueError:
        return None, f"quantity {t!r} is not a number"
    if not math.isfinite(v) or v != int(v):
        return None, f"quantity {t!r} is not a whole number"
    if v < 1:
        return None, f"quantity {t!r} must be at least 1"
    return int(v), None


# ---- the check ---------------------------------------------------------------------------------


@dataclass(frozen=True)
class SubstituteHint:
    """A suggested substitute for a BOM line."""

    part_number: str
    maker: str
    verdict: str
    circuit_pass: bool | None
    reasons: tuple[str, ...]  #: the non-informational reasons, for people

    def to_dict(self) -> dict[str, Any]:
        return {
            "part_number": self.part_number,
            "maker": self.maker,
            "verdict": self.verdict,
            "circuit_pass": self.circuit_pass,
            "reasons": list(self.reasons),
        }


@dataclass(frozen=True)
class BomLine:
    """The check of one BOM line."""

    line: int  #: line number in the file (the header is line 1 when it is the first line)
    cells: tuple[str, ...]  #: the BOM's own cells, as read
    part_number: str  #: as written in the BOM
    designators: tuple[str, ...]
    quantity: int | None
    match: Match
    lifecycle: str | None
    design: str | None  #: name of the design the line was judged in
    basis: Basis  #: value basis of the line's checks and substitutes
    findings: tuple[Finding, ...]
    substitutes: tuple[SubstituteHint, ...]
    circuit: tuple[dict[str, Any], ...] | None  #: in-circuit figures of the matched part

    @property
    def status(self) -> Literal["ok", "finding"]:
        """'finding' when any error or warning was found, else 'ok'."""
        return "finding" if any(f.severity != "info" for f in self.findings) else "ok"

    def to_dict(self) -> dict[str, Any]:
        return {
            "line": self.line,
            "designators": list(self.designators),
            "part_number": self.part_number,
            "quantity": self.quantity,
            "status": self.status,
            "match": self.match.to_dict(),
            "lifecycle": self.lifecycle,
            "design": self.design,
            "basis": self.basis,
            "findings": [f.to_dict() for f in self.findings],
            "substitutes": [s.to_dict() for s in self.substitutes],
            "circuit": None if self.circuit is None else list(self.circuit),
        }


@dataclass(frozen=True)
class BomReport:
    """Result of :func:`check_bom`."""

    source: str
    header: tuple[str, ...]
    columns: dict[str, str | None]  #: BOM column used for each role (None: absent)
    delimiter: str
    encoding: str
    basis: Basis | None  #: the basis asked for (None: each design's own, else worst-case)
    design: str | None  #: name of the BOM-wide design
    lines: tuple[BomLine, ...]

    @property
    def exit_code(self) -> int:
        """0 when every line is clear, 1 when any line has a finding."""
        return 1 if any(ln.status != "ok" for ln in self.lines) else 0

    def summary(self) -> dict[str, int]:
        """Counts: lines, ok, with findings, and lines per finding code."""
        out = {
            "lines": len(self.lines),
            "ok": sum(ln.status == "ok" for ln in self.lines),
            "with_findings": sum(ln.status != "ok" for ln in self.lines),
        }
        for code in FINDING_CODES:
            n = sum(any(f.code == code for f in ln.findings) for ln in self.lines)
            if n:
                out[code] = n
        return out

    def to_dict(self) -> dict[str, Any]:
        """The documented JSON form (``data-schema/bom-check.schema.json``)."""
        return {
            "format": FORMAT,
            "bom": self.source,
            "columns": dict(self.columns),
            "basis": self.basis,
            "design": self.design,
            "summary": self.summary(),
            "lines": [ln.to_dict() for ln in self.lines],
            "caution": CAUTION,
        }

    def to_frame(self) -> pd.DataFrame:
        """The BOM's own columns unchanged, plus ``partsel_*`` columns (one row per line)."""
        extra = [
            "line",
            "status",
            "match",
            "part_number",
            "maker",
            "lifecycle",
            "findings",
            "messages",
            "substitutes",
        ]
        names = list(self.header) + [OUT_PREFIX + e for e in extra]
        rows = []
        for ln in self.lines:
            rows.append(
                [
                    *ln.cells,
                    ln.line,
                    ln.status,
                    ln.match.rule,
                    ln.match.part_number or "",
                    ln.match.maker or "",
                    ln.lifecycle or "",
                    ";".join(f.code for f in ln.findings if f.severity != "info"),
                    " | ".join(f.message for f in ln.findings if f.severity != "info"),
                    "; ".join(f"{s.part_number} ({s.verdict})" for s in ln.substitutes),
                ]
            )
        return pd.DataFrame(rows, columns=names)

    def write_csv(self, target: str | os.PathLike[str] | io.TextIOBase) -> None:
        """Write :meth:`to_frame` as CSV (UTF-8, the BOM's delimiter)."""
        frame = self.to_frame()
        if isinstance(target, io.TextIOBase):
            frame.to_csv(target, index=False, sep=self.delimiter, lineterminator="\n")
        else:
            frame.to_csv(
                target, index=False, sep=self.delimiter, encoding="utf-8", lineterminator="\n"
            )


def _lifecycle_findings(lifecycle: str) -> list[Finding]:
    if lifecycle == Lifecycle.OBSOLETE.value:
        return [Finding("obsolete", "error", "lifecycle risk: the part is obsolete")]
    if lifecycle == Lifecycle.NOT_FOR_NEW_DESIGNS.value:
        return [Finding("not-for-new-designs", "warning", "lifecycle risk: not for new designs")]
    return []


def _circuit_findings(circ: CircuitResult, k: int) -> list[Finding]:
    out = []
    for name in circ.failing(k):
        check = CIRCUIT_CHECK_BY_NAME[name]
        if name == "conduction" and circ.conduction_allowed:
            continue
        sev: FindingSeverity = "error" if check.fail_severity == "fail" else "warning"
        out.append(Finding("out-of-spec", sev, f"{name}: {circ.message(name, k)}", None))
    cf = circ.closed
    if bool(cf.marginal[k]):
        out.append(
            Finding(
                "marginal",
                "warning",
                "stays in source mode only barely: least source-device current "
                f"{float(cf.min_source_a[k]) * 1e6:.3g} uA of a stage current of "
                f"{float(circ.stage.stage_current_a[k]) * 1e6:.3g} uA",
            )
        )
    return out


def check_bom(
    frame: pd.DataFrame,
    bom: str | os.PathLike[str] | bytes | io.IOBase | pd.DataFrame | BomTable,
    makers: Iterable[Mapping[str, Any]] = (),
    design: Design | None = None,
    columns: BomColumns | Mapping[str, str] | None = None,
    *,
    basis: Basis | None = None,
    design_loader: Callable[[Path], Design] | None = None,
    substitutes: int = 3,
    encoding: str = "utf-8",
    delimiter: str | None = None,
    package: str | None = None,
) -> BomReport:
    """Check every line of a BOM against the catalogue ``frame``.

    Parameters
    ----------
    frame: the parts table (:func:`partsel.catalogue.parts_frame`).
    bom: a CSV file path, bytes, a stream, a pandas frame, or a :class:`BomTable`.
    makers: maker records with their ``suffix_rules`` (:func:`partsel.catalogue.makers`).
    design: a design for the whole BOM (a line's own design, if any, wins).
    columns: BOM column names per role (:class:`BomColumns`).
    basis: value basis; default: each line's design's ``requirements.basis``, else
        worst-case.
    design_loader: reads a per-line design file (``partsel.design.load_design``); lines with a
        design cell get a ``bad-design`` finding without one.
    substitutes: how many substitutes to suggest for a line with a lifecycle risk or an
        out-of-spec error (0: none).
    encoding, delimiter: see :func:`read_bom`.
    package: package code on the board, passed to the substitute vetting.
    """
    table = (
        bom
        if isinstance(bom, BomTable)
        else read_bom(bom, columns, encoding=encoding, delimiter=delimiter)
    )
    if basis is not None:
        basis = _check_basis(basis)

    def basis_for(d: Design | None) -> Basis:
        """The explicit basis, else the design's requirements.basis, else worst-case."""
        if basis is not None:
            return basis
        req = d.requirements if d is not None else None
        b = req.get("basis") if isinstance(req, Mapping) else None
        return b if b in ("worst-case", "typical") else "worst-case"

    matcher = PartMatcher(frame, makers)
    lifecycles = (
        [str(v) for v in frame["lifecycle"].tolist()]
        if "lifecycle" in frame.columns
        else [""] * len(frame)
    )
    pn_col = table.column_name("part_number")
    q_col = table.column_name("quantity")
    d_col = table.column_name("designators")
    has_design_col = table.role_index.get("design") is not None
    designs: dict[str, Design | InputError] = {}

    def line_design(cell: str) -> tuple[Design | None, Finding | None]:
        cell = cell.strip()
        if not cell or not has_design_col:
            return design, None
        if design_loader is None:
            return None, Finding(
                "bad-design", "error", "a per-line design needs a design loader", "design"
            )
        if cell not in designs:
            path = Path(cell)
            if not path.is_absolute() and table.folder is not None:
                path = table.folder / path
            try:
                designs[cell] = design_loader(path)
            except InputError as exc:
                designs[cell] = exc
        got = designs[cell]
        if isinstance(got, InputError):
            return None, Finding(
                "bad-design", "error", f"design {cell}: {str(got).splitlines()[0]}", "design"
            )
        return got, None

    # First pass: parse and match every line.
    pending: list[dict[str, Any]] = []
    seen_designators: dict[str, int] = {}
    for n, cells in table.lines:
        f: list[Finding] = list(table.line_findings.get(n, ()))
        pn = table.cell(cells, "part_number").strip()
        qty, q_problem = parse_quantity(table.cell(cells, "quantity"))
        if q_problem:
            f.append(Finding("bad-quantity", "error", q_problem, q_col))
        elif q_col is not None and qty is None:
            f.append(Finding("no-quantity", "warning", "the quantity cell is empty", q_col))
        refs, r_problem = parse_designators(table.cell(cells, "designators"))
        if r_problem:
            f.append(Finding("bad-designators", "error", r_problem, d_col))
        if qty is not None and refs and len(refs) != qty and not r_problem:
            f.append(
                Finding(
                    "quantity-mismatch",
                    "warning",
                    f"quantity {qty} but {len(refs)} designator(s)",
                    q_col,
                )
            )
        dups = sorted({r for r in refs if r.upper() in seen_designators})
        if dups:
            first = seen_designators[dups[0].upper()]
            f.append(
                Finding(
                    "duplicate-designator",
                    "error",
                    f"designator(s) {', '.join(dups)} already on line {first}",
                    d_col,
                )
            )
        for r in refs:
            seen_designators.setdefault(r.upper(), n)
        maker_cell = table.cell(cells, "maker").strip()
        if not pn:
            m = Match("none")
            f.append(Finding("no-part-number", "error", "no part number", pn_col))
        else:
            m = matcher.match(pn, maker_cell or None)
            if m.candidates:
                f.append(
                    Finding(
                        "ambiguous-part",
                        "error",
                        f"{pn!r} matches {', '.join(m.candidates)} ({m.rule}); add the maker "
                        "or the full part number",
                        pn_col,
                    )
                )
            elif m.index is None:
                hint = matcher.close_matches(pn)
                f.append(
                    Finding(
                        "unknown-part",
                        "error",
                        f"{pn!r} is not in the catalogue"
                        + (f" (similar: {', '.join(hint)})" if hint else ""),
                        pn_col,
                    )
                )
            elif maker_cell and m.maker and maker_cell.casefold() != m.maker.strip().casefold():
                f.append(
                    Finding(
                        "maker-mismatch",
                        "warning",
                        f"the catalogue's {m.part_number} is made by {m.maker}, the BOM says "
                        f"{maker_cell!r}",
                        table.column_name("maker"),
                    )
                )
        d, d_problem = line_design(table.cell(cells, "design"))
        if d_problem:
            f.append(d_problem)
        lc = lifecycles[m.index] if m.index is not None else None
        if lc:
            f.extend(_lifecycle_findings(lc))
        pending.append(
            {
                "n": n,
                "cells": cells,
                "pn": pn,
                "refs": refs,
                "qty": qty,
                "m": m,
                "lc": lc,
                "design": d,
                "f": f,
            }
        )

    # In-circuit checks: one evaluation per design over the parts it judges.
    by_design: dict[int, list[int]] = {}
    for k, p in enumerate(pending):
        if p["design"] is not None and p["m"].index is not None:
            by_design.setdefault(id(p["design"]), []).append(k)
    circuits: dict[int, tuple[dict[int, int], CircuitResult]] = {}
    for key, ks in by_design.items():
        d = pending[ks[0]]["design"]
        rows = sorted({pending[k]["m"].index for k in ks})
        circ = evaluate_circuit(frame.iloc[rows].reset_index(drop=True), d, basis_for(d))
        circuits[key] = ({r: i for i, r in enumerate(rows)}, circ)

    vet_cache: dict[tuple[int, int], tuple[SubstituteHint, ...]] = {}
    out_lines: list[BomLine] = []
    for p in pending:
        m: Match = p["m"]
        d: Design | None = p["design"]
        f = p["f"]
        circuit_rows = None
        out_of_spec = False
        if d is not None and m.index is not None:
            pos, circ = circuits[id(d)]
            k = pos[m.index]
            cf = _circuit_findings(circ, k)
            out_of_spec = any(x.code == "out-of-spec" and x.severity == "error" for x in cf)
            f.extend(cf)
            circuit_rows = tuple(circ.rows(k))
        subs: tuple[SubstituteHint, ...] = ()
        risky = p["lc"] in (Lifecycle.OBSOLETE.value, Lifecycle.NOT_FOR_NEW_DESIGNS.value)
        if substitutes > 0 and m.index is not None and (risky or out_of_spec):
            key = (m.index, id(d))
            if key not in vet_cache:
                vet_cache[key] = _suggest(
                    frame, m.part_number, d, basis_for(d), substitutes, package, out_of_spec
                )
            subs = vet_cache[key]
        out_lines.append(
            BomLine(
                line=p["n"],
                cells=p["cells"],
                part_number=p["pn"],
                designators=p["refs"],
                quantity=p["qty"],
                match=m,
                lifecycle=p["lc"],
                design=d.name if d is not None else None,
                basis=basis_for(d),
                findings=tuple(f),
                substitutes=subs,
                circuit=circuit_rows,
            )
        )
    return BomReport(
        source=table.source,
        header=table.header,
        columns={r: table.column_name(r) for r in ROLES},
        delimiter=table.delimiter,
        encoding=table.encoding,
        basis=basis,
        design=design.name if design is not None else None,
        lines=tuple(out_lines),
    )


def _suggest(
    frame: pd.DataFrame,
    part_number: str | None,
    design: Design | None,
    basis: Basis,
    n: int,
    package: str | None,
    need_pass: bool,
) -> tuple[SubstituteHint, ...]:
    """The best ``n`` substitutes (not unsuitable; active first; passing the design first)."""
    if part_number is None:
        return ()
    try:
        vet = vet_substitutes(
            frame,
            part_number,
            design,
            basis,
            package=package,
            limit=n,
            passing_first=need_pass and design is not None,
        )
    except InputError:
        return ()
    out = []
    for c in vet.candidates:
        out.append(
            SubstituteHint(
                c.part_number,
                c.part.maker,
                c.verdict,
                c.circuit_pass,
                tuple(r.message for r in c.reasons if r.severity not in ("info",)),
            )
        )
    return tuple(out)
