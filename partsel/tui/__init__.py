"""partsel's terminal UI (Textual): describe the circuit, see the ranked parts and their predicted
waveforms. The only package of partsel that imports textual.

Run it with ``partsel`` (no arguments, in a terminal) or from Python::

    from partsel.catalogue import open_catalogue
    from partsel.tui import run_tui

    run_tui(open_catalogue())
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from sqlalchemy.engine import Engine

    from partsel.physics.circuit import Design
    from partsel.tui.app import PartselApp

__all__ = ["make_app", "run_tui"]


def make_app(
    engine: Engine, design: Design | str | Path | None = None, **kwargs: object
) -> PartselApp:
    """The app on ``engine`` (the first design: ``design``, else the sample line driver)."""
    from partsel.tui.app import PartselApp

    return PartselApp(engine, design=design, **kwargs)  # type: ignore[arg-type]


def run_tui(
    engine: Engine, design: Design | str | Path | None = None, user: str | None = None
) -> None:
    """Run the terminal UI on ``engine`` until the user quits, with ``design`` (a design or
    its file; default the sample line driver) in the form (``user``: the name recorded in the
    catalogue history for edits made in the UI; default the OS user)."""
    make_app(engine, design, user=user).run()
