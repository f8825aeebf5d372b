"""The BOM check: every line matched to the catalogue and judged (lifecycle, the design's
checks through the ranking, malformed cells), with substitutes for the lines at risk."""

from __future__ import annotations

import io
import os
from collections.abc import Callable, Iterable, Mapping
from pathlib import Path
from typing import Any

import pandas as pd

from partsel import present as P
from partsel.errors import InputError
from partsel.io.bom import (
    ROLES,
    BomColumns,
    BomTable,
    Finding,
    parse_designators,
    parse_quantity,
    read_bom,
)
from partsel.params import Lifecycle
from partsel.physics.circuit import Design
from partsel.physics.stage import Basis
from partsel.solver import checks as C
from partsel.solver.bom.matching import MAKER_RULE, Match, PartMatcher, maker_matches
from partsel.solver.bom.report import BomLine, BomReport, SubstituteHint
from partsel.solver.export import part_checks
from partsel.solver.messages import failing_messages
from partsel.solver.solve import Ranking
from partsel.solver.substitute import vet_substitutes
from partsel.solver.substitute.circuit import evaluate, summary
from partsel.solver.substitute.model import _check_basis
from partsel.solver.substitute.rules import _design_basis
from partsel.solver.table import PartTable


def _lifecycle_findings(lifecycle: str) -> list[Finding]:
    if lifecycle == Lifecycle.OBSOLETE.value:
        return [Finding("obsolete", "error", "lifecycle risk: the part is obsolete")]
    if lifecycle == Lifecycle.NOT_FOR_NEW_DESIGNS.value:
        return [Finding("not-for-new-designs", "warning", "lifecycle risk: not for new designs")]
    return []


def _circuit_findings(r: Ranking, k: int) -> list[Finding]:
    """In-circuit findings of part ``k`` of a ranking: every check of the design it fails
    (the ranking's own checks and limits), a fix resistor it needs, a marginal stage."""
    out = []
    for name, text in failing_messages(r, k):
        out.append(Finding("out-of-spec", "error", f"{P.check_label(name)}: {text}", None, name))
    jc = C.IDX["conduction"]
    if int(r.checks.status[k, jc]) == C.FIXED:
        out.append(
            Finding(
                "needs-fix",
                "warning",
                "changes conduction mode in the design; it passes with the fix resistor "
                f"{P.fix_summary(r.fix, k)} (check that the board has it)",
                None,
                "conduction",
            )
        )
    elif int(r.checks.status[k, jc]) == C.IGNORED and bool(r.fix.needed[k]):
        out.append(
            Finding(
                "changes-mode",
                "warning",
                f"changes conduction mode (the design allows it); fix: {P.fix_summary(r.fix, k)}",
                None,
                "conduction",
            )
        )
    p = r.prediction
    if bool(p.marginal[k]) and not bool(r.fix.needed[k]):
        out.append(
            Finding(
                "marginal",
                "warning",
                "stays in source mode only barely: least source-device current "
                f"{P.quantity(float(p.min_source_a[k]), 'A')} of a stage current of "
                f"{P.quantity(float(p.stage_current_a[k]), 'A')}",
                None,
                "conduction",
            )
        )
    return out


def check_bom(
    catalogue: PartTable | pd.DataFrame,
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
    progress: Callable[[int], None] | None = None,
) -> BomReport:
    """Check every line of a BOM against the catalogue.

    Parameters
    ----------
    catalogue: the part table (or the parts frame, :func:`partsel.catalogue.parts_frame`).
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
    progress: called with 1 as each line is done (a progress bar).
    """
    frame = catalogue.frame if isinstance(catalogue, PartTable) else catalogue
    table = (
        bom
        if isinstance(bom, BomTable)
        else read_bom(bom, columns, encoding=encoding, delimiter=delimiter)
    )
    if basis is not None:
        basis = _check_basis(basis)

    def basis_for(d: Design | None) -> Basis:
        """The explicit basis, else the design's (the one rule), else worst-case."""
        if basis is not None:
            return basis
        return _design_basis(d)

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
            first = got.problems[0]
            where = f" (field {first.pointer})" if first.pointer else ""
            return None, Finding(
                "bad-design", "error", f"design {cell}: {first.message}{where}", "design"
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
            elif maker_cell and m.maker and not maker_matches(maker_cell, m.maker):
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
    circuits: dict[int, tuple[dict[int, int], Ranking]] = {}
    for key, ks in by_design.items():
        d = pending[ks[0]]["design"]
        rows = sorted({pending[k]["m"].index for k in ks})
        circ = evaluate(frame.iloc[rows].reset_index(drop=True), d, basis_for(d))
        circuits[key] = ({r: i for i, r in enumerate(rows)}, circ)

    vet_cache: dict[tuple[int, int], tuple[SubstituteHint, ...]] = {}
    out_lines: list[BomLine] = []
    for p in pending:
        m: Match = p["m"]
        d: Design | None = p["design"]
        f = p["f"]
        circuit_rows = None
        evaluation = None
        out_of_spec = False
        if d is not None and m.index is not None:
            pos, circ = circuits[id(d)]
            k = pos[m.index]
            cf = _circuit_findings(circ, k)
            out_of_spec = any(x.code == "out-of-spec" and x.severity == "error" for x in cf)
            f.extend(cf)
            circuit_rows = tuple(part_checks(circ, k))
            evaluation = summary(circ, k)
        subs: tuple[SubstituteHint, ...] = ()
        risky = p["lc"] in (Lifecycle.OBSOLETE.value, Lifecycle.NOT_FOR_NEW_DESIGNS.value)
        if substitutes > 0 and m.index is not None and (risky or out_of_spec):
            key = (m.index, id(d))
            if key not in vet_cache:
                vet_cache[key] = _suggest(
                    frame, m.part_number, d, basis_for(d), substitutes, package, out_of_spec
                )
            subs = vet_cache[key]
        if progress is not None:
            progress(1)
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
                evaluation=evaluation,
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
        warnings=table.warnings,
        maker_rule=MAKER_RULE,
        line_ending=table.line_ending,
        had_bom=table.had_bom,
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
                c.in_circuit,
            )
        )
    return tuple(out)
