"""Every CSV partsel writes goes through one writer that makes spreadsheet formulas inert
(a cell starting with '=', '+', '-', '@', tab or CR gets a leading quote; a plain number
stays a number; OWASP's CSV-injection advice, common practice), and a checked BOM keeps its
line endings and byte-order mark."""

from __future__ import annotations

import copy
import csv
import io
from pathlib import Path

import yaml

PROJECT = Path(__file__).resolve().parents[1]
DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"
FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def hostile_catalogue(tmp_path: Path) -> Path:
    """The sample's first maker file with formula-like text in free-text fields."""
    src = PROJECT / "sample-catalog" / "parts" / "brindle-semi.yaml"
    doc = yaml.safe_load(src.read_text(encoding="utf-8"))
    part = copy.deepcopy(doc["parts"][0])
    part["part_number"] = "BRQ-9999"
    part["family"] = '=HYPERLINK("http://example.invalid","click")'
    part["description"] = "@SUM(1+1)"
    part["notes"] = "+cmd|' /C calc'!A0"
    doc["parts"].append(part)
    out = tmp_path / "hostile.yaml"
    out.write_text(yaml.safe_dump(doc, sort_keys=False), encoding="utf-8")
    return out


def cells(text: str) -> list[str]:
    return [c for row in csv.reader(io.StringIO(text)) for c in row]


def is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def assert_inert(text: str) -> None:
    for c in cells(text):
        if c and c.startswith(FORMULA_START):
            assert is_number(c), c  # a negative number is a number, not a formula


def test_catalogue_and_ranking_exports_are_inert(cli, tmp_path: Path) -> None:
    assert cli("load", hostile_catalogue(tmp_path)).exit_code == 0
    out = tmp_path / "parts.csv"
    r = cli("export-csv", out)
    assert r.exit_code == 0, r.output
    text = out.read_text(encoding="utf-8")
    assert "'=HYPERLINK" in text and "'@SUM" in text
    assert_inert(text)
    r = cli("rank", DESIGN, "--csv", "-n", "0")
    assert r.exit_code in (0, 1), r.output
    assert "BRQ-9999" in r.stdout
    assert_inert(r.stdout)


def test_checked_bom_keeps_line_endings_and_bom_and_is_inert(cli, tmp_path: Path) -> None:
    assert cli("load", PROJECT / "sample-catalog" / "parts").exit_code == 0
    bom = tmp_path / "b.csv"
    bom.write_bytes(
        b"\xef\xbb\xbfdesignators,part_number,quantity,note\r\n"
        b'U1,BRQ-622A,1,"=1+2"\r\nU2,VSR-32,1,-3.3\r\n'
    )
    out = tmp_path / "out.csv"
    r = cli("bom-check", bom, "--csv", out)
    assert r.exit_code in (0, 1), r.output
    raw = out.read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf")
    assert raw.count(b"\r\n") == 3 and b"\n" not in raw.replace(b"\r\n", b"")
    text = raw.decode("utf-8-sig")
    assert "'=1+2" in text and ",-3.3," in text  # the number stays a number
    assert_inert(text)
    # a trusted pipeline may ask for the BOM's own cells unchanged
    r = cli("bom-check", bom, "--csv", out, "--raw-cells")
    assert ',"=1+2",' in out.read_bytes().decode("utf-8-sig") or ",=1+2," in out.read_text(
        encoding="utf-8-sig"
    )
