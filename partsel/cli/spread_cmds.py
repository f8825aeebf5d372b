"""Spread commands: ``corners`` (the worst corner of every check of one part) and ``yield``
(the Monte Carlo yield of parts in a design), thin shells over
:meth:`partsel.api.Session.corners` and :meth:`partsel.api.Session.spread_yield`.

Exit codes: ``corners`` 0 when every check passes at its worst corner, 1 when one fails;
``yield`` 0 when every part reaches the target yield (``--target``, else the design's
``min_yield``; 0 without either), 1 when one does not; both 2 for bad input.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from partsel.cli.common import (
    BasisOpt,
    DesignArg,
    ExitCode,
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

#: Parts plotted by ``yield --plot`` at most (one row of histograms each).
PLOT_PARTS = 6


def _assumptions() -> None:
    from partsel.solver.spread.export import ASSUMPTIONS, CAUTION

    message("assumptions: " + "; ".join(ASSUMPTIONS))
    message(CAUTION)


def corners(
    ctx: typer.Context,
    design: DesignArg,
    part: Annotated[str, typer.Argument(help="Part number.")],
    basis: BasisOpt = None,
    json_out: JsonFlag = False,
) -> None:
    """The worst corner of every check of a part: each spread parameter at the ends of its
    range (catalogue min/max, design tolerances, fix resistor, ambient)."""
    from partsel.solver.spread.export import corners_dict
    from partsel.spread_report import corners_text, design_units

    with bad_input_exits(json_out=json_out):
        d = load_design(design)
        a = session(ctx).corners(d, part, basis=basis)
    if json_out:
        echo_json(corners_dict(a, design_name=d.name, units=design_units()))
    else:
        typer.echo(corners_text(a, d.name))
        _assumptions()
    raise typer.Exit(ExitCode.OK if a.passes else ExitCode.FINDINGS)


def _target(text: str | None) -> float | None:
    if text is None:
        return None
    from partsel.units import parse_quantity

    return float(parse_quantity(text, "dimensionless", field="/target"))


def yield_(
    ctx: typer.Context,
    design: DesignArg,
    parts: Annotated[
        list[str] | None,
        typer.Argument(help="Part numbers (default: the parts the ranking finds feasible)."),
    ] = None,
    samples: Annotated[
        int | None,
        typer.Option(
            "-n",
            "--samples",
            help="Boards per part (default: the design's yield_samples, else 10,000).",
        ),
    ] = None,
    seed: Annotated[
        int | None,
        typer.Option("--seed", help="Seed of the draws (default: the design's yield_seed)."),
    ] = None,
    target: Annotated[
        str | None,
        typer.Option(
            "--target",
            help="Yield to reach, e.g. '99.9 %' (default: the design's min_yield); with the "
            "fix, the largest value of its series reaching it is searched.",
        ),
    ] = None,
    plot: Annotated[
        Path | None,
        typer.Option("--plot", help="Write histograms of THD and handover level (.png/.svg)."),
    ] = None,
    basis: BasisOpt = None,
    json_out: JsonFlag = False,
) -> None:
    """Monte Carlo yield of parts in a design: the fraction of boards meeting every check."""
    from partsel.solver.spread.export import yield_dict
    from partsel.spread_report import yield_text

    with bad_input_exits(json_out=json_out):
        if plot is not None:
            if plot.suffix.lower() not in (".png", ".svg"):
                raise InputError("the figure must be a .png or .svg file", file=str(plot))
            output_file(plot)
        goal = _target(target)
        d = load_design(design)
        s = session(ctx)
        req = s.requirements(d, basis=basis)
        if goal is None:
            goal = req.limit("min_yield")
        n = req.yield_samples if samples is None else samples
        count = len(parts) if parts else int(s.evaluate(d, basis=basis).feasible.sum())
        with progress(count * n, "drawing boards", enabled=not json_out) as advance:
            y = s.spread_yield(
                d, parts or None, samples=samples, seed=seed, target=goal, basis=basis,
                progress=advance,
            )  # fmt: skip
    if plot is not None:
        from partsel.plots import spread_figure

        try:
            spread_figure(y, plot, design_name=d.name, limit=PLOT_PARTS)
        except OSError as exc:
            fail_bad_input(InputError(f"cannot write: {exc.strerror or exc}", file=str(plot)))
    if json_out:
        echo_json(yield_dict(y, design_name=d.name))
    else:
        typer.echo(yield_text(y, d.name, goal))
        _assumptions()
    if plot is not None:
        message(f"wrote {plot}")
    missed = goal is not None and any(p.value < goal for p in y.parts)
    raise typer.Exit(ExitCode.FINDINGS if missed else ExitCode.OK)


def register(app: typer.Typer) -> None:
    """Add the spread commands to ``app``."""
    app.command("corners")(database_errors_exit(corners))
    app.command("yield")(database_errors_exit(yield_))
