"""partsel's Python API: the functions the command line, the terminal UI and scripts call.

Example::

    import partsel.api as ps

    engine = ps.open_catalogue()                       # default SQLite catalogue
    design = ps.load_design("sample-catalog/designs/line-driver-5v.toml")
    preds = ps.predict(engine, design, ["BR-2904"], basis="worst-case")
    print(preds[0].to_dict()["crossover"])

Every prediction is an estimate from partsel's behavioural macro-model: confirm it on the bench
or in a full transistor-level simulation, and follow your organisation's design rules where
safety is involved.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from sqlalchemy.engine import Engine

from partsel.catalogue import open_catalogue, parts_frame
from partsel.design import load_design
from partsel.errors import InputError
from partsel.physics.analysis import ClosedForm, predict_closed_form
from partsel.physics.circuit import Design
from partsel.physics.fix import FixResult, size_fix
from partsel.physics.simulate import SimResult, simulate
from partsel.physics.spectrum import DEFAULT_HARMONICS
from partsel.physics.stage import Basis, StageParams

if TYPE_CHECKING:
    from partsel.solver import Ranking
    from partsel.solver.bom import BomReport
    from partsel.solver.substitute import Comparison, Vetting

__all__ = [
    "CAUTION",
    "PartPrediction",
    "Prediction",
    "catalogue_frame",
    "check_bom",
    "compare_parts",
    "load_design",
    "open_catalogue",
    "predict",
    "predict_frame",
    "rank",
    "select_parts",
    "stage_params",
    "vet_substitutes",
]

CAUTION = (
    "Estimates from partsel's behavioural macro-model, not a transistor-level model: confirm on "
    "the bench or in a full simulation, and follow your organisation's design rules where "
    "safety is involved."
)


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
    key = frame["part_number"].astype(str).str.upper()
    index = {k: i for i, k in enumerate(key)}
    missing = [p for p in part_numbers if p.upper() not in index]
    if missing:
        raise InputError("unknown part number(s): " + ", ".join(missing), pointer="/part_number")
    return frame.iloc[[index[p.upper()] for p in part_numbers]].reset_index(drop=True)


def stage_params(frame: pd.DataFrame, basis: Basis = "typical") -> StageParams:
    """Physics inputs of every row of ``frame`` on ``basis``."""
    if basis not in ("typical", "worst-case"):
        raise InputError(
            f"unknown basis {basis!r}: use 'typical' or 'worst-case'", pointer="/basis"
        )
    return StageParams.from_columns(frame, basis)


@dataclass(frozen=True)
class Prediction:
    """Predictions for a set of parts in one design (arrays along the part axis)."""

    design: Design
    frame: pd.DataFrame
    stage: StageParams
    closed: ClosedForm
    fix: FixResult
    sim: SimResult | None = None
    sim_fixed: SimResult | None = None

    def part(self, k: int) -> PartPrediction:
        """The prediction for the k-th part as plain data."""
        return PartPrediction(self, k)

    def parts(self) -> list[PartPrediction]:
        """All parts as plain data."""
        return [PartPrediction(self, k) for k in range(self.stage.n)]


def _f(x: Any) -> float | None:
    """A JSON-friendly float (None for NaN / inf)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


@dataclass(frozen=True)
class PartPrediction:
    """One part's prediction in one design; ``to_dict()`` gives the documented JSON form
    (``data-schema/prediction.schema.json``). SI units throughout."""

    pred: Prediction
    k: int
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def part_number(self) -> str:
        return str(self.pred.frame["part_number"].iloc[self.k])

    def values_used(self) -> dict[str, str]:
        """Which side of each parameter's range the prediction used."""
        used = self.pred.stage.used
        return {key: str(arr[self.k]) for key, arr in used.items()}

    def to_dict(self) -> dict[str, Any]:
        p, k = self.pred, self.k
        c, st, fx, d = p.closed, p.stage, p.fix, p.design
        row = p.frame.iloc[k]

        def arr(a: np.ndarray) -> Any:
            v = a[k]
            if isinstance(v, np.bool_ | bool):
                return bool(v)
            return _f(v)

        def rail(r: Any) -> dict[str, Any]:
            return {
                "rail": r.rail,
                "r_max_ohm": arr(r.r_max_ohm),
                "r_ohm": arr(r.r_ohm),
                "works": bool(r.ok[k]),
                "reason": str(r.reason[k]),
                "extra_supply_a": arr(r.extra_supply_a),
                "extra_dissipation_amp_w": arr(r.extra_dissipation_amp_w),
                "dissipation_resistor_w": arr(r.dissipation_resistor_w),
                "device_peak_a": arr(r.device_peak_a),
                "limit_ok": bool(r.limit_ok[k]),
                "swing_ok": bool(r.swing_ok[k]),
            }

        topo = str(row["topology"])
        handover = bool(c.handover[k])
        if handover:
            verdict = "changes-mode"
        elif bool(c.marginal[k]):
            verdict = "marginal"
        elif bool(c.crossover_biased[k]):
            verdict = "biased-crossover"
        else:
            verdict = "one-mode"
        out: dict[str, Any] = {
            "part_number": self.part_number,
            "maker": str(row.get("maker", "")),
            "topology": topo,
            "design": d.name,
            "basis": st.basis,
            "values_used": self.values_used(),
            "crossover": {
                "verdict": verdict,
                "handover": handover,
                "marginal": bool(c.marginal[k]),
                "biased_crossover": bool(c.crossover_biased[k]),
                "i_out_min_a": arr(c.i_out_min_a),
                "i_out_max_a": arr(c.i_out_max_a),
                "stage_current_a": arr(st.stage_current_a),
                "min_source_a": arr(c.min_source_a),
                "flat_level_v": arr(c.flat_level_v),
                "handover_out_v": arr(c.handover_out_v),
                "handover_phase_deg": None
                if not math.isfinite(c.handover_phase_rad[k])
                else math.degrees(float(c.handover_phase_rad[k])),
                "slope_v_per_s": arr(c.slope_v_per_s),
                "handover_time_s": arr(c.handover_time_s),
                "glitch_v": arr(c.glitch_v),
                "thd_estimate": arr(c.thd_estimate),
            },
            "checks": {
                "swing_pos_margin_v": arr(c.swing_pos_margin_v),
                "swing_neg_margin_v": arr(c.swing_neg_margin_v),
                "cm_low_margin_v": arr(c.cm_low_margin_v),
                "cm_high_margin_v": arr(c.cm_high_margin_v),
                "slew_required_v_per_s": _f(c.slew_required_v_per_s),
                "slew_margin_ratio": arr(c.slew_margin_ratio),
                "full_power_bw_hz": arr(c.full_power_bw_hz),
                "closed_loop_bw_hz": arr(c.closed_loop_bw_hz),
                "gain_error": arr(c.gain_error),
                "phase_error_deg": _f(math.degrees(float(c.phase_error_rad[k])))
                if math.isfinite(float(c.phase_error_rad[k]))
                else None,
                "cap_load_ratio": arr(c.cap_load_ratio),
                "cap_load_ok": not (float(c.cap_load_ratio[k]) > 1.0),
                "stable_at_gain": bool(c.stable_at_gain[k]),
                "supply_in_range": bool(c.supply_in_range[k]),
                "source_peak_a": arr(c.source_peak_a),
                "sink_peak_a": arr(c.sink_peak_a),
                "source_limit_ok": bool(c.source_limit_ok[k]),
                "sink_limit_ok": bool(c.sink_limit_ok[k]),
                "supply_current_a": arr(c.supply_current_a),
                "dissipation_w": arr(c.dissipation_w),
                "t_junction_c": arr(c.t_junction_c),
                "t_junction_margin_c": arr(c.t_junction_margin_c),
            },
            "fix": {
                "needed": bool(fx.needed[k]),
                "recommended": str(fx.recommended[k]),
                "series": fx.series,
                "tolerance": fx.tolerance,
                "margin": fx.margin,
                "negative": rail(fx.negative),
                "positive": rail(fx.positive),
            },
            "simulation": None,
            "caution": CAUTION,
        }
        for label, sim in (("simulation", p.sim), ("simulation_fixed", p.sim_fixed)):
            if sim is None:
                if label == "simulation_fixed":
                    out[label] = None
                continue
            out[label] = {
                "steps_per_period": sim.steps_per_period,
                "thd_f": _f(sim.thd_f[k]),
                "thd_definition": f"THD_F (IEC): RMS of harmonics 2..{sim.harmonics_v.shape[1] - 1}"
                " over the fundamental",
                "residual_peak_v": _f(sim.residual_peak_v[k]),
                "deviation_peak_v": _f(sim.deviation_peak_v[k]),
                "min_source_a": _f(sim.min_source_a[k]),
                "handover": bool(sim.handover[k]),
                "handover_level_v": _f(sim.handover_level_v[k]),
                "harmonics_v": [_f(x) for x in sim.harmonics_v[k, :11]],
            }
        return out


def predict_frame(
    frame: pd.DataFrame,
    design: Design,
    *,
    basis: Basis = "typical",
    series: str = "E24",
    margin: float | None = None,
    run_simulation: bool = True,
    simulate_fix: bool = True,
    n_harmonics: int = DEFAULT_HARMONICS,
) -> Prediction:
    """Predict every part of ``frame`` in ``design`` (closed form, fix, and optionally the
    time-domain simulation with and without the recommended fix)."""
    stage = stage_params(frame, basis)
    closed = predict_closed_form(stage, design)
    try:
        kw = {} if margin is None else {"margin": margin}
        fix = size_fix(stage, design, series=series, **kw)
    except ValueError as exc:
        raise InputError(str(exc), pointer="/series") from None
    sim = sim_fixed = None
    if run_simulation and stage.n:
        sim = simulate(stage, design, n_harmonics=n_harmonics)
        if simulate_fix and bool(
            np.any(fix.recommended == "negative") or np.any(fix.recommended == "positive")
        ):
            sim_fixed = simulate(
                stage,
                design,
                r_to_neg_ohm=fix.r_neg_ohm,
                r_to_pos_ohm=fix.r_pos_ohm,
                n_harmonics=n_harmonics,
            )
    return Prediction(design, frame, stage, closed, fix, sim, sim_fixed)


def predict(
    catalogue: Engine | pd.DataFrame | str | None,
    design: Design | str,
    part_numbers: Sequence[str] | None = None,
    **kwargs: Any,
) -> list[PartPrediction]:
    """Predict the named parts (all parts if None) in ``design`` (a Design or a file path).

    Keyword arguments go to :func:`predict_frame` (``basis``, ``series``, ``margin``,
    ``run_simulation``...).
    """
    if not isinstance(design, Design):
        design = load_design(design)
    frame = catalogue_frame(catalogue)
    if part_numbers is not None:
        frame = select_parts(frame, part_numbers)
    return predict_frame(frame, design, **kwargs).parts()


def rank(
    catalogue: Engine | pd.DataFrame | str | None,
    design: Design | str,
    *,
    basis: Basis | None = None,
) -> Ranking:
    """Rank every part of the catalogue for ``design`` (a Design or a file path) against the
    design's ``[requirements]``; ``basis`` overrides the requirements' value basis.

    Returns a :class:`partsel.solver.Ranking`; ``partsel.solver.export.ranking_frame(r)`` and
    ``ranking_dict(r)`` turn it into a pandas frame or the documented JSON.
    """
    from partsel.solver import PartTable, Requirements
    from partsel.solver import rank as solver_rank

    if not isinstance(design, Design):
        design = load_design(design)
    req = Requirements.from_mapping(design.requirements or {})
    if basis is not None:
        req = req.replace(basis=basis)
    return solver_rank(PartTable(catalogue_frame(catalogue)), design, req)


def vet_substitutes(
    catalogue: Engine | pd.DataFrame | str | None,
    incumbent: str,
    design: Design | str | None = None,
    **kwargs: Any,
) -> Vetting:
    """Candidates to replace ``incumbent``, best first, with verdicts and reasons
    (see :func:`partsel.solver.substitute.vet_substitutes` for the keyword arguments)."""
    from partsel.solver.substitute import vet_substitutes as _vet

    if design is not None and not isinstance(design, Design):
        design = load_design(design)
    return _vet(catalogue_frame(catalogue), incumbent, design, **kwargs)


def compare_parts(
    catalogue: Engine | pd.DataFrame | str | None,
    parts: Sequence[str],
    design: Design | str | None = None,
    **kwargs: Any,
) -> Comparison:
    """Two to four parts side by side (optionally in ``design``)."""
    from partsel.solver.substitute import compare_parts as _compare

    if design is not None and not isinstance(design, Design):
        design = load_design(design)
    return _compare(catalogue_frame(catalogue), list(parts), design, **kwargs)


def check_bom(
    catalogue: Engine | str | None,
    bom: Any,
    design: Design | str | None = None,
    **kwargs: Any,
) -> BomReport:
    """Check every line of a BOM (CSV path, bytes, stream or frame) against the catalogue and
    the maker's suffix rules; per-line design files are read with :func:`load_design`."""
    from partsel.catalogue import makers
    from partsel.solver.bom import check_bom as _check

    own = catalogue is None or isinstance(catalogue, str)
    engine = open_catalogue(catalogue) if own else catalogue
    try:
        if design is not None and not isinstance(design, Design):
            design = load_design(design)
        kwargs.setdefault("design_loader", load_design)
        return _check(parts_frame(engine), bom, makers(engine), design, **kwargs)
    finally:
        if own:
            engine.dispose()
