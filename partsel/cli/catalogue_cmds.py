"""Catalogue commands: check, load, list, show, edit, history, restore, export, export-csv,
import-sheet.

Commands that change the catalogue (load, import-sheet, edit, restore) refuse under
``--read-only`` and record ``--user`` (default: the OS user) in the part history; ``edit`` and
``restore`` are refused with a conflict report when the part moved on since it was read.
"""

from __future__ import annotations

import difflib
import math
import sys
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer
from rich.table import Table

from partsel import present as P
from partsel.cli.common import (
    JsonFlag,
    bad_input_exits,
    data_table,
    database_errors_exit,
    echo_json,
    engine,
    fail_bad_input,
    message,
    out_console,
    problems_json,
    progress,
    progress_to,
    user,
    writable_engine,
)
from partsel.errors import InputError
from partsel.io.csvout import write_frame
from partsel.io.paths import output_file, output_folder
from partsel.params import PARAMS, SIDES, Lifecycle, Topology
from partsel.units import UNIT_LABEL

if TYPE_CHECKING:
    from partsel.catalogue import EditResult, HistoryEntry
    from partsel.catalogue.store import LoadReport, StoredPart


Paths = Annotated[list[Path], typer.Argument(help="Catalogue files or folders (YAML/JSON).")]
#: Largest part version a command accepts (a version is a 64-bit integer in the database).
VERSION_MAX = 2**62
DryRun = Annotated[bool, typer.Option("--dry-run", help="Check and report; store nothing.")]


class ExportFormat(StrEnum):
    """File format of ``export``."""

    YAML = "yaml"
    JSON = "json"


def _fmt(value: float, dimension: str) -> str:
    """A catalogue value for people (:func:`partsel.present.quantity`)."""
    return P.quantity(value, UNIT_LABEL[dimension])


def check(paths: Paths, json_out: JsonFlag = False) -> None:
    """Validate catalogue files and folders without touching the database."""
    from partsel.catalogue import read_and_validate

    with bad_input_exits(json_out=json_out):
        docs = read_and_validate(paths)
    n_parts = sum(len(d.parts) for d in docs)
    n_makers = sum(len(d.makers) for d in docs)
    warnings = [w for d in docs for w in d.warnings]
    for w in warnings:
        message(f"warning: {w}")
    message(f"ok: {n_parts} parts and {n_makers} makers in {len(docs)} files")
    if json_out:
        echo_json([{**w, "severity": "warning"} for w in problems_json(warnings)])


def _report(report: LoadReport, json_out: bool) -> None:
    for w in report.warnings:
        message(f"warning: {w}")
    if json_out:
        echo_json(
            {
                **report.counts(),
                "dry_run": report.dry_run,
                "warnings": problems_json(report.warnings),
                "parts": {
                    "added": report.added,
                    "changed": report.changed,
                    "unchanged": report.unchanged,
                },
            }
        )
        return
    c = report.counts()
    verb = "would be" if report.dry_run else ""
    typer.echo(
        f"parts: {c['added']} added, {c['changed']} changed, "
        f"{c['unchanged']} unchanged; makers: {c['makers_added']} added, "
        f"{c['makers_changed']} changed" + (f" ({verb} stored: dry run)" if report.dry_run else "")
    )


def load(
    ctx: typer.Context, paths: Paths, dry_run: DryRun = False, json_out: JsonFlag = False
) -> None:
    """Validate catalogue files, then add or update their parts (all or nothing)."""
    from partsel.catalogue import load_paths
    from partsel.catalogue.files import find_files

    eng = engine(ctx) if dry_run else writable_engine(ctx, "load")
    with bad_input_exits(json_out=json_out):
        n_files = len(find_files(paths)[0])
        with progress(n_files, "reading catalogue files", enabled=not json_out) as advance:
            report = load_paths(eng, paths, dry_run=dry_run, user=user(ctx), progress=advance)
    _report(report, json_out)


def _matches(
    rows: list[dict[str, Any]],
    maker: str | None,
    topology: Topology | None,
    lifecycle: Lifecycle | None,
    search: str | None,
) -> list[dict[str, Any]]:
    """The rows that pass the list filters (plain dicts: no pandas for a listing)."""
    text = search.casefold() if search else None
    who = maker.strip().casefold() if maker else None

    def keep(r: dict[str, Any]) -> bool:
        if who is not None and str(r["maker"]).casefold() != who:
            return False
        if topology and r["topology"] != topology.value:
            return False
        if lifecycle and r["lifecycle"] != lifecycle.value:
            return False
        if text is not None:
            cols = ("part_number", "maker", "family", "description")
            return any(text in str(r.get(c) or "").casefold() for c in cols)
        return True

    return [r for r in rows if keep(r)]


def list_parts(
    ctx: typer.Context,
    maker: Annotated[str | None, typer.Option(help="Only this maker (any case).")] = None,
    topology: Annotated[Topology | None, typer.Option(help="Only this output topology.")] = None,
    lifecycle: Annotated[Lifecycle | None, typer.Option(help="Only this lifecycle.")] = None,
    search: Annotated[
        str | None,
        typer.Option(help="Text in part number, maker, family or description (any case)."),
    ] = None,
    json_out: JsonFlag = False,
) -> None:
    """List stored parts (a table; --json: an array of flat rows in SI units)."""
    from partsel.catalogue.store import parts_records

    rows = _matches(parts_records(engine(ctx)), maker, topology, lifecycle, search)
    if json_out:
        echo_json(rows)
        return
    if not rows:
        message("no parts match")
        return
    table = data_table(
        "Part",
        "Maker",
        "Ch",
        "Stage",
        "Lifecycle",
        "Supply",
        "GBW typ",
        "SR rise typ",
        "Iq/ch typ",
        "Price",
        keep=("Part",),
    )
    for r in rows:
        price = "—" if math.isnan(r["price"]) else f"{r['price']:.2f} {r['currency']}"
        table.add_row(
            r["part_number"],
            r["maker"],
            str(r["channels"]),
            P.TOPOLOGY_SHORT.get(r["topology"], r["topology"]),
            P.lifecycle(r["lifecycle"]),
            f"{r['supply_min_v']:g}–{r['supply_max_v']:g} V",
            _fmt(r["gbw_typ"], "frequency"),
            _fmt(r["slew_rise_typ"], "slew"),
            _fmt(r["supply_current_typ"], "current"),
            price,
        )
    out_console().print(table)
    message(f"{len(rows)} parts")


def _lookup(ctx: typer.Context, part: str) -> StoredPart:
    from partsel.catalogue import get_part, part_numbers

    eng = engine(ctx)
    stored = get_part(eng, part)
    if stored is None:
        close = difflib.get_close_matches(part.upper(), part_numbers(eng), n=3)
        hint = f"; did you mean {', '.join(close)}?" if close else ""
        fail_bad_input(InputError(f"no part {part!r} in the catalogue{hint}", record=part))
    return stored


def _conditions(spec: Any) -> str:
    at = spec.get("at") if isinstance(spec, dict) else None
    return ", ".join(f"{k} {v}" for k, v in at.items()) if isinstance(at, dict) else ""


def _show_text(stored: StoredPart) -> None:
    from partsel.catalogue import swing_points
    from partsel.catalogue.history import format_time
    from partsel.catalogue.validate import canonical_part

    rec, flat = stored.record, stored.flat
    con = out_console()
    con.print(
        f"[bold]{rec['part_number']}[/bold]  {rec['maker']}"
        + (f" — {rec['family']}" if rec.get("family") else "")
    )
    if rec.get("description"):
        con.print(rec["description"])
    price = (
        "—"
        if math.isnan(flat["price"])
        else f"{flat['price']:.2f} {flat['currency']}"
        + (f" at {rec['price']['quantity']}" if "quantity" in rec["price"] else "")
    )
    info = Table.grid(padding=(0, 2))
    for key, val in (
        ("channels", str(flat["channels"])),
        ("lifecycle", flat["lifecycle"]),
        ("topology", flat["topology"]),
        (
            "packages",
            ", ".join(
                f"{p['code']} ({p['pinout']}"
                + (f", θJA {p['theta_ja']}" if "theta_ja" in p else "")
                + ")"
                for p in rec["packages"]
            ),
        ),
        (
            "temperature",
            f"{_fmt(flat['temp_min_c'], 'temperature')} … "
            f"{_fmt(flat['temp_max_c'], 'temperature')}, junction max "
            f"{_fmt(flat['junction_max_c'], 'temperature')}",
        ),
        ("supply", f"{flat['supply_min_v']:g} … {flat['supply_max_v']:g} V total"),
        ("rail-to-rail input", "yes" if flat["rail_to_rail_input"] else "no"),
        (
            "min stable gain",
            "—" if math.isnan(flat["min_stable_gain"]) else f"{flat['min_stable_gain']:g} V/V",
        ),
        ("price", price),
        (
            "stored",
            f"version {stored.version}, {format_time(stored.updated_at)}"
            + (f" by {stored.updated_by}" if stored.updated_by else ""),
        ),
    ):
        info.add_row(key, val)
    con.print(info)
    table = Table("Parameter", "min", "typ", "max", "conditions", title="Parameters")
    for p in PARAMS:
        given: Any = rec
        for name in p.path:
            given = given.get(name) if isinstance(given, dict) else None
        cells = [_fmt(flat[f"{p.key}_{s}"], p.dimension) for s in SIDES]
        if given is None and all(c == "—" for c in cells):
            continue
        table.add_row(p.key.replace("_", " "), *cells, _conditions(given))
    con.print(table)
    canon, _ = canonical_part(rec)
    out = canon.get("output", {})
    for rail, against in (("swing_pos", "source"), ("swing_neg", "sink")):
        pts = swing_points(out, rail)
        if not pts:
            continue
        t = Table(
            f"{against} current",
            "min",
            "typ",
            "max",
            title=f"Headroom to {'V+' if rail == 'swing_pos' else 'V-'}",
        )
        for i_a, head in pts:
            t.add_row(_fmt(i_a, "current"), *(_fmt(head[s], "voltage") for s in SIDES))
        con.print(t)
    if rec.get("notes"):
        con.print(f"notes: {rec['notes']}")


def record_file_text(stored: StoredPart) -> str:
    """The stored record as a one-part catalogue file (YAML) to edit and give to ``edit``."""
    import yaml

    from partsel.catalogue.schema import FORMAT_NAME

    pn = stored.record["part_number"]
    head = (
        f"# {pn} at version {stored.version}. Change this file, then store it with\n"
        f"#   partsel edit {pn} FILE --expect-version {stored.version}\n"
    )
    doc = {"format": FORMAT_NAME, "parts": [stored.record]}
    return head + yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=100)


def show(
    ctx: typer.Context,
    part: Annotated[str, typer.Argument(help="Part number.")],
    record: Annotated[
        bool,
        typer.Option(
            "--record",
            help="Print the record as a catalogue file (YAML) to change and give to 'edit'.",
        ),
    ] = False,
    json_out: JsonFlag = False,
) -> None:
    """Show one part in full (--json: the record as given, its flat SI row, version)."""
    stored = _lookup(ctx, part)
    if record:
        sys.stdout.write(record_file_text(stored))
        return
    if json_out:
        echo_json(
            {
                "record": stored.record,
                "flat": stored.flat,
                "version": stored.version,
                "updated_at": stored.updated_at,
                "updated_by": stored.updated_by,
            }
        )
        return
    _show_text(stored)


ExpectVersion = Annotated[
    int,
    typer.Option(
        "--expect-version",
        metavar="N",
        min=0,
        max=VERSION_MAX,
        help="The version the change was made against (see 'show'); 0 adds a new part. "
        "Refused, with what changed since, when the catalogue holds another version.",
    ),
]


def _edit_report(result: EditResult, json_out: bool) -> None:
    if json_out:
        echo_json(
            {
                "part_number": result.part_number,
                "version": result.version,
                "action": result.action,
                "changes": [c.to_dict() for c in result.changes],
            }
        )
        return
    if not result.changed:
        typer.echo(f"{result.part_number}: unchanged (version {result.version})")
        return
    typer.echo(f"{result.part_number}: version {result.version} stored ({result.action})")
    for c in result.changes:
        typer.echo(f"  {c.text()}")


def edit(
    ctx: typer.Context,
    part: Annotated[str, typer.Argument(help="Part number.")],
    file: Annotated[
        Path,
        typer.Argument(help="Catalogue file (YAML/JSON) holding the part's new record."),
    ],
    expect_version: ExpectVersion,
    json_out: JsonFlag = False,
) -> None:
    """Replace one part's record with the one in FILE, unless someone changed it meanwhile.

    Get the file with 'partsel show PART --record > FILE'; the new version goes into the
    part's history.
    """
    from partsel.catalogue import edit_document, read_and_validate
    from partsel.catalogue.store import part_key

    eng = writable_engine(ctx, f"edit {part}")
    with bad_input_exits(json_out=json_out):
        (doc,) = read_and_validate([file])
        for i, rec in enumerate(doc.parts):
            if part_key(rec["part_number"]) != part_key(part):
                raise InputError(
                    f"this file holds part {rec['part_number']!r}, not {part!r} (an edit "
                    "cannot rename a part)",
                    file=str(file),
                    record=rec["part_number"],
                    pointer=f"/parts/{i}/part_number",
                )
        result = edit_document(eng, doc, expect_version, user=user(ctx))
    _edit_report(result, json_out)


def _history_text(entries: list[HistoryEntry]) -> None:
    from partsel.catalogue.history import format_time

    n = len(entries)
    typer.echo(f"{entries[-1].part_number}: {n} version{'s' if n != 1 else ''}, newest first")
    for e in reversed(entries):
        typer.echo(
            f"version {e.version}  {e.action:<8}  {format_time(e.changed_at)}  by "
            f"{e.changed_by}" + (f"  ({e.source})" if e.source else "")
        )
        if e.old_record is not None:
            for c in e.changes():
                typer.echo(f"    {c.text()}")


def history(
    ctx: typer.Context,
    part: Annotated[str, typer.Argument(help="Part number.")],
    json_out: JsonFlag = False,
) -> None:
    """Show every kept version of a part, newest first: who, when, how, fields changed.

    --json: oldest first, each with the full record before and after.
    """
    from partsel.catalogue import part_history

    stored = _lookup(ctx, part)
    entries = part_history(engine(ctx), stored.record["part_number"])
    if json_out:
        echo_json([e.to_dict() for e in entries])
        return
    _history_text(entries)


def restore(
    ctx: typer.Context,
    part: Annotated[str, typer.Argument(help="Part number.")],
    version: Annotated[
        int,
        typer.Argument(help="Version to bring back (see 'history').", min=1, max=VERSION_MAX),
    ],
    expect_version: Annotated[
        int | None,
        typer.Option(
            "--expect-version",
            metavar="N",
            min=1,
            max=VERSION_MAX,
            help="Refuse, with what changed since, unless the part is still at version N.",
        ),
    ] = None,
    json_out: JsonFlag = False,
) -> None:
    """Store an earlier version of a part again, as its newest version (kept in the history)."""
    from partsel.catalogue import restore_part

    eng = writable_engine(ctx, f"restore {part}")
    with bad_input_exits(json_out=json_out):
        result = restore_part(eng, part, version, expected_version=expect_version, user=user(ctx))
    _edit_report(result, json_out)


def export(
    ctx: typer.Context,
    directory: Annotated[Path, typer.Argument(help="Folder to write into.", file_okay=False)],
    fmt: Annotated[ExportFormat, typer.Option("--format", help="File format.")] = (
        ExportFormat.YAML
    ),
) -> None:
    """Write the catalogue as loadable files, one per maker."""
    from partsel.catalogue import export_catalogue

    with bad_input_exits():
        output_folder(directory)
    from partsel.catalogue import makers

    eng = engine(ctx)
    try:
        with progress(len(makers(eng)), "writing catalogue files") as advance:
            files = export_catalogue(eng, directory, fmt.value, progress=advance)
    except OSError as exc:
        fail_bad_input(InputError(f"cannot write: {exc.strerror or exc}", file=str(directory)))
    message(f"wrote {len(files)} files to {directory}")


def export_csv(
    ctx: typer.Context,
    file: Annotated[
        Path,
        typer.Argument(help="CSV file to write ('-': stdout).", dir_okay=False, allow_dash=True),
    ],
) -> None:
    """Write the flat SI columns of every part as CSV (one row per part)."""
    from partsel.catalogue import parts_frame
    from partsel.catalogue.columns import FLAT_COLUMN_NAMES

    if str(file) != "-":
        with bad_input_exits():
            output_file(file)
    df = parts_frame(engine(ctx))
    with bad_input_exits():
        write_frame(df, sys.stdout if str(file) == "-" else file, columns=list(FLAT_COLUMN_NAMES))
    if str(file) == "-":
        return
    message(f"wrote {len(df)} parts to {file}")


def import_sheet(
    ctx: typer.Context,
    sheet: Annotated[Path, typer.Argument(help="CSV or XLSX file, one part per row.")],
    mapping: Annotated[
        Path,
        typer.Option(
            "--map",
            help="Mapping file (YAML/JSON): sheet columns to record fields, units, defaults.",
        ),
    ],
    dry_run: DryRun = False,
    json_out: JsonFlag = False,
) -> None:
    """Turn spreadsheet rows into part records, check them and add or update them."""
    from partsel.catalogue import load_documents
    from partsel.catalogue.sheet import sheet_documents

    eng = engine(ctx) if dry_run else writable_engine(ctx, "import-sheet")
    with bad_input_exits(json_out=json_out):
        with progress_to("reading the sheet", enabled=not json_out) as update:
            docs = sheet_documents(sheet, mapping, progress=update)
        report = load_documents(eng, docs, dry_run=dry_run, user=user(ctx), via="import-sheet")
    _report(report, json_out)


def register(app: typer.Typer) -> None:
    """Add the catalogue commands to ``app``."""
    app.command("check")(check)
    for name, command in (
        ("load", load),
        ("list", list_parts),
        ("show", show),
        ("edit", edit),
        ("history", history),
        ("restore", restore),
        ("export", export),
        ("export-csv", export_csv),
        ("import-sheet", import_sheet),
    ):
        app.command(name)(database_errors_exit(command))
