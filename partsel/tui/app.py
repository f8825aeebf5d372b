"""partsel's terminal UI: the app, its workers and the screens' shared state.

The app is a thin shell over the same evaluation session as the command line
(:class:`partsel.api.Session`: the part table read once, the design's basis and limits, the
ranking, the prediction with its simulation, vetting and comparison), the solver's export
writer (:mod:`partsel.solver.export`) and the catalogue store. No physics, checks or SQL here.

Ranking runs in a thread worker (``exclusive=True``: a newer design cancels a stale run,
whose result is then dropped); so does the simulation of the highlighted part, which is cached
per design and part.
"""

from __future__ import annotations

import json
import threading
import time
from collections import OrderedDict
from collections.abc import Iterable
from pathlib import Path
from typing import Any, ClassVar

import pandas as pd
from sqlalchemy.engine import Engine
from textual import work
from textual.app import App, SystemCommand
from textual.binding import Binding, BindingType
from textual.screen import Screen
from textual.worker import get_current_worker

from partsel.api import Prediction, Session
from partsel.catalogue import find_sample_catalogue, get_part
from partsel.design import design_from_mapping, load_design
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.physics.stepper_layout import COMPILE_LISTENERS
from partsel.present import COMPILE_NOTICE
from partsel.solver import PartTable, Ranking
from partsel.solver.export import ranking_dict, ranking_frame
from partsel.tui.rows import RankingView
from partsel.tui.theme import PARTSEL_THEME

#: Design used when neither a design nor the sample designs are at hand.
FALLBACK_DESIGN: dict[str, Any] = {
    "name": "5 V line driver, AC-coupled into 2 kohm",
    "supply": {"positive": "5 V", "negative": "0 V"},
    "signal": {"bias": "2.5 V", "amplitude": "0.5 V", "frequency": "1 kHz"},
    "amplifier": {"configuration": "non-inverting", "gain": 2, "feedback_resistor": "10 kohm"},
    "load": {
        "resistance": "2 kohm",
        "coupling": "ac",
        "coupling_capacitor": "10 uF",
        "capacitance": "220 pF",
    },
}
#: The sample design opened first.
FIRST_SAMPLE = "line-driver-5v.toml"
#: Seconds the highlight must rest on a part before its simulation starts.
SIMULATION_DELAY_S = 0.25
#: Simulations kept (per design, basis and parts).
SIMULATION_CACHE = 32


def sample_designs(sample_dir: Path | None = None) -> list[Path]:
    """The example design files (``sample-catalog/designs``), sorted by name."""
    if sample_dir is None:
        parts = find_sample_catalogue()
        if parts is None:
            return []
        sample_dir = parts.parent / "designs"
    if not sample_dir.is_dir():
        return []
    return sorted(p for p in sample_dir.iterdir() if p.suffix in (".toml", ".yaml", ".json"))


class PartselApp(App[None]):
    """Describe the circuit, see the ranked parts and their predicted waveforms."""

    CSS_PATH = "partsel.tcss"
    TITLE = "partsel"
    SUB_TITLE = "op-amps for single-supply designs"
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding(
            "f1", "help", "Help", id="help", priority=True, tooltip="Keys and panes of partsel"
        ),
        Binding(
            "f8",
            "screenshot_svg",
            "Screenshot",
            id="screenshot",
            priority=True,
            show=False,
            tooltip="Save the screen as an SVG file",
        ),
        Binding(
            "ctrl+q", "quit", "Quit", id="quit", priority=True, show=False, tooltip="Leave partsel"
        ),
        Binding(
            "ctrl+p",
            "command_palette",
            "Actions",
            id="actions",
            priority=True,
            show=False,
            tooltip="Every action of this screen by name, with its key",
        ),
    ]

    def __init__(
        self,
        engine: Engine | None = None,
        *,
        frame: pd.DataFrame | None = None,
        design: Design | str | Path | None = None,
        simulate: bool = True,
        sample_dir: Path | None = None,
        work_dir: Path | None = None,
        user: str | None = None,
    ) -> None:
        """``engine``: the catalogue (None: ``frame`` only, read-only); ``design``: the first
        design (default: the sample line driver); ``simulate``: run the time-domain simulation
        for the part view; ``work_dir``: where file dialogs start (default: the current one);
        ``user``: the name recorded in the catalogue history for edits (default: the OS user)."""
        super().__init__()
        if engine is None and frame is None:
            raise ValueError("give a catalogue engine or a parts frame")
        self.engine = engine
        self.session = Session(frame if frame is not None else engine)
        self.simulate = simulate
        self.samples = sample_designs(sample_dir)
        self.work_dir = work_dir or Path.cwd()
        self.user = user
        self.initial_design = self._first_design(design)
        # the compile notice: heard in any thread, shown once the app is mounted
        self._compile_lock = threading.Lock()
        self._compile_heard = False
        self._notices_on = False
        COMPILE_LISTENERS.append(self._heard_compile)
        threading.Thread(target=self._prefetch, name="partsel-prefetch", daemon=True).start()
        self.design: Design | None = None
        self.design_gen = 0
        self.ranking: Ranking | None = None
        self.view: RankingView | None = None
        self.marked: list[str] = []
        self.rank_count = 0
        self.last_latency_s: float | None = None
        self._sims: OrderedDict[tuple[Any, ...], Prediction] = OrderedDict()
        self._records: dict[str, dict[str, Any] | None] = {}
        self._inflight: dict[str, tuple[Any, ...]] = {}

    @property
    def frame(self) -> pd.DataFrame:
        """The parts frame of the session."""
        return self.session.frame

    @property
    def table(self) -> PartTable:
        """The part table of the session (every ranking uses it)."""
        return self.session.table

    def _first_design(self, design: Design | str | Path | None) -> Design:
        if isinstance(design, Design):
            return design
        if design is not None:
            return load_design(design)
        first = [p for p in self.samples if p.name == FIRST_SAMPLE] or self.samples[:1]
        if first:
            return load_design(first[0])
        return design_from_mapping(FALLBACK_DESIGN)

    # ---- screens ------------------------------------------------------------------------------
    def get_default_screen(self) -> Screen:
        from partsel.tui.screens.main import MainScreen

        return MainScreen()

    def on_mount(self) -> None:
        self.register_theme(PARTSEL_THEME)
        self.theme = PARTSEL_THEME.name
        self._compile_news(mounted=True)

    def on_unmount(self) -> None:
        if self._heard_compile in COMPILE_LISTENERS:
            COMPILE_LISTENERS.remove(self._heard_compile)

    def _heard_compile(self) -> None:
        """A simulation is about to compile the stepper (called in any thread)."""
        self._compile_news(heard=True)

    def _compile_news(self, *, heard: bool = False, mounted: bool = False) -> None:
        """Note a compile heard and/or the app mounted; say so once both hold (now, if the
        compile comes after the mount; at the mount, if it came before)."""
        with self._compile_lock:
            self._compile_heard |= heard
            self._notices_on |= mounted
            show = self._compile_heard and self._notices_on
        if show:
            # shown for a minute: the compile takes 10 s to a minute (bench_physics.py)
            self.notify(COMPILE_NOTICE, title="please wait", timeout=60, markup=False)

    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        """The actions list: partsel's own actions with a key on the current screen, plus the
        screen's extra commands (none of the framework's generic entries)."""
        from partsel.tui.palette import actions

        return actions(self, screen)

    def action_command_palette(self) -> None:
        """Open the actions list (once: a second ctrl+p does not stack another)."""
        from partsel.tui.palette import ActionPalette

        if self.use_command_palette and not ActionPalette.is_open(self):
            self.push_screen(ActionPalette())

    def action_help(self) -> None:
        from partsel.tui.screens.help import HelpScreen

        if not isinstance(self.screen, HelpScreen):
            self.push_screen(HelpScreen())

    def action_screenshot_svg(self) -> None:
        """Take the screenshot now (so that the file dialog is not on it), then ask where to
        write it; while that dialog is open, F8 does nothing more."""
        from partsel.tui.screens.dialogs import PathDialog
        from partsel.tui.screenshot import screen_svg

        if any(getattr(s, "purpose", None) == "screenshot" for s in self.screen_stack):
            self.notify("the screenshot is waiting for a file name", timeout=2)
            return
        svg = screen_svg(self, self.screenshot_title())

        def done(path: str | None) -> None:
            if path:
                self.write_screenshot(Path(path), svg)

        self.push_screen(
            PathDialog(
                "Save the screenshot (SVG)",
                str(self.work_dir / "partsel-screen.svg"),
                purpose="screenshot",
                base=self.work_dir,
            ),
            done,
        )

    def screenshot_title(self) -> str:
        """Title bar of a screenshot: partsel, the design's name and today's date."""
        from partsel.tui.screenshot import screenshot_title

        return screenshot_title(self.design.name if self.design is not None else None)

    def write_screenshot(self, path: Path, svg: str) -> Path | None:
        """Write a screenshot taken earlier (``svg``) to ``path`` (None and a message on
        failure)."""
        path = self._resolve(path)
        try:
            path.write_text(svg, encoding="utf-8")
        except OSError as exc:
            self.notify(
                str(exc), title="screenshot not written", severity="error", timeout=10, markup=False
            )
            return None
        self.notify(f"screenshot written to {path}", markup=False)
        return path

    def _resolve(self, path: Path) -> Path:
        return path if path.is_absolute() else self.work_dir / path

    # ---- the design and its ranking -----------------------------------------------------------
    def set_design(self, design: Design) -> None:
        """A new valid design: rank it (the previous ranking stays until this one is done)."""
        self.design = design
        self.design_gen += 1
        self.request_rank()

    def request_rank(self) -> None:
        """Rank the current design on the current catalogue in a worker."""
        if self.design is not None:
            self._rank(self.design, self.design_gen, time.perf_counter())

    def _prefetch(self) -> None:
        """Read the catalogue and rank the first design while the screens are being built (the
        session keeps the result; the first ranking request then finds it ready)."""
        try:
            self.session.rank(self.initial_design)
        except Exception:  # the request made from the screen reports any failure itself
            return

    @work(thread=True, exclusive=True, group="rank", exit_on_error=False)
    def _rank(self, design: Design, gen: int, t0: float) -> None:
        worker = get_current_worker()
        try:
            r = self.session.rank(design)
            view = RankingView(r)
        except Exception as exc:  # an unexpected failure must not take the UI down
            if not worker.is_cancelled:
                self.call_from_thread(self._rank_failed, exc)
            return
        if not worker.is_cancelled:
            self.call_from_thread(self._ranked, r, view, gen, t0)

    def _main_screens(self) -> list[Any]:
        """The main screens on the stack (the ones that show the ranking)."""
        from partsel.tui.screens.main import MainScreen

        return [s for s in self.screen_stack if isinstance(s, MainScreen)]

    def _rank_failed(self, exc: Exception) -> None:
        self.notify(f"ranking failed: {exc}", severity="error", markup=False)
        for screen in self._main_screens():
            screen.ranking_failed()

    def _ranked(self, r: Ranking, view: RankingView, gen: int, t0: float) -> None:
        if gen != self.design_gen or r.table is not self.table:
            return  # a newer design or catalogue is on its way
        self.ranking = r
        self.view = view
        for screen in self._main_screens():
            screen.show_ranking(view)
        self.rank_count += 1
        self.last_latency_s = time.perf_counter() - t0

    # ---- parts --------------------------------------------------------------------------------
    def record(self, part_number: str) -> dict[str, Any] | None:
        """The catalogue record of a part as given (None without a database)."""
        if self.engine is None:
            return None
        if part_number not in self._records:
            stored = get_part(self.engine, part_number)
            self._records[part_number] = stored.record if stored is not None else None
        return self._records[part_number]

    def prediction_key(self, part_numbers: tuple[str, ...]) -> tuple[Any, ...]:
        return (self.design_gen, part_numbers)

    def cached_prediction(self, part_numbers: tuple[str, ...]) -> Prediction | None:
        return self._sims.get(self.prediction_key(part_numbers))

    def request_simulation(self, part_numbers: tuple[str, ...], group: str = "simulate") -> None:
        """Simulate ``part_numbers`` in the current design (cached); the views that show them
        get :meth:`_simulated`."""
        if not self.simulate or self.design is None or self.ranking is None:
            return
        key = self.prediction_key(part_numbers)
        if key in self._sims:
            self._deliver(key, self._sims[key])
            return
        if key == self._inflight.get(group):
            return  # already on its way
        self._inflight[group] = key
        self._simulate(key, part_numbers, self.ranking, group=group)

    @work(thread=True, exclusive=True, group="simulate", exit_on_error=False)
    def _simulate_worker(
        self, key: tuple[Any, ...], part_numbers: tuple[str, ...], ranking: Ranking
    ) -> None:
        worker = get_current_worker()
        time.sleep(SIMULATION_DELAY_S)
        if worker.is_cancelled:
            return
        try:
            pred = self.session.predict(ranking.design, list(part_numbers), ranking=ranking)
        except Exception as exc:  # shown to the user; the UI stays up
            self.call_from_thread(self._forget, key)
            if not worker.is_cancelled:
                self.call_from_thread(self.notify, f"simulation failed: {exc}", severity="error")
            return
        # a superseded run that finished is still right for its own key: keep it in the cache
        self.call_from_thread(self._simulated, key, pred)

    @work(thread=True, exclusive=True, group="compare", exit_on_error=False)
    def _compare_worker(
        self, key: tuple[Any, ...], part_numbers: tuple[str, ...], ranking: Ranking
    ) -> None:
        worker = get_current_worker()
        try:
            pred = self.session.predict(
                ranking.design, list(part_numbers), ranking=ranking, simulate_fix=False
            )
        except Exception as exc:
            if not worker.is_cancelled:
                self.call_from_thread(self.notify, f"simulation failed: {exc}", severity="error")
            return
        if not worker.is_cancelled:
            self.call_from_thread(self._simulated, key, pred)

    def _simulate(
        self, key: tuple[Any, ...], pns: tuple[str, ...], ranking: Ranking, group: str
    ) -> None:
        if group == "compare":
            self._compare_worker(key, pns, ranking)
        else:
            self._simulate_worker(key, pns, ranking)

    def _forget(self, key: tuple[Any, ...]) -> None:
        """``key`` is no longer being simulated."""
        for group, k in list(self._inflight.items()):
            if k == key:
                del self._inflight[group]

    def _simulated(self, key: tuple[Any, ...], pred: Prediction) -> None:
        self._forget(key)
        self._sims[key] = pred
        while len(self._sims) > SIMULATION_CACHE:
            self._sims.popitem(last=False)
        if key[0] == self.design_gen:
            self._deliver(key, pred)

    def _deliver(self, key: tuple[Any, ...], pred: Prediction) -> None:
        for screen in self.screen_stack:
            receive = getattr(screen, "show_simulation", None)
            if receive is not None:
                receive(key[1], pred)

    # ---- marks, files, catalogue --------------------------------------------------------------
    def toggle_mark(self, part_number: str) -> None:
        """Mark or unmark a part for the compare view (at most four; the oldest drops out)."""
        if part_number in self.marked:
            self.marked.remove(part_number)
        else:
            self.marked.append(part_number)
            if len(self.marked) > 4:
                self.marked.pop(0)

    def export_ranking(self, path: Path) -> Path:
        """Write the last ranking to ``path`` (``.csv`` or ``.json``) with the solver's writer."""
        if self.ranking is None:
            raise InputError("no ranking yet", file=str(path))
        path = self._resolve(path)
        suffix = path.suffix.lower()
        if suffix == ".csv":
            from partsel.io.csvout import write_frame  # the one CSV writer (inert cells)

            write_frame(ranking_frame(self.ranking), path)
        elif suffix == ".json":
            text = json.dumps(
                ranking_dict(self.ranking), indent=2, ensure_ascii=False, allow_nan=False
            )
            path.write_text(text + "\n", encoding="utf-8")
        else:
            raise InputError("use a .csv or .json file name", file=str(path))
        return path

    def reload_catalogue(self) -> None:
        """Read the catalogue again (after an edit) and rank the design on it."""
        if self.engine is None:
            return
        self.session.reload()
        self._sims.clear()
        self._records.clear()
        self.design_gen += 1
        self.request_rank()
