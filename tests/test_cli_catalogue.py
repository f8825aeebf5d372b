"""The catalogue commands, run in process with typer's CliRunner against temporary databases.

Contract checked (DEVELOPERS.md / project rules): bad input exits 2, names file, record and
field pointer on stderr, and leaves the database unchanged; data on stdout, messages on stderr;
an empty JSON result is []."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pandas as pd
import pytest
import yaml
from conftest import CATALOGUE_DATA, DATA
from typer.testing import CliRunner, Result

from partsel.catalogue import FLAT_COLUMN_NAMES, open_catalogue, parts_frame
from partsel.cli.common import ExitCode
from partsel.cli.main import app

Cli = Callable[..., Result]
SHEET = DATA / "sheet"


@pytest.fixture
def loaded(cli: Cli) -> Cli:
    """The CLI with the invented fixture catalogue already loaded."""
    assert cli("load", CATALOGUE_DATA).exit_code == ExitCode.OK
    return cli


def frame(db_url: str) -> pd.DataFrame:
    eng = open_catalogue(db_url)
    try:
        return parts_frame(eng)
    finally:
        eng.dispose()


def test_no_arguments_prints_help() -> None:
    result = CliRunner().invoke(app, [])
    assert result.exit_code == ExitCode.OK
    assert "check" in result.stdout and "import-sheet" in result.stdout


def test_check_ok_touches_no_database(cli: Cli, db_url: str) -> None:
    result = cli("check", "--json", CATALOGUE_DATA)
    assert result.exit_code == ExitCode.OK
    assert json.loads(result.stdout) == []
    assert "3 parts" in result.stderr
    assert not Path(db_url.removeprefix("sqlite:///")).exists()


def test_load_reports_counts(cli: Cli) -> None:
    first = cli("load", "--json", CATALOGUE_DATA)
    assert json.loads(first.stdout)["added"] == 3
    second = cli("load", CATALOGUE_DATA)
    assert "0 added, 0 changed, 3 unchanged" in second.stdout


def _mutate(doc: dict, how: str) -> str | dict:
    part = doc["parts"][0]
    if how == "schema":
        part["lifecycle"] = "retired"
    elif how == "unit":
        part["dynamics"]["gbw"]["typ"] = "1 Mhzz"
    elif how == "dimension":
        part["output"]["stage_current"]["typ"] = "50 uV"
    elif how == "order":
        part["output"]["stage_current"]["min"] = "70 uA"
    elif how == "duplicate":
        doc["parts"][1]["part_number"] = "BWD-r71"  # also in brightwater.json, other case
    elif how == "negative":
        part["dynamics"]["slew_rise"]["min"] = "-0.3 V/us"
    return doc


BAD = [
    ("json", None, None, "malformed JSON"),
    ("yaml", None, None, "malformed YAML"),
    ("schema", "record QFA-2210", "/parts/0/lifecycle", "is not one of"),
    ("unit", "record QFA-2210", "/parts/0/dynamics/gbw/typ", "unknown unit"),
    ("dimension", "record QFA-2210", "/parts/0/output/stage_current/typ", "not a current"),
    ("order", "record QFA-2210", "/parts/0/output/stage_current/min", "greater than typ"),
    # reported at the second occurrence (brightwater.json), naming the first (bad.yaml)
    ("duplicate", "record BWD-R71", "/parts/0/part_number", "duplicate part number"),
    ("negative", "record QFA-2210", "/parts/0/dynamics/slew_rise/min", "negative"),
]


@pytest.mark.parametrize("command", ["load", "check"])
@pytest.mark.parametrize(("how", "record", "pointer", "fragment"), BAD)
def test_bad_input_exits_2_and_changes_nothing(
    loaded: Cli,
    db_url: str,
    tmp_path: Path,
    quill_doc: dict,
    command: str,
    how: str,
    record: str | None,
    pointer: str | None,
    fragment: str,
) -> None:
    before = frame(db_url)
    if how == "json":
        bad = tmp_path / "bad.json"
        bad.write_text('{"parts": [{"part_number": "QFA-9"', encoding="utf-8")
    elif how == "yaml":
        bad = tmp_path / "bad.yaml"
        bad.write_text("parts:\n  - part_number: QFA-9\n   maker: x\n", encoding="utf-8")
    else:
        bad = tmp_path / "bad.yaml"
        bad.write_text(yaml.safe_dump(_mutate(quill_doc, how)), encoding="utf-8")
    result = loaded(command, bad, CATALOGUE_DATA / "brightwater.json")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert str(bad) in result.stderr
    assert fragment in result.stderr
    if pointer:
        assert f"{record}: field {pointer}" in result.stderr
    assert result.stdout == ""
    pd.testing.assert_frame_equal(frame(db_url), before)


def test_problems_as_json(cli: Cli, tmp_path: Path, quill_doc: dict) -> None:
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(_mutate(quill_doc, "negative")), encoding="utf-8")
    result = cli("check", "--json", bad)
    assert result.exit_code == ExitCode.BAD_INPUT
    (problem,) = json.loads(result.stdout)
    assert problem["pointer"] == "/parts/0/dynamics/slew_rise/min"
    assert problem["record"] == "QFA-2210" and problem["file"] == str(bad)


def test_missing_path_exits_2(cli: Cli, tmp_path: Path) -> None:
    result = cli("load", tmp_path / "nowhere.yaml")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "no such file" in result.stderr


def test_list_table_and_filters(loaded: Cli) -> None:
    table = loaded("list")
    assert table.exit_code == ExitCode.OK
    for pn in ("BWD-R71", "QFA-2210", "QFA-2214"):
        assert pn in table.stdout

    def numbers(*args: str) -> list[str]:
        result = loaded("list", "--json", *args)
        assert result.exit_code == ExitCode.OK
        return [r["part_number"] for r in json.loads(result.stdout)]

    assert numbers("--maker", "quillfeather analog") == ["QFA-2210", "QFA-2214"]
    assert numbers("--topology", "cmos-rail-to-rail") == ["BWD-R71"]
    assert numbers("--lifecycle", "not-for-new-designs") == ["QFA-2214"]
    assert numbers("--search", "QUAD") == ["QFA-2214"]
    assert numbers("--search", "nothing like this") == []
    assert loaded("list", "--topology", "class-q").exit_code == ExitCode.BAD_INPUT


def test_list_json_rows_are_flat_si(loaded: Cli) -> None:
    rows = json.loads(loaded("list", "--json", "--search", "BWD").stdout)
    (row,) = rows
    assert tuple(row) == FLAT_COLUMN_NAMES
    assert row["gbw_typ"] == pytest.approx(10e6)
    assert row["dead_band_typ"] == 0.0 and row["slew_rise_min"] is None


def test_list_empty_database(cli: Cli) -> None:
    result = cli("list", "--json")
    assert result.exit_code == ExitCode.OK and json.loads(result.stdout) == []


def test_show(loaded: Cli) -> None:
    text = loaded("show", "qfa-2210")
    assert text.exit_code == ExitCode.OK
    assert "QFA-2210" in text.stdout and "0.5 V/us" in text.stdout
    data = json.loads(loaded("show", "--json", "QFA-2210").stdout)
    assert data["record"]["dynamics"]["slew_rise"] == {"min": "0.3 V/us", "typ": "0.5 V/us"}
    assert data["flat"]["slew_rise_typ"] == pytest.approx(0.5e6)
    assert data["version"] == 1
    missing = loaded("show", "QFA-221")
    assert missing.exit_code == ExitCode.BAD_INPUT
    assert "QFA-2210" in missing.stderr  # suggested


@pytest.mark.parametrize("fmt", ["yaml", "json"])
def test_export_loads_again_unchanged(loaded: Cli, tmp_path: Path, fmt: str) -> None:
    out = tmp_path / "export"
    assert loaded("export", out, "--format", fmt).exit_code == ExitCode.OK
    assert len(list(out.glob(f"*.{fmt}"))) == 2
    again = json.loads(loaded("load", "--json", out).stdout)
    assert (again["added"], again["changed"], again["unchanged"]) == (0, 0, 3)
    fresh = CliRunner().invoke(
        app, ["--db", f"sqlite:///{tmp_path / 'b.sqlite'}", "load", str(out)]
    )
    assert "3 added" in fresh.stdout


def test_export_csv(loaded: Cli, db_url: str, tmp_path: Path) -> None:
    target = tmp_path / "parts.csv"
    assert loaded("export-csv", target).exit_code == ExitCode.OK
    df = pd.read_csv(target)
    assert tuple(df.columns) == FLAT_COLUMN_NAMES
    expected = frame(db_url)
    pd.testing.assert_series_equal(df["gbw_typ"], expected["gbw_typ"])
    stdout = loaded("export-csv", "-")
    assert stdout.stdout.splitlines()[0].split(",")[:2] == ["part_number", "maker"]


def test_db_from_environment(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    url = f"sqlite:///{tmp_path / 'env.sqlite'}"
    monkeypatch.setenv("PARTSEL_DB", url)
    assert CliRunner().invoke(app, ["load", str(CATALOGUE_DATA)]).exit_code == ExitCode.OK
    assert len(frame(url)) == 3


# --- import-sheet ----------------------------------------------------------------------------


def test_import_sheet_csv(cli: Cli, db_url: str) -> None:
    dry = cli("import-sheet", SHEET / "parts.csv", "--map", SHEET / "map.yaml", "--dry-run")
    assert dry.exit_code == ExitCode.OK, dry.stderr
    assert "3 added" in dry.stdout and frame(db_url).empty
    result = cli("import-sheet", "--json", SHEET / "parts.csv", "--map", SHEET / "map.yaml")
    assert json.loads(result.stdout)["parts"]["added"] == ["TWS-301", "TWS-302", "TWS-304"]
    df = frame(db_url).set_index("part_number")
    assert df.loc["TWS-302", "slew_rise_min"] == pytest.approx(0.2e6)  # 0.2 V/us
    assert df.loc["TWS-302", "stage_current_typ"] == pytest.approx(45e-6)
    assert bool(df.loc["TWS-301", "rail_to_rail_input"]) is True
    assert df.loc["TWS-304", "channels"] == 4
    assert df.loc["TWS-301", "packages"] == "SOT-23-5:SINGLE-5A"
    shown = json.loads(cli("show", "--json", "TWS-302").stdout)["record"]
    assert shown["dynamics"]["gbw"] == {"typ": "0.9 MHz"}


def test_import_sheet_xlsx(cli: Cli, db_url: str, tmp_path: Path) -> None:
    sheet = pd.read_csv(SHEET / "parts.csv", dtype=str, keep_default_na=False)
    sheet = sheet[sheet["Part No"] != ""]
    for col in ("Vs min (V)", "Vs max (V)", "GBW (MHz)", "Channels"):
        sheet[col] = pd.to_numeric(sheet[col])
    xlsx = tmp_path / "parts.xlsx"
    sheet.to_excel(xlsx, index=False, sheet_name="Amps")
    mapping = yaml.safe_load((SHEET / "map.yaml").read_text(encoding="utf-8"))
    mapping["sheet"] = "Amps"
    (tmp_path / "map.yaml").write_text(yaml.safe_dump(mapping), encoding="utf-8")
    result = cli("import-sheet", xlsx, "--map", tmp_path / "map.yaml")
    assert result.exit_code == ExitCode.OK, result.stderr
    df = frame(db_url).set_index("part_number")
    assert df.loc["TWS-301", "gbw_typ"] == pytest.approx(1.2e6)
    assert df.loc["TWS-304", "supply_max_v"] == 36.0


def test_import_sheet_bad_rows(loaded: Cli, db_url: str, tmp_path: Path) -> None:
    text = (SHEET / "parts.csv").read_text(encoding="utf-8")
    text = text.replace("TWS-302,2,", "TWS-302,two,").replace(
        ",0.9,0.2,0.4,no,class-b-pulldown,45,1.4\n", ",0.9,0.5,0.4,no,class-b-pulldown,45,1.4\n", 1
    )
    bad = tmp_path / "bad.csv"
    bad.write_text(text, encoding="utf-8")
    before = frame(db_url)
    result = loaded("import-sheet", bad, "--map", SHEET / "map.yaml")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "record row 3: field /channels" in result.stderr  # header is row 1
    assert "'Channels'" in result.stderr
    text = text.replace("TWS-302,two,", "TWS-302,2,")
    bad.write_text(text, encoding="utf-8")
    result = loaded("import-sheet", bad, "--map", SHEET / "map.yaml")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "record row 3 (TWS-302): field /dynamics/slew_rise/min" in result.stderr
    assert "greater than typ" in result.stderr and "'SR min (V/us)'" in result.stderr
    pd.testing.assert_frame_equal(frame(db_url), before)


def test_import_sheet_bad_mapping(cli: Cli, tmp_path: Path) -> None:
    mapping = yaml.safe_load((SHEET / "map.yaml").read_text(encoding="utf-8"))
    mapping["columns"]["GBW (MHz)"] = {"field": "/dynamics/gbw/typ", "unit": "V"}
    mapping["columns"]["Package"] = "/packages/0/kode"
    (tmp_path / "map.yaml").write_text(yaml.safe_dump(mapping), encoding="utf-8")
    result = cli("import-sheet", SHEET / "parts.csv", "--map", tmp_path / "map.yaml")
    assert result.exit_code == ExitCode.BAD_INPUT
    assert "field /columns/GBW (MHz)/unit" in result.stderr
    assert "field /columns/Package/field" in result.stderr
