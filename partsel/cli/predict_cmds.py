"""Prediction commands: ``predict`` (report / JSON), ``waveform`` (PNG/SVG) and ``deck`` (SPICE).

All predictions are estimates from partsel's macro-model; every output says so.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from partsel.cli.common import (
    BasisOpt,
    DesignArg,
    JsonFlag,
    bad_input_exits,
    database_errors_exit,
    echo_json,
    fail_bad_input,
    load_design,
    message,
    progress,
    session,
)
from partsel.errors import InputError
from partsel.io.paths import output_file

if TYPE_CHECKING:
    from partsel.api import Prediction

PartsArg = Annotated[list[str] | None, typer.Argument(help="Part numbers (default: all).")]
PartArg = Annotated[str, typer.Argument(help="Part number.")]
SeriesOpt = Annotated[
    str | None,
    typer.Option(
        "--series",
        help="IEC 60063 series for the fix resistor, E6..E192 (default: the design's "
        "requirements.fix_series, else E24).",
    ),
]
MarginOpt = Annotated[
    float | None,
    typer.Option(
        "--margin",
        help="Fraction of its stage current the device kept on must still carry at the worst "
        "instant (default: the design's min_source_fraction, else 0.5).",
    ),
]


def _prediction(
    ctx: typer.Context,
    design_path: Path,
    parts: list[str] | None,
    basis: str | None,
    series: str | None,
    margin: float | None,
    run_sim: bool,
    show_progress: bool = True,
) -> Prediction:
    """The session's prediction: the same verdict, fix and estimates as ``rank``."""
    s = session(ctx)
    design = load_design(design_path)
    ranking = s.evaluate(design, parts or None, basis=basis, series=series, margin=margin)
    n = ranking.n if not parts else len(parts)
    with progress(2 * n if run_sim else 0, "simulating", enabled=show_progress) as advance:
        return s.predict(
            design, parts or None, run_simulation=run_sim, ranking=ranking, progress=advance
        )


def predict(
    ctx: typer.Context,
    design: DesignArg,
    parts: PartsArg = None,
    basis: BasisOpt = None,
    series: SeriesOpt = None,
    margin: MarginOpt = None,
    no_sim: Annotated[bool, typer.Option("--no-sim", help="Closed form only (fast).")] = False,
    json_out: JsonFlag = False,
) -> None:
    """Predict crossover, glitch, THD, margins and the fix resistor of parts in a design.

    The verdict, the fix and the estimates are the ranking's for the same design and options.
    """
    from partsel.report import prediction_text

    with bad_input_exits(json_out=json_out):
        pred = _prediction(ctx, design, parts, basis, series, margin, not no_sim, not json_out)
    rows = pred.parts()
    if json_out:
        echo_json(rows)
        return
    for r in rows:
        typer.echo(prediction_text(r))
        typer.echo("")
    from partsel.api import CAUTION

    message(CAUTION)


def waveform(
    ctx: typer.Context,
    design: DesignArg,
    part: PartArg,
    out: Annotated[Path, typer.Option("--out", "-o", help="Output file, .png or .svg.")],
    basis: BasisOpt = None,
    series: SeriesOpt = None,
    margin: MarginOpt = None,
) -> None:
    """Plot ideal and predicted output (handover marked, with the fix) and the spectrum."""
    from partsel.plots import waveform_figure

    with bad_input_exits():
        if out.suffix.lower() not in (".png", ".svg"):
            raise InputError("the figure must be a .png or .svg file", file=str(out))
        output_file(out)  # before the simulation, not after it
        pred = _prediction(ctx, design, [part], basis, series, margin, True)
    try:
        path = waveform_figure(pred, 0, out)
    except OSError as exc:
        fail_bad_input(InputError(f"cannot write: {exc.strerror or exc}", file=str(out)))
    except ValueError as exc:  # nothing to plot: the simulation was stopped, and says why
        fail_bad_input(InputError(f"no figure written: {exc}", file=str(design)))
    message(f"wrote {path} ({pred.ranking.requirements.basis} basis)")


def deck(
    ctx: typer.Context,
    design: DesignArg,
    part: PartArg,
    out: Annotated[Path, typer.Option("--out", "-o", help="SPICE deck to write (.cir).")],
    basis: BasisOpt = None,
    with_fix: Annotated[
        bool, typer.Option("--with-fix", help="Add partsel's recommended fix resistor.")
    ] = False,
    periods: Annotated[
        int, typer.Option("--periods", help="Periods to simulate (1 to 100).", min=1, max=100)
    ] = 3,
    series: SeriesOpt = None,
    margin: MarginOpt = None,
) -> None:
    """Write a SPICE3 deck (ngspice runs it) of partsel's macro-model in the design's circuit."""
    from partsel.physics.spice import spice_deck

    with bad_input_exits():
        if periods < 1:
            raise InputError("periods must be at least 1", pointer="/periods")
        output_file(out)
        pred = _prediction(ctx, design, [part], basis, series, margin, False)
    rn = rp = None
    if with_fix:
        rn = float(pred.fix.r_neg_ohm[0])
        rp = float(pred.fix.r_pos_ohm[0])
        rn = None if math.isnan(rn) else rn
        rp = None if math.isnan(rp) else rp
        if rn is None and rp is None:
            message(f"note: {part} needs no fix resistor (or none works); deck without one")
    pn = str(pred.frame["part_number"].iloc[0])
    text = spice_deck(
        pred.stage,
        0,
        pred.design,
        r_to_neg_ohm=rn,
        r_to_pos_ohm=rp,
        periods=periods,
        title=f"partsel macro-model of {pn} in {pred.design.name}",
    )
    try:
        out.write_text(text, encoding="utf-8")
    except OSError as exc:
        fail_bad_input(InputError(f"cannot write: {exc.strerror or exc}", file=str(out)))
    message(f"wrote {out} ({pred.ranking.requirements.basis} basis)")


def register(app: typer.Typer) -> None:
    """Add the prediction commands to ``app``."""
    app.command("predict")(database_errors_exit(predict))
    app.command("waveform")(database_errors_exit(waveform))
    app.command("deck")(database_errors_exit(deck))
