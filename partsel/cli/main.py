"""The ``partsel`` command: main callback (``--db``, ``--read-only``, ``--user``) and the
registered command modules.

Each command module has a ``register(app)`` function that adds its commands; add a module to
:data:`COMMAND_MODULES` to register it. Commands get the database through
``partsel.cli.common.engine(ctx)``.
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Annotated

import typer

from partsel.cli import (
    catalogue_cmds,
    characterise_cmds,
    predict_cmds,
    rank_cmds,
    spread_cmds,
    vet_cmds,
)
from partsel.cli.common import RUNNING, AppState, ExitCode, compile_notice
from partsel.physics.stepper_layout import COMPILE_LISTENERS

COMPILE_LISTENERS.append(compile_notice)  # once, when the command line is loaded

app = typer.Typer(
    name="partsel",
    help="Choose op-amps for single-supply designs: catalogue, prediction and ranking.",
    add_completion=False,
    pretty_exceptions_show_locals=False,
)

#: Command modules; each has ``register(app: typer.Typer) -> None``.
COMMAND_MODULES = (
    catalogue_cmds,
    predict_cmds,
    rank_cmds,
    vet_cmds,
    spread_cmds,
    characterise_cmds,
)


@app.callback(invoke_without_command=True)
def main(
    ctx: typer.Context,
    db: Annotated[
        str | None,
        typer.Option(
            "--db",
            metavar="URL",
            envvar="PARTSEL_DB",
            help="Catalogue database URL (SQLAlchemy), e.g. sqlite:///parts.sqlite or "
            "postgresql+psycopg://USER@HOST/DATABASE. "
            "Default: catalogue.sqlite in the user data folder.",
        ),
    ] = None,
    read_only: Annotated[
        bool,
        typer.Option(
            "--read-only",
            envvar="PARTSEL_READ_ONLY",
            help="Only read the catalogue: commands that would change it stop with exit "
            "code 2 (a PostgreSQL role with SELECT rights only is enough).",
        ),
    ] = False,
    user: Annotated[
        str | None,
        typer.Option(
            "--user",
            metavar="NAME",
            envvar="PARTSEL_USER",
            help="Name recorded in the catalogue history for changes. Default: the OS user.",
        ),
    ] = None,
) -> None:
    """Choose op-amps for single-supply designs."""
    RUNNING["command"] = ctx.invoked_subcommand
    st = AppState(db_url=db, read_only=read_only, user=user)
    ctx.obj = st
    ctx.call_on_close(st.close)
    if ctx.invoked_subcommand is None:
        if sys.stdin.isatty() and sys.stdout.isatty():
            # In a terminal: the UI on the selected catalogue. Scripts and CI (no terminal)
            # get the help instead, so they never wait on a screen.
            from partsel.tui import run_tui

            run_tui(st.engine(), user=user)
            raise typer.Exit(ExitCode.OK)
        typer.echo(ctx.get_help())
        raise typer.Exit(ExitCode.OK)


@app.command("ui")
def ui(
    ctx: typer.Context,
    design: Annotated[
        Path | None,
        typer.Argument(
            help="Design file to open (.toml, .yaml or .json). Default: the sample line driver."
        ),
    ] = None,
) -> None:
    """Open the terminal UI on the catalogue, with DESIGN in the form and ranked.

    A design file that cannot be read: its problems, exit code 2 and no UI (so without a tty).
    """
    from partsel.cli.common import bad_input_exits, message, state

    opened = None
    if design is not None:
        from partsel.design import load_design

        with bad_input_exits():
            opened = load_design(design)
    if not (sys.stdin.isatty() and sys.stdout.isatty()):
        message("error: partsel ui needs a terminal (use partsel rank DESIGN in scripts).")
        raise typer.Exit(ExitCode.BAD_INPUT)
    from partsel.tui import run_tui

    st = state(ctx)
    run_tui(st.engine(), opened, user=st.user)
    raise typer.Exit(ExitCode.OK)


for _module in COMMAND_MODULES:
    _module.register(app)


def run() -> None:
    """Entry point of the ``partsel`` script."""
    app()


if __name__ == "__main__":
    run()
