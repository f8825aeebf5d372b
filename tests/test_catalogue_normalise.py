"""Normalisation of part records into flat rows of SI floats."""

from __future__ import annotations

import math

import pytest

from partsel.catalogue import FLAT_COLUMN_NAMES, normalise_part
from partsel.catalogue.columns import META_COLUMNS, PARAM_COLUMNS, SWING_COLUMNS
from partsel.errors import InputError
from partsel.params import MAX_SWING_POINTS, PARAMS, SIDES


def test_column_list_covers_every_param_and_swing_point() -> None:
    assert len(FLAT_COLUMN_NAMES) == len(set(FLAT_COLUMN_NAMES))
    assert len(PARAM_COLUMNS) == 3 * len(PARAMS)
    assert len(SWING_COLUMNS) == 2 * MAX_SWING_POINTS * 4
    assert FLAT_COLUMN_NAMES[: len(META_COLUMNS)][:2] == ("part_number", "maker")


def test_row_has_exactly_the_flat_columns(quill_doc: dict) -> None:
    for record in quill_doc["parts"]:
        assert tuple(normalise_part(record)) == FLAT_COLUMN_NAMES


def test_meta_columns(quill_doc: dict) -> None:
    row = normalise_part(quill_doc["parts"][0])
    assert row["packages"] == "SO-8:DUAL-8A;DIP-8:DUAL-8A"
    assert row["theta_ja_k_per_w"] == 160.0  # the larger of 160 and 100 K/W: pessimistic
    assert (row["temp_min_c"], row["temp_max_c"], row["junction_max_c"]) == (-40, 85, 150)
    assert (row["price"], row["currency"]) == (0.21, "EUR")
    assert (row["supply_min_v"], row["supply_max_v"]) == (3.0, 30.0)
    assert row["rail_to_rail_input"] is False
    assert row["min_stable_gain"] == 1.0


def test_param_sides_in_si(quill_doc: dict) -> None:
    row = normalise_part(quill_doc["parts"][0])
    assert row["slew_rise_min"] == pytest.approx(0.3e6)  # 0.3 V/us in V/s
    assert row["slew_rise_typ"] == pytest.approx(0.5e6)
    assert math.isnan(row["slew_rise_max"])
    assert row["noise_density_typ"] == pytest.approx(40e-9)
    assert row["gbw_min"] == pytest.approx(0.7e6)


def test_bare_value_is_typ_and_absent_is_nan(quill_doc: dict) -> None:
    row = normalise_part(quill_doc["parts"][1])
    assert row["slew_rise_typ"] == 5e5
    assert math.isnan(row["slew_rise_min"]) and math.isnan(row["slew_rise_max"])
    assert all(math.isnan(row[f"offset_voltage_{s}"]) for s in SIDES)
    assert math.isnan(row["price"]) and row["currency"] is None
    assert math.isnan(row["min_stable_gain"])


def test_dead_band_defaults_to_zero_for_biased_stages(quill_doc: dict) -> None:
    """DEVELOPERS.md: dead_band optional (default 0) outside class-b-pulldown."""
    rec = quill_doc["parts"][1]
    rec["output"]["topology"] = "class-ab"
    del rec["output"]["dead_band"]
    row = normalise_part(rec)
    assert [row[f"dead_band_{s}"] for s in SIDES] == [0.0, 0.0, 0.0]


def test_swing_points_padded(quill_doc: dict) -> None:
    row = normalise_part(quill_doc["parts"][0])
    assert [row[f"swing_neg_i{k}"] for k in range(3)] == pytest.approx([0, 50e-6, 1e-3])
    assert row["swing_neg_v1_typ"] == pytest.approx(0.3)
    assert row["swing_neg_v2_max"] == pytest.approx(0.9)
    assert math.isnan(row["swing_neg_v0_min"])
    assert all(math.isnan(row[f"swing_neg_i{k}"]) for k in range(3, MAX_SWING_POINTS))
    assert all(math.isnan(row[f"swing_pos_v{k}_typ"]) for k in range(2, MAX_SWING_POINTS))


def test_saturation_resistance_rail_becomes_two_points(quill_doc: dict) -> None:
    """headroom = V_sat + R_out * I (a straight line; analytic), second point at the typical
    source limit for V+ and at the typical sink limit for V-."""
    rec = quill_doc["parts"][0]
    out = rec["output"]
    out["swing_pos"] = {
        "saturation": {"typ": "20 mV", "max": "35 mV"},
        "resistance": {"typ": "60 ohm", "max": "90 ohm"},
    }
    out["swing_neg"] = {"saturation": "10 mV", "resistance": "30 ohm"}
    row = normalise_part(rec)
    i_src, i_snk = 40e-3, 20e-3  # typical source / sink limits of the fixture part
    assert row["swing_pos_i0"] == 0.0
    assert row["swing_pos_i1"] == pytest.approx(i_src)
    assert row["swing_pos_v0_typ"] == pytest.approx(0.020)
    assert row["swing_pos_v1_typ"] == pytest.approx(0.020 + 60 * i_src)
    assert row["swing_pos_v1_max"] == pytest.approx(0.035 + 90 * i_src)
    assert math.isnan(row["swing_pos_v1_min"])
    assert row["swing_neg_i1"] == pytest.approx(i_snk)
    assert row["swing_neg_v1_typ"] == pytest.approx(0.010 + 30 * i_snk)
    assert math.isnan(row["swing_pos_i2"])


def test_invalid_record_raises(quill_doc: dict) -> None:
    rec = quill_doc["parts"][0]
    rec["dynamics"]["gbw"] = "1 MV"
    with pytest.raises(InputError) as info:
        normalise_part(rec, file="x.yaml")
    assert info.value.problems[0].pointer == "/parts/0/dynamics/gbw"
