"""Requirements solver: a hand-computed catalogue in which every part fails exactly one check.

The design is worked out by hand (formulas beside each number): 5 V single supply, gain-2
non-inverting stage with the gain network returning to the 2.5 V input bias, 0.5 V peak at 10 kHz
in, so the output is 2.5 V +/- 1 V (1.5 .. 3.5 V) and the input 2.0 .. 3.0 V; the load is 10 kohm
DC-coupled to 2.5 V, so the output current is i(t) = (v(t) - 2.5 V) / 10 kohm, +/- 100 uA, in
phase with the output; no load capacitance; ambient -20 .. 60 degC.

The reference part OK-1 (class AB) passes every check; each other part differs from it in one
value and must fail exactly the check named in its part number's table below, by the margin
computed by hand. Values are invented (no real part).
"""

from __future__ import annotations

import copy
import math
from typing import Any

import numpy as np
import pytest
from sqlalchemy.engine import Engine

from partsel.catalogue import load_documents, parts_frame
from partsel.catalogue.validate import validate_documents
from partsel.design import design_from_mapping
from partsel.physics.circuit import Design
from partsel.solver import CHECK_NAMES, PartTable, Ranking, Requirements, rank
from partsel.solver import checks as C

# ---- the design and the requirements ----------------------------------------------------------

DESIGN: dict[str, Any] = {
    "name": "hand-computed stage",
    "supply": {"positive": "5 V"},
    "signal": {"bias": "2.5 V", "amplitude": "0.5 V", "frequency": "10 kHz"},
    "amplifier": {"configuration": "non-inverting", "gain": 2},
    "load": {"resistance": "10 kohm", "reference": "2.5 V", "coupling": "dc"},
    "environment": {"ambient_min": "-20 degC", "ambient_max": "60 degC"},
    "requirements": {
        "basis": "typical",
        "conduction": "no-change",
        "limits": {
            "min_swing_margin": "0.1 V",
            "min_cm_margin": "0.1 V",
            "min_slew_ratio": 2,
            "min_bandwidth_ratio": 10,
            "max_supply_current": "2 mA",
            "max_price": 1.0,
            "max_offset": "2 mV",
            "max_noise": "30 nV/rtHz",
            "max_bias_current": "100 nA",
            "lifecycle": ["active"],
            "packages": ["SO-8", "MSOP-8"],
            "channels": [1, 2],
        },
    },
}

I_PEAK = 1.0 / 10e3  # output current amplitude, A: 1 V / 10 kohm
SLEW_NEEDED = 2 * math.pi * 10e3 * 1.0  # 2 pi f A, V/s (full-power bandwidth formula)
MEAN_SOURCE = I_PEAK / math.pi  # mean of the positive half of a sine of amplitude I: I / pi


def reference_part(pn: str) -> dict[str, Any]:
    """OK-1: passes every check of DESIGN (typical values only)."""
    return {
        "part_number": pn,
        "maker": "Handwork Analog",
        "channels": 1,
        "lifecycle": "active",
        "packages": [{"code": "SO-8", "pinout": "SGL-8A", "theta_ja": "200 K/W"}],
        "temperature": {"min": "-40 degC", "max": "85 degC"},
        "price": {"unit": 0.5, "currency": "USD"},
        "supply": {"range": {"min": "2.7 V", "max": "12 V"}, "current_per_channel": "500 uA"},
        "input": {
            "rail_to_rail": False,
            "cm_headroom_neg": "0 V",
            "cm_headroom_pos": "1 V",
            "offset_voltage": "1 mV",
            "bias_current": "10 nA",
            "noise_density": "20 nV/rtHz",
        },
        "dynamics": {
            "gbw": "2 MHz",
            "slew_rise": "1 V/us",
            "slew_fall": "1 V/us",
            "min_stable_gain": 1,
            "cap_load_limit": "200 pF",
        },
        "output": {
            "topology": "class-ab",
            "stage_current": "200 uA",
            "source_limit": "20 mA",
            "sink_limit": "20 mA",
            # headroom = 0.2 V + 20 ohm * current, to either rail
            "swing_pos": [
                {"current": "0 A", "headroom": "0.2 V"},
                {"current": "10 mA", "headroom": "0.4 V"},
            ],
            "swing_neg": [
                {"current": "0 A", "headroom": "0.2 V"},
                {"current": "10 mA", "headroom": "0.4 V"},
            ],
        },
    }


def variant(pn: str, *changes: tuple[tuple[str, ...], Any]) -> dict[str, Any]:
    rec = reference_part(pn)
    for path, value in changes:
        node = rec
        for key in path[:-1]:
            node = node[key]
        node[path[-1]] = value
    return rec


FLAT_1V5 = [{"current": "0 A", "headroom": "1.5 V"}, {"current": "10 mA", "headroom": "1.5 V"}]

#: part number, record changes, the one failing check, its margin (check unit), its ratio.
CASES: list[tuple[str, tuple, str, float, float | None]] = [
    # supply range: total 5 V against 5.5 .. 36 V -> 5 - 5.5; ratio 5 / 5.5
    ("SUP-LO", ((("supply", "range"), {"min": "5.5 V", "max": "36 V"}),), "supply_min", -0.5,
     5 / 5.5),
    # 1.8 .. 4.5 V -> 4.5 - 5; ratio 4.5 / 5
    ("SUP-HI", ((("supply", "range"), {"min": "1.8 V", "max": "4.5 V"}),), "supply_max", -0.5,
     0.9),
    # rated from -10 degC, ambient from -20 degC -> -20 - (-10)
    ("TEMP", ((("temperature",), {"min": "-10 degC", "max": "85 degC"}),), "temp_min", -10.0,
     None),
    # lowest input 2.0 V above V-, needs 2.0 V headroom + 0.1 V margin
    ("CM-LO", ((("input", "cm_headroom_neg"), "2 V"),), "input_cm_low", -0.1, 2.0 / 2.1),
    # highest input 3.0 V: 2.0 V below V+, needs 2.0 + 0.1 V
    ("CM-HI", ((("input", "cm_headroom_pos"), "2 V"),), "input_cm_high", -0.1, 2.0 / 2.1),
    # 1.5 V of room at the 3.5 V peak, needs 1.5 V headroom + 0.1 V margin
    ("SW-HI", ((("output", "swing_pos"), FLAT_1V5),), "swing_high", -0.1, 1.5 / 1.6),
    ("SW-LO", ((("output", "swing_neg"), FLAT_1V5),), "swing_low", -0.1, 1.5 / 1.6),
    # peak source current 100 uA against a 50 uA limit
    ("SRC", ((("output", "source_limit"), "50 uA"),), "source_current", -50e-6, 0.5),
    ("SNK", ((("output", "sink_limit"), "50 uA"),), "sink_current", -50e-6, 0.5),
    # 0.1 V/us against 2 x 2 pi f A
    ("SLEW", ((("dynamics", "slew_rise"), "0.1 V/us"), (("dynamics", "slew_fall"), "0.1 V/us")),
     "slew", 0.1e6 - 2 * SLEW_NEEDED, 0.1e6 / (2 * SLEW_NEEDED)),
    # GBW 150 kHz / noise gain 2 = 75 kHz against 10 x 10 kHz
    ("GBW", ((("dynamics", "gbw"), "150 kHz"),), "bandwidth", -25e3, 0.75),
    # noise gain 2 against a minimum stable gain of 5
    ("DECOMP", ((("dynamics", "min_stable_gain"), 5),), "stability", -3.0, 0.4),
    # quiescent 3 mA plus the mean load current I/pi from V+, against 2 mA
    ("IQ", ((("supply", "current_per_channel"), "3 mA"),), "supply_current",
     2e-3 - (3e-3 + MEAN_SOURCE), 2e-3 / (3e-3 + MEAN_SOURCE)),
    ("PRICE", ((("price",), {"unit": 1.5, "currency": "USD"}),), "price", -0.5, 1 / 1.5),
    ("VOS", ((("input", "offset_voltage"), "3 mV"),), "offset", -1e-3, 2 / 3),
    ("NOISE", ((("input", "noise_density"), "45 nV/rtHz"),), "noise", -15e-9, 30 / 45),
    ("IBIAS", ((("input", "bias_current"), "200 nA"),), "bias_current", -100e-9, 0.5),
    ("OLD", ((("lifecycle",), "obsolete"),), "lifecycle", math.nan, None),
    ("DIP", ((("packages",), [{"code": "DIP-8", "pinout": "SGL-8A", "theta_ja": "100 K/W"}]),),
     "package", math.nan, None),
    # a quad (300 uA per channel keeps 4 x 300 uA + I/pi inside the 2 mA budget)
    ("QUAD", ((("channels",), 4), (("supply", "current_per_channel"), "300 uA")), "channels",
     math.nan, None),
]  # fmt: skip


def class_b(pn: str, stage: Any = "50 uA") -> dict[str, Any]:
    """A class-B part: pull-down 50 uA, dead band 1.2 V; otherwise OK-1."""
    rec = reference_part(pn)
    rec["output"]["topology"] = "class-b-pulldown"
    rec["output"]["stage_current"] = stage
    rec["output"]["dead_band"] = "1.2 V"
    return rec


def hot_part() -> dict[str, Any]:
    """Junction: T_j = 60 degC + P * 500 K/W with P = 500 uA * 5 V (quiescent) plus the output
    stage's mean dissipation 2 * I (5 V - A pi / 2) / (2 pi) (the integral of i (V+ - v) over
    the half-period it sources, and the mirror image for sinking): 2.5 mW + 109.2 uW."""
    rec = reference_part("HOT")
    rec["packages"] = [{"code": "SO-8", "pinout": "SGL-8A", "theta_ja": "500 K/W"}]
    rec["temperature"] = {"min": "-40 degC", "max": "60 degC"}
    rec["junction_max"] = "61 degC"
    return rec


P_HOT = 500e-6 * 5.0 + 2 * I_PEAK * (5.0 - math.pi / 2) / (2 * math.pi)
TJ_HOT = 60.0 + P_HOT * 500.0


def _records() -> list[dict[str, Any]]:
    recs = [reference_part("OK-1")]
    recs += [variant(pn, *changes) for pn, changes, *_ in CASES]
    recs.append(class_b("CLASS-B"))
    recs.append(hot_part())
    recs.append(class_b("CORNERS", {"min": "20 uA", "typ": "50 uA", "max": "500 uA"}))
    return recs


@pytest.fixture(scope="module")
def table(module_db_url: str) -> PartTable:
    """The hand-built catalogue, stored and read back (SQLite, and PostgreSQL in CI)."""
    from partsel.catalogue import open_catalogue

    eng: Engine = open_catalogue(module_db_url)
    load_documents(eng, validate_documents([("hand.json", {"parts": copy.deepcopy(_records())})]))
    t = PartTable(parts_frame(eng))
    eng.dispose()
    return t


@pytest.fixture(scope="module")
def design() -> Design:
    return design_from_mapping(copy.deepcopy(DESIGN))


@pytest.fixture(scope="module")
def result(table: PartTable, design: Design) -> Ranking:
    return rank(table, design)


def failing(r: Ranking, pn: str) -> list[str]:
    i = r.index(pn)
    return [CHECK_NAMES[j] for j in np.flatnonzero(r.checks.failing[i])]


def test_reference_part_passes_everything(result: Ranking) -> None:
    i = result.index("OK-1")
    assert result.feasible[i]
    assert failing(result, "OK-1") == []
    # swing to V+: 1.5 V of room, 0.2 V + 20 ohm * 100 uA of headroom needed, 0.1 V margin
    j = C.IDX["swing_high"]
    assert result.checks.margin[i, j] == pytest.approx(1.5 - (0.2 + 20 * I_PEAK) - 0.1, rel=1e-9)
    # closed-loop bandwidth GBW / noise gain = 1 MHz against 10 x 10 kHz
    j = C.IDX["bandwidth"]
    assert result.checks.value[i, j] == pytest.approx(1e6, rel=1e-12)
    assert result.checks.margin[i, j] == pytest.approx(1e6 - 1e5, rel=1e-12)


@pytest.mark.parametrize(("pn", "check", "margin", "ratio"), [c[:1] + c[2:] for c in CASES],
                         ids=[c[0] for c in CASES])  # fmt: skip
def test_each_part_fails_exactly_one_check(
    result: Ranking, pn: str, check: str, margin: float, ratio: float | None
) -> None:
    """The solver names the one failing check as the binding constraint, with its margin.

    Tolerance 1e-5: the closed form takes the mean supply current over 256 samples a period."""
    i = result.index(pn)
    assert not result.feasible[i]
    assert failing(result, pn) == [check]
    assert CHECK_NAMES[result.binding[i]] == check
    j = C.IDX[check]
    if math.isnan(margin):
        assert math.isnan(result.checks.margin[i, j])
    else:
        assert result.checks.margin[i, j] == pytest.approx(margin, rel=1e-5)
    if ratio is None:
        assert math.isnan(result.checks.ratio[i, j])
    else:
        assert result.checks.ratio[i, j] == pytest.approx(ratio, rel=1e-5)


def _early(v_out: float) -> float:
    """The pull-down current at ``v_out`` over its stage current: the Early effect of a
    transistor current source, normalised at mid-supply (partsel.physics.stage, 5 V supply)."""
    from partsel.physics.stage import V_EARLY_PULLDOWN

    return (1 + v_out / V_EARLY_PULLDOWN) / (1 + 2.5 / V_EARLY_PULLDOWN)


def test_class_b_part_fails_the_conduction_check(result: Ranking) -> None:
    """Smallest source current i_min + I_pd = -100 uA + 50 uA against 0.5 x 50 uA, the
    pull-down's current taken at the 1.5 V trough (its Early effect)."""
    i = result.index("CLASS-B")
    assert failing(result, "CLASS-B") == ["conduction"]
    j = C.IDX["conduction"]
    assert result.checks.value[i, j] == pytest.approx(-100e-6 + 50e-6 * _early(1.5), rel=1e-9)
    assert result.checks.margin[i, j] == pytest.approx(
        -100e-6 + 50e-6 * _early(1.5) - 25e-6, rel=1e-9
    )
    assert result.checks.ratio[i, j] == 0.0
    assert result.prediction.handover[i]
    # the flat level: where the load draws the pull-down current, 2.5 V - 50 uA * 10 kohm
    assert result.prediction.flat_level_v[i] == pytest.approx(2.0, rel=1e-9)


def test_junction_temperature_by_hand(result: Ranking) -> None:
    i = result.index("HOT")
    assert failing(result, "HOT") == ["junction_temp"]
    j = C.IDX["junction_temp"]
    assert result.checks.value[i, j] == pytest.approx(TJ_HOT, rel=1e-5)
    assert result.checks.margin[i, j] == pytest.approx(61.0 - TJ_HOT, rel=1e-3)
    # ratio: allowed rise over predicted rise
    assert result.checks.ratio[i, j] == pytest.approx(1.0 / (P_HOT * 500.0), rel=1e-3)


def test_fix_resistor_by_hand(table: PartTable, design: Design) -> None:
    """R to V- keeps the source device at >= half its 50 uA: v/R >= -25 uA - (v - 2.5)/10 k
    wherever the right side is positive (v < 2.25 V); v * 10 k / (2.25 - v) is smallest at the
    1.5 V trough: R <= 20 kohm. E24 (IEC 60063) at 5 %: the largest value with R (1 + 5 %) <=
    20 kohm is 18 kohm. Judged with it fitted (the circuit with the resistor, as a design that
    has it): the source device then carries the whole network current i(t) + v(t)/R from V+,
    so the supply delivers the quiescent 500 uA plus the mean of its positive part (about
    2.5 V / 18 kohm: the AC-coupled load's own current averages to zero), by quadrature."""
    base = Requirements.from_mapping(design.requirements)
    req = base.replace(conduction="fix-allowed", limits={"min_fix_resistance": 22e3})
    r = rank(table, design, req)
    i = r.index("CLASS-B")
    assert r.fix.rail[i] == "negative"
    assert r.fix.r_ohm[i] == pytest.approx(18e3)
    assert failing(r, "CLASS-B") == ["fix_resistor"]
    j = C.IDX["fix_resistor"]
    assert r.checks.margin[i, j] == pytest.approx(-4e3)
    assert r.checks.ratio[i, j] == pytest.approx(18 / 22)
    # a 10 kohm minimum admits it, judged with the resistor fitted
    r = rank(table, design, base.replace(conduction="fix-allowed",
                                         limits={"min_fix_resistance": 10e3}))  # fmt: skip
    i = r.index("CLASS-B")
    assert r.feasible[i] and r.fix.applied[i]
    assert r.checks.status[i, C.IDX["conduction"]] == C.FIXED
    j = C.IDX["supply_current"]
    theta = np.linspace(0.0, 2 * math.pi, 200_001)[:-1]
    network = np.sin(theta) / 10e3 + (2.5 + np.sin(theta)) / 18e3
    expected = 500e-6 + float(np.maximum(network, 0.0).mean())
    assert r.checks.value[i, j] == pytest.approx(expected, rel=1e-3)


def test_worst_case_takes_the_pessimistic_side_per_check(table: PartTable, design: Design) -> None:
    """CORNERS: stage current 20 / 50 / 500 uA. The swing to V+ must carry the load plus the
    largest pull-down (0.2 V + 20 ohm x 600 uA of headroom), the conduction check the smallest
    (-100 uA + 20 uA of source current, at the 1.5 V trough with its Early effect, against
    0.5 x 20 uA)."""
    req = Requirements.from_mapping(design.requirements).replace(basis="worst-case")
    r = rank(table, design, req)
    i = r.index("CORNERS")
    js, jc = C.IDX["swing_high"], C.IDX["conduction"]
    assert r.checks.margin[i, js] == pytest.approx(1.5 - (0.2 + 20 * 600e-6) - 0.1, rel=1e-9)
    assert r.checks.margin[i, jc] == pytest.approx(-100e-6 + 20e-6 * _early(1.5) - 10e-6, rel=1e-9)
    typ = rank(table, design, req.replace(basis="typical"))
    k = typ.index("CORNERS")
    assert typ.checks.margin[k, js] == pytest.approx(1.5 - (0.2 + 20 * 150e-6) - 0.1, rel=1e-9)


def test_hints_name_the_relaxation_that_admits_each_part(result: Ranking) -> None:
    """Relaxing max_offset to 3 mV admits VOS; min_slew_ratio to 0.1 V/us / (2 pi f A)
    (rounded down to three digits) admits SLEW."""
    by_key = {h.requirement: h for h in result.hints}
    h = by_key["max_offset"]
    assert h.current == pytest.approx(2e-3)
    assert h.steps[0].value == pytest.approx(3e-3)
    assert h.steps[0].parts == ("VOS",)
    h = by_key["min_slew_ratio"]
    assert h.steps[0].value == pytest.approx(1.59)  # 0.1e6 / 62.83e3 = 1.5915...
    assert h.steps[0].parts == ("SLEW",)
    # the categorical ones: one more value each
    assert any(h.requirement == "lifecycle" and h.steps[0].parts == ("OLD",) for h in result.hints)
    assert any(h.requirement == "packages" and "DIP-8" in h.steps[0].value for h in result.hints)


def test_score_and_pareto_of_the_feasible_parts(result: Ranking) -> None:
    """Only OK-1 is feasible: it scores 100 (best in every objective) and is the Pareto set."""
    assert result.n_feasible == 1
    i = result.index("OK-1")
    assert result.score[i] == pytest.approx(100.0)
    assert result.pareto[i] and result.pareto.sum() == 1
    assert result.rank[i] == 1 and result.order[0] == i
