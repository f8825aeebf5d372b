"""Properties of the requirements solver (hypothesis), on the invented demo catalogue.

* tightening a requirement never adds a feasible part; relaxing one never removes one;
* the Pareto set is non-dominated, and every feasible part outside it is dominated by a member
  (checked by brute force against the definition of Pareto dominance);
* results do not depend on the order of the catalogue;
* the worst-case basis is never more optimistic than the typical one;
* each relaxation hint admits exactly the number of parts it states.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from partsel.catalogue import load_paths, open_catalogue, parts_frame
from partsel.design import load_design
from partsel.physics.circuit import Design
from partsel.solver import PartTable, Ranking, Requirements, rank
from partsel.solver import checks as C
from partsel.solver.pareto import dominates, pareto_mask
from partsel.solver.requirements import CONDUCTION_MODES, LIMITS, OBJECTIVES

ROOT = Path(__file__).resolve().parents[1]
DESIGNS = sorted((ROOT / "sample-catalog" / "designs").glob("*.toml"))
PROFILE = settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)


@pytest.fixture(scope="module")
def table(tmp_path_factory: pytest.TempPathFactory) -> PartTable:
    eng = open_catalogue(f"sqlite:///{tmp_path_factory.mktemp('props') / 'c.sqlite'}")
    load_paths(eng, [ROOT / "sample-catalog" / "parts"])
    t = PartTable(parts_frame(eng))
    eng.dispose()
    return t


@pytest.fixture(scope="module")
def designs() -> list[Design]:
    return [load_design(p) for p in DESIGNS]


# ---- strategies ---------------------------------------------------------------------------------

#: Plausible ranges of each numeric limit (log-uniform), SI.
RANGES: dict[str, tuple[float, float]] = {
    "min_swing_margin": (1e-3, 1.0),
    "min_cm_margin": (1e-3, 1.0),
    "min_slew_ratio": (1.0, 50.0),
    "min_bandwidth_ratio": (1.0, 1000.0),
    "max_cap_load_ratio": (0.1, 10.0),
    "max_gain_error": (1e-5, 0.1),
    "max_thd": (1e-5, 0.5),
    "max_glitch": (1e-4, 1.0),
    "min_source_fraction": (0.01, 0.95),
    "min_fix_resistance": (100.0, 1e6),
    "max_supply_current": (1e-6, 0.05),
    "max_price": (0.05, 5.0),
    "max_offset": (1e-4, 0.01),
    "max_noise": (3e-9, 1e-7),
    "max_bias_current": (1e-12, 1e-6),
}


def log_uniform(lo: float, hi: float) -> st.SearchStrategy[float]:
    return st.floats(math.log10(lo), math.log10(hi)).map(lambda e: float(10.0**e))


@st.composite
def requirements(draw: st.DrawFn) -> Requirements:
    limits: dict[str, float | None] = {}
    for d in LIMITS:
        if d.key not in RANGES:  # min_yield, a Monte Carlo check: tests/test_spread.py and
            continue  # tests/test_cli_spread.py
        if draw(st.booleans()):
            limits[d.key] = draw(log_uniform(*RANGES[d.key]))
    choices: dict[str, Any] = {}
    if draw(st.booleans()):
        choices["lifecycle"] = tuple(
            draw(
                st.lists(
                    st.sampled_from(["active", "not-for-new-designs", "obsolete"]),
                    min_size=1,
                    max_size=3,
                    unique=True,
                )
            )
        )
    if draw(st.booleans()):
        choices["packages"] = tuple(
            draw(
                st.lists(
                    st.sampled_from(
                        ["SO-8", "MSOP-8", "SOT23-5", "SO-14", "SC70-5", "DIP-8", "TSSOP-14"]
                    ),
                    min_size=1,
                    max_size=4,
                    unique=True,
                )
            )
        )
    if draw(st.booleans()):
        choices["channels"] = tuple(
            draw(st.lists(st.sampled_from([1, 2, 4]), min_size=1, max_size=3, unique=True))
        )
    names = [o.name for o in OBJECTIVES]
    objs = draw(st.lists(st.sampled_from(names), min_size=2, max_size=4, unique=True))
    weights = tuple((n, draw(st.sampled_from([0.5, 1.0, 2.0, 3.0]))) for n in objs)
    return Requirements().replace(
        basis=draw(st.sampled_from(["worst-case", "typical"])),
        conduction=draw(st.sampled_from(CONDUCTION_MODES)),
        limits=limits,
        choices=choices,
        objectives=weights,
        pareto=tuple(objs[: draw(st.sampled_from([2, 3]))]),
    )


@st.composite
def designs_varied(draw: st.DrawFn, base: list[Design]) -> Design:
    """A sample design with its amplitude scaled down and its frequency moved (stays valid)."""
    d = draw(st.sampled_from(base))
    sig = dataclasses.replace(
        d.signal,
        amplitude_v=d.signal.amplitude_v * draw(st.floats(0.05, 1.0)),
        frequency_hz=d.signal.frequency_hz * draw(log_uniform(0.1, 10.0)),
    )
    return dataclasses.replace(d, signal=sig)


@st.composite
def tightened(draw: st.DrawFn, req: Requirements) -> Requirements:
    """``req`` made stricter in one respect."""
    what = draw(st.sampled_from(["limit", "choice", "conduction", "basis"]))
    if what == "limit":
        d = draw(st.sampled_from([d for d in LIMITS if d.key in RANGES]))
        cur = req.limit(d.key)
        lo, hi = RANGES[d.key]
        if d.sense == "max":
            new = draw(log_uniform(lo, hi)) if cur is None else cur * draw(st.floats(0.01, 1.0))
        else:
            start = cur if cur is not None else lo
            new = start * draw(st.floats(1.0, 10.0))
            if d.key == "min_source_fraction":
                new = min(new, 0.99)
        return req.replace(limits={d.key: new})
    if what == "choice":
        key = draw(st.sampled_from(["lifecycle", "packages", "channels"]))
        cur = req.choice(key)
        pool = {"lifecycle": ["active", "not-for-new-designs", "obsolete"],
                "packages": ["SO-8", "MSOP-8", "SOT23-5", "SO-14"],
                "channels": [1, 2, 4]}[key]  # fmt: skip
        items = list(cur) if cur is not None else pool
        keep = draw(st.lists(st.sampled_from(items), min_size=1, max_size=len(items), unique=True))
        return req.replace(choices={key: tuple(keep)})
    if what == "conduction":
        k = CONDUCTION_MODES.index(req.conduction)
        return req.replace(conduction=CONDUCTION_MODES[max(k - 1, 0)])
    return req.replace(basis="worst-case")


def feasible_set(r: Ranking) -> set[str]:
    return set(r.table.part_number[r.feasible])


# ---- monotonicity ---------------------------------------------------------------------------


@PROFILE
@given(data=st.data())
def test_tightening_never_adds_a_feasible_part(
    table: PartTable, designs: list[Design], data: st.DataObject
) -> None:
    design = data.draw(designs_varied(designs))
    loose = data.draw(requirements())
    tight = data.draw(tightened(loose))
    assert feasible_set(rank(table, design, tight)) <= feasible_set(rank(table, design, loose))


@PROFILE
@given(data=st.data())
def test_relaxing_never_removes_a_feasible_part(
    table: PartTable, designs: list[Design], data: st.DataObject
) -> None:
    """Relaxing = the inverse step: start from a strict requirement and undo one tightening."""
    design = data.draw(designs_varied(designs))
    strict = data.draw(requirements())
    what = data.draw(st.sampled_from(["limit", "choice", "conduction", "basis"]))
    if what == "limit":
        d = data.draw(st.sampled_from(LIMITS))
        cur = strict.limit(d.key)
        if d.sense == "max":
            new = None if cur is None or data.draw(st.booleans()) else cur * 10.0
        else:
            new = None if cur is None else max(cur * data.draw(st.floats(0.0, 1.0)), d.floor)
            if new is not None and not d.floor_inclusive and new <= d.floor:
                new = None
        relaxed = strict.replace(limits={d.key: new})
    elif what == "choice":
        relaxed = strict.replace(
            choices={data.draw(st.sampled_from(["lifecycle", "packages", "channels"])): None}
        )
    elif what == "conduction":
        k = CONDUCTION_MODES.index(strict.conduction)
        relaxed = strict.replace(conduction=CONDUCTION_MODES[min(k + 1, 2)])
    else:
        relaxed = strict.replace(basis="typical")
    assert feasible_set(rank(table, design, strict)) <= feasible_set(rank(table, design, relaxed))


# ---- Pareto set -------------------------------------------------------------------------------


def _check_pareto(costs: np.ndarray, mask: np.ndarray) -> None:
    """Definition of the Pareto set, by brute force over all pairs (dom[a, b]: a dominates b)."""
    c = np.where(np.isnan(costs), np.inf, costs)
    dom = dominates(c[:, None, :], c[None, :, :])
    assert not dom[:, mask].any(), "a Pareto point is dominated"
    assert dom[mask][:, ~mask].any(axis=0).all(), "a point outside the set is not dominated"


@settings(max_examples=100, deadline=None)
@given(
    st.integers(1, 30).flatmap(
        lambda n: st.lists(
            st.lists(st.sampled_from([0.0, 1.0, 2.0, 3.0, 0.5, math.inf, math.nan]),
                     min_size=3, max_size=3),
            min_size=n, max_size=n,
        )
    )
)  # fmt: skip
def test_pareto_mask_matches_the_definition(points: list[list[float]]) -> None:
    """Small value sets give many ties and duplicates, the hard cases."""
    costs = np.array(points)
    for k in (2, 3):
        _check_pareto(costs[:, :k], pareto_mask(costs[:, :k]))


@PROFILE
@given(data=st.data())
def test_ranking_pareto_set_is_non_dominated_and_covers(
    table: PartTable, designs: list[Design], data: st.DataObject
) -> None:
    design = data.draw(st.sampled_from(designs))
    r = rank(table, design, data.draw(requirements()))
    f = np.flatnonzero(r.feasible)
    _check_pareto(r.pareto_costs[f], r.pareto[f])
    assert not r.pareto[~r.feasible].any()


# ---- catalogue order ----------------------------------------------------------------------------


@PROFILE
@given(data=st.data())
def test_results_do_not_depend_on_catalogue_order(
    table: PartTable, designs: list[Design], data: st.DataObject
) -> None:
    design = data.draw(designs_varied(designs))
    req = data.draw(requirements())
    perm = np.array(data.draw(st.permutations(range(table.n))))
    shuffled = PartTable(table.frame.iloc[perm].reset_index(drop=True))
    a, b = rank(table, design, req), rank(shuffled, design, req)
    back = np.argsort(perm)  # row k of ``a`` is row back[k] of ``b``
    np.testing.assert_array_equal(a.feasible, b.feasible[back])
    np.testing.assert_array_equal(a.pareto, b.pareto[back])
    np.testing.assert_array_equal(a.rank, b.rank[back])
    np.testing.assert_array_equal(a.binding, b.binding[back])
    np.testing.assert_array_equal(a.checks.status, b.checks.status[back])
    np.testing.assert_allclose(a.score, b.score[back], rtol=1e-12, equal_nan=True)
    np.testing.assert_allclose(a.checks.margin, b.checks.margin[back], rtol=1e-12, equal_nan=True)
    assert list(a.table.part_number[a.order]) == list(b.table.part_number[b.order])
    assert [(h.requirement, [s.admits for s in h.steps]) for h in a.hints] == [
        (h.requirement, [s.admits for s in h.steps]) for h in b.hints
    ]


# ---- worst case against typical ---------------------------------------------------------------


@PROFILE
@given(data=st.data())
def test_worst_case_never_more_optimistic_than_typical(
    table: PartTable, designs: list[Design], data: st.DataObject
) -> None:
    """Fewer (or the same) parts feasible, and no check margin larger, on the worst case. Margins
    are compared where both verdicts judge the part the same way: fix fitted or not and, where
    the fix is fitted, with the same resistor (the worst case may size a smaller pull-up: it must
    keep the sink device on at the highest pull-down current, and a smaller resistor, which costs
    more supply current, also lowers the one-mode THD of the circuit it makes); marginal or not
    (a marginal stage's THD and glitch come from the device law in time, the others' from
    formulas, so across that boundary the two bases use different methods)."""
    design = data.draw(designs_varied(designs))
    req = data.draw(requirements())
    w = rank(table, design, req.replace(basis="worst-case"))
    t = rank(table, design, req.replace(basis="typical"))
    assert feasible_set(w) <= feasible_set(t)
    same_r = ~w.fix.applied | (w.fix.r_ohm == t.fix.r_ohm) & (w.fix.rail == t.fix.rail)
    same_m = w.prediction.marginal == t.prediction.marginal
    same = ((w.fix.applied == t.fix.applied) & same_r & same_m)[:, None]
    both = np.isfinite(w.checks.margin) & np.isfinite(t.checks.margin) & same
    scale = np.maximum(np.abs(t.checks.margin), 1e-15)
    worse_ok = w.checks.margin <= t.checks.margin + 1e-9 * scale
    bad = both & ~worse_ok
    assert not bad.any(), [
        (w.table.part_number[i], C.CHECK_NAMES[j], w.checks.margin[i, j], t.checks.margin[i, j])
        for i, j in zip(*np.nonzero(bad), strict=True)
    ][:5]


# ---- relaxation hints ---------------------------------------------------------------------------


@pytest.mark.parametrize("path", DESIGNS, ids=lambda p: p.stem)
def test_hints_admit_exactly_what_they_say(table: PartTable, path: Path) -> None:
    design = load_design(path)
    for basis in ("worst-case", "typical"):
        req = Requirements.from_mapping(design.requirements).replace(basis=basis)
        r = rank(table, design, req)
        base = feasible_set(r)
        for h, step in itertools.product(r.hints, range(3)):
            if step >= len(h.steps):
                continue
            s = h.steps[step]
            if h.requirement == "conduction":
                relaxed = req.replace(conduction=s.value)
            elif h.requirement in ("lifecycle", "packages", "channels"):
                relaxed = req.replace(choices={h.requirement: tuple(s.value)})
            else:
                relaxed = req.replace(limits={h.requirement: s.value})
            after = feasible_set(rank(table, design, relaxed))
            gained = after - base
            if req.limit("min_yield") is None:
                assert len(gained) == s.admits, (h.requirement, s.value)
                assert set(s.parts) <= gained
            else:
                # with min_yield the hint cannot foresee the boards: a part it admits must still
                # reach the yield, and one held back by its yield may pass once a limit every
                # board is judged against is relaxed; relaxing never loses a feasible part
                assert base <= after, (h.requirement, s.value)
