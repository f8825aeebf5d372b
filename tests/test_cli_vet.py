"""The substitute commands end to end on the sample catalogue: vet, compare, bom-check (text,
JSON validated against the schemas in data-schema/, merged CSV), exit codes 0 / 1 / 2, and the
Python example of the README's section on replacing a part."""

from __future__ import annotations

import csv
import io
import json
import os
import re
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator
from typer.testing import CliRunner, Result

from partsel.catalogue import load_paths, open_catalogue
from partsel.io.csvout import neutralise

PROJECT = Path(__file__).resolve().parents[1]
SUBS = Draft202012Validator(
    json.loads((PROJECT / "data-schema" / "substitutes.schema.json").read_text())
)
BOMS = Draft202012Validator(
    json.loads((PROJECT / "data-schema" / "bom-check.schema.json").read_text())
)
LINE_DRIVER = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"
SAMPLE_BOM = PROJECT / "sample-catalog" / "bom" / "mixed-board.csv"


@pytest.fixture(scope="module")
def sample_db(module_db_url: str) -> str:
    """The sample catalogue, loaded once per module (the commands here only read it)."""
    eng = open_catalogue(module_db_url)
    load_paths(eng, [PROJECT / "sample-catalog" / "parts"])
    eng.dispose()
    return module_db_url


@pytest.fixture
def loaded(sample_db: str) -> Callable[..., Result]:
    """Run ``partsel --db <sample catalogue> ARGS...`` in process."""
    from partsel.cli.main import app

    runner = CliRunner()

    def invoke(*args: str | Path) -> Result:
        return runner.invoke(app, ["--db", sample_db, *map(str, args)])

    return invoke


def no_traceback(r) -> None:
    assert r.exception is None or isinstance(r.exception, SystemExit), r.exception
    assert "Traceback" not in r.output


def test_vet_obsolete_part_json_and_text(loaded) -> None:
    r = loaded("vet", "BRQ-622", "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    SUBS.validate(data)
    first = data["candidates"][0]
    assert (first["part_number"], first["verdict"]) == ("BRQ-622A", "drop-in")
    r = loaded("vet", "BRQ-622", "-d", LINE_DRIVER, "--package", "SO-8", "--top", "4")
    assert r.exit_code == 0, r.output
    # with its pull-up fitted it still clips at V+ (1.6 V guaranteed headroom, 1.5 V of room),
    # so the clipped waveform's THD fails too
    assert (
        "the incumbent in this circuit: rejected; fails swing to V+, THD estimate, lifecycle"
        in r.stdout
    )
    assert "another output-stage topology" in r.stdout
    assert len(re.findall(r"^\s+\d+\. ", r.stdout, flags=re.MULTILINE)) == 4


def test_vet_exit_one_without_a_usable_candidate(loaded) -> None:
    # HKE-142A has a class-A stage: review at best, so no usable replacement: exit 1
    r = loaded("vet", "BRQ-622", "--only", "HKE-142A", "--json")
    assert r.exit_code == 1, r.output
    data = json.loads(r.stdout)
    SUBS.validate(data)
    assert [c["verdict"] for c in data["candidates"]] == ["review"]


@pytest.mark.parametrize(
    "args",
    [
        ("vet", "NOPE-1"),
        ("vet", "BRQ-622", "--basis", "median"),
        ("vet", "BRQ-622", "--package", "TSSOP-8"),
        ("vet", "BRQ-622", "-d", "missing.toml"),
        ("compare", "BRQ-622"),
        ("compare", "BRQ-622", "BRQ-622A", "BRQ-722", "HKE-142A", "VSR-32"),
        ("compare", "BRQ-622", "NOPE-1"),
        ("bom-check", "missing.csv"),
        ("bom-check", SAMPLE_BOM, "--column", "partnumber"),
        ("bom-check", SAMPLE_BOM, "--column", "sku=PN"),
    ],
)
def test_bad_input_exits_two(loaded, args) -> None:
    r = loaded(*args)
    assert r.exit_code == 2, r.output
    no_traceback(r)
    assert "error:" in r.stderr


def test_compare_text_and_json(loaded) -> None:
    r = loaded("compare", "BRQ-622A", "BRQ-722", "HKE-142A", "-d", LINE_DRIVER, "--json")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    SUBS.validate(data)
    rows = {row["key"]: row for row in data["rows"]}
    assert rows["topology"]["values"] == ["class-b-pulldown", "class-ab", "class-a"]
    # the class-AB part alone keeps both devices on into the 2 kohm AC load; the class-B part
    # passes the conduction check with its fix fitted, the class-A one cannot be fixed there
    conduction = [e["prediction"]["conduction"] for e in data["evaluations"]]
    assert conduction == ["changes-mode", "biased", "changes-mode"]
    assert rows["circuit_conduction_margin"]["ok"] == [True, True, False]
    assert rows["circuit_conduction_margin"]["label"] == "conduction mode, margin"
    r = loaded("compare", "BRQ-622A", "BRQ-722")
    assert r.exit_code == 0 and "output stage" in r.stdout and "* best" in r.stdout


def test_sample_bom_check(loaded, tmp_path: Path) -> None:
    """The sample BOM has known, unknown, obsolete and suffix-variant lines (and per-line
    designs): findings, so exit 1; JSON valid; the merged CSV keeps the BOM's own columns (a
    cell that would start a spreadsheet formula made inert, partsel.io.csvout)."""
    out = tmp_path / "checked.csv"
    r = loaded("bom-check", SAMPLE_BOM, "--json", "--csv", out)
    assert r.exit_code == 1, r.output
    data = json.loads(r.stdout)
    BOMS.validate(data)
    rules = {ln["match"]["rule"] for ln in data["lines"]}
    assert rules == {"exact", "normalised", "suffix", "none"}
    found = {f["code"] for ln in data["lines"] for f in ln["findings"]}
    assert {"unknown-part", "obsolete", "not-for-new-designs", "out-of-spec"} <= found
    obsolete = [ln for ln in data["lines"] if ln["lifecycle"] == "obsolete"]
    assert obsolete and all(ln["substitutes"] for ln in obsolete)
    with SAMPLE_BOM.open(encoding="utf-8", newline="") as fh:
        original = list(csv.reader(fh))
    with out.open(encoding="utf-8", newline="") as fh:
        merged = list(csv.reader(fh))
    width = len(original[0])
    assert [row[:width] for row in merged] == [[neutralise(c) for c in row] for row in original]
    assert any(c.startswith("'+") for row in merged for c in row)  # "+/-15 V test output"
    assert merged[0][width] == "partsel_line"
    r = loaded("bom-check", SAMPLE_BOM)
    assert r.exit_code == 1 and "with findings" in r.stdout


def test_bom_check_csv_on_stdout_and_all_clear(loaded, tmp_path: Path) -> None:
    path = tmp_path / "clean.csv"
    path.write_text("Refs;Mfr Part;Qty\nU1;BRQ-622A-TR;1\nU2-U3;FNK-21;2\n", encoding="utf-8")
    r = loaded(
        "bom-check",
        path,
        "--column",
        "part_number=Mfr Part",
        "--column",
        "designators=refs",
        "--csv",
        "-",
    )
    assert r.exit_code == 0, r.output
    rows = list(csv.reader(io.StringIO(r.stdout), delimiter=";"))
    assert rows[1][3:6] == ["2", "ok", "suffix"]
    assert rows[2][4:7] == ["ok", "exact", "FNK-21"]


@pytest.mark.parametrize(
    ("content", "message"),
    [
        (b"", "empty"),
        (b"designators,part_number\n", "no lines"),
        (b"a,b,c\n1,2,3\n", "no part-number column"),
        (b"\xff\xfe\x00\xd8", "not valid utf-16"),
    ],
)
def test_malformed_bom_files_exit_two(loaded, tmp_path: Path, content: bytes, message: str):
    path = tmp_path / "bad.csv"
    path.write_bytes(content)
    r = loaded("bom-check", path, "--json")
    assert r.exit_code == 2, r.output
    no_traceback(r)
    assert message in r.stderr
    assert json.loads(r.stdout)[0]["file"] == str(path)


def test_malformed_rows_are_findings_not_failures(loaded, tmp_path: Path) -> None:
    path = tmp_path / "rows.csv"
    path.write_bytes(b"part_number,quantity\nBRQ-622A,abc\nBRQ-622A\nQLN-101,1\n\xb5,1\n")
    r = loaded("bom-check", path, "--json")
    assert r.exit_code == 1, r.output
    data = json.loads(r.stdout)
    BOMS.validate(data)
    assert [sorted(f["code"] for f in ln["findings"]) for ln in data["lines"]] == [
        ["bad-quantity"],
        ["no-quantity", "short-row"],
        [],
        ["encoding", "unknown-part"],
    ]


def test_readme_python_example_runs(tmp_path: Path) -> None:
    """The README's vetting / BOM script runs as written (fresh user folder, so the default
    catalogue is created from sample-catalog/)."""
    text = (PROJECT / "README.md").read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.DOTALL)
    code = next((b for b in blocks if "check_bom" in b), None)
    assert code is not None
    env = dict(os.environ, XDG_DATA_HOME=str(tmp_path / "data"), HOME=str(tmp_path))
    env.pop("PARTSEL_DB", None)
    work = tmp_path / "work"
    work.mkdir()
    (work / "sample-catalog").symlink_to(PROJECT / "sample-catalog")  # paths as in a checkout
    script = work / "example.py"
    script.write_text(code, encoding="utf-8")
    r = subprocess.run(
        [sys.executable, str(script)],
        cwd=work,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert r.returncode == 0, r.stderr
    assert "BRQ-622A" in r.stdout and "exit code 1" in r.stdout
    assert (work / "mixed-board-checked.csv").exists()
