"""Requirements in design files, the ranking JSON Schema, and the purity of the solver core."""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

import pint
import pytest
from jsonschema import Draft202012Validator

from partsel.design import design_from_mapping, load_design, save_design
from partsel.errors import InputError
from partsel.solver import Requirements
from partsel.solver.export import ranking_schema_json
from partsel.solver.requirements import DEFAULT_OBJECTIVES, LIMITS

ROOT = Path(__file__).resolve().parents[1]
RANKING_SCHEMA = ROOT / "data-schema" / "ranking.schema.json"
DESIGNS = sorted((ROOT / "sample-catalog" / "designs").glob("*.toml"))


def base(requirements: dict[str, Any] | None = None) -> dict[str, Any]:
    data: dict[str, Any] = {
        "name": "req test",
        "supply": {"positive": "5 V"},
        "signal": {"bias": "2.5 V", "amplitude": "0.5 V", "frequency": "1 kHz"},
        "load": {"resistance": "10 kohm"},
    }
    if requirements is not None:
        data["requirements"] = requirements
    return data


def pointers(exc: pytest.ExceptionInfo[InputError]) -> list[str]:
    return [p.pointer for p in exc.value.problems]


def test_ranking_schema_is_valid_and_committed() -> None:
    """data-schema/ranking.schema.json is generated from partsel.solver.export; regenerate:
    python -c "from partsel.solver.export import ranking_schema_json as s;
    open('data-schema/ranking.schema.json', 'w').write(s())"
    """
    schema = json.loads(RANKING_SCHEMA.read_text(encoding="utf-8"))
    Draft202012Validator.check_schema(schema)
    assert RANKING_SCHEMA.read_text(encoding="utf-8") == ranking_schema_json()


def test_quantities_parse_to_si() -> None:
    """'0.05 %' is 5e-4 (pint's percent, 1/100), '6 mA' 6e-3 A, '30 nV/rtHz' 3e-8 V/rtHz."""
    ureg = pint.UnitRegistry()
    d = design_from_mapping(
        base({"limits": {"max_thd": "0.05 %", "max_supply_current": "6 mA",
                         "max_noise": "30 nV/Hz**0.5", "min_fix_resistance": "1 kohm"}})
    )  # fmt: skip
    lim = d.requirements["limits"]
    assert lim["max_thd"] == pytest.approx(ureg.Quantity(0.05, "percent").to("").magnitude)
    assert lim["max_supply_current"] == pytest.approx(ureg.Quantity(6, "mA").to("A").magnitude)
    assert lim["max_noise"] == pytest.approx(3e-8)
    assert lim["min_fix_resistance"] == pytest.approx(1e3)


def test_defaults_when_no_requirements() -> None:
    req = Requirements.from_mapping(None)
    assert req.basis == "worst-case"
    assert req.conduction == "fix-allowed"
    assert req.objectives == DEFAULT_OBJECTIVES
    assert req.pareto_objectives == ("thd", "supply_current", "price")
    assert req.limit("min_slew_ratio") == 1.0
    assert req.limit("max_thd") is None
    full = req.to_mapping()
    assert set(full["limits"]) == {d.key for d in LIMITS} | {"lifecycle", "packages", "channels"}


def test_pareto_defaults_to_the_heaviest_objectives() -> None:
    req = Requirements.from_mapping({"objectives": {"price": 1, "thd": 3, "noise": 2, "offset": 1}})
    assert req.pareto_objectives == ("thd", "noise", "price")
    req = Requirements.from_mapping({"objectives": {"price": 1}})
    assert len(req.pareto_objectives) == 2


@pytest.mark.parametrize("path", DESIGNS, ids=lambda p: p.stem)
def test_sample_designs_carry_requirements_and_round_trip(path: Path, tmp_path: Path) -> None:
    design = load_design(path)
    assert design.requirements is not None
    Requirements.from_mapping(design.requirements)
    for suffix in (".toml", ".yaml", ".json"):
        out = tmp_path / f"copy{suffix}"
        save_design(design, out)
        assert load_design(out).requirements == design.requirements


@pytest.mark.parametrize(
    ("req", "pointer"),
    [
        ({"limits": {"max_thd": "0.1 V"}}, "/requirements/limits/max_thd"),
        ({"limits": {"max_supply_current": "2 V"}}, "/requirements/limits/max_supply_current"),
        ({"limits": {"max_price": -1}}, "/requirements/limits/max_price"),
        ({"limits": {"min_source_fraction": 1.0}}, "/requirements/limits/min_source_fraction"),
        ({"limits": {"channels": [3]}}, "/requirements/limits/channels/0"),
        ({"limits": {"lifecycle": []}}, "/requirements/limits/lifecycle"),
        ({"limits": {"bogus": 1}}, "/requirements/limits/bogus"),
        ({"objectives": {"speed": 1}}, "/requirements/objectives/speed"),
        ({"objectives": {"thd": -1}}, "/requirements/objectives/thd"),
        ({"objectives": {"thd": 0}}, "/requirements/objectives"),
        ({"pareto": ["thd", "thd"]}, "/requirements/pareto"),
        ({"pareto": ["thd", "price", "noise", "offset"]}, "/requirements/pareto"),
        ({"basis": "best-case"}, "/requirements/basis"),
        ({"conduction": "sometimes"}, "/requirements/conduction"),
        ({"sort": ["price"]}, "/requirements/sort"),
    ],
)
def test_bad_requirements_name_the_field(req: dict[str, Any], pointer: str) -> None:
    with pytest.raises(InputError) as exc:
        design_from_mapping(base(copy.deepcopy(req)))
    assert pointer in pointers(exc)
