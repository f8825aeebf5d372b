"""Specs over temperature in the spread analysis: linear interpolation against numpy.interp and
hand values, the catalogue layer reading the stored points back, the split normal at an
interpolated ambient against its analytic probabilities, corners against brute force over the
ambient, Monte Carlo converging to the corner verdict for parts with temperature data, the
specs whose temperature spread is unknown reported, and bad temperature points refused (exit 2,
the field's JSON pointer, nothing stored).

The temperature points of the sample parts are invented (sample README); the checks here are
analytic or against independent code (numpy.interp, scipy.stats), not against those values."""

from __future__ import annotations

import copy
import dataclasses
import itertools
import json
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats
from spread_helpers import assert_corners_match, assert_yield_is_corner_verdict
from typer.testing import CliRunner

from partsel.catalogue import load_paths, open_catalogue, parts_frame, temperature_data
from partsel.cli.common import ExitCode
from partsel.design import load_design
from partsel.solver import PartTable, rank
from partsel.solver.requirements import Requirements
from partsel.solver.spread import board, corners, fix_of, part_yields
from partsel.solver.spread.corners import _evaluate, corner_params
from partsel.solver.spread.evaluate import AMBIENT_KEY, ambients
from partsel.solver.spread.model import interpolate

ROOT = Path(__file__).resolve().parents[1]
DESIGNS = ROOT / "sample-catalog" / "designs"
PARTS = ROOT / "sample-catalog" / "parts"
#: The sample parts with temperature points (sample-catalog/parts/README.md).
WITH_POINTS = ("TBL-1104", "BRQ-644", "HKE-232")


@pytest.fixture(scope="module")
def stored(tmp_path_factory: pytest.TempPathFactory) -> tuple[str, PartTable]:
    """The sample catalogue in SQLite and its part table with the stored temperature data."""
    url = f"sqlite:///{tmp_path_factory.mktemp('temperature') / 'c.sqlite'}"
    eng = open_catalogue(url)
    load_paths(eng, [PARTS])
    table = PartTable(parts_frame(eng), temperature_data(eng))
    eng.dispose()
    return url, table


# ---- interpolation ------------------------------------------------------------------------------


def test_interpolation_hand_values() -> None:
    """Between points: linear (hand values); outside them: held at the end value, no slope
    extrapolated; a row with fewer points is NaN-padded."""
    tp = np.array([[-40.0, 25.0, 85.0], [0.0, 100.0, np.nan]])
    vp = np.array([[1.76, 1.50, 1.26], [10.0, 20.0, np.nan]])
    x = np.array([0.0, 50.0])
    # -40..25 degC: 1.76 + (0 + 40) / 65 * (1.50 - 1.76) = 1.60; 0..100: 10 + 0.5 * 10 = 15
    assert interpolate(tp, vp, x) == pytest.approx([1.60, 15.0], rel=1e-12)
    assert interpolate(tp, vp, np.array([55.0, 100.0])) == pytest.approx([1.38, 20.0])
    assert interpolate(tp, vp, np.array([-55.0, -20.0])) == pytest.approx([1.76, 10.0])
    assert interpolate(tp, vp, np.array([125.0, 150.0])) == pytest.approx([1.26, 20.0])


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-60.0, 150.0), min_size=2, max_size=5, unique=True),
    st.lists(st.floats(-1e3, 1e3), min_size=5, max_size=5),
    st.floats(-80.0, 180.0),
)
def test_interpolation_is_numpy_interp(ts: list[float], vs: list[float], x: float) -> None:
    """Row by row the same as numpy.interp (which also holds the end values)."""
    t = np.sort(np.array(ts))
    if np.min(np.diff(t)) < 1e-6:
        return
    v = np.array(vs[: t.size])
    row_t = np.full((1, 5), np.nan)
    row_v = np.full((1, 5), np.nan)
    row_t[0, : t.size], row_v[0, : t.size] = t, v
    got = interpolate(row_t, row_v, np.array([x]))[0]
    assert got == pytest.approx(float(np.interp(x, t, v)), rel=1e-9, abs=1e-9)


# ---- the catalogue layer ------------------------------------------------------------------------


def test_stored_points_read_back(stored: tuple[str, PartTable]) -> None:
    """The curves the catalogue layer reads from the stored records are the file's values in
    SI units, the spec's own point (at 25 degC) among them, rising in temperature; parts
    without points are absent."""
    _, table = stored
    assert sorted(table.temperature) == sorted(p.casefold() for p in WITH_POINTS)
    curve = table.temperature["tbl-1104"]
    assert set(curve) == {"dead_band", "stage_current"}
    # sample-catalog/parts/tamberlane.yaml, TBL-1104's dead band
    np.testing.assert_allclose(
        np.array(curve["dead_band"]),
        [(-40.0, 1.55, 1.76, 1.97), (25.0, 1.3, 1.5, 1.7), (85.0, 1.06, 1.26, 1.46)],
        rtol=1e-12,
    )
    assert curve["stage_current"][2] == pytest.approx((85.0, 17e-6, 29e-6, 46e-6))


# ---- the distribution at an interpolated ambient ------------------------------------------------


def test_split_normal_at_an_interpolated_ambient(stored: tuple[str, PartTable]) -> None:
    """TBL-1104's stage current at 55 degC is half-way between 25 degC (21 / 35 / 55 uA) and
    85 degC (17 / 29 / 46 uA): 19 / 32 / 50.5 uA. The spec model splits it at typ, each side
    half of a normal with min or max at 3 sigma: P(x < typ) = 1/2, P(x < min) = P(x > max) =
    Phi(-3) (scipy.stats.norm); the ends of the range are min and max. Every board keeps its
    variates across temperature, so its standard score is the same at 25 and at 85 degC."""
    _, table = stored
    i = int(np.flatnonzero(table.part_key == "tbl-1104")[0])
    design = load_design(DESIGNS / "split-supply-driver.toml")
    b = board(table, np.array([i]), design, Requirements.from_mapping({"basis": "typical"}))
    s = b.spread("stage_current")
    assert bool(s.over_temperature[0])
    n = 200_000
    rng = np.random.default_rng(11)
    u, z = rng.random(n), rng.standard_normal(n)
    rows = np.zeros(n, dtype=int)
    x = s.draw(rows, u, z, 55.0)[:, 0]
    lo, typ, hi = 19e-6, 32e-6, 50.5e-6
    assert np.mean(x < typ) == pytest.approx(0.5, abs=4 * math.sqrt(0.25 / n))
    p_end = stats.norm.cdf(-3)
    for tail in (np.mean(x < lo), np.mean(x > hi)):
        assert tail == pytest.approx(p_end, abs=4 * math.sqrt(p_end / n))
    ends = s.at(np.zeros(2, dtype=int), np.array([0.0, 1.0]), 55.0)[:, 0]
    assert ends == pytest.approx([lo, hi], rel=1e-12)
    # the same board at 25 and 85 degC: the same place in the distribution
    x25, x85 = s.draw(rows, u, z, 25.0)[:, 0], s.draw(rows, u, z, 85.0)[:, 0]
    score25 = np.where(x25 < 35e-6, (x25 - 35e-6) / (14e-6 / 3), (x25 - 35e-6) / (20e-6 / 3))
    score85 = np.where(x85 < 29e-6, (x85 - 29e-6) / (12e-6 / 3), (x85 - 29e-6) / (17e-6 / 3))
    assert score85 == pytest.approx(score25, abs=1e-9)


# ---- corners over the ambient -------------------------------------------------------------------

TEMPERATURE_CASES = [
    # design, part, parameters kept (the ambient among them)
    ("split-supply-driver", "TBL-1104",
     {"dead_band", "stage_current", "swing_pos", "source_limit", "slew_rise", "gbw",
      "supply_current", AMBIENT_KEY}),
    ("split-supply-driver", "BRQ-644",
     {"dead_band", "stage_current", "slew_rise", "slew_fall", "gbw", "swing_pos", AMBIENT_KEY}),
    ("micropower-filter-3v", "HKE-232",
     {"stage_current", "swing_pos", "source_limit", "supply_current", "dead_band", AMBIENT_KEY}),
]  # fmt: skip


@pytest.mark.parametrize(("name", "part", "keep"), TEMPERATURE_CASES, ids=lambda c: str(c))
def test_corners_against_brute_force_over_the_ambient(
    stored: tuple[str, PartTable], name: str, part: str, keep: set[str]
) -> None:
    """With specs moving with the ambient the worst case may lie inside the ambient range
    (at a data temperature); brute force: every vertex of the other parameters times the
    ambient on a grid of 41 points plus the data temperatures. A corner found at a vertex
    has the worst margin of all of them; a sampled one a margin at least as low."""
    _, table = stored
    design = load_design(DESIGNS / f"{name}.toml")
    req = Requirements.from_mapping(design.requirements).override(basis="typical")
    r = rank(table, design, req, hints=False)
    rows = np.array([r.index(part)])
    b = board(table, rows, design, req, fix_of(r.fix, rows, req)).only(keep)
    result = corners(b, 0)
    params, spreads = corner_params(b, 0)
    names = [p.key for p in params]
    assert AMBIENT_KEY in names and any(p.over_temperature for p in params)
    k = names.index(AMBIENT_KEY)
    amb = params[k]
    grid = set(np.linspace(0.0, 1.0, 41))
    for t in (-40.0, 25.0, 85.0):  # the sample parts' data temperatures
        if amb.low < t < amb.high:
            grid.add((t - amb.low) / (amb.high - amb.low))
    others = list(itertools.product([0.0, 1.0], repeat=len(params) - 1))
    tt = np.array([(*v[:k], a, *v[k:]) for v in others for a in sorted(grid)])
    margins = _evaluate(b, 0, params, spreads, tt)[0]
    assert_corners_match(result, margins)
    # the junction temperature rises with the ambient: worst at the top of the range
    jt = {c.check: c for c in result.corners}.get("junction_temp")
    if jt is not None:
        assert (AMBIENT_KEY, 1.0) in {(key, at) for key, at, _ in jt.setters}


# ---- Monte Carlo against the corners ------------------------------------------------------------


@pytest.mark.parametrize("name", ["split-supply-driver", "micropower-filter-3v", "line-driver-5v"])
def test_yield_converges_to_the_corner_verdict_over_temperature(
    stored: tuple[str, PartTable], name: str
) -> None:
    """With every catalogue and design spread narrowed 1000 times (the ambient range and the
    specs' movement with it kept), a part with temperature data yields 100 % where its worst
    corner over the ambient passes and 0 % where it fails (Monte Carlo judges each board at
    the ambients of :func:`ambients`; the corner search takes the ambient as a parameter)."""
    _, table = stored
    design = load_design(DESIGNS / f"{name}.toml")
    req = Requirements.from_mapping(design.requirements).override(basis="typical")
    r = rank(table, design, req, hints=False)
    rows = np.array([r.index(p) for p in WITH_POINTS])
    b = board(table, rows, design, req, fix_of(r.fix, rows, req)).shrunk(1e-3)
    judged = ambients(b)
    assert judged[0][0] == design.t_ambient_max_c and judged[-1][0] == design.t_ambient_min_c
    assert assert_yield_is_corner_verdict(b, range(len(WITH_POINTS)), 100, seed=5) >= 2


def test_a_board_is_judged_across_the_ambient(stored: tuple[str, PartTable]) -> None:
    """TBL-1104's dead band is larger when cold (its data), so the crossover THD of the
    split-supply driver (0..70 degC; here at 5 kHz, where the part's slew rate suffices) is
    worst at the lowest ambient. With a THD limit between its values hot and cold, the yield
    over the range is no higher than at either end alone
    (computed independently by taking the design's ambient range to one end), and lower
    cold than hot. (A part without temperature data would be judged at the hot end only.)"""
    _, table = stored
    design = load_design(DESIGNS / "split-supply-driver.toml")
    design = dataclasses.replace(
        design, signal=dataclasses.replace(design.signal, frequency_hz=5e3)
    )
    req = Requirements.from_mapping(
        {"basis": "typical", "conduction": "allowed", "limits": {"max_thd": 0.035}}
    )
    r = rank(table, design, req, hints=False)
    rows = np.array([r.index("TBL-1104")])

    def yield_at(lo: float, hi: float) -> int:
        d = dataclasses.replace(design, t_ambient_min_c=lo, t_ambient_max_c=hi)
        b = board(table, rows, d, req)  # without the fix resistor: the stage as it is
        return int(part_yields(b, 2000, seed=9, detail=False)[0][0])

    t_lo, t_hi = design.t_ambient_min_c, design.t_ambient_max_c
    both, hot, cold = yield_at(t_lo, t_hi), yield_at(t_hi, t_hi), yield_at(t_lo, t_lo)
    assert both <= min(hot, cold)
    assert cold < hot
    assert hot > 1000  # the limit is one most boards meet when hot


# ---- reported, and refused ----------------------------------------------------------------------


def test_specs_without_temperature_data_are_reported(stored: tuple[str, PartTable]) -> None:
    """Corners and yield list per part the specs interpolated over temperature and those given
    at one temperature (spread over temperature unknown); a part without points has none
    interpolated and its specs all unknown. The JSON carries both lists."""
    url, _ = stored
    runner = CliRunner()
    from partsel.cli.main import app

    design = DESIGNS / "split-supply-driver.toml"
    res = runner.invoke(app, ["--db", url, "corners", str(design), "TBL-1104", "--json"])
    assert res.exit_code in (0, 1), res.stderr
    doc = json.loads(res.stdout)
    assert doc["format"] == "partsel.corners/2"
    assert doc["temperature"]["interpolated"] == ["dead_band", "stage_current"]
    assert {"gbw", "slew_rise", "supply_current"} <= set(doc["temperature"]["unknown"])
    assert not set(doc["temperature"]["interpolated"]) & set(doc["temperature"]["unknown"])
    by_key = {p["key"]: p for p in doc["parameters"]}
    assert (
        by_key["dead_band"]["over_temperature"] and not by_key["source_limit"]["over_temperature"]
    )

    res = runner.invoke(
        app, ["--db", url, "yield", str(design), "TBL-1104", "VSR-32", "-n", "100", "--json"]
    )
    assert res.exit_code in (0, 1), res.stderr
    doc = json.loads(res.stdout)
    assert doc["format"] == "partsel.yield/2"
    by_part = {p["part_number"]: p["temperature"] for p in doc["parts"]}
    d = load_design(design)
    assert by_part["VSR-32"]["interpolated"] == []
    assert "dead_band" in by_part["VSR-32"]["unknown"]
    assert by_part["VSR-32"]["ambients_judged_c"] == [d.t_ambient_max_c]
    assert by_part["TBL-1104"]["ambients_judged_c"] == pytest.approx(
        [d.t_ambient_max_c, *[t for t in (25.0,) if d.t_ambient_min_c < t < d.t_ambient_max_c],
         d.t_ambient_min_c]
    )  # fmt: skip
    text = runner.invoke(app, ["--db", url, "corners", str(design), "TBL-1104"])
    assert "interpolated over temperature: dead band" in text.stdout
    assert "spread over temperature unknown" in text.stdout


def _tamberlane() -> dict:
    return yaml.safe_load((PARTS / "tamberlane.yaml").read_text(encoding="utf-8"))


def _point(doc: dict) -> tuple[int, dict]:
    k = next(i for i, p in enumerate(doc["parts"]) if p["part_number"] == "TBL-1104")
    return k, doc["parts"][k]["output"]["dead_band"]


BAD_POINTS = [
    # how the point is broken, the pointer's tail, a fragment of the message
    ("unit", "temperature_points/0/min", "not a voltage"),
    ("order", "temperature_points/1/min", "greater than typ"),
    ("twice", "temperature_points/1/temperature", "given twice"),
    ("sides", "temperature_points/0", "same sides"),
    ("implausible", "temperature_points/1/temperature", "temperature"),
]


@pytest.mark.parametrize(("how", "tail", "fragment"), BAD_POINTS, ids=[b[0] for b in BAD_POINTS])
def test_bad_temperature_points_exit_2_and_store_nothing(
    stored: tuple[str, PartTable], tmp_path: Path, how: str, tail: str, fragment: str
) -> None:
    url, _ = stored
    doc = copy.deepcopy(_tamberlane())
    k, spec = _point(doc)
    pts = spec["temperature_points"]
    if how == "unit":
        pts[0]["min"] = "1.55 A"
    elif how == "order":
        pts[1]["min"] = "1.3 V"  # above its typ of 1.26 V
    elif how == "twice":
        pts[1]["temperature"] = "25 degC"  # the spec's own temperature
    elif how == "sides":
        del pts[0]["max"]
    elif how == "implausible":
        pts[1]["temperature"] = "850 degC"
    bad = tmp_path / "tamberlane.yaml"
    bad.write_text(yaml.safe_dump(doc), encoding="utf-8")

    eng = open_catalogue(url)
    before, curves = parts_frame(eng), temperature_data(eng)
    eng.dispose()
    from partsel.cli.main import app

    res = CliRunner().invoke(app, ["--db", url, "load", str(bad)])
    assert res.exit_code == ExitCode.BAD_INPUT
    assert str(bad) in res.stderr and fragment in res.stderr
    assert f"record TBL-1104: field /parts/{k}/output/dead_band/{tail}" in res.stderr
    eng = open_catalogue(url)
    try:
        pd.testing.assert_frame_equal(parts_frame(eng), before)
        assert temperature_data(eng) == curves
    finally:
        eng.dispose()
