"""The catalogue JSON Schema: valid draft 2020-12, committed file current, units documented."""

from __future__ import annotations

from typing import Any

from conftest import CATALOGUE_DATA, PROJECT
from jsonschema import Draft202012Validator

from partsel.catalogue.schema import SCHEMA_RELPATH, build_schema, schema_text
from partsel.params import PARAMS
from partsel.units import UNIT_LABEL


def test_schema_is_valid_draft_2020_12() -> None:
    """Checked against the draft 2020-12 meta-schema (json-schema.org)."""
    Draft202012Validator.check_schema(build_schema())


def test_committed_schema_matches_generated() -> None:
    """data-schema/catalogue.schema.json must be regenerated when PARAMS or the format change:
    python -m partsel.catalogue.schema data-schema/catalogue.schema.json"""
    committed = (PROJECT / SCHEMA_RELPATH).read_text(encoding="utf-8")
    assert committed == schema_text()


def _fields(node: Any, path: str = "") -> list[tuple[str, dict[str, Any]]]:
    out = []
    if isinstance(node, dict):
        for key in ("properties", "$defs"):
            for name, child in node.get(key, {}).items():
                out.append((f"{path}/{name}", child))
                out += _fields(child, f"{path}/{name}")
        if isinstance(node.get("items"), dict):
            out += _fields(node["items"], f"{path}/items")
    return out


def test_every_field_has_a_description_and_quantities_a_unit() -> None:
    schema = build_schema()
    defs = schema["$defs"]
    for path, node in _fields(schema):
        assert node.get("description"), f"{path} has no description"
        target = defs[node["$ref"].rsplit("/", 1)[-1]] if "$ref" in node else node
        if "x-dimension" in target:
            unit = UNIT_LABEL[target["x-dimension"]]
            assert node.get("x-unit", target["x-unit"]) == unit, path
            assert f"[{unit}]" in node["description"], f"{path}: unit not in description"


def test_every_param_is_a_spec_at_its_path() -> None:
    part = build_schema()["$defs"]["part"]
    for p in PARAMS:
        node = part
        for name in p.path:
            node = node["properties"][name]
        # a parameter's spec may list temperature points: its own def, the plain spec plus them
        assert node["$ref"] == f"#/$defs/param_spec_{p.dimension}"
        assert node.get("x-nonnegative", False) == p.nonnegative
    defs = build_schema()["$defs"]
    for d in {p.dimension for p in PARAMS}:
        plain, param = defs[f"spec_{d}"], defs[f"param_spec_{d}"]
        assert set(param["properties"]) == {*plain["properties"], "temperature_points"}


def test_fixture_files_pass_the_schema() -> None:
    import json

    import yaml

    validator = Draft202012Validator(build_schema())
    for f in CATALOGUE_DATA.iterdir():
        text = f.read_text(encoding="utf-8")
        data = json.loads(text) if f.suffix == ".json" else yaml.safe_load(text)
        assert list(validator.iter_errors(data)) == [], f
