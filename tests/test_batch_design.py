"""A batch design (one circuit per row of the parts' arrays, as the spread analysis samples a
design's tolerances) gives, row by row, what each circuit gives on its own: the closed form and
every check. The reference is partsel's own evaluation of one design at a time (which the rest
of the suite holds against analytic results and ngspice); rows agree within 1e-9 relative
(rounding of the same formulas in another order), categorical fields exactly.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from physics_helpers import line_design, make_stage

from partsel.design import load_design
from partsel.physics.analysis import predict_closed_form
from partsel.physics.circuit import Design
from partsel.solver import PartTable
from partsel.solver import checks as C
from partsel.solver.requirements import Requirements

N = 24
TOPOLOGIES = ["class-b-pulldown", "class-a", "class-ab", "cmos-rail-to-rail"]


def _stage(n: int = N):
    rng = np.random.default_rng(11)
    topo = [TOPOLOGIES[k % 4] if k % 3 else "class-b-pulldown" for k in range(n)]
    return make_stage(
        topo,
        stage_current=rng.uniform(20e-6, 300e-6, n),  # hands over, marginal and one mode
        gbw=rng.uniform(0.5e6, 5e6, n),
        dead_band=rng.uniform(1.0, 1.8, n),
        slew_rise=rng.uniform(0.3e6, 3e6, n),
    )


def _batch(design: Design, n: int = N, spread: float = 0.03) -> Design:
    rng = np.random.default_rng(12)
    values = {}
    for path, v in design.quantities().items():
        if v is None or v == 0 or path[0] == "environment":
            continue
        if path == ("amplifier", "gain") and v == 1:
            continue  # a follower stays a follower
        values[path] = v * rng.uniform(1 - spread, 1 + spread, n)
    values[("environment", "ambient_max")] = rng.uniform(20.0, 80.0, n)
    return design.with_values(values)


def _close(a: np.ndarray, b: np.ndarray, what: str) -> None:
    if a.dtype == object or b.dtype == object or a.dtype == bool:
        assert list(a) == list(b), what
        return
    np.testing.assert_allclose(a, b, rtol=1e-9, atol=1e-300, equal_nan=True, err_msg=what)


DESIGNS = [
    ("line driver 10 kohm AC", line_design(c_load_f=100e-12)),
    ("line driver DC to ground", line_design(coupling="dc", c_couple_f=None)),
    ("inverting", line_design(configuration="inverting", gain=2.0, coupling="dc", c_couple_f=None)),
]


@pytest.mark.parametrize(("label", "design"), DESIGNS, ids=[d[0] for d in DESIGNS])
def test_closed_form_of_a_batch_is_the_closed_form_of_each_row(label: str, design: Design) -> None:
    st = _stage()
    batch = _batch(design)
    assert batch.rows == N
    cf = predict_closed_form(st, batch)
    verdicts = set(cf.conduction)
    for k in range(N):
        one = predict_closed_form(st.take([k]), batch.row(k))
        for f in dataclasses.fields(cf):
            x, y = getattr(cf, f.name), getattr(one, f.name)
            if isinstance(x, np.ndarray) and x.ndim == 1 and x.shape[0] == N:
                _close(x[k : k + 1], np.atleast_1d(y), f"{label}: row {k}, {f.name}")
    assert len(verdicts) >= 2  # the rows cover more than one verdict


def test_marginal_rows_are_simulated_with_their_own_design() -> None:
    """Marginal stages take their THD from the device-law simulation; in a batch each row's
    own circuit is simulated."""
    st = make_stage("class-b-pulldown", 6, stage_current=[120e-6, 130e-6, 140e-6] * 2)
    batch = _batch(line_design(), 6, spread=0.05)
    cf = predict_closed_form(st, batch)
    assert (cf.conduction == "marginal").sum() >= 3
    for k in range(6):
        one = predict_closed_form(st.take([k]), batch.row(k))
        assert cf.conduction[k] == one.conduction[0]
        assert cf.thd_estimate[k] == pytest.approx(one.thd_estimate[0], rel=1e-9)


@pytest.mark.parametrize(
    "name", ["line-driver-5v", "split-supply-driver", "adc-buffer-3v3", "actuator-12v"]
)
def test_checks_of_a_batch_are_the_checks_of_each_row(name: str, sample_table: PartTable) -> None:
    """Every check of the sample catalogue's parts in a sample design with 3 % spread on each
    quantity: per row the same values, limits, margins and statuses as the row's own design."""
    design = load_design(f"sample-catalog/designs/{name}.toml")
    req = Requirements.from_mapping(design.requirements)
    table = sample_table
    idx = np.arange(table.n)
    stage = table.stage(req.basis)
    batch = _batch(design, table.n)
    chk = C.evaluate(
        table, idx, stage, predict_closed_form(stage, batch), batch, req, C.DesignLevels.of(batch)
    )
    for k in range(0, table.n, 5):
        d = batch.row(k)
        st = stage.take([k])
        one = C.evaluate(
            table, idx[k : k + 1], st, predict_closed_form(st, d), d, req, C.DesignLevels.of(d)
        )
        for a, b, what in zip(chk.astuple(), one.astuple(), ("value", "limit", "margin", "ratio",
                                                              "status"), strict=True):  # fmt: skip
            _close(a[k], b[0], f"{name}: part {k}, {what}")


def test_take_and_row() -> None:
    batch = _batch(line_design(), 5)
    sub = batch.take(np.array([4, 1]))
    assert sub.rows == 2
    assert sub.load.r_load_ohm[0] == batch.load.r_load_ohm[4]
    one = batch.row(1)
    assert one.rows is None and one.load.r_load_ohm == batch.load.r_load_ohm[1]
    plain = line_design()
    assert plain.rows is None and plain.take(np.arange(3)) is plain
