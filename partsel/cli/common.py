"""Helpers shared by partsel's command modules: exit codes, consoles, JSON output, state.

Data goes to stdout, messages to stderr. Bad input ends a command with
:attr:`ExitCode.BAD_INPUT` after listing every problem (file, record, field pointer).
"""

from __future__ import annotations

import functools
import json
import math
import os
import sys
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from enum import IntEnum
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any, NoReturn, ParamSpec, TypeVar

import typer
from rich.console import Console
from rich.table import Table

from partsel.errors import InputError, Problem
from partsel.present import COMPILE_NOTICE

if TYPE_CHECKING:
    from sqlalchemy.engine import Engine

    from partsel.catalogue.history import ConflictError


class ExitCode(IntEnum):
    """Process exit codes of every partsel command."""

    OK = 0
    """Success, nothing to report."""
    FINDINGS = 1
    """The command ran and found something (e.g. a part fails a requirement)."""
    BAD_INPUT = 2
    """Bad input or usage: nothing was changed."""


JsonFlag = Annotated[bool, typer.Option("--json", help="Print JSON on stdout instead of text.")]
DesignArg = Annotated[Path, typer.Argument(help="Design file (.toml, .yaml or .json).")]
#: The one --basis option of every evaluating command (the rule: partsel.api.resolve_requirements).
BasisOpt = Annotated[
    str | None,
    typer.Option(
        "--basis",
        "-b",
        help="Value basis, overriding the design's: 'worst-case' (guaranteed values) or "
        "'typical' (default: the design's requirements.basis, else worst-case).",
    ),
]


@dataclass
class AppState:
    """What the main callback hands to every command (``ctx.obj``).

    ``db_url`` is the ``--db`` option or ``$PARTSEL_DB`` (None: the default file);
    ``read_only`` the ``--read-only`` flag; ``user`` the ``--user`` name recorded in the history
    (None: the OS user). The engine is opened on first use only, so commands that need no
    database never touch one.
    """

    db_url: str | None = None
    read_only: bool = False
    user: str | None = None
    _engine: Engine | None = field(default=None, repr=False)
    _session: Any = field(default=None, repr=False)

    def engine(self) -> Engine:
        """The catalogue engine (opened, migrated and, the first time, filled on first call)."""
        if self._engine is None:
            from partsel.catalogue import open_catalogue

            with bad_input_exits():
                self._engine = open_catalogue(self.db_url, read_only=self.read_only)
        return self._engine

    def writable_engine(self, what: str) -> Engine:
        """The engine for a command that changes the catalogue; exit 2 under ``--read-only``."""
        if self.read_only:
            message(
                f"error: partsel runs with --read-only: {what} would change the catalogue; "
                "nothing was changed."
            )
            raise typer.Exit(ExitCode.BAD_INPUT)
        return self.engine()

    def session(self) -> Any:
        """The evaluation session (:class:`partsel.api.Session`) over this invocation's
        catalogue: every prediction, ranking, vetting and BOM check goes through it."""
        if self._session is None:
            from partsel.api import Session

            self._session = Session(self.engine())
        return self._session

    def close(self) -> None:
        """Dispose of the engine, if one was opened."""
        self._session = None
        if self._engine is not None:
            self._engine.dispose()
            self._engine = None


def state(ctx: typer.Context) -> AppState:
    """The :class:`AppState` of this invocation (set by the main callback)."""
    obj = ctx.find_root().obj
    if not isinstance(obj, AppState):
        obj = AppState()
        ctx.find_root().obj = obj
    return obj


def engine(ctx: typer.Context) -> Engine:
    """The catalogue engine selected by ``--db`` / ``$PARTSEL_DB`` / the default file."""
    return state(ctx).engine()


def session(ctx: typer.Context) -> Any:
    """The :class:`partsel.api.Session` of this invocation (see :meth:`AppState.session`)."""
    return state(ctx).session()


def load_design(path: Path) -> Any:
    """Read a design file; its warnings (implausible values) go to stderr."""
    from partsel.api import Session

    design = Session.load_design(path)
    for w in design.warnings:
        message(f"warning: {w}")
    return design


def writable_engine(ctx: typer.Context, what: str) -> Engine:
    """The catalogue engine for a command that changes it (``what``: "load", "edit X")."""
    return state(ctx).writable_engine(what)


def user(ctx: typer.Context) -> str | None:
    """The ``--user`` / ``$PARTSEL_USER`` name for the history (None: the OS user)."""
    return state(ctx).user


def err_console() -> Console:
    """Console for messages (stderr)."""
    return Console(stderr=True, highlight=False)


def compile_notice() -> None:
    """Tell a person at a terminal why the first simulation on this machine takes long (numba
    compiles the stepper once: 9 to 12 s in ``tests/bench/bench_physics.py``, longer on a busy
    machine); nothing in pipes."""
    if err_console().is_terminal:
        message(COMPILE_NOTICE)


#: Width of tables written to a file or a pipe when ``COLUMNS`` does not say otherwise.
PIPE_WIDTH = 120


def out_console() -> Console:
    """Console for data meant for people (stdout): the terminal's width, else ``$COLUMNS``,
    else :data:`PIPE_WIDTH` for files and pipes."""
    con = Console(highlight=False)
    if not con.is_terminal and not os.environ.get("COLUMNS", "").strip().isdigit():
        con.width = PIPE_WIDTH
    return con


@contextmanager
def progress(total: int, what: str, *, enabled: bool = True) -> Iterator[Callable[[int], None]]:
    """A progress bar on stderr for work of ``total`` steps that may take over a second, shown
    only in a terminal (never in pipes, files or with --json: ``enabled=False``). Yields
    ``advance(n)``."""
    con = err_console()
    if not (enabled and con.is_terminal and total > 1):
        yield lambda n=1: None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeRemainingColumn

    with Progress(
        f"[bold]{what}", BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(), console=con,
        transient=True,
    ) as bar:  # fmt: skip
        task = bar.add_task(what, total=total)
        yield lambda n=1: bar.advance(task, n)


@contextmanager
def progress_to(what: str, *, enabled: bool = True) -> Iterator[Callable[[int, int], None]]:
    """Like :func:`progress`, for work that learns its size as it goes: yields
    ``update(done, total)``."""
    con = err_console()
    if not (enabled and con.is_terminal):
        yield lambda done, total: None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress

    with Progress(f"[bold]{what}", BarColumn(), MofNCompleteColumn(), console=con,
                  transient=True) as bar:  # fmt: skip
        task = bar.add_task(what, total=None)
        yield lambda done, total: bar.update(task, completed=done, total=total)


def data_table(*headers: str, title: str | None = None, keep: tuple[str, ...] = ()) -> Table:
    """A table for people whose headers are never cut: each column is at least as wide as the
    longest word of its header, and cells wrap (fold) instead of being cut; ``keep``: columns
    kept on one line (part numbers)."""
    t = Table(title=title, show_lines=False)
    for h in headers:
        widest = max((len(w) for w in h.split()), default=1)
        t.add_column(h, min_width=widest, overflow="fold", no_wrap=h in keep)
    return t


def message(text: str) -> None:
    """One plain message line on stderr."""
    typer.echo(text, err=True)


def _json_safe(value: Any) -> Any:
    if isinstance(value, float):
        return None if math.isnan(value) or math.isinf(value) else value
    if isinstance(value, dict):
        return {str(k): _json_safe(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json_safe(v) for v in value]
    if hasattr(value, "item") and callable(value.item):  # numpy scalars
        return _json_safe(value.item())
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return value


def echo_json(data: Any) -> None:
    """Write ``data`` as JSON on stdout (NaN becomes null; an empty result is ``[]``)."""
    sys.stdout.write(
        json.dumps(_json_safe(data), indent=2, ensure_ascii=False, allow_nan=False) + "\n"
    )


def problems_json(problems: list[Problem]) -> list[dict[str, Any]]:
    """Problems as JSON objects ``{file, record, pointer, message}``."""
    return [
        {"file": p.file, "record": p.record, "pointer": p.pointer, "message": p.message}
        for p in problems
    ]


def _conflict_text(exc: ConflictError) -> None:
    head, *rest = exc.problems
    message(f"error: {head}")
    for p in rest:
        where = f"field {p.pointer}: " if p.pointer else ""
        message(f"  {where}{p.message}")
    if exc.current_version:
        message(
            f"nothing was changed: read the part again (partsel show {exc.part_number} "
            f"--record), make your change on it and pass --expect-version {exc.current_version}."
        )
    else:
        message("nothing was changed.")


#: Commands that change the stored catalogue (a refusal says that nothing was changed).
CHANGING_COMMANDS = frozenset(
    {"load", "edit", "restore", "import-sheet", "characterise", "fit-capture"}
)


#: The subcommand of the running invocation (set by the main callback).
RUNNING: dict[str, str | None] = {"command": None}


def _changes_catalogue() -> bool:
    """The running command is one of :data:`CHANGING_COMMANDS`."""
    return RUNNING["command"] in CHANGING_COMMANDS


def fail_bad_input(exc: InputError, *, json_out: bool = False) -> NoReturn:
    """List every problem on stderr (and as JSON on stdout with ``json_out``); exit 2.

    A :class:`~partsel.catalogue.history.ConflictError` is shown as one block: the refusal,
    who changed the part since, and each changed field with its values then and now.
    """
    from partsel.catalogue.history import ConflictError

    if isinstance(exc, ConflictError):
        _conflict_text(exc)
    else:
        for p in exc.problems:
            message(f"error: {p}")
        n = len(exc.problems)
        tail = "; nothing was changed in the catalogue." if _changes_catalogue() else "."
        message(f"{n} problem{'s' if n != 1 else ''}{tail}")
    if json_out:
        echo_json(problems_json(exc.problems))
    raise typer.Exit(ExitCode.BAD_INPUT)


@contextmanager
def bad_input_exits(*, json_out: bool = False) -> Iterator[None]:
    """Turn an :class:`~partsel.errors.InputError` raised inside into exit code 2."""
    try:
        yield
    except InputError as exc:
        fail_bad_input(exc, json_out=json_out)


_P = ParamSpec("_P")
_R = TypeVar("_R")


def _database_errors() -> tuple[type[BaseException], ...]:
    """The database's failure types (imported when a command fails, not at start-up)."""
    from partsel.catalogue.db import DatabaseErrors

    return DatabaseErrors


def database_errors_exit(command: Callable[_P, _R]) -> Callable[_P, _R]:
    """Wrap a command so that a database refusal or failure ends it with a clear message, exit 2.

    E.g. a PostgreSQL role without SELECT on a table, or a server that went away; the message
    names the catalogue and the database's own first line of explanation.
    """

    @functools.wraps(command)
    def run(*args: _P.args, **kwargs: _P.kwargs) -> _R:
        try:
            return command(*args, **kwargs)
        except _database_errors() as exc:
            ctx = next((a for a in (*args, *kwargs.values()) if isinstance(a, typer.Context)), None)
            eng = state(ctx)._engine if ctx is not None else None
            from partsel.catalogue.db import engine_label

            where = engine_label(eng) if eng is not None else "database"
            message(f"error: the catalogue {where} failed: {_first_line(exc)}")
            message("nothing was changed.")
            raise typer.Exit(ExitCode.BAD_INPUT) from exc

    return run


def _first_line(exc: BaseException) -> str:
    orig = getattr(exc, "orig", None) or exc
    lines = str(orig).strip().splitlines()
    return lines[0] if lines else type(orig).__name__
