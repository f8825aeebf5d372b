"""partsel's Python API: one evaluation session behind every command, screen and script.

A :class:`Session` holds the catalogue (an engine, read once into a cached part table) and
evaluates designs with one set of rules: the value basis, the fix series and the margin come
from the design file unless the caller overrides them, every part is judged by the solver's one
check registry, and each part gets one fix decision (rail, value and the rule behind it). The
command line, the terminal UI, substitute vetting, comparisons, BOM checks and exports all go
through a session, so that a part gets the same verdict, resistor and THD estimate wherever a
user looks.

Example::

    import partsel.api as ps

    with ps.Session() as s:                            # the default SQLite catalogue
        design = s.load_design("sample-catalog/designs/line-driver-5v.toml")
        ranking = s.rank(design)                       # the design's basis and limits
        pred = s.predict(design, ["BRQ-622"])          # same verdict and fix, plus simulation
        print(pred.parts()[0]["fix"]["rule"])

Every prediction is an estimate from partsel's behavioural macro-model: confirm it on the bench
or in a full transistor-level simulation, and follow your organisation's design rules where
safety is involved.
"""

from __future__ import annotations

import contextlib
import dataclasses
import json
import threading
from collections import OrderedDict
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from sqlalchemy.engine import Engine

from partsel.catalogue import open_catalogue, parts_frame, temperature_data
from partsel.design import load_design
from partsel.errors import InputError
from partsel.physics.circuit import Design
from partsel.physics.simulate import SimResult, default_steps, simulate
from partsel.physics.spectrum import DEFAULT_HARMONICS
from partsel.physics.stage import Basis, StageParams
from partsel.solver import PartTable, Ranking, Requirements
from partsel.solver import rank as solver_rank
from partsel.solver.export import prediction_dict
from partsel.solver.requirements import BASES, FIX_SERIES, YIELD_SAMPLES_RANGE
from partsel.solver.solve import FixInfo
from partsel.solver.solve import Prediction as ClosedPrediction

if TYPE_CHECKING:
    from partsel.solver.bom import BomReport
    from partsel.solver.spread import Board, CornerAnalysis, YieldAnalysis
    from partsel.solver.substitute import Comparison, Vetting

__all__ = [
    "CAUTION",
    "Prediction",
    "Session",
    "catalogue_frame",
    "check_bom",
    "compare_parts",
    "load_design",
    "open_catalogue",
    "predict",
    "rank",
    "select_parts",
    "vet_substitutes",
]

CAUTION = (
    "Estimates from partsel's behavioural macro-model, not a transistor-level model: confirm on "
    "the bench or in a full simulation, and follow your organisation's design rules where "
    "safety is involved."
)

#: Evaluations kept per session (design, options and part set).
EVALUATION_CACHE = 8


def catalogue_frame(catalogue: Engine | pd.DataFrame | str | None = None) -> pd.DataFrame:
    """The parts table: pass a frame through, read an engine, or open a URL (None: default)."""
    if isinstance(catalogue, pd.DataFrame):
        return catalogue
    if catalogue is None or isinstance(catalogue, str):
        engine = open_catalogue(catalogue)
        try:
            return parts_frame(engine)
        finally:
            engine.dispose()  # opened here, so closed here (no pooled connections left)
    return parts_frame(catalogue)


def select_parts(frame: pd.DataFrame, part_numbers: Sequence[str]) -> pd.DataFrame:
    """Rows of ``frame`` for ``part_numbers`` (case-insensitive), in the order asked.

    Raises :class:`InputError` naming every unknown part number.
    """
    key = frame["part_number"].astype(str).str.strip().str.casefold()
    index = {k: i for i, k in enumerate(key)}
    missing = [p for p in part_numbers if p.strip().casefold() not in index]
    if missing:
        raise InputError(
            "unknown part number(s): " + ", ".join(missing) + " (see `partsel list`)",
            pointer="/part_number",
        )
    return frame.iloc[[index[p.strip().casefold()] for p in part_numbers]].reset_index(drop=True)


def resolve_requirements(
    design: Design,
    *,
    basis: str | None = None,
    series: str | None = None,
    margin: float | None = None,
    conduction: str | None = None,
) -> Requirements:
    """The design's requirements with the caller's overrides: the one rule for the basis, the
    fix series and the margin of every door (the design's value unless overridden, then the
    default), each recorded with where it came from (:attr:`Requirements.origin`)."""
    req = Requirements.from_mapping(design.requirements, file=design.source, record=design.name)
    if basis is not None and basis not in BASES:
        raise InputError(f"unknown basis {basis!r}: use {' or '.join(BASES)}", pointer="/basis")
    if series is not None:
        series = series.upper()
        if series not in FIX_SERIES:
            raise InputError(
                f"unknown series {series!r}: use one of {', '.join(FIX_SERIES)}",
                pointer="/series",
            )
    if margin is not None and not 0.0 <= margin < 1.0:
        raise InputError(f"margin must lie in [0, 1), got {margin:g}", pointer="/margin")
    if conduction is not None and conduction not in ("no-change", "fix-allowed", "allowed"):
        raise InputError(f"unknown conduction mode {conduction!r}", pointer="/conduction")
    return req.override(
        basis=basis, fix_series=series, min_source_fraction=margin, conduction=conduction
    )


@dataclass(frozen=True)
class Prediction:
    """An evaluation of some parts in one design with their time-domain simulations.

    ``ranking`` is the solver's evaluation (the verdict, the fix and the closed-form estimates
    come from there); ``rows`` are the predicted parts' indices in it; ``sim`` and
    ``sim_fixed`` (with the recommended fix resistor fitted) hold those parts in that order.
    The views ``frame``, ``stage``, ``closed`` and ``fix`` follow the same order.
    """

    ranking: Ranking
    rows: np.ndarray
    sim: SimResult | None = None
    sim_fixed: SimResult | None = None

    @property
    def design(self) -> Design:
        return self.ranking.design

    @property
    def n(self) -> int:
        return int(self.rows.size)

    @property
    def frame(self) -> pd.DataFrame:
        """Catalogue rows of the predicted parts."""
        return self.ranking.table.frame.iloc[self.rows].reset_index(drop=True)

    @property
    def stage(self) -> StageParams:
        """Stage parameters of the predicted parts, with the stage current of the prediction
        (on the worst-case basis: the corner worst for the crossover)."""
        return simulation_stage(self.ranking, self.rows)

    @property
    def closed(self) -> ClosedPrediction:
        """The closed-form crossover prediction of the predicted parts."""
        return self.ranking.prediction.take(self.rows)

    @property
    def fix(self) -> FixInfo:
        """The fix of the predicted parts."""
        return self.ranking.fix.take(self.rows)

    def handover_marks(self, k: int, *, fixed: bool = False) -> list[tuple[float, float, str]]:
        """Where part ``k``'s simulation (``fixed``: the one with the fix fitted) changes
        conduction mode: (time from the record's start in ms, output level V, ``"handover"`` or
        ``"hand-back"``), one per edge the record shows. None for a biased stage (class AB /
        CMOS keeps both devices on), nor where there is no such simulation. The one rule of
        every figure (the terminal UI and ``predict --plot``)."""
        sim = self.sim_fixed if fixed else self.sim
        if sim is None or str(self.closed.conduction[k]) == "biased" or not sim.handover[k]:
            return []
        out = []
        for col, label in ((0, "handover"), (1, "hand-back")):
            t = float(sim.handover_edges_s[k, col])
            if np.isfinite(t):
                level = float(sim.handover_edge_levels_v[k, col])
                out.append(((t - float(sim.t_s[0])) * 1e3, level, label))
        return out

    def part(self, k: int) -> dict[str, Any]:
        """Predicted part ``k`` as the documented JSON (``data-schema/prediction.schema.json``)."""
        return prediction_dict(
            self.ranking, int(self.rows[k]), sim=self.sim, sim_fixed=self.sim_fixed, k=k
        )

    def parts(self) -> list[dict[str, Any]]:
        """Every predicted part as the documented JSON."""
        return [self.part(k) for k in range(self.n)]


@contextlib.contextmanager
def beyond_arithmetic(design: Design) -> Iterator[None]:
    """Turn a floating-point overflow of the physics into a message about the design: only a
    value far outside its plausible range (a signal at 1e300 Hz) gets there, and the design's
    plausibility warnings name it."""
    try:
        yield
    except (OverflowError, FloatingPointError) as exc:
        if design.warnings:
            raise InputError(
                "the design's values overflow double-precision arithmetic: "
                + "; ".join(design.warnings)
            ) from None
        raise InputError(
            f"the design's values overflow double-precision arithmetic ({exc}): check the "
            "values and their units",
            file=design.source,
        ) from None


#: Parts simulated per call when a caller follows the progress.
SIM_CHUNK = 16


def _simulate_chunks(
    stage: StageParams,
    design: Design,
    r_neg: np.ndarray | None,
    r_pos: np.ndarray | None,
    n_harmonics: int,
    progress: Callable[[int], None] | None,
) -> SimResult:
    """:func:`simulate` of every part, in chunks when ``progress`` follows it."""
    if progress is None or stage.n <= SIM_CHUNK:
        out = simulate(
            stage, design, r_to_neg_ohm=r_neg, r_to_pos_ohm=r_pos, n_harmonics=n_harmonics
        )
        if progress is not None:
            progress(stage.n)
        return out
    parts = []
    for start in range(0, stage.n, SIM_CHUNK):
        idx = np.arange(start, min(start + SIM_CHUNK, stage.n))
        parts.append(
            simulate(
                stage.take(idx),
                design,
                r_to_neg_ohm=None if r_neg is None else r_neg[idx],
                r_to_pos_ohm=None if r_pos is None else r_pos[idx],
                n_harmonics=n_harmonics,
                steps_per_period=default_steps(stage, design),
            )
        )
        progress(idx.size)
    return concat_results(parts)


#: Fields of a SimResult common to every part (the time axis and the ideal waveform).
_SHARED = frozenset({"t_s", "v_ideal", "n_record", "steps_per_period", "frequency_hz"})


def concat_results(parts: Sequence[SimResult]) -> SimResult:
    """Simulations of consecutive groups of parts (same design and steps) as one."""
    first = parts[0]
    kw: dict[str, Any] = {}
    for name in first.__dataclass_fields__:
        vals = [getattr(p, name) for p in parts]
        if name in _SHARED or not isinstance(vals[0], np.ndarray):
            kw[name] = vals[0]
        else:
            kw[name] = np.concatenate(vals, axis=0)
    return SimResult(**kw)


def simulation_stage(ranking: Ranking, rows: np.ndarray) -> StageParams:
    """Stage parameters of parts ``rows`` for a simulation: the ranking's basis, with the
    stage current its prediction used (the worst corner for the crossover on worst-case)."""
    st = ranking.table.stage(ranking.requirements.basis).take(rows)
    return st.replace(stage_current_a=ranking.prediction.stage_current_a[rows])


class Session:
    """One catalogue and one set of rules for every evaluation (see the module docstring).

    ``catalogue``: an engine, a database URL, a parts frame, or None (the default catalogue).
    The part table is read once and cached; :meth:`reload` reads it again after a change.
    A session that opened its engine itself disposes of it in :meth:`close`.
    """

    def __init__(
        self,
        catalogue: Engine | pd.DataFrame | str | None = None,
        *,
        read_only: bool = False,
    ) -> None:
        self._frame: pd.DataFrame | None = None
        self._temperature: dict[str, Any] = {}
        self._table: PartTable | None = None
        self._engine: Engine | None = None
        self._own_engine = False
        self._url: str | None = None
        self.read_only = read_only
        if isinstance(catalogue, pd.DataFrame):
            self._frame = catalogue
        elif isinstance(catalogue, Engine):
            self._engine = catalogue
        else:
            self._url = catalogue
        self._cache: OrderedDict[tuple[Any, ...], tuple[Design, Ranking]] = OrderedDict()
        self._lock = threading.RLock()

    # ---- catalogue ---------------------------------------------------------------------------
    @property
    def engine(self) -> Engine | None:
        """The catalogue engine (opened on first use; None for a session over a frame)."""
        if self._engine is None and self._frame is None:
            self._engine = open_catalogue(self._url, read_only=self.read_only)
            self._own_engine = True
        return self._engine

    @property
    def frame(self) -> pd.DataFrame:
        """The parts frame (read once)."""
        if self._frame is None:
            engine = self.engine
            assert engine is not None
            self._frame = parts_frame(engine)
            self._temperature = temperature_data(engine)
        return self._frame

    @property
    def table(self) -> PartTable:
        """The part table every evaluation uses (built once per catalogue read)."""
        with self._lock:
            if self._table is None:
                # a session over a frame has no stored records: no temperature data
                self._table = PartTable(self.frame, self._temperature)
            return self._table

    def reload(self) -> None:
        """Read the catalogue again (after a change) and forget cached evaluations."""
        if self._engine is not None:
            self._frame = None
        self._table = None
        self._cache.clear()

    def close(self) -> None:
        """Dispose of an engine this session opened."""
        if self._own_engine and self._engine is not None:
            self._engine.dispose()
            self._engine = None
            self._own_engine = False

    def __enter__(self) -> Session:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # ---- designs -----------------------------------------------------------------------------
    @staticmethod
    def load_design(design: Design | str | Path) -> Design:
        """A design from a file (TOML / YAML / JSON), or the design itself."""
        if isinstance(design, Design):
            return design
        return load_design(design)

    def requirements(self, design: Design, **options: Any) -> Requirements:
        """The design's requirements with overrides (``basis``, ``series``, ``margin``,
        ``conduction``), see :func:`resolve_requirements`."""
        return resolve_requirements(design, **options)

    # ---- evaluation --------------------------------------------------------------------------
    def evaluate(
        self,
        design: Design | str | Path,
        parts: Sequence[str] | None = None,
        *,
        basis: str | None = None,
        series: str | None = None,
        margin: float | None = None,
        conduction: str | None = None,
        hints: bool | None = None,
    ) -> Ranking:
        """The solver's evaluation of ``parts`` (None: the whole catalogue) in ``design``.

        A part's verdict, fix and estimates do not depend on which other parts are evaluated
        with it (only the score, rank and Pareto set do), so a prediction of a few parts
        agrees with the ranking of the whole catalogue. A full evaluation for the same design
        and options is reused when there is one.
        """
        design = self.load_design(design)
        req = resolve_requirements(
            design, basis=basis, series=series, margin=margin, conduction=conduction
        )
        full_key = self._key(design, req, None)
        if parts is None:
            return self._evaluated(full_key, design, req, self.table, hints is not False)
        rows = self.rows(parts)
        if full_key in self._cache:
            return self._cache[full_key][1]
        table = PartTable(
            self.table.frame.iloc[rows].reset_index(drop=True), self.table.temperature
        )
        return self._evaluated(
            self._key(design, req, tuple(int(x) for x in rows)), design, req, table, bool(hints)
        )

    def rank(self, design: Design | str | Path, **options: Any) -> Ranking:
        """Rank the whole catalogue for ``design`` (see :meth:`evaluate` for the options)."""
        return self.evaluate(design, None, **options)

    def rows(self, part_numbers: Sequence[str]) -> np.ndarray:
        """Indices of ``part_numbers`` in the part table (InputError for unknown ones)."""
        t = self.table
        index = {k: i for i, k in enumerate(t.part_key)}
        missing = [p for p in part_numbers if p.strip().casefold() not in index]
        if missing:
            raise InputError(
                "unknown part number(s): " + ", ".join(missing) + " (see `partsel list`)",
                pointer="/part_number",
            )
        return np.array([index[p.strip().casefold()] for p in part_numbers], dtype=int)

    def predict(
        self,
        design: Design | str | Path,
        parts: Sequence[str] | None = None,
        *,
        run_simulation: bool = True,
        simulate_fix: bool = True,
        n_harmonics: int = DEFAULT_HARMONICS,
        ranking: Ranking | None = None,
        progress: Callable[[int], None] | None = None,
        **options: Any,
    ) -> Prediction:
        """Predict ``parts`` (None: every part) in ``design``: the evaluation's verdict, fix
        and closed-form estimates, plus the time-domain simulation as designed and with the
        recommended fix resistor fitted. ``ranking``: an evaluation to take the parts from
        (the terminal UI passes its ranking); ``progress(n)``: called as parts are simulated
        (:data:`SIM_CHUNK` at a time)."""
        if ranking is None:
            ranking = self.evaluate(design, parts, **options)
        if parts is None:
            rows = np.arange(ranking.n)
        else:
            index = {k: i for i, k in enumerate(ranking.table.part_key)}
            missing = [p for p in parts if p.strip().casefold() not in index]
            if missing:
                raise InputError("unknown part number(s): " + ", ".join(missing))
            rows = np.array([index[p.strip().casefold()] for p in parts], dtype=int)
        sim = sim_fixed = None
        if run_simulation and rows.size:
            with beyond_arithmetic(ranking.design):
                sim, sim_fixed = self._simulations(
                    ranking, rows, simulate_fix, n_harmonics, progress
                )
        return Prediction(ranking, rows, sim, sim_fixed)

    @staticmethod
    def _simulations(
        ranking: Ranking,
        rows: np.ndarray,
        simulate_fix: bool,
        n_harmonics: int,
        progress: Callable[[int], None] | None,
    ) -> tuple[SimResult, SimResult | None]:
        """Simulations of parts ``rows`` as designed and (when asked and sized) with the fix."""
        sim_fixed = None
        stage = simulation_stage(ranking, rows)
        fix = ranking.fix.take(rows)
        with_fix = simulate_fix and bool(
            np.isfinite(fix.r_neg_ohm).any() or np.isfinite(fix.r_pos_ohm).any()
        )
        sim = _simulate_chunks(stage, ranking.design, None, None, n_harmonics, progress)
        if with_fix:
            sim_fixed = _simulate_chunks(
                stage, ranking.design, fix.r_neg_ohm, fix.r_pos_ohm, n_harmonics, progress
            )
        return sim, sim_fixed

    # ---- spread: corners and Monte Carlo yield ----------------------------------------------
    def spread_board(
        self, design: Design | str | Path, parts: Sequence[str] | None = None, **options: Any
    ) -> tuple[Ranking, Board]:
        """The evaluation of ``parts`` in ``design`` (None: the parts the ranking finds
        feasible, in rank order) and their spread model: the boards the corners and the yield
        are judged on, with the fix resistor fitted where the verdict applies it (the
        ranking's own rule, :func:`partsel.solver.spread.fix_of`)."""
        from partsel.solver.spread import board, fix_of

        design = self.load_design(design)
        ranking = self.evaluate(design, parts, **options)
        if parts is None:
            rows = ranking.order[np.isin(ranking.order, np.flatnonzero(ranking.feasible))]
        else:
            index = {k: i for i, k in enumerate(ranking.table.part_key)}
            rows = np.array([index[p.strip().casefold()] for p in parts], dtype=int)
        req = ranking.requirements
        b = board(ranking.table, rows, ranking.design, req, fix_of(ranking.fix, rows, req))
        return ranking, b

    def corners(self, design: Design | str | Path, part: str, **options: Any) -> CornerAnalysis:
        """The worst corner of every check of ``part`` in ``design``: every spread parameter
        (catalogue ranges, design tolerances, the fix resistor's tolerance, the ambient range)
        at the ends of its range (:func:`partsel.solver.spread.corners`; options as
        :meth:`evaluate`)."""
        from partsel.solver.spread import corners as _corners

        _, b = self.spread_board(design, [part], **options)
        with beyond_arithmetic(b.design):
            return _corners(b, 0)

    def spread_yield(
        self,
        design: Design | str | Path,
        parts: Sequence[str] | None = None,
        *,
        samples: int | None = None,
        seed: int | None = None,
        target: float | None = None,
        progress: Callable[[int], None] | None = None,
        **options: Any,
    ) -> YieldAnalysis:
        """The Monte Carlo yield of ``parts`` (None: the feasible parts) in ``design``:
        ``samples`` boards drawn with ``seed`` (default: the design's ``yield_samples`` and
        ``yield_seed``), and for a part with the fix the largest value of its series reaching
        ``target`` (:func:`partsel.solver.spread.analyse`; options as :meth:`evaluate`);
        ``progress(k)``: called with the boards judged as they are."""
        from partsel.solver.spread import analyse

        ranking, b = self.spread_board(design, parts, **options)
        req = ranking.requirements
        n = req.yield_samples if samples is None else int(samples)
        lo, hi = YIELD_SAMPLES_RANGE
        if not lo <= n <= hi:
            raise InputError(f"samples: from {lo} to {hi:,}, got {n}", pointer="/samples")
        if seed is not None and not 0 <= int(seed) < 2**63:
            raise InputError(f"seed: a whole number >= 0, got {seed}", pointer="/seed")
        if target is not None and not 0.0 < float(target) < 1.0:
            raise InputError(
                f"target: a yield above 0 and below 100 %, got {target:g}", pointer="/target"
            )
        with beyond_arithmetic(b.design):
            return analyse(
                b,
                n,
                req.yield_seed if seed is None else int(seed),
                target=target,
                series=req.fix_series,
                progress=progress,
            )

    # ---- substitutes, comparison, BOM --------------------------------------------------------
    def vet(
        self,
        incumbent: str,
        design: Design | str | Path | None = None,
        **kwargs: Any,
    ) -> Vetting:
        """Candidates to replace ``incumbent``, best verdict first, with their reasons; with a
        design, judged by the same checks and limits as the ranking (see
        :func:`partsel.solver.substitute.vet_substitutes` for the keyword arguments)."""
        from partsel.solver.substitute import vet_substitutes as _vet

        d = None if design is None else self.load_design(design)
        return _vet(self.table, incumbent, d, **kwargs)

    def compare(
        self,
        parts: Sequence[str],
        design: Design | str | Path | None = None,
        **kwargs: Any,
    ) -> Comparison:
        """Two to four parts side by side (optionally in ``design``)."""
        from partsel.solver.substitute import compare_parts as _compare

        d = None if design is None else self.load_design(design)
        return _compare(self.table, list(parts), d, **kwargs)

    def check_bom(
        self,
        bom: Any,
        design: Design | str | Path | None = None,
        **kwargs: Any,
    ) -> BomReport:
        """Check every line of a BOM (CSV path, bytes, stream or frame) against the catalogue
        and the makers' suffix rules; per-line design files are read with
        :func:`partsel.design.load_design`."""
        from partsel.catalogue import makers
        from partsel.solver.bom import check_bom as _check

        d = None if design is None else self.load_design(design)
        engine = self.engine
        maker_rows = makers(engine) if engine is not None else []
        kwargs.setdefault("design_loader", load_design)
        return _check(self.table, bom, maker_rows, d, **kwargs)

    # ---- internals ---------------------------------------------------------------------------
    @staticmethod
    def _key(design: Design, req: Requirements, rows: tuple[int, ...] | None) -> tuple[Any, ...]:
        """The cache key: what the evaluation depends on (the design's content, not the object:
        the UI's form rebuilds an equal design), the requirements and the parts."""
        content = repr(
            (
                design.name,
                design.supply,
                design.signal,
                design.closed_loop,
                design.load,
                design.t_ambient_min_c,
                design.t_ambient_max_c,
                design.channels_used,
                sorted(design.tolerances.items()),  # (the spread analysis draws them)
            )
        )
        return (content, json.dumps(req.to_mapping(), sort_keys=True, default=str), rows)

    def _evaluated(
        self,
        key: tuple[Any, ...],
        design: Design,
        req: Requirements,
        table: PartTable,
        hints: bool,
    ) -> Ranking:
        with self._lock:  # one evaluation at a time: a second caller takes the first's result
            hit = self._cache.get(key)
            if hit is not None and hit[1].table is table:
                self._cache.move_to_end(key)
                r = hit[1]
                return r if r.design is design else dataclasses.replace(r, design=design)
            with beyond_arithmetic(design):
                r = solver_rank(table, design, req, hints=hints)
            self._cache[key] = (design, r)
            while len(self._cache) > EVALUATION_CACHE:
                self._cache.popitem(last=False)
            return r


# ---- one-call helpers for scripts (each opens a session) -----------------------------------------


def predict(
    catalogue: Engine | pd.DataFrame | str | None,
    design: Design | str,
    part_numbers: Sequence[str] | None = None,
    **kwargs: Any,
) -> list[dict[str, Any]]:
    """Predict the named parts (all parts if None) in ``design``; the documented JSON of each
    (keyword arguments as :meth:`Session.predict`: ``basis``, ``series``, ``margin``,
    ``run_simulation``...)."""
    with Session(catalogue) as s:
        return s.predict(design, part_numbers, **kwargs).parts()


def rank(
    catalogue: Engine | pd.DataFrame | str | None,
    design: Design | str,
    *,
    basis: Basis | None = None,
) -> Ranking:
    """Rank every part of the catalogue for ``design`` against the design's requirements;
    ``basis`` overrides the design's value basis.

    ``partsel.solver.export.ranking_frame(r)`` and ``ranking_dict(r)`` turn the result into a
    pandas frame or the documented JSON.
    """
    with Session(catalogue) as s:
        return s.rank(design, basis=basis)


def vet_substitutes(
    catalogue: Engine | pd.DataFrame | str | None,
    incumbent: str,
    design: Design | str | None = None,
    **kwargs: Any,
) -> Vetting:
    """Candidates to replace ``incumbent`` (see :meth:`Session.vet`)."""
    with Session(catalogue) as s:
        return s.vet(incumbent, design, **kwargs)


def compare_parts(
    catalogue: Engine | pd.DataFrame | str | None,
    parts: Sequence[str],
    design: Design | str | None = None,
    **kwargs: Any,
) -> Comparison:
    """Two to four parts side by side (see :meth:`Session.compare`)."""
    with Session(catalogue) as s:
        return s.compare(parts, design, **kwargs)


def check_bom(
    catalogue: Engine | str | None,
    bom: Any,
    design: Design | str | None = None,
    **kwargs: Any,
) -> BomReport:
    """Check every line of a BOM (see :meth:`Session.check_bom`)."""
    with Session(catalogue) as s:
        return s.check_bom(bom, design, **kwargs)
