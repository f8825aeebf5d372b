"""The result of a BOM check: per-line findings, substitutes and the report's JSON / CSV."""

from __future__ import annotations

import io
import os
from dataclasses import dataclass
from typing import Any, Literal

import pandas as pd

from partsel.io.bom import Finding
from partsel.physics.stage import Basis
from partsel.solver.bom.matching import Match
from partsel.solver.substitute import CAUTION

OUT_PREFIX = "partsel_"
FORMAT = "partsel.bom-check/1"


FINDING_CODES: dict[str, str] = {
    "unknown-part": "no catalogue part matches the part number",
    "ambiguous-part": "more than one catalogue part matches",
    "no-part-number": "the part-number cell is empty",
    "obsolete": "the part is obsolete (lifecycle risk)",
    "not-for-new-designs": "the part is not for new designs (lifecycle risk)",
    "out-of-spec": "the part fails an in-circuit check of the line's design",
    "marginal": "the stage stays in one conduction mode only barely in the design",
    "needs-fix": "the part passes the design only with its fix resistor fitted",
    "changes-mode": "the part changes conduction mode in a design that allows it",
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
class SubstituteHint:
    """A suggested substitute for a BOM line."""

    part_number: str
    maker: str
    verdict: str
    circuit_pass: bool | None
    reasons: tuple[str, ...]  #: the non-informational reasons, for people
    in_circuit: dict[str, Any] | None = None  #: the ranking's evaluation in the design

    def to_dict(self) -> dict[str, Any]:
        return {
            "part_number": self.part_number,
            "maker": self.maker,
            "verdict": self.verdict,
            "circuit_pass": self.circuit_pass,
            "reasons": list(self.reasons),
            "in_circuit": self.in_circuit,
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
    circuit: tuple[dict[str, Any], ...] | None  #: the matched part's checks in the design
    evaluation: dict[str, Any] | None = None
    """The ranking's evaluation of the matched part in the design (verdict, THD estimate,
    fix: the same as ``partsel rank``), None without a design."""

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
            "evaluation": self.evaluation,
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
    warnings: tuple[str, ...] = ()  #: about the BOM as a whole
    maker_rule: str = ""  #: how a maker cell is matched, in words
    line_ending: str = "\n"  #: the BOM file's line ending (kept by :meth:`write_csv`)
    had_bom: bool = False  #: the BOM file began with a byte-order mark (kept too)

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
            "warnings": list(self.warnings),
            "maker_rule": self.maker_rule,
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

    def write_csv(
        self, target: str | os.PathLike[str] | io.TextIOBase, *, raw_cells: bool = False
    ) -> None:
        """Write :meth:`to_frame` as CSV with the BOM's own delimiter, line ending and
        byte-order mark, through the one CSV writer (:mod:`partsel.io.csvout`): a cell that
        would start a spreadsheet formula is made inert. ``raw_cells`` keeps the BOM's own
        cells as they were read (for trusted pipelines); partsel's columns are always safe."""
        from partsel.io.csvout import write_frame

        write_frame(
            self.to_frame(),
            target,  # type: ignore[arg-type]
            delimiter=self.delimiter,
            line_ending=self.line_ending,
            bom=self.had_bom and not isinstance(target, io.TextIOBase),
            keep_raw=tuple(self.header) if raw_cells else (),
        )
