"""Command line: ``partsel rank`` and ``partsel explain`` on the demo catalogue.

Exit codes: rank 0 when a part is feasible, 1 when none is, 2 for bad input; explain 0 / 1 for
a feasible / rejected part, 2 for bad input. The JSON output is validated against
``data-schema/ranking.schema.json`` with jsonschema (draft 2020-12).
"""

from __future__ import annotations

import copy
import io
import json
import tomllib
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
import tomlkit
from jsonschema import Draft202012Validator
from typer.testing import CliRunner, Result

from partsel.catalogue import load_paths, open_catalogue
from partsel.cli.main import app

ROOT = Path(__file__).resolve().parents[1]
DESIGNS = sorted((ROOT / "sample-catalog" / "designs").glob("*.toml"))
SCHEMA = json.loads((ROOT / "data-schema" / "ranking.schema.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def sample_db(module_db_url: str) -> str:
    """The sample catalogue in a database of its own (SQLite, and PostgreSQL in CI)."""
    url = module_db_url
    eng = open_catalogue(url)
    load_paths(eng, [ROOT / "sample-catalog" / "parts"])
    eng.dispose()
    return url


@pytest.fixture
def run(sample_db: str) -> Callable[..., Result]:
    runner = CliRunner()

    def invoke(*args: str | Path) -> Result:
        return runner.invoke(app, ["--db", sample_db, *map(str, args)])

    return invoke


def _validate(data: Any) -> None:
    Draft202012Validator.check_schema(SCHEMA)
    errors = sorted(Draft202012Validator(SCHEMA).iter_errors(data), key=lambda e: e.path)
    assert not errors, [f"{list(e.absolute_path)}: {e.message}" for e in errors[:5]]


@pytest.mark.parametrize("path", DESIGNS, ids=lambda p: p.stem)
def test_rank_json_follows_the_schema(run: Callable[..., Result], path: Path) -> None:
    res = run("rank", path, "--json", "--top", "0")
    data = json.loads(res.stdout)
    # every part of two designs (one with fixes, one with none feasible), the top 8 elsewhere
    listed = data if path.stem in ("line-driver-5v", "adc-buffer-3v3") else {
        **data, "parts": data["parts"][:8]}  # fmt: skip
    _validate(listed)
    feasible = data["summary"]["feasible"]
    assert res.exit_code == (0 if feasible else 1)
    assert data["summary"]["parts"] == len(data["parts"]) == 51
    ranks = [p["rank"] for p in data["parts"] if p["feasible"]]
    assert ranks == list(range(1, feasible + 1))
    # rejected parts come after the feasible ones and each names its binding check
    assert all(p["binding"] is not None for p in data["parts"][feasible:])
    assert all(p["binding"] is None for p in data["parts"][:feasible])


@pytest.mark.parametrize("path", DESIGNS, ids=lambda p: p.stem)
def test_rank_table_for_people(run: Callable[..., Result], path: Path) -> None:
    res = run("rank", path, "--top", "5")
    assert res.exit_code in (0, 1)
    assert "parts feasible" in res.stdout
    assert "estimate" in res.stderr  # the THD shown is labelled an estimate


def test_rank_csv(run: Callable[..., Result]) -> None:
    res = run("rank", ROOT / "sample-catalog/designs/line-driver-5v.toml", "--csv", "-n", "0")
    assert res.exit_code == 0
    df = pd.read_csv(io.StringIO(res.stdout))
    assert len(df) == 51
    for col in (
        "part_number",
        "feasible",
        "score",
        "binding_check",
        "binding_margin",
        "thd_estimate",
        "glitch_v",
        "fix_r_ohm",
        "slew_margin_v_per_s",
        "slew_ratio",
    ):
        assert col in df.columns  # fmt: skip
    assert df["feasible"].iloc[0]
    assert df["rank"].iloc[0] == 1


def test_empty_list_exits_1_with_hints(run: Callable[..., Result]) -> None:
    """The ADC buffer admits no part on guaranteed values: exit 1, nearest misses and hints."""
    res = run("rank", ROOT / "sample-catalog/designs/adc-buffer-3v3.toml")
    assert res.exit_code == 1
    assert "Nearest misses" in res.stdout
    assert "relax max_offset from 3 mV to 4 mV" in res.stdout


def test_basis_option_overrides_the_design(run: Callable[..., Result]) -> None:
    path = ROOT / "sample-catalog/designs/adc-buffer-3v3.toml"
    res = run("rank", path, "--basis", "typical", "--json")
    data = json.loads(res.stdout)
    assert data["basis"] == "typical"
    assert res.exit_code == 0 and data["summary"]["feasible"] > 0
    assert run("rank", path, "--basis", "best-case").exit_code == 2


def test_explain_feasible_and_rejected(run: Callable[..., Result]) -> None:
    path = ROOT / "sample-catalog/designs/line-driver-5v.toml"
    top = json.loads(run("rank", path, "--json", "-n", "1").stdout)["parts"][0]["part_number"]
    res = run("explain", path, top)
    assert res.exit_code == 0
    assert "feasible" in res.stdout and "slew" in res.stdout
    res = run("explain", path, "BRQ-644", "--json")
    assert res.exit_code == 1
    data = json.loads(res.stdout)
    assert data["feasible"] is False
    assert data["binding"]["check"] == "thd"  # it clips at V+ as designed
    assert {c["check"] for c in data["checks"]} >= {"conduction", "fix_resistor", "thd"}
    assert data["fix"]["rail"] in ("negative", "positive")


def test_explain_unknown_part_exits_2(run: Callable[..., Result]) -> None:
    res = run("explain", ROOT / "sample-catalog/designs/line-driver-5v.toml", "NOPE-1")
    assert res.exit_code == 2
    assert "NOPE-1" in res.stderr


def test_json_and_csv_together_is_bad_input(run: Callable[..., Result]) -> None:
    res = run("rank", DESIGNS[0], "--json", "--csv")
    assert res.exit_code == 2


def test_empty_catalogue_exits_1(tmp_path: Path) -> None:
    res = CliRunner().invoke(
        app, ["--db", f"sqlite:///{tmp_path / 'empty.sqlite'}", "rank", DESIGNS[0]]
    )
    assert res.exit_code == 1


# ---- bad designs ---------------------------------------------------------------------------------


def _design(tmp_path: Path, edit: Callable[[dict[str, Any]], None]) -> Path:
    data = tomllib.loads((ROOT / "sample-catalog/designs/line-driver-5v.toml").read_text())
    data = copy.deepcopy(data)
    edit(data)
    out = tmp_path / "bad.toml"
    out.write_text(tomlkit.dumps(data), encoding="utf-8")
    return out


def _set(section: str, key: str, value: Any) -> Callable[[dict[str, Any]], None]:
    def edit(d: dict[str, Any]) -> None:
        node = d
        for part in section.split("."):
            node = node.setdefault(part, {})
        node[key] = value

    return edit


@pytest.mark.parametrize(
    ("edit", "pointer"),
    [
        (_set("signal", "frequency", "-1 kHz"), "/signal/frequency"),
        (_set("signal", "amplitude", "2 V"), "/signal/amplitude"),  # 2.5 V +/- 4 V on 5 V
        (_set("load", "resistence", "2 kohm"), "/load/resistence"),
        (_set("signal", "frequency", "1 kV"), "/signal/frequency"),
        (_set("requirements.limits", "max_thd_pct", 1), "/requirements/limits/max_thd_pct"),
        (_set("requirements", "weights", {"thd": 1}), "/requirements/weights"),
        (_set("requirements.limits", "max_supply_current", "6 mV"),
         "/requirements/limits/max_supply_current"),
        (_set("requirements.limits", "min_slew_ratio", 0.5), "/requirements/limits/min_slew_ratio"),
        (_set("requirements", "pareto", ["thd"]), "/requirements/pareto"),
    ],
    ids=["negative-frequency", "amplitude-beyond-rails", "unknown-field", "wrong-unit",
         "unknown-limit", "unknown-requirement", "limit-wrong-unit", "slew-ratio-below-1",
         "pareto-too-short"],
)  # fmt: skip
def test_bad_design_exits_2_naming_the_field(
    run: Callable[..., Result], tmp_path: Path, edit: Callable, pointer: str
) -> None:
    path = _design(tmp_path, edit)
    for cmd in (["rank", path], ["rank", path, "--json"], ["explain", path, "BRQ-622A"]):
        res = run(*cmd)
        assert res.exit_code == 2, res.stdout
        assert f"field {pointer}" in res.stderr
    data = json.loads(run("rank", path, "--json").stdout)
    assert pointer in [p["pointer"] for p in data]
