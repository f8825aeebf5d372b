"""Substitute commands: ``vet`` (candidates for an incumbent), ``compare`` (2 to 4 parts side by
side) and ``bom-check`` (every line of a BOM against the catalogue).

Exit codes: ``vet`` 0 when some candidate is a drop-in or fits the design, 1 when none is;
``compare`` 0; ``bom-check`` 0 when every line is clear, 1 when any line has a finding; all of
them 2 for bad input (nothing is stored by any of them).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from partsel import present as P
from partsel.cli.common import (
    BasisOpt,
    ExitCode,
    JsonFlag,
    bad_input_exits,
    database_errors_exit,
    echo_json,
    load_design,
    message,
    progress,
    session,
)
from partsel.errors import InputError
from partsel.io.bom import ROLES
from partsel.io.paths import output_file

if TYPE_CHECKING:
    from partsel.physics.circuit import Design
    from partsel.solver.bom import BomReport
    from partsel.solver.substitute import Comparison, Vetting


DesignOpt = Annotated[
    Path | None,
    typer.Option("--design", "-d", help="Design file: judge the parts in this circuit too."),
]
PackageOpt = Annotated[
    str | None,
    typer.Option("--package", help="Package code on the board, e.g. SO-8 (form check)."),
]


def _design(path: Path | None) -> Design | None:
    return load_design(path) if path is not None else None


# ---- vet --------------------------------------------------------------------------------------


def vetting_text(v: Vetting, *, details: bool = False) -> str:
    """The vetting for people."""
    from partsel.solver.substitute import fmt

    inc = v.incumbent
    pk = ", ".join(f"{c}:{p}" for c, p in inc.packages)
    head = (
        f"Substitutes for {inc.part_number} ({inc.maker}; {inc.topology}, {inc.channels} "
        f"channel(s), {pk}; {inc.lifecycle}) — basis: {v.basis}"
    )
    if v.design_name:
        head += f'; design: "{v.design_name}"'
    if v.package:
        head += f"; package {v.package}"
    lines = [head, f"  {v.considered} part(s) examined, {len(v.candidates)} listed, {v.sort}"]
    lines.append(f"  tolerances: {v.tolerances}")
    if v.incumbent_in_circuit is not None:
        ev = v.incumbent_in_circuit
        fails = [P.check_label(f["check"]) for f in ev["failing"]]
        lines.append(
            f"  the incumbent in this circuit: {P.VERDICT_TEXT[ev['verdict']]}"
            + (("; fails " + ", ".join(fails)) if fails else "")
            + f"; fix {P.fix_phrase(ev['fix'])}"
        )
    for k, c in enumerate(v.candidates, 1):
        p = c.part
        price = f", {p.price:g} {p.currency}" if p.price == p.price else ""
        n = c.counts()
        lines.append("")
        lines.append(
            f"{k:3d}. {c.part_number:<12} {P.SUBSTITUTE_TEXT[c.verdict]:<18} ({p.maker}, "
            f"{p.topology}, {p.lifecycle}{price})"
        )
        if c.in_circuit is not None:
            ev = c.in_circuit
            lines.append(
                f"       in this circuit: {P.VERDICT_TEXT[ev['verdict']]}, THD estimate "
                f"{P.thd(ev['thd_estimate'])}, fix {P.fix_phrase(ev['fix'])}"
            )
        lines.append(
            f"       better {n['better']}, equal {n['equal']}, worse {n['worse']}, "
            f"unknown {n['unknown']}"
        )
        for r in c.reasons:
            if r.severity == "info" and not details:
                continue
            lines.append(f"       - {r.severity}: {r.message}")
        if details:
            for f in c.function:
                side = (
                    f.side_candidate
                    if f.side_candidate == f.side_incumbent
                    else (f"{f.side_candidate}/{f.side_incumbent}")
                )
                lines.append(
                    f"         {P.param_label(f.key):<34} {fmt(f.candidate, f.unit):>12} vs "
                    f"{fmt(f.incumbent, f.unit):>12}  {f.change:<7} [{side}]"
                )
    if not v.candidates:
        lines.append("")
        lines.append("  no candidate (try --all to see the unsuitable ones)")
    return "\n".join(lines)


def vet(
    ctx: typer.Context,
    incumbent: Annotated[str, typer.Argument(help="Part number to replace.")],
    design: DesignOpt = None,
    basis: BasisOpt = None,
    package: PackageOpt = None,
    only: Annotated[
        list[str] | None,
        typer.Option("--only", help="Vet only this candidate (repeat for more)."),
    ] = None,
    all_: Annotated[bool, typer.Option("--all", help="Also list unsuitable candidates.")] = False,
    top: Annotated[
        int, typer.Option("--top", help="Show at most this many (0: all).", min=0, max=10**6)
    ] = 10,
    details: Annotated[
        bool, typer.Option("--details", help="Every parameter compared, and every note.")
    ] = False,
    json_out: JsonFlag = False,
) -> None:
    """Vet substitutes for an incumbent part: form, fit, function and behaviour in a design."""
    from partsel.solver.substitute import CAUTION

    with bad_input_exits(json_out=json_out):
        d = _design(design)
        if top < 0:
            raise InputError("--top must be 0 or more", pointer="/top")
        v = session(ctx).vet(
            incumbent,
            d,
            basis=basis,
            candidates=only or None,
            package=package,
            include_unsuitable=all_,
            limit=top or None,
        )
    if json_out:
        echo_json(v.to_dict())
    else:
        typer.echo(vetting_text(v, details=details))
        message(CAUTION)
    good = any(c.verdict in ("drop-in", "fits-this-circuit") for c in v.candidates)
    raise typer.Exit(ExitCode.OK if good else ExitCode.FINDINGS)


# ---- compare ----------------------------------------------------------------------------------


#: Units :func:`partsel.present.quantity` formats (others, such as a currency, are shown as
#: given).
_KNOWN_UNITS = frozenset(
    {"V", "A", "Hz", "V/s", "F", "V/rtHz", "degC", "K", "K/W", "V/V", "1", "ohm", "%", "W", ""}
)


def comparison_text(cmp: Comparison) -> str:
    """The comparison for people: one row per value, '*' marks the best."""
    width = max(22, *(len(p) + 2 for p in cmp.parts))
    head = f"{'':<34}" + "".join(f"{p:>{width}}" for p in cmp.parts)
    out = [f"basis: {cmp.basis}" + (f'; design: "{cmp.design_name}"' if cmp.design_name else "")]
    out.append(head)
    group = None
    for r in cmp.rows:
        if r.group != group:
            group = r.group
            out.append(f"[{group}]")
        cells = []
        for k, v in enumerate(r.values):
            if isinstance(v, float):
                text = P.quantity(v, r.unit) if r.unit in _KNOWN_UNITS else f"{v:g} {r.unit}"
            else:
                text = str(v)
            if r.ok is not None and r.ok[k] is False:
                text += " !"
            if k in r.best:
                text += " *"
            cells.append(text if len(text) <= width - 1 else text[: width - 2] + "~")
        out.append(f"  {r.label:<32}" + "".join(f"{c:>{width}}" for c in cells))
    out.append("* best of the parts shown; ! fails the check in the design")
    return "\n".join(out)


def compare(
    ctx: typer.Context,
    parts: Annotated[list[str], typer.Argument(help="Two to four part numbers.")],
    design: DesignOpt = None,
    basis: BasisOpt = None,
    json_out: JsonFlag = False,
) -> None:
    """Compare two to four parts side by side (and in a design, with --design)."""
    with bad_input_exits(json_out=json_out):
        d = _design(design)
        cmp = session(ctx).compare(parts, d, basis=basis)
    if json_out:
        echo_json(cmp.to_dict())
    else:
        typer.echo(comparison_text(cmp))


# ---- bom-check --------------------------------------------------------------------------------


def bom_text(rep: BomReport) -> str:
    """The BOM check for people: one block per line with findings, then a summary."""
    out = [
        f"BOM {rep.source}: columns "
        + ", ".join(f"{role}={col!r}" for role, col in rep.columns.items() if col is not None)
    ]
    for ln in rep.lines:
        m = ln.match
        target = m.part_number or "-"
        rule = m.rule + (f" {'/'.join(m.stripped)}" if m.stripped else "")
        refs = ",".join(ln.designators) or "-"
        status = "ok" if ln.status == "ok" else "FINDING"
        out.append(
            f"line {ln.line:>3}  {refs:<12} {ln.part_number!s:<14} -> {target:<10} ({rule}) "
            f"{ln.lifecycle or ''}  {status}"
        )
        for f in ln.findings:
            if f.severity != "info":
                out.append(f"           {f.severity}: {f.code}: {f.message}")
        if ln.substitutes:
            out.append(
                "           substitutes: "
                + "; ".join(f"{s.part_number} ({s.verdict})" for s in ln.substitutes)
            )
    for w in rep.warnings:
        out.append(f"warning: {w}")
    s = rep.summary()
    out.append(
        f"{s['lines']} line(s): {s['ok']} clear, {s['with_findings']} with findings"
        + "".join(f"; {k} {v}" for k, v in s.items() if k not in ("lines", "ok", "with_findings"))
    )
    return "\n".join(out)


def _count_lines(path: Path) -> int:
    """Lines of a file below its header, for a progress bar (0 when it cannot be read)."""
    try:
        with path.open("rb") as fh:
            return max(sum(1 for _ in fh) - 1, 0)
    except OSError:
        return 0


def _column_map(items: list[str] | None) -> dict[str, str]:

    out: dict[str, str] = {}
    for item in items or []:
        role, sep, name = item.partition("=")
        role = role.strip()
        if not sep or not name.strip():
            raise InputError(f"--column takes ROLE=NAME, got {item!r}", pointer="/columns")
        if role not in ROLES:
            raise InputError(
                f"unknown column role {role!r}: use {', '.join(ROLES)}",
                pointer=f"/columns/{role}",
            )
        out[role] = name.strip()
    return out


def bom_check(
    ctx: typer.Context,
    bom: Annotated[Path, typer.Argument(help="BOM as CSV (header line, one part a line).")],
    design: Annotated[
        Path | None,
        typer.Option(
            "--design", "-d", help="Design for the whole BOM (a line's design column wins)."
        ),
    ] = None,
    column: Annotated[
        list[str] | None,
        typer.Option(
            "--column",
            help="Column name of a role, ROLE=NAME; roles: " + ", ".join(ROLES) + ".",
        ),
    ] = None,
    delimiter: Annotated[
        str | None, typer.Option("--delimiter", help="CSV delimiter (default: from the header).")
    ] = None,
    encoding: Annotated[
        str, typer.Option("--encoding", help="Text encoding of the BOM.")
    ] = "utf-8",
    basis: BasisOpt = None,
    package: PackageOpt = None,
    substitutes: Annotated[
        int,
        typer.Option(
            "--substitutes", help="Substitutes suggested per line at risk.", min=0, max=50
        ),
    ] = 3,
    csv_out: Annotated[
        Path | None,
        typer.Option("--csv", help="Write the BOM with partsel_* columns added ('-': stdout)."),
    ] = None,
    raw_cells: Annotated[
        bool,
        typer.Option(
            "--raw-cells",
            help="With --csv: write the BOM's own cells exactly as read, also those that "
            "start like a spreadsheet formula (for trusted pipelines only).",
        ),
    ] = False,
    json_out: JsonFlag = False,
) -> None:
    """Check every line of a BOM: match, lifecycle, in-circuit spec, substitutes."""
    with bad_input_exits(json_out=json_out):
        if json_out and csv_out is not None and str(csv_out) == "-":
            raise InputError("--json and --csv - both write to stdout: pick one", pointer="/csv")
        if substitutes < 0:
            raise InputError("--substitutes must be 0 or more", pointer="/substitutes")
        cols = _column_map(column)
        if csv_out is not None and str(csv_out) != "-":
            output_file(csv_out)
        d = _design(design)
        lines = _count_lines(bom)
        with progress(lines, "checking the BOM", enabled=not json_out) as advance:
            rep = session(ctx).check_bom(
                bom,
                d,
                columns=cols,
                basis=basis,
                progress=advance,
                substitutes=substitutes,
                encoding=encoding,
                delimiter=delimiter,
                package=package,
            )
        if csv_out is not None and str(csv_out) != "-":
            try:
                rep.write_csv(csv_out, raw_cells=raw_cells)
            except OSError as exc:
                raise InputError(
                    f"cannot write the checked BOM: {exc.strerror or exc}", file=str(csv_out)
                ) from None
    if csv_out is not None and str(csv_out) == "-":
        rep.write_csv(sys.stdout, raw_cells=raw_cells)  # type: ignore[arg-type]
    elif json_out:
        echo_json(rep.to_dict())
    else:
        typer.echo(bom_text(rep))
    if csv_out is not None and str(csv_out) != "-":
        message(f"wrote {csv_out}")
    raise typer.Exit(rep.exit_code)


def register(app: typer.Typer) -> None:
    """Add the substitute and BOM commands to ``app``."""
    app.command("vet")(database_errors_exit(vet))
    app.command("compare")(database_errors_exit(compare))
    app.command("bom-check")(database_errors_exit(bom_check))
