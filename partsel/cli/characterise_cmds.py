"""Characterisation commands: ``characterise`` (a SPICE model -> a catalogue record) and
``fit-capture`` (a bench capture -> the part's stage current and dead band).

Both print a one-part catalogue file (YAML; ``--json``: the record with every measurement or
fit and where it came from) and, with ``--store``, put the record into the catalogue through
the same versioned edit as ``partsel edit`` (a new part, or the next version of a stored one;
the history says which command did it). Bad input, a missing or failing ngspice and a model
that does not behave like an amplifier exit with code 2, naming the file and line, and store
nothing.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any

import typer

from partsel import present as P
from partsel.cli.common import (
    JsonFlag,
    bad_input_exits,
    database_errors_exit,
    echo_json,
    message,
    progress_to,
    user,
    writable_engine,
)
from partsel.errors import InputError

if TYPE_CHECKING:
    from partsel.catalogue import EditResult


def _pair(text: str | None, dimension: str, option: str) -> tuple[float, float] | None:
    """A ``MIN,MAX`` option as two SI floats (min below max)."""
    if text is None:
        return None
    from partsel.units import parse_quantity

    parts = [p.strip() for p in text.split(",")]
    if len(parts) != 2:
        raise InputError(f"{option} takes MIN,MAX (e.g. '3 V,5.5 V')", pointer=f"/{option[2:]}")
    lo, hi = (parse_quantity(p, dimension, field=f"/{option[2:]}") for p in parts)
    if not lo < hi:
        raise InputError(f"{option}: the minimum must be below the maximum", pointer=option)
    return lo, hi


def _package(text: str) -> dict[str, str]:
    """A ``--package CODE,PINOUT[,THETA_JA]`` option as a record's package entry."""
    parts = [p.strip() for p in text.split(",")]
    if len(parts) not in (2, 3) or not all(parts):
        raise InputError(
            "--package takes CODE,PINOUT or CODE,PINOUT,THETA_JA (e.g. 'SO-8,SGL-8A,160 K/W')",
            pointer="/package",
        )
    out = {"code": parts[0], "pinout": parts[1]}
    if len(parts) == 3:
        from partsel.units import parse_quantity

        parse_quantity(parts[2], "thermal_resistance", field="/package/theta_ja")
        out["theta_ja"] = parts[2]
    return out


def _name(text: str, what: str, option: str) -> str:
    from partsel.io.partnumber import name_problem

    why = name_problem(text, what)
    if why:
        raise InputError(f"{option}: {why}", pointer=f"/{option[2:]}")
    return text


def _store(ctx: typer.Context, record: dict[str, Any], source: str, merge: Any) -> EditResult:
    """Store ``record`` as a new part, or over the stored one (``merge(stored, record)``),
    through the catalogue's versioned edit."""
    from partsel.catalogue import edit_part, get_part

    eng = writable_engine(ctx, source.split()[0])
    stored = get_part(eng, record["part_number"])
    if stored is not None:
        record = merge(stored.record, record)
    return edit_part(eng, record, stored.version if stored else 0, user=user(ctx), source=source)


def _edit_line(result: EditResult) -> str:
    if not result.changed:
        return f"{result.part_number}: unchanged (version {result.version})"
    return f"{result.part_number}: version {result.version} stored ({result.action})"


def _yaml(doc: dict[str, Any]) -> str:
    import yaml

    return yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=100)


def characterise(
    ctx: typer.Context,
    files: Annotated[
        list[Path],
        typer.Argument(help="SPICE model files: the .subckt and the files it includes."),
    ],
    subckt: Annotated[str, typer.Option("--subckt", help="Name of the subcircuit to test.")],
    pins: Annotated[
        str,
        typer.Option(
            "--pins",
            help="Role of each subcircuit pin, in its order (IN+, IN-, OUT, V+, V-).",
        ),
    ] = "IN+,IN-,OUT,V+,V-",
    supply: Annotated[
        str, typer.Option("--supply", help="Total supply to measure at (V- is 0 V).")
    ] = "5 V",
    temperature: Annotated[
        str, typer.Option("--temperature", help="Simulation temperature.")
    ] = "27 degC",
    part_number: Annotated[
        str | None,
        typer.Option("--part-number", help="Part number of the record (default: the subcircuit)."),
    ] = None,
    maker: Annotated[
        str, typer.Option("--maker", help="Maker name of the record.")
    ] = "unspecified",
    supply_range: Annotated[
        str | None,
        typer.Option(
            "--supply-range",
            metavar="MIN,MAX",
            help="Rated total supply range (default: the supply measured at +-10 %).",
        ),
    ] = None,
    temperature_range: Annotated[
        str | None,
        typer.Option(
            "--temperature-range",
            metavar="MIN,MAX",
            help="Rated ambient range (default: the simulation temperature +-5 K).",
        ),
    ] = None,
    package: Annotated[
        list[str] | None,
        typer.Option(
            "--package",
            metavar="CODE,PINOUT[,THETA_JA]",
            help="A package of the part, e.g. 'SO-8,SGL-8A,160 K/W' (repeat for more; "
            "default: one 'unspecified').",
        ),
    ] = None,
    store: Annotated[
        bool,
        typer.Option(
            "--store",
            help="Store the record (versioned, like 'edit'); over a stored part the measured "
            "fields replace its own and the rest is kept.",
        ),
    ] = False,
    plots: Annotated[
        Path | None, typer.Option("--plots", metavar="DIR", help="Write a PNG of each bench.")
    ] = None,
    timeout: Annotated[
        float, typer.Option("--timeout", min=1.0, help="Seconds each bench may take.")
    ] = 60.0,
    jobs: Annotated[
        int | None,
        typer.Option("--jobs", min=1, help="ngspice runs at once (default: the CPUs usable)."),
    ] = None,
    json_out: JsonFlag = False,
) -> None:
    """Measure an amplifier's SPICE model in partsel's test benches and write its record.

    The benches run in ngspice. Measured: supply current, offset, bias current, GBW, slew
    rates, minimum stable gain, topology, stage (pull-down or quiescent) current, current
    limits, swing against current at both rails, input common-mode range, and for class B
    the dead band from the glitch at two output slopes. The model file is data: control
    blocks and ngspice commands are refused. Prints a one-part catalogue file (YAML), or
    with --json the record, every measurement and its bench.
    """
    from partsel.characterise.benches import Conditions
    from partsel.characterise.model_file import parse_pins, read_models
    from partsel.characterise.record import build_record, document, merged_record, report
    from partsel.characterise.run import characterise as run
    from partsel.units import parse_quantity

    with bad_input_exits(json_out=json_out):
        if store:
            writable_engine(ctx, "characterise")
        roles = parse_pins(pins)
        pn = _name(part_number if part_number is not None else subckt.upper(), "part number",
                   "--part-number")  # fmt: skip
        mk = _name(maker, "maker name", "--maker")
        cond = Conditions(
            parse_quantity(supply, "voltage", field="/supply"),
            parse_quantity(temperature, "temperature", field="/temperature"),
        )
        if not 0.5 <= cond.supply_v <= 100.0:
            raise InputError("--supply: give the total supply, 0.5 V to 100 V", pointer="/supply")
        packages = [_package(p) for p in package or []]
        s_rng = _pair(supply_range, "voltage", "--supply-range")
        t_rng = _pair(temperature_range, "temperature", "--temperature-range")
        if plots is not None:
            from partsel.io.paths import output_folder

            output_folder(plots)
        models = read_models(files, subckt, roles)
        with progress_to("running test benches", enabled=not json_out) as update:
            result = run(models, cond, timeout_s=timeout, jobs=jobs, progress=update)
        record = build_record(
            result, part_number=pn, maker=mk, supply_range_v=s_rng, temperature_range_c=t_rng
        )
        if packages:
            record["packages"] = packages
        from partsel.catalogue import validate_documents

        (checked,) = validate_documents([("characterised record", document(record))])
        for w in checked.warnings:
            message(f"warning: {w}")
        written = []
        if plots is not None:
            from partsel.characterise.figures import write_figures

            written = write_figures(result, plots)
        edit = None
        if store:

            def merge(stored: dict[str, Any], measured: dict[str, Any]) -> dict[str, Any]:
                out = merged_record(stored, measured)
                if packages:  # what the command line says wins over the stored record too
                    out["packages"] = measured["packages"]
                if s_rng:
                    out["supply"]["range"] = measured["supply"]["range"]
                if t_rng:
                    out["temperature"] = measured["temperature"]
                return out

            edit = _store(ctx, record, f"characterise {models.name}", merge)
    _summary(result)
    if written:
        message(f"wrote {len(written)} figures to {plots}")
    if json_out:
        out = report(result, record)
        if edit is not None:
            out["stored"] = {"version": edit.version, "action": edit.action}
        echo_json(out)
    else:
        sys.stdout.write(_yaml(document(record)))
    if edit is not None:
        message(_edit_line(edit))


def _summary(r: Any) -> None:
    """One paragraph on stderr: what was found, how long it took."""
    kn = r.knee
    what = "pull-down" if r.topology.value == "class-b-pulldown" else "quiescent"
    if r.topology.value == "class-a":
        what = "sink bias"
    lines = [
        f"{r.models.name}: {r.topology.value}, {what} current "
        f"{P.quantity(kn.stage_current_a, 'A')}, GBW {P.quantity(r.open_loop.gbw_hz, 'Hz')}, "
        f"slew {P.quantity(r.slew.rise_v_per_s, 'V/s')} / "
        f"{P.quantity(r.slew.fall_v_per_s, 'V/s')}, supply "
        f"{P.quantity(r.quiescent.supply_current_a, 'A')} ({len(r.benches)} benches, "
        f"{r.seconds:.1f} s)"
    ]
    d = r.dead_band
    if d is not None:
        lines.append(
            f"dead band {d.value_v:.3g} V from a {d.glitch_v[0] * 1e3:.3g} mV glitch at "
            f"{P.si(d.slopes_v_per_s[0], 'V/s')}; at "
            f"{P.si(d.slopes_v_per_s[1], 'V/s')} it predicts "
            f"{d.closed_form_v * 1e3:.3g} mV (closed form, {100 * d.closed_form_error:+.1f} %) "
            f"and {d.simulated_v * 1e3:.3g} mV (simulation, {100 * d.simulated_error:+.1f} %) "
            f"against {d.glitch_v[1] * 1e3:.3g} mV measured"
        )
    for ln in lines:
        message(ln)


#: Labels of the fitted quantities for people.
_FIT_LABEL = {
    "stage_current": "stage current",
    "dead_band": "dead band",
    "slew_rise": "slew rate, rising",
    "slew_fall": "slew rate, falling",
}
#: Where each fitted quantity sits in a record.
_FIT_PATH = {
    "stage_current": ("output", "stage_current"),
    "dead_band": ("output", "dead_band"),
    "slew_rise": ("dynamics", "slew_rise"),
    "slew_fall": ("dynamics", "slew_fall"),
}


def _fit_json(fit: Any, part: str, capture: Any, design: Any) -> dict[str, Any]:
    def one(p: Any) -> dict[str, Any]:
        return {
            "value": p.value,
            "ci95": p.ci95,
            "start": p.start,
            "unit": p.unit,
            "determined": p.determined,
        }

    return {
        "part_number": part,
        "capture": capture.file,
        "design": design.name,
        "columns": [{"name": c.name, "unit": c.unit} for c in capture.columns],
        "samples": fit.n,
        "periods": fit.periods,
        "time_from_input": fit.t0_from_input,
        "parameters": {p.key: one(p) for p in fit.params},
        "offset": one(fit.offset),
        "time_shift": one(fit.time_shift),
        "residual_rms_v": fit.residual_rms_v,
        "degrees_of_freedom": fit.dof,
        "evaluations": fit.nfev,
    }


def _fit_text(fit: Any, part: str, capture: Any, design: Any) -> str:
    cols = ", ".join(f"{c.name!r}" + (f" [{c.unit}]" if c.unit else "") for c in capture.columns)
    lines = [
        f"{part} in {design.name!r} fitted to {capture.file}: {fit.n} samples over "
        f"{fit.periods:.3g} periods (columns {cols}; time origin from "
        f"{'the input' if fit.t0_from_input else 'the output (fitted)'})",
    ]
    for p in fit.params:
        unit = "V/s" if p.unit == "V/s" else p.unit
        lines.append(
            f"  {_FIT_LABEL[p.key]:18} {P.quantity(p.value, unit, 4):>12} ± "
            f"{P.quantity(p.ci95, unit, 3):<10} (95 %)  catalogue {P.quantity(p.start, unit, 4)}"
            + ("" if p.determined else "  — not determined by this capture")
        )
    lines.append(
        f"  {'output offset':18} {P.quantity(fit.offset.value, 'V', 4):>12} ± "
        f"{P.quantity(fit.offset.ci95, 'V', 3)}"
    )
    lines.append(f"  {'residual':18} {P.quantity(fit.residual_rms_v, 'V', 3):>12} rms")
    return "\n".join(lines)


def _fitted_record(stored: dict[str, Any], fit: Any, capture: Any, design: Any) -> dict:
    """``stored`` with the determined fitted values as typical values (min and max kept)."""
    import copy

    rec = copy.deepcopy(stored)
    at: dict[str, Any] = {"supply": P.quantity(design.supply.total_v, "V", 4)}
    if design.load.r_load_ohm is not None:
        at["load"] = P.quantity(design.load.r_load_ohm, "ohm", 4)
    name = " ".join(Path(capture.file).name.split())
    at["note"] = f"partsel fit-capture of {name}"
    for p in fit.params:
        if not p.determined:
            continue
        node = rec
        path = _FIT_PATH[p.key]
        for k in path[:-1]:
            node = node.setdefault(k, {})
        old = node.get(path[-1])
        spec = {s: old[s] for s in ("min", "max") if isinstance(old, dict) and s in old}
        spec["typ"] = P.quantity(p.value, "V/s" if p.unit == "V/s" else p.unit, 4)
        spec["at"] = at
        node[path[-1]] = {k: spec[k] for k in ("min", "typ", "max", "at") if k in spec}
    return rec


def fit_capture(
    ctx: typer.Context,
    capture_file: Annotated[
        Path, typer.Argument(metavar="CAPTURE", help="Scope capture (CSV): time, output[, input].")
    ],
    design_file: Annotated[
        Path, typer.Option("--design", "-d", help="Design file of the circuit captured.")
    ],
    part: Annotated[
        str,
        typer.Option("--part", help="Part captured: its catalogue record is the fit's start."),
    ],
    columns: Annotated[
        str | None,
        typer.Option(
            "--columns",
            metavar="TIME,[IN,]OUT",
            help="Columns by name or number (from 1): time,out or time,in,out (default: the "
            "first is time, then input and output when there are three).",
        ),
    ] = None,
    store: Annotated[
        bool,
        typer.Option(
            "--store",
            help="Store the fitted values (those the capture determines) as the part's "
            "typical values, versioned like 'edit'.",
        ),
    ] = False,
    json_out: JsonFlag = False,
) -> None:
    """Fit a part's stage current and dead band (and slew rate) to a bench capture.

    Least squares on partsel's own simulation of the part in the design, with 95 %
    confidence intervals and the residual. The capture is an oscilloscope CSV: header
    lines, units in the column names and ; or tab separators with decimal commas are read.
    """
    from partsel.characterise.fit import fit_capture as run_fit
    from partsel.io.scope import read_capture

    with bad_input_exits(json_out=json_out):
        if store:
            writable_engine(ctx, "fit-capture")
        from partsel.cli.common import load_design, session

        design = load_design(design_file)
        capture = read_capture(capture_file, columns)
        s = session(ctx)
        rows = s.rows([part])
        stage = s.table.stage("typical").take(rows)
        pn = str(s.table.part_number[rows[0]])
        fit = run_fit(stage, design, capture)
        edit = None
        if store:
            from partsel.catalogue import get_part

            eng = writable_engine(ctx, "fit-capture")
            stored = get_part(eng, pn)
            if stored is None:  # removed since the session read it
                raise InputError(f"no part {pn!r} in the catalogue", record=pn)
            record = _fitted_record(stored.record, fit, capture, design)
            from partsel.catalogue import edit_part

            name = " ".join(Path(capture.file).name.split())
            edit = edit_part(
                eng, record, stored.version, user=user(ctx), source=f"fit-capture {name}"
            )
    if json_out:
        out = _fit_json(fit, pn, capture, design)
        if edit is not None:
            out["stored"] = {"version": edit.version, "action": edit.action}
        echo_json(out)
    else:
        typer.echo(_fit_text(fit, pn, capture, design))
    undetermined = [p.key for p in fit.params if not p.determined]
    if undetermined:
        message(
            "note: not determined by this capture (95 % interval wider than half the value), "
            "not stored: " + ", ".join(undetermined)
        )
    if edit is not None:
        message(_edit_line(edit))


def register(app: typer.Typer) -> None:
    """Add the characterisation commands to ``app``."""
    app.command("characterise")(database_errors_exit(characterise))
    app.command("fit-capture")(database_errors_exit(fit_capture))
