"""The spread analysis on the sample catalogue: corners against brute-force enumeration of every
vertex, Monte Carlo yield against the normal distribution function where a check is linear in
one normal parameter (scipy.stats.norm), convergence to the corner verdict as the spread
shrinks, reproducibility with a fixed seed, the coverage of the confidence intervals over
repeated runs, and the ranking's yield check.

Sampling errors are stated where they are used: a yield ``p`` of ``n`` boards has the standard
error √(p (1 - p) / n); 4 standard errors are allowed (a correct estimator misses by more about
once in 16,000 runs). Seeds are fixed, so every run is repeatable.
"""

from __future__ import annotations

import itertools
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from spread_helpers import assert_corners_match, assert_yield_is_corner_verdict

from partsel.design import load_design
from partsel.solver import PartTable, rank
from partsel.solver import checks as C
from partsel.solver.requirements import Requirements
from partsel.solver.spread import analyse, board, corners, fix_of, part_yields
from partsel.solver.spread.corners import _evaluate, corner_params

ROOT = Path(__file__).resolve().parents[1]
DESIGNS = ROOT / "sample-catalog" / "designs"


def _board(table: PartTable, design_name: str, part: str, req: Requirements | None = None):
    design = load_design(DESIGNS / f"{design_name}.toml")
    req = req or Requirements.from_mapping(design.requirements)
    r = rank(table, design, req, hints=False)
    rows = np.array([r.index(part)])
    return board(table, rows, design, req, fix_of(r.fix, rows, req)), r


# ---- corners against brute force ---------------------------------------------------------------

CASES = [
    # design, part, basis, the parameters kept (at most 10: 2^10 vertices)
    ("line-driver-5v", "VSR-32", "typical",
     {"swing_pos", "stage_current", "gbw", "dead_band", "slew_rise", "slew_fall",
      "fix_resistor", "supply_current", "environment/ambient_max", "cm_headroom_pos"}),
    ("line-driver-5v", "BRQ-722", "typical",
     {"stage_current", "gbw", "slew_rise", "slew_fall", "swing_pos", "swing_neg",
      "supply_current", "source_limit", "sink_limit", "environment/ambient_max"}),
    ("line-driver-5v-pulldown", "HKE-262", "typical",  # THD not monotonic in the slew rates
     {"stage_current", "gbw", "slew_rise", "slew_fall", "dead_band", "swing_pos",
      "supply_current", "cm_headroom_pos"}),
    ("micropower-filter-3v", "VSR-61", "worst-case",
     {"stage_current", "gbw", "slew_rise", "slew_fall", "supply_current", "swing_pos",
      "swing_neg", "cm_headroom_neg", "environment/ambient_max"}),
    ("actuator-12v", "BRQ-812", "worst-case",
     {"stage_current", "source_limit", "swing_pos", "swing_neg", "supply_current",
      "cm_headroom_neg", "gbw", "slew_rise", "environment/ambient_max"}),
]  # fmt: skip


@pytest.mark.parametrize(("name", "part", "basis", "keep"), CASES, ids=[c[1] for c in CASES])
def test_corners_against_every_vertex(
    sample_table: PartTable, name: str, part: str, basis: str, keep: set[str]
) -> None:
    """The search finds, for every check, the worst margin over all 2^N vertices (exactly,
    where the check is monotonic in every parameter: the worst corner then is a vertex); where
    it is not monotonic (sampled), it finds a margin at least as low as every vertex's."""
    design = load_design(DESIGNS / f"{name}.toml")
    req = Requirements.from_mapping(design.requirements).override(basis=basis)
    b, _ = _board(sample_table, name, part, req)
    b = b.only(keep)
    result = corners(b, 0)
    params, spreads = corner_params(b, 0)
    k = len(params)
    assert 6 <= k <= 10
    vertices = np.array(list(itertools.product([0.0, 1.0], repeat=k)))
    margins = _evaluate(b, 0, params, spreads, vertices)[0]
    sampled = assert_corners_match(result, margins)
    if part == "HKE-262":
        assert sampled >= 1  # the case exercises the sampling


def test_corner_setters_name_the_parameters(sample_table: PartTable) -> None:
    """Which parameters set a corner: the input range's top is set by the headroom to V+
    alone, at its high end; the slew check by the slower slew rate at its low end."""
    b, _ = _board(sample_table, "line-driver-5v", "VSR-32")
    by = {c.check: c for c in corners(b, 0).corners}
    assert [s[0] for s in by["input_cm_high"].setters] == ["cm_headroom_pos"]
    assert by["input_cm_high"].setters[0][1] == 1.0
    slew = {s[0] for s in by["slew"].setters}
    assert slew and slew <= {"slew_rise", "slew_fall"}
    assert all(s[1] == 0.0 for s in by["slew"].setters)
    jt = {s[0] for s in by["junction_temp"].setters}
    assert "environment/ambient_max" in jt  # the junction is hottest at the highest ambient
    # every parameter of the part: far fewer evaluations than the 2^N vertices
    ca = corners(b, 0)
    assert len(ca.params) >= 15 and ca.evaluations < 2 ** len(ca.params) / 20


# ---- yield of a check linear in one normal parameter ----------------------------------------


def _one_normal_table(frame: pd.DataFrame, part: str, sigma_rel: float) -> PartTable:
    """The sample catalogue with ``part`` stripped to its typical values, except its GBW:
    typ and min = typ (1 - 3 σ_rel), a normal with σ = σ_rel typ (the model's rule)."""
    f = frame.copy()
    i = int(np.flatnonzero(f["part_number"].str.casefold() == part.casefold())[0])
    for col in f.columns:
        if col.endswith(("_min", "_max")) and f[col].dtype.kind == "f":
            f.loc[i, col] = np.nan
    typ = float(f.loc[i, "gbw_typ"])
    f.loc[i, "gbw_min"] = typ * (1 - 3 * sigma_rel)
    return PartTable(f)


def test_yield_of_a_check_linear_in_one_normal_parameter(sample_frame: pd.DataFrame) -> None:
    """The bandwidth check passes while GBW / G >= ratio f, linear in GBW; with GBW normal
    (typ, σ) and the limit at typ - σ the yield is Φ(1) (scipy.stats.norm.cdf), at typ + σ/2
    it is 1 - Φ(0.5)."""
    table = _one_normal_table(sample_frame, "BRQ-722", 0.1)
    design = load_design(DESIGNS / "line-driver-5v.toml")
    i = int(np.flatnonzero(table.part_key == "brq-722")[0])
    gbw = float(table.number("gbw_typ")[i])
    g, f = design.noise_gain, design.signal.frequency_hz
    n = 20_000
    for z_limit, expected in ((-1.0, stats.norm.cdf(1.0)), (0.5, stats.norm.sf(0.5))):
        ratio = gbw * (1 + 0.1 * z_limit) / (g * f)
        req = Requirements.from_mapping(
            {"basis": "typical", "conduction": "allowed",
             "limits": {"min_bandwidth_ratio": ratio}}
        )  # fmt: skip
        b = board(table, np.array([i]), design, req)
        passed, _ = part_yields(b, n, seed=7, detail=False)
        y = passed[0] / n
        se = math.sqrt(expected * (1 - expected) / n)
        assert abs(y - expected) < 4 * se, (z_limit, y, expected)


def test_confidence_intervals_cover_the_true_yield(sample_frame: pd.DataFrame) -> None:
    """Over 400 runs with different seeds (400 boards each) of the check above, whose true
    yield is Φ(1) = 0.841, Wilson's 95 % interval covers it in 95 % of runs within sampling
    error (the coverage of 400 runs has a standard error of 1.1 %; at least 91.5 % is asked,
    about 3 standard errors; Wilson's coverage of a binomial also oscillates a little below its
    nominal level, Brown, Cai and DasGupta 2001), and the exact Clopper-Pearson interval, which
    is conservative, at least as often."""
    table = _one_normal_table(sample_frame, "BRQ-722", 0.1)
    design = load_design(DESIGNS / "line-driver-5v.toml")
    i = int(np.flatnonzero(table.part_key == "brq-722")[0])
    gbw = float(table.number("gbw_typ")[i])
    ratio = gbw * 0.9 / (design.noise_gain * design.signal.frequency_hz)
    req = Requirements.from_mapping(
        {"basis": "typical", "conduction": "allowed", "limits": {"min_bandwidth_ratio": ratio}}
    )
    b = board(table, np.array([i]), design, req)
    truth = stats.norm.cdf(1.0)
    hits = {"wilson": 0, "clopper-pearson": 0}
    runs = 400
    for seed in range(runs):
        a = analyse(b, 400, seed)
        py = a.parts[0]
        hits["wilson"] += py.interval.low <= truth <= py.interval.high
        hits["clopper-pearson"] += py.exact.low <= truth <= py.exact.high
        assert py.interval.method == "wilson" and py.exact.method == "clopper-pearson"
    assert hits["wilson"] / runs >= 0.915
    assert hits["clopper-pearson"] >= hits["wilson"]


# ---- shrinking spread, seeds, one answer ------------------------------------------------------


@pytest.mark.parametrize("name", ["line-driver-5v", "actuator-12v", "split-supply-driver"])
def test_yield_converges_to_the_corner_verdict(sample_table: PartTable, name: str) -> None:
    """As every spread shrinks about its centre, the worst corner tends to the nominal board
    and the yield to 100 % where that corner passes and to 0 % where it fails (here: the
    spread narrowed 1000 times; parts within 1e-4 relative of a limit, where the narrowed
    spread still straddles it, are left out)."""
    design = load_design(DESIGNS / f"{name}.toml")
    req = Requirements.from_mapping(design.requirements).override(basis="typical")
    r = rank(sample_table, design, req, hints=False)
    rows = np.arange(sample_table.n)
    b = board(sample_table, rows, design, req, fix_of(r.fix, rows, req)).shrunk(1e-3)
    assert assert_yield_is_corner_verdict(b, range(0, sample_table.n, 3), 200, seed=3) >= 10


def test_fixed_seed_same_answer_and_parts_independent(sample_table: PartTable) -> None:
    design = load_design(DESIGNS / "line-driver-5v.toml")
    req = Requirements.from_mapping(design.requirements).override(basis="typical")
    r = rank(sample_table, design, req, hints=False)
    rows = np.array([r.index(p) for p in ("VSR-32", "QLN-102", "HKE-262")])
    b = board(sample_table, rows, design, req, fix_of(r.fix, rows, req))
    a1, a2 = analyse(b, 2000, 5), analyse(b, 2000, 5)
    for x, y in zip(a1.parts, a2.parts, strict=True):
        assert x.passed == y.passed and x.thd_percentiles == y.thd_percentiles
        np.testing.assert_array_equal(x.thd, y.thd)
    # one part alone draws the same boards as with the others
    alone = board(sample_table, rows[1:2], design, req, fix_of(r.fix, rows[1:2], req))
    assert part_yields(alone, 2000, 5, detail=False)[0][0] == a1.parts[1].passed
    # another seed draws other boards
    a3 = analyse(b, 2000, 6)
    assert not np.array_equal(a3.parts[1].thd, a1.parts[1].thd)


@pytest.mark.parametrize(
    ("part", "target"), [("HKE-262", 0.99), ("HKE-262", 0.95), ("HKE-262", 0.5), ("BRQ-622A", 0.9)]
)
def test_fix_search_finds_the_largest_value_reaching_the_target(
    sample_table: PartTable, part: str, target: float
) -> None:
    """The search (bisection above the recommended value) returns the same value as trying
    every E24 value of the window on the same boards: the largest whose yield reaches the
    target, with that yield."""
    from partsel.physics import eseries
    from partsel.solver.spread.yields import FIX_RANGE, fix_yield

    req = Requirements.from_mapping(
        load_design(DESIGNS / "line-driver-5v.toml").requirements
    ).override(basis="typical")
    b, r = _board(sample_table, "line-driver-5v", part, req)
    n = 1000
    a = analyse(b, n, 13, target=target, series="E24")
    fx = a.parts[0].fix
    assert fx is not None and fx.r_ohm == float(r.fix.r_ohm[r.index(part)])
    window = eseries.preferred_values("E24", fx.r_ohm / FIX_RANGE, fx.r_ohm * FIX_RANGE)
    every = {
        float(v): (a.parts[0].passed / n if v == fx.r_ohm else fix_yield(b, 0, n, 13, float(v)))
        for v in window
    }
    reaching = [v for v, y in every.items() if y >= target]
    if reaching:
        assert fx.largest_ohm == max(reaching)
        assert fx.largest_yield == every[max(reaching)]
    else:
        assert fx.largest_ohm is None and fx.largest_yield is None
    for value, y in fx.tried:
        assert y == pytest.approx(every[value], abs=0)
    assert len(fx.tried) < len(window)  # fewer evaluations than trying every value


def test_ranking_requires_a_yield(sample_table: PartTable) -> None:
    """min_yield rejects the parts that are feasible on the basis but yield less; the yield is
    the one of the spread analysis with the requirements' samples and seed."""
    design = load_design(DESIGNS / "line-driver-5v.toml")
    m = dict(design.requirements)
    m["basis"] = "typical"
    m["limits"] = {**m["limits"], "min_yield": 0.99}
    m["yield_samples"] = 2000
    req = Requirements.from_mapping(m)
    r = rank(sample_table, design, req, hints=False)
    base = rank(sample_table, design, req.replace(limits={"min_yield": None}), hints=False)
    j = C.IDX["yield"]
    assert r.yields is not None and r.yields.samples == 2000
    evaluated = np.flatnonzero(r.yields.evaluated)
    assert set(evaluated) == set(np.flatnonzero(base.feasible))
    low = [i for i in evaluated if r.yields.fraction[i] < 0.99]
    assert low and all(not r.feasible[i] and r.checks.status[i, j] == C.FAIL for i in low)
    assert all(r.feasible[i] for i in evaluated if r.yields.fraction[i] >= 0.99)
    assert r.n_feasible < base.n_feasible
    # the same boards as the spread analysis of one part
    i = low[0]
    rows = np.array([i])
    b = board(sample_table, rows, design, req, fix_of(r.fix, rows, req))
    assert part_yields(b, 2000, req.yield_seed, detail=False)[0][0] == r.yields.passed[i]
    # and a binding yield names the check
    only_yield = [i for i in low if r.n_failing[i] == 1]
    assert only_yield and all(C.CHECKS[r.binding[i]].name == "yield" for i in only_yield)


def test_yield_objective_scores_feasible_parts(sample_table: PartTable) -> None:
    design = load_design(DESIGNS / "actuator-12v.toml")
    m = dict(design.requirements)
    m["objectives"] = {"yield": 1.0}
    m["yield_samples"] = 500
    r = rank(sample_table, design, Requirements.from_mapping(m), hints=False)
    y = r.metrics["yield"]
    feas = np.flatnonzero(r.feasible)
    assert np.isfinite(y[feas]).all()
    best = feas[np.argmax(r.score[feas])]
    assert y[best] == np.max(y[feas])
