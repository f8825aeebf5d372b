"""Substitute vetting and side-by-side comparison on a hand-built catalogue.

The incumbent INC-2 is an invented class-B dual (values plausible for the trade, from no
datasheet). Each other part differs from it in one way and must get the verdict named in its
test, with the reason code named there. The designs are worked out by hand beside each test
(design notes sections 3 and 4); the glitch check uses the closed form of design notes
section 4, ``glitch = sqrt(2 dV G s / omega_t)``.
"""

from __future__ import annotations

import copy
import json
import math
import re
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
from jsonschema import Draft202012Validator

from partsel.catalogue import load_documents, load_paths, open_catalogue, parts_frame
from partsel.catalogue.validate import validate_documents
from partsel.design import design_from_mapping
from partsel.errors import InputError
from partsel.params import PARAMS
from partsel.physics.circuit import Design
from partsel.solver import checks as C
from partsel.solver.substitute import (
    VERDICTS,
    Candidate,
    compare_parts,
    vet_substitutes,
)

PROJECT = Path(__file__).resolve().parents[1]
SCHEMA = json.loads((PROJECT / "data-schema" / "substitutes.schema.json").read_text())
MAKER = "Handwork Analog"


def incumbent(pn: str = "INC-2") -> dict[str, Any]:
    """The invented incumbent: a single-supply class-B dual, min / typ / max where usual."""
    return {
        "part_number": pn,
        "maker": MAKER,
        "channels": 2,
        "lifecycle": "obsolete",
        "packages": [
            {"code": "SO-8", "pinout": "DUAL-8X", "theta_ja": "160 K/W"},
            {"code": "DIP-8", "pinout": "DUAL-8X", "theta_ja": "100 K/W"},
        ],
        "temperature": {"min": "-40 degC", "max": "85 degC"},
        "price": {"unit": 0.2, "currency": "USD"},
        "supply": {
            "range": {"min": "3 V", "max": "32 V"},
            "current_per_channel": {"typ": "400 uA", "max": "700 uA"},
        },
        "input": {
            "rail_to_rail": False,
            "cm_headroom_neg": {"typ": "-0.2 V", "max": "0 V"},
            "cm_headroom_pos": {"typ": "1.5 V", "max": "2 V"},
            "offset_voltage": {"typ": "2 mV", "max": "5 mV"},
            "bias_current": {"typ": "20 nA", "max": "100 nA"},
            "noise_density": {"typ": "40 nV/rtHz", "max": "60 nV/rtHz"},
        },
        "dynamics": {
            "gbw": {"min": "0.8 MHz", "typ": "1 MHz"},
            "slew_rise": {"min": "0.4 V/us", "typ": "0.6 V/us"},
            "slew_fall": {"min": "0.4 V/us", "typ": "0.6 V/us"},
            "min_stable_gain": 1,
            "cap_load_limit": {"min": "80 pF", "typ": "100 pF"},
        },
        "output": {
            "topology": "class-b-pulldown",
            "dead_band": {"min": "1.0 V", "typ": "1.2 V", "max": "1.5 V"},
            "stage_current": {"min": "150 uA", "typ": "200 uA", "max": "300 uA"},
            "source_limit": {"min": "20 mA", "typ": "40 mA"},
            "sink_limit": {"min": "10 mA", "typ": "20 mA"},
            "swing_pos": [
                {"current": "0 A", "headroom": {"typ": "1.2 V", "max": "1.4 V"}},
                {"current": "10 mA", "headroom": {"typ": "1.5 V", "max": "1.8 V"}},
            ],
            "swing_neg": [
                {"current": "0 A", "headroom": {"typ": "5 mV", "max": "15 mV"}},
                {"current": "50 uA", "headroom": {"typ": "0.25 V", "max": "0.35 V"}},
                {"current": "1 mA", "headroom": {"typ": "0.7 V", "max": "0.85 V"}},
                {"current": "10 mA", "headroom": {"typ": "1.1 V", "max": "1.3 V"}},
            ],
        },
    }


def variant(pn: str, *changes: tuple[tuple[str, ...], Any], base: str = "INC-2") -> dict:
    rec = incumbent(pn)
    rec["lifecycle"] = "active"
    for path, value in changes:
        node = rec
        for key in path[:-1]:
            node = node[key]
        if value is None:
            del node[path[-1]]
        else:
            node[path[-1]] = value
    return rec


def scaled(rec: dict, path: tuple[str, ...], factor: float) -> None:
    """Multiply every side of the spec at ``path`` by ``factor`` (strings 'N unit')."""
    node = rec
    for key in path[:-1]:
        node = node[key]
    spec = node[path[-1]]
    for side, text in list(spec.items()):
        num, unit = text.split(" ", 1)
        spec[side] = f"{float(num) * factor:.6g} {unit}"


def better_part(pn: str, topology: str = "class-b-pulldown") -> dict:
    """Strictly better than INC-2 in every parameter (same packages, wider ranges)."""
    rec = variant(pn)
    rec["output"]["topology"] = topology
    rec["temperature"] = {"min": "-40 degC", "max": "125 degC"}
    rec["supply"]["range"] = {"min": "2.7 V", "max": "36 V"}
    for path, factor in [
        (("supply", "current_per_channel"), 0.8),
        (("input", "offset_voltage"), 0.5),
        (("input", "bias_current"), 0.5),
        (("input", "noise_density"), 0.8),
        (("dynamics", "gbw"), 1.2),
        (("dynamics", "slew_rise"), 1.2),
        (("dynamics", "slew_fall"), 1.2),
        (("dynamics", "cap_load_limit"), 1.5),
        (("output", "dead_band"), 0.8),
        (("output", "stage_current"), 1.5),
        (("output", "source_limit"), 1.2),
        (("output", "sink_limit"), 1.2),
    ]:
        scaled(rec, path, factor)
    rec["input"]["cm_headroom_neg"] = {"typ": "-0.3 V", "max": "-0.1 V"}
    rec["input"]["cm_headroom_pos"] = {"typ": "1.2 V", "max": "1.6 V"}
    for pt in rec["output"]["swing_pos"] + rec["output"]["swing_neg"]:
        for side, text in list(pt["headroom"].items()):
            num, unit = text.split(" ", 1)
            pt["headroom"][side] = f"{float(num) * 0.8:.6g} {unit}"
    return rec


def records() -> list[dict]:
    quad = variant("QUAD-4", (("channels",), 4))
    quad["packages"] = [{"code": "SO-14", "pinout": "QUAD-14X", "theta_ja": "110 K/W"}]
    ab = better_part("AB-2", "class-ab")
    ab["output"].pop("dead_band")
    fast = variant("FAST-2", (("dynamics", "gbw"), {"min": "4 MHz", "typ": "5 MHz"}))
    low_gbw = variant("GBW-2", (("dynamics", "gbw"), {"min": "0.5 MHz", "typ": "0.7 MHz"}))
    cm = variant("CM-2", (("input", "cm_headroom_neg"), {"typ": "1 V", "max": "1.5 V"}))
    low_pd = variant(
        "PD-2", (("output", "stage_current"), {"min": "30 uA", "typ": "40 uA", "max": "60 uA"})
    )
    db = variant(
        "DB-2", (("output", "dead_band"), {"min": "1.5 V", "typ": "1.8 V", "max": "2.25 V"})
    )
    no_guar = variant("NOG-2", (("dynamics", "gbw"), {"typ": "1 MHz"}))
    no_cap = variant("NOCAP-2", (("dynamics", "cap_load_limit"), None))
    so_only = variant("SO-2")
    so_only["packages"] = so_only["packages"][:1]
    pinout = variant("PIN-2")
    pinout["packages"] = [{"code": "SO-8", "pinout": "DUAL-8Y", "theta_ja": "160 K/W"}]
    inc_t = incumbent("INCT-2")
    inc_t["dynamics"]["gbw"] = {"typ": "1 MHz"}
    typ_c = variant("TYPC-2", (("dynamics", "gbw"), {"min": "0.6 MHz", "typ": "1 MHz"}))
    return [
        incumbent(),
        variant("SAME-2"),
        better_part("BETTER-2"),
        ab,
        fast,
        low_gbw,
        cm,
        low_pd,
        db,
        no_guar,
        no_cap,
        so_only,
        pinout,
        quad,
        variant("OLD-2", (("lifecycle",), "obsolete")),
        variant("NRND-2", (("lifecycle",), "not-for-new-designs")),
        inc_t,
        typ_c,
    ]


@pytest.fixture(scope="module")
def frame(module_db_url: str) -> pd.DataFrame:
    eng = open_catalogue(module_db_url)
    doc = {"makers": [{"name": MAKER}], "parts": copy.deepcopy(records())}
    load_documents(eng, validate_documents([("hand.json", doc)]))
    f = parts_frame(eng)
    eng.dispose()
    return f


def design(
    *,
    v_pos: str = "12 V",
    bias: str = "6 V",
    amp: str = "0.5 V",
    load: str = "20 kohm",
    load_ref: str | None = None,
    c_load: str | None = None,
    ref: str | None = None,
    conduction: str | None = None,
) -> Design:
    """Gain-2 non-inverting stage; the load returns to the output's bias level (DC)."""
    amp_cfg: dict[str, Any] = {"configuration": "non-inverting", "gain": 2}
    if ref is not None:
        amp_cfg["reference"] = ref
    ld: dict[str, Any] = {"resistance": load, "reference": load_ref or bias, "coupling": "dc"}
    if c_load is not None:
        ld["capacitance"] = c_load
    data: dict[str, Any] = {
        "name": "hand-computed",
        "supply": {"positive": v_pos},
        "signal": {"bias": bias, "amplitude": amp, "frequency": "1 kHz"},
        "amplifier": amp_cfg,
        "load": ld,
        "environment": {"ambient_min": "0 degC", "ambient_max": "50 degC"},
    }
    if conduction is not None:
        data["requirements"] = {"conduction": conduction}
    return design_from_mapping(data)


def one(
    frame: pd.DataFrame, pn: str, d: Design | None = None, inc: str = "INC-2", **kw: Any
) -> Candidate:
    v = vet_substitutes(frame, inc, d, candidates=[pn], **kw)
    assert [c.part_number for c in v.candidates] == [pn]
    return v.candidates[0]


def codes(c: Candidate, severity: str | None = None) -> set[str]:
    return {r.code for r in c.reasons if severity is None or r.severity == severity}


# ---- verdict classes --------------------------------------------------------------------------


def test_identical_part_is_a_drop_in(frame: pd.DataFrame) -> None:
    c = one(frame, "SAME-2")
    assert c.verdict == "drop-in"
    assert {f.change for f in c.function} == {"equal"}
    assert codes(c, "review") == codes(c, "fail") == set()


# Which way is better for each parameter: a fact of the trade (common practice), written out
# here independently of partsel.params so that a wrong direction in the registry fails.
HIGHER_IS_BETTER = {
    "supply_current": False,  # draws more from the supply
    "cm_headroom_neg": False,  # input range stops further from V-
    "cm_headroom_pos": False,
    "offset_voltage": False,
    "bias_current": False,
    "noise_density": False,
    "gbw": True,
    "slew_rise": True,
    "slew_fall": True,
    "cap_load_limit": True,  # drives more capacitance stably
    "dead_band": False,  # wider crossover dead band, larger glitch
    "stage_current": True,  # more pull-down current, later handover
    "source_limit": True,
    "sink_limit": True,
}


def test_better_in_every_parameter_is_a_drop_in_direction_aware(frame: pd.DataFrame) -> None:
    """BETTER-2 moved every value the trade calls better; each comparison must say 'better'
    and give the change (candidate minus incumbent) with the right sign."""
    assert set(HIGHER_IS_BETTER) == {p.key for p in PARAMS}
    c = one(frame, "BETTER-2")
    assert c.verdict == "drop-in", c.reasons
    by_key = {f.key: f for f in c.function}
    for key, higher in HIGHER_IS_BETTER.items():
        f = by_key[key]
        assert f.change == "better", key
        assert (f.delta > 0) == higher, key
    # guaranteed values compared, like with like: gbw min 0.96 MHz against 0.8 MHz
    assert by_key["gbw"].side_incumbent == by_key["gbw"].side_candidate == "min"
    assert by_key["gbw"].ratio == pytest.approx(1.2, rel=1e-9)
    assert by_key["swing_neg"].change == by_key["swing_pos"].change == "better"


def test_other_topology_is_flagged_although_every_number_is_better(frame: pd.DataFrame) -> None:
    """AB-2 (class AB) beats INC-2 in every figure, yet its output stage behaves otherwise."""
    for d in (None, design()):
        c = one(frame, "AB-2", d)
        assert c.verdict == "review"
        assert "topology" in codes(c, "review")
        assert c.counts()["worse"] == 0
        stage = {f.key: f for f in c.function}["stage_current"]
        assert stage.change == "n/a"  # a quiescent current is no pull-down current


def test_lower_gbw_needs_review_alone_but_fits_a_circuit_that_tolerates_it(
    frame: pd.DataFrame,
) -> None:
    """GBW-2: 0.5 MHz guaranteed against 0.8 MHz. In the 12 V design (gain 2, 1 kHz) the
    closed-loop bandwidth GBW / G = 250 kHz is still 250x the signal: it fits this circuit."""
    assert one(frame, "GBW-2").verdict == "review"
    c = one(frame, "GBW-2", design())
    assert c.verdict == "fits-this-circuit"
    assert "worse-gbw" in codes(c, "circuit-ok")
    bw = {x.check: x for x in c.circuit}["bandwidth"]
    # single-pole closed-loop bandwidth GBW / noise gain (op-amp application formula)
    assert bw.candidate == pytest.approx(0.5e6 / 2, rel=1e-12)
    assert bw.incumbent == pytest.approx(0.8e6 / 2, rel=1e-12)
    assert c.circuit_pass is True
    assert c.in_circuit is not None and c.in_circuit["verdict"] == "feasible"


@pytest.mark.parametrize(
    ("pn", "code", "text"),
    [
        ("QUAD-4", "channels", "4 channel"),
        ("PIN-2", "package", "other pinout"),
        ("OLD-2", "lifecycle", "obsolete"),
    ],
)
def test_unsuitable_form_and_fit(frame: pd.DataFrame, pn: str, code: str, text: str) -> None:
    c = one(frame, pn)
    assert c.verdict == "unsuitable"
    assert code in codes(c, "fail")
    assert any(text in r.message for r in c.reasons if r.code == code)


def test_not_for_new_designs_and_missing_values_need_review(frame: pd.DataFrame) -> None:
    assert "lifecycle" in codes(one(frame, "NRND-2"), "review")
    c = one(frame, "NOCAP-2")
    assert c.verdict == "review" and "unknown-cap_load_limit" in codes(c, "review")
    c = one(frame, "NOG-2")  # gives a typical GBW only, INC-2 guarantees one
    assert c.verdict == "review" and "no-guarantee-gbw" in codes(c, "review")


def test_typicals_compared_when_the_incumbent_gives_no_guarantee(frame: pd.DataFrame) -> None:
    """INCT-2 states only a typical GBW; TYPC-2 the same typical plus a guaranteed minimum.
    Compared like with like (typicals) they are equal: no penalty for the fuller datasheet,
    also in the circuit (closed-loop bandwidth on typicals, 1 MHz / 2)."""
    for d in (None, design()):
        c = one(frame, "TYPC-2", d, inc="INCT-2")
        assert c.verdict == "drop-in", c.reasons
        g = {f.key: f for f in c.function}["gbw"]
        assert (g.change, g.side_incumbent, g.note) == ("equal", "typ", "typical")
        if d is not None:
            bw = {x.check: x for x in c.circuit}["bandwidth"]
            assert bw.candidate == bw.incumbent == pytest.approx(0.5e6, rel=1e-12)


def test_package_partial_needs_review_until_the_package_is_given(frame: pd.DataFrame) -> None:
    c = one(frame, "SO-2")
    assert c.verdict == "review" and "package-partial" in codes(c, "review")
    assert one(frame, "SO-2", package="SO-8").verdict == "drop-in"
    c = one(frame, "SO-2", package="DIP-8")
    assert c.verdict == "unsuitable" and "package" in codes(c, "fail")
    with pytest.raises(InputError, match="does not come in"):
        vet_substitutes(frame, "INC-2", package="TSSOP-8")


def test_much_higher_gbw_is_flagged_with_a_capacitive_load(frame: pd.DataFrame) -> None:
    """FAST-2 has 5x the GBW: flagged when the output drives a capacitance (or without a
    design, when nobody knows), not in a design without load capacitance."""
    assert "gbw-cap-load" in codes(one(frame, "FAST-2"), "review")
    assert one(frame, "FAST-2", design()).verdict == "drop-in"
    c = one(frame, "FAST-2", design(c_load="100 pF"))
    assert c.verdict == "review" and "gbw-cap-load" in codes(c, "review")


def test_input_range_that_no_longer_covers_the_bias_point(frame: pd.DataFrame) -> None:
    """CM-2's input range starts 1.5 V above V- (INC-2's includes V-). Without a design that is
    a behaviour flag; in a design biased at 1.0 V (input 0.75 .. 1.25 V, output 2 +- 0.5 V with
    the gain network to ground) the bias point lies outside: unsuitable."""
    c = one(frame, "CM-2")
    assert c.verdict == "review" and "input-range-cm_headroom_neg" in codes(c, "review")
    d = design(bias="1 V", amp="0.25 V", ref="0 V", load_ref="2 V")
    c = one(frame, "CM-2", d)
    assert c.verdict == "unsuitable"
    msg = next(r.message for r in c.reasons if r.code == "circuit-input_cm_low")
    assert "bias point" in msg
    assert "short by 500 mV" in msg  # the bias point 1.0 V against the range's bottom 1.5 V
    cm = {x.check: x for x in c.circuit}["input_cm_low"]
    # lowest input 0.75 V minus the bottom of the range (0 V + 1.5 V); the incumbent: 0.75 - 0
    assert cm.candidate_margin == pytest.approx(0.75 - 1.5, abs=1e-9)
    assert cm.incumbent_margin == pytest.approx(0.75, abs=1e-9)


def test_conduction_mode_change_where_the_incumbent_has_none(frame: pd.DataFrame) -> None:
    """The 20 kohm load to the 6 V bias must sink up to 1 V / 20 kohm = 50 uA. INC-2's pull-down
    (150 uA guaranteed) carries that; PD-2's 30 uA does not, so its stage hands over
    (design notes section 3): unsuitable in a design that wants no change of mode, a review
    where the design accepts the fix resistor (the board must add it), and only a review
    without a design."""
    assert one(frame, "PD-2").verdict == "review"
    c = one(frame, "PD-2", design(conduction="no-change"))
    assert c.verdict == "unsuitable"
    assert "circuit-conduction" in codes(c, "fail")
    cond = {x.check: x for x in c.circuit}["conduction"]
    assert (cond.incumbent_ok, cond.candidate_ok) == (True, False)
    # least source-device current: I_pd - 50 uA, the pull-down at the 5 V trough (its Early
    # effect, normalised at mid-supply 6 V: partsel.physics.stage)
    from partsel.physics.stage import V_EARLY_PULLDOWN

    early = (1 + 5.0 / V_EARLY_PULLDOWN) / (1 + 6.0 / V_EARLY_PULLDOWN)
    assert cond.incumbent == pytest.approx(150e-6 * early - 50e-6, rel=1e-6)
    assert cond.candidate == pytest.approx(30e-6 * early - 50e-6, rel=1e-6)
    c = one(frame, "PD-2", design())  # conduction "fix-allowed", the default
    assert c.verdict == "review"
    assert "circuit-conduction" in codes(c, "review")
    assert c.in_circuit is not None and c.in_circuit["verdict"] == "feasible-with-fix"
    assert c.in_circuit["fix"]["rail"] == "negative"


def test_larger_glitch_where_both_hand_over_needs_review(frame: pd.DataFrame) -> None:
    """A 2 kohm load to the 6 V bias sinks 500 uA peak: both parts hand over. The glitch grows
    as sqrt(2 dV G s / omega_t) (design notes section 4; not slew-limited here), dV being the
    distance the crossing covers (the dead band less the devices' soft edges at this load,
    ClosedForm.dead_band_eff_v): the check reports the closed form's glitches, and DB-2's dead
    band of 2.25 V against 1.5 V makes its glitch at least sqrt(1.5) times larger (the soft
    edges take the same distance off both). The design allows a change of mode, so the glitch
    is judged as designed."""
    from partsel.api import select_parts
    from partsel.physics.analysis import predict_closed_form
    from partsel.physics.stage import StageParams

    d = design(load="2 kohm", conduction="allowed")
    c = one(frame, "DB-2", d)
    assert c.verdict == "review"
    assert "circuit-glitch" in codes(c, "review")
    g = {x.check: x for x in c.circuit}["glitch"]
    both = select_parts(frame, ["INC-2", "DB-2"])
    cf = predict_closed_form(StageParams.from_columns(both, "worst-case"), d)  # vetting's basis
    assert list(cf.conduction) == ["changes-mode", "changes-mode"]
    assert g.incumbent == pytest.approx(cf.glitch_v[0], rel=1e-9)
    assert g.candidate == pytest.approx(cf.glitch_v[1], rel=1e-9)
    assert g.candidate / g.incumbent >= math.sqrt(1.5)
    # both change mode, which the design allows: not held against the candidate
    assert "circuit-conduction" not in codes(c, "fail") | codes(c, "review")


def test_default_pool_order_and_unsuitable_filter(frame: pd.DataFrame) -> None:
    v = vet_substitutes(frame, "INC-2")
    pns = [c.part_number for c in v.candidates]
    assert "QUAD-4" not in pns and "PIN-2" not in pns  # other footprint: not even examined
    assert "OLD-2" not in pns  # unsuitable: left out by default
    assert {c.verdict for c in v.candidates} <= {"drop-in", "review"}
    ranks = [VERDICTS.index(c.verdict) for c in v.candidates]
    assert ranks == sorted(ranks)
    assert list(v.candidates) == sorted(v.candidates, key=Candidate.sort_key)
    assert pns[:2] == ["BETTER-2", "SAME-2"]  # drop-ins, the better one first
    full = vet_substitutes(frame, "INC-2", include_unsuitable=True)
    assert {"QUAD-4", "PIN-2", "OLD-2"} <= {c.part_number for c in full.candidates}
    assert vet_substitutes(frame, "INC-2", limit=3).candidates == v.candidates[:3]
    frame_out = v.to_frame()
    assert list(frame_out["part_number"]) == pns


def test_bad_input_is_an_input_error(frame: pd.DataFrame) -> None:
    with pytest.raises(InputError, match="unknown part number"):
        vet_substitutes(frame, "NOPE-1")
    with pytest.raises(InputError, match="unknown basis"):
        vet_substitutes(frame, "INC-2", basis="median")  # type: ignore[arg-type]
    with pytest.raises(InputError, match="unknown part number"):
        vet_substitutes(frame, "INC-2", candidates=["SAME-2", "NOPE-1"])


def test_json_validates_against_the_schema(frame: pd.DataFrame) -> None:
    Draft202012Validator.check_schema(SCHEMA)
    val = Draft202012Validator(SCHEMA)
    for d in (None, design(load="2 kohm", c_load="100 pF")):
        out = vet_substitutes(frame, "INC-2", d, include_unsuitable=True).to_dict()
        val.validate(json.loads(json.dumps(out, allow_nan=False)))
    cmp = compare_parts(frame, ["INC-2", "AB-2", "PD-2"], design()).to_dict()
    val.validate(json.loads(json.dumps(cmp, allow_nan=False)))


def test_schema_enums_follow_the_registries() -> None:
    """The hand-kept schema must name every parameter of PARAMS and every in-circuit check."""
    d = SCHEMA["$defs"]
    assert set(d["param"]["properties"]["parameter"]["enum"]) == {p.key for p in PARAMS} | {
        "swing_pos",
        "swing_neg",
        "junction_max_c",
    }
    assert d["circuit_row"]["properties"]["check"]["enum"] == list(C.CHECK_NAMES)
    assert d["circuit_cmp"]["properties"]["check"]["enum"] == [
        c.name for c in C.CHECKS if c.sense != "is"
    ]
    assert d["candidate"]["properties"]["verdict"]["enum"] == list(VERDICTS)


# ---- comparison -------------------------------------------------------------------------------


def test_compare_marks_the_best_direction_aware(frame: pd.DataFrame) -> None:
    cmp = compare_parts(frame, ["INC-2", "BETTER-2", "GBW-2"], design())
    rows = {r.key: r for r in cmp.rows}
    assert rows["gbw"].values == pytest.approx((0.8e6, 0.96e6, 0.5e6))
    assert rows["gbw"].best == (1,)
    assert rows["offset_voltage"].best == (1,)  # lower offset is better
    assert rows["supply_max_v"].best == (1,)
    # closed-loop bandwidth margin: GBW / 2 minus the 1 kHz required (op-amp formula)
    assert rows["circuit_bandwidth_margin"].values == pytest.approx(
        (0.4e6 - 1e3, 0.48e6 - 1e3, 0.25e6 - 1e3)
    )
    assert rows["circuit_conduction_margin"].ok == (True, True, True)
    assert rows["supply_max_v"].label == "supply range, max"
    assert rows["topology"].best == ()  # no order among topologies
    table = cmp.to_frame()
    assert list(table.columns[2:5]) == ["INC-2", "BETTER-2", "GBW-2"]
    assert table.loc["gbw", "best"] == "BETTER-2"


@pytest.mark.parametrize("parts", [["INC-2"], ["INC-2", "SAME-2", "AB-2", "FAST-2", "CM-2"]])
def test_compare_takes_two_to_four_parts(frame: pd.DataFrame, parts: list[str]) -> None:
    with pytest.raises(InputError, match="2 to 4"):
        compare_parts(frame, parts)


# ---- the sample catalogue ---------------------------------------------------------------------


@pytest.fixture(scope="module")
def sample(make_db_url: Callable[[str], str], module_db_url: str) -> pd.DataFrame:
    """The sample catalogue in a second database on the module's backend."""
    backend = "postgresql" if module_db_url.startswith("postgresql") else "sqlite"
    eng = open_catalogue(make_db_url(backend))
    load_paths(eng, [PROJECT / "sample-catalog" / "parts"])
    f = parts_frame(eng)
    eng.dispose()
    return f


def readme_pairs() -> list[tuple[str, list[str]]]:
    """The substitute pairs the demo catalogue's author wrote down (its README)."""
    text = (PROJECT / "sample-catalog" / "parts" / "README.md").read_text(encoding="utf-8")
    section = text.split("## Substitutes", 1)[1].split("##", 1)[0]
    out = []
    for m in re.finditer(r"^- (\S+) \([^)]*\) -> (.+)$", section, flags=re.MULTILINE):
        out.append((m.group(1), [p.strip() for p in m.group(2).split(",")]))
    return out


def test_sample_obsolete_parts_get_sensible_replacements(sample: pd.DataFrame) -> None:
    """Every successor the catalogue's README names is found among the top three candidates
    and is not unsuitable; the first one named is a drop-in, or needs review only for a
    package the board may not use (e.g. no DIP version)."""
    pairs = readme_pairs()
    assert len(pairs) >= 8
    for old, subs in pairs:
        v = vet_substitutes(sample, old)
        top = [c.part_number for c in v.candidates[:3]]
        first = next(c for c in v.candidates if c.part_number == subs[0])
        assert subs[0] in top, (old, top)
        assert first.verdict in ("drop-in", "review"), (old, first.reasons)
        if first.verdict == "review":
            assert codes(first, "review") == {"package-partial"}, (old, first.reasons)
        for s in subs:
            assert any(c.part_number == s for c in v.candidates), (old, s)


def test_sample_look_alikes_with_another_stage_are_flagged(sample: pd.DataFrame) -> None:
    """BRQ-722 (class AB) and HKE-142A (class A) share BRQ-622A's supply range, GBW, slew and
    pinout (the catalogue README's look-alikes); both are flagged for their output stage."""
    v = vet_substitutes(sample, "BRQ-622A", candidates=["BRQ-722", "HKE-142A", "VSR-52"])
    for c in v.candidates:
        assert "topology" in codes(c, "review"), c.part_number
    v = vet_substitutes(sample, "BRQ-612", candidates=["FNK-81"], package="SOT23-5")
    assert v.candidates[0].verdict == "unsuitable"  # same package, other pinout
