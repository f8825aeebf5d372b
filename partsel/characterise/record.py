"""A catalogue record (``partsel.catalogue/1``) and a report from a characterisation.

The record holds typical values only (a model is one part, not a production spread), each
with the conditions of its bench in ``at``. What a model cannot tell (packages, price, rated
temperature and supply range, lifecycle, channels) is filled so that the record passes
``partsel check`` and says so in its notes: one package ``unspecified`` (no thermal
resistance: the junction-temperature check then lacks its value) and rated ranges around the
one supply and temperature measured, unless the command line gives them. Stored over an
existing part (:func:`merged_record`), the measured fields replace the stored ones and the
rest is kept.

The report (:func:`report`) lists every measurement with its value, unit, conditions and
bench, and every bench with its circuit (the deck without the model): ``partsel characterise
--json`` prints it.
"""

from __future__ import annotations

import copy
import math
from typing import TYPE_CHECKING, Any

import numpy as np

from partsel import present as P
from partsel.catalogue.schema import FORMAT_NAME
from partsel.characterise.model_file import file_label
from partsel.io.textfile import value_at
from partsel.params import Topology

if TYPE_CHECKING:
    from partsel.characterise.run import Characterisation
    from partsel.physics.stage import StageParams

#: Rated ranges of a record made from a model alone (the model states none; the catalogue
#: needs a range with min below max): the supply measured at, +-10 %, and the simulation
#: temperature +-5 K. The record's notes say so; ``--supply-range`` and
#: ``--temperature-range`` give the datasheet's.
SUPPLY_SPAN = 0.1
TEMPERATURE_SPAN_K = 5.0
#: Significant digits of the values written into a record.
DIGITS = 4
#: Package entry of a record made from a model alone.
UNSPECIFIED = "unspecified"
#: The record's fields a characterisation measures (replaced when merged into a stored part).
MEASURED_PATHS: tuple[tuple[str, ...], ...] = (
    ("supply", "current_per_channel"),
    ("input", "rail_to_rail"),
    ("input", "cm_headroom_neg"),
    ("input", "cm_headroom_pos"),
    ("input", "offset_voltage"),
    ("input", "bias_current"),
    ("dynamics", "gbw"),
    ("dynamics", "slew_rise"),
    ("dynamics", "slew_fall"),
    ("dynamics", "min_stable_gain"),
    ("output", "topology"),
    ("output", "dead_band"),
    ("output", "stage_current"),
    ("output", "source_limit"),
    ("output", "sink_limit"),
    ("output", "swing_pos"),
    ("output", "swing_neg"),
)


def _q(value: float, unit: str) -> str:
    return P.quantity(value, unit, DIGITS)


def _t(value_c: float) -> str:
    return f"{value_c:g} degC"


def conditions(result: Characterisation, load_ohm: float | None = None, note: str = "") -> dict:
    """The ``at`` of a spec measured on ``result``'s benches."""
    at: dict[str, Any] = {
        "supply": _q(result.cond.supply_v, "V"),
        "temperature": _t(result.cond.temperature_c),
    }
    if load_ohm is not None:
        at["load"] = _q(load_ohm, "ohm")
    if note:
        at["note"] = note
    return at


def _spec(result: Characterisation, value: float, unit: str, bench: str) -> dict:
    b = result.benches[bench]
    return {"typ": _q(value, unit), "at": conditions(result, b.load_ohm, f"partsel bench {bench}")}


def _swing(result: Characterisation, rail: str) -> list[dict]:
    curve = result.swing_pos if rail == "pos" else result.swing_neg
    return [
        {"current": _q(i_a, "A"), "headroom": _q(max(h_v, 0.0), "V")} for i_a, h_v in curve.points
    ]


def build_record(
    result: Characterisation,
    *,
    part_number: str,
    maker: str,
    dead_band_v: float | None = None,
    supply_range_v: tuple[float, float] | None = None,
    temperature_range_c: tuple[float, float] | None = None,
) -> dict[str, Any]:
    """The catalogue record of ``result`` (see the module docstring); the rated ranges are
    ``supply_range_v`` and ``temperature_range_c`` when given."""
    r = result
    s_lo, s_hi = supply_range_v or (
        (1 - SUPPLY_SPAN) * r.cond.supply_v,
        (1 + SUPPLY_SPAN) * r.cond.supply_v,
    )
    t_lo, t_hi = temperature_range_c or (
        r.cond.temperature_c - TEMPERATURE_SPAN_K,
        r.cond.temperature_c + TEMPERATURE_SPAN_K,
    )
    cm = r.common_mode
    v_pos = r.cond.supply_v
    cm_neg = cm.low_v
    cm_pos = v_pos - cm.high_v
    out: dict[str, Any] = {
        "topology": r.topology.value,
        "stage_current": _spec(r, r.knee.stage_current_a, "A", "knee"),
        "source_limit": _spec(r, r.source_limit_a, "A", "short_pos"),
        "sink_limit": _spec(r, r.sink_limit_a, "A", "short_neg"),
        "swing_pos": _swing(r, "pos"),
        "swing_neg": _swing(r, "neg"),
    }
    db = dead_band_v if dead_band_v is not None else (r.dead_band.value_v if r.dead_band else None)
    if r.topology == Topology.CLASS_B_PULLDOWN and db is not None:
        out["dead_band"] = _spec(r, db, "V", "deadband_1")
    files = ", ".join(file_label(f) for f in r.models.files)
    rec: dict[str, Any] = {
        "part_number": part_number,
        "maker": maker,
        "description": f"Measured by partsel characterise on SPICE subcircuit {r.models.name}",
        "channels": 1,
        "lifecycle": "active",
        "packages": [{"code": UNSPECIFIED, "pinout": UNSPECIFIED}],
        "temperature": {"min": _t(t_lo), "max": _t(t_hi)},
        "supply": {
            "range": {"min": _q(s_lo, "V"), "max": _q(s_hi, "V")},
            "current_per_channel": _spec(r, r.quiescent.supply_current_a, "A", "supply"),
        },
        "input": {
            "rail_to_rail": bool(cm_neg <= 0.0 and cm_pos <= 0.0),
            "cm_headroom_neg": _spec(r, cm_neg, "V", "input_cm"),
            "cm_headroom_pos": _spec(r, cm_pos, "V", "input_cm"),
            "offset_voltage": _spec(r, abs(r.quiescent.offset_v), "V", "supply"),
            "bias_current": _spec(r, r.quiescent.bias_current_a, "A", "supply"),
        },
        "dynamics": {
            "gbw": _spec(r, r.open_loop.gbw_hz, "Hz", "open_loop"),
            "slew_rise": _spec(r, r.slew.rise_v_per_s, "V/s", "slew"),
            "slew_fall": _spec(r, r.slew.fall_v_per_s, "V/s", "slew"),
            "min_stable_gain": float(r.open_loop.min_stable_gain),
        },
        "output": out,
        "notes": (
            f"Typical values measured by partsel characterise in ngspice on subcircuit "
            f"{r.models.name} (model files: {files}) at {_q(v_pos, 'V')} and "
            f"{r.cond.temperature_c:g} degC. A model gives no package, price, rated "
            "temperature or supply range: the package is what partsel was told ('unspecified' "
            "when nothing)"
            + (
                ""
                if supply_range_v and temperature_range_c
                else f" and the rated ranges not given are the supply +-{SUPPLY_SPAN:.0%} and "
                f"the temperature +-{TEMPERATURE_SPAN_K:g} K measured at"
            )
            + "; fill them in from the datasheet."
        ),
    }
    for beyond, key in ((cm.low_beyond, "cm_headroom_neg"), (cm.high_beyond, "cm_headroom_pos")):
        if beyond:
            rec["input"][key]["at"]["note"] += " (the range reaches the end of the sweep)"
    return rec


def merged_record(stored: dict[str, Any], measured: dict[str, Any]) -> dict[str, Any]:
    """``stored`` with every measured field of ``measured`` (:data:`MEASURED_PATHS`) put in;
    a stored part that is not class B loses its dead band when the model's stage is biased.
    The stored supply range is widened to include the supply measured at."""
    from partsel.units import parse_quantity

    out = copy.deepcopy(stored)
    rng = value_at(out, ("supply", "range"))
    at = value_at(measured, ("supply", "current_per_channel", "at", "supply"))
    if isinstance(rng, dict) and at is not None:
        v = parse_quantity(at, "voltage")
        if v < parse_quantity(rng["min"], "voltage"):
            rng["min"] = at
        if v > parse_quantity(rng["max"], "voltage"):
            rng["max"] = at
    for path in MEASURED_PATHS:
        value = value_at(measured, path)
        node = out
        for p in path[:-1]:
            node = node.setdefault(p, {})
        if value is None:
            node.pop(path[-1], None)
        else:
            node[path[-1]] = copy.deepcopy(value)
    return out


def document(record: dict[str, Any]) -> dict[str, Any]:
    """A one-part catalogue document (what ``partsel check`` and ``load`` read)."""
    return {"format": FORMAT_NAME, "parts": [record]}


def stage_params(result: Characterisation, dead_band_v: float) -> StageParams:
    """partsel's macro-model parameters of the measured part (typical basis), through the
    catalogue's own normalisation of its record."""
    from partsel.catalogue.normalise import normalise_part
    from partsel.physics.stage import StageParams

    rec = build_record(result, part_number="MEASURED", maker="partsel", dead_band_v=dead_band_v)
    flat = normalise_part(rec, file="<characterisation>")
    cols = {k: np.array([v]) for k, v in flat.items()}
    return StageParams.from_columns(cols, "typical")


def _m(key: str, value: float, unit: str, bench: str, result: Characterisation, **extra: Any):
    b = result.benches.get(bench)
    return {
        "key": key,
        "value": value,
        "unit": unit,
        "text": P.quantity(value, unit, DIGITS) if unit else f"{value:g}",
        "bench": bench,
        "at": conditions(result, b.load_ohm if b else None),
        **extra,
    }


def measurements(result: Characterisation) -> list[dict[str, Any]]:
    """Every measurement, its unit, bench and conditions (SI values)."""
    r = result
    ol, kn, cm = r.open_loop, r.knee, r.common_mode
    rows = [
        _m("supply_current", r.quiescent.supply_current_a, "A", "supply", r),
        _m("offset_voltage", r.quiescent.offset_v, "V", "supply", r, signed=True),
        _m("bias_current", r.quiescent.bias_current_a, "A", "supply", r),
        _m(
            "gbw",
            ol.gbw_hz,
            "Hz",
            "open_loop",
            r,
            band_hz=list(ol.region_hz),
            integrator=ol.integrator,
        ),
        _m("unity_gain_frequency", ol.unity_hz, "Hz", "open_loop", r),
        _m("phase_margin", ol.phase_margin_deg, "deg", "open_loop", r),
        _m("dc_gain", ol.dc_gain, "V/V", "open_loop", r),
        _m("min_stable_gain", ol.min_stable_gain, "V/V", "open_loop", r),
        _m("slew_rise", r.slew.rise_v_per_s, "V/s", "slew", r, step_v=r.slew.swing_v),
        _m("slew_fall", r.slew.fall_v_per_s, "V/s", "slew", r, step_v=r.slew.swing_v),
        _m("source_limit", r.source_limit_a, "A", "short_pos", r),
        _m("sink_limit", r.sink_limit_a, "A", "short_neg", r),
        _m("cm_low", cm.low_v, "V", "input_cm", r, at_sweep_end=cm.low_beyond),
        _m("cm_high", cm.high_v, "V", "input_cm", r, at_sweep_end=cm.high_beyond),
        _m(
            "stage_current",
            kn.stage_current_a,
            "A",
            "knee",
            r,
            slope_at_zero=kn.slope_at_zero,
            regulated_to_a=kn.regulated_to_a,
            extrapolation=kn.extrapolation,
        ),
        _m("topology", math.nan, "", "knee", r, text=r.topology.value),
    ]
    rows[-1]["value"] = r.topology.value
    for rail, curve in (("pos", r.swing_pos), ("neg", r.swing_neg)):
        rows.append(
            _m(
                f"swing_{rail}",
                float(curve.points[0][1]),
                "V",
                f"swing_{rail}",
                r,
                points=[{"current_a": i, "headroom_v": h} for i, h in curve.points],
            )
        )
    d = r.dead_band
    if d is not None:
        rows.append(
            _m(
                "dead_band",
                d.value_v,
                "V",
                "deadband_1",
                r,
                first_guess_v=d.first_guess_v,
                slope_v_per_s=d.slopes_v_per_s[0],
                glitch_v=d.glitch_v[0],
                check={
                    "bench": "deadband_2",
                    "slope_v_per_s": d.slopes_v_per_s[1],
                    "glitch_measured_v": d.glitch_v[1],
                    "glitch_closed_form_v": d.closed_form_v,
                    "glitch_simulated_v": d.simulated_v,
                    "closed_form_error": d.closed_form_error,
                    "simulated_error": d.simulated_error,
                },
            )
        )
    return rows


def bench_circuit(deck: str) -> list[str]:
    """The bench part of a deck (the model's cards left out)."""
    lines = deck.splitlines()
    try:
        k = lines.index("* the bench:")
    except ValueError:
        return lines
    return [lines[0], *lines[k + 1 :]]


def report(result: Characterisation, record: dict[str, Any]) -> dict[str, Any]:
    """What ``--json`` prints: the record, the measurements and the benches."""
    return {
        "record": record,
        "subcircuit": result.models.name,
        "model_files": list(result.models.files),
        "conditions": {
            "supply_v": result.cond.supply_v,
            "temperature_c": result.cond.temperature_c,
        },
        "measurements": measurements(result),
        "benches": [
            {
                "name": b.name,
                "title": b.title,
                "load_ohm": b.load_ohm,
                "note": b.note,
                "circuit": bench_circuit(b.deck),
            }
            for b in result.benches.values()
        ],
        "seconds": result.seconds,
        "warnings": list(result.warnings),
    }
