"""BOM check: every matching rule, lifecycle and in-circuit findings, malformed BOMs, outputs.

The catalogue is invented: two makers with their own suffix rules (regular expressions kept in
the catalogue), parts chosen so that each rule is the one that matches, and a pair of part
numbers that normalise alike (AB-100 / AB100) for the ambiguous case.
"""

from __future__ import annotations

import copy
import csv
import io
import json
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
from jsonschema import Draft202012Validator

from partsel.catalogue import load_documents, makers, open_catalogue, parts_frame
from partsel.catalogue.validate import validate_documents
from partsel.design import design_from_mapping, load_design
from partsel.errors import InputError
from partsel.solver.bom import (
    FINDING_CODES,
    PartMatcher,
    check_bom,
    normalise,
    parse_designators,
    parse_quantity,
    read_bom,
)

PROJECT = Path(__file__).resolve().parents[1]
SCHEMA = json.loads((PROJECT / "data-schema" / "bom-check.schema.json").read_text())
ORRIN, PELLAM = "Orrin Devices", "Pellam Micro"


def part(
    pn: str, maker: str, lifecycle: str = "active", supply: str = "3 V", price: float = 0.3
) -> dict[str, Any]:
    """An invented class-AB dual; only the identity fields vary between parts."""
    return {
        "part_number": pn,
        "maker": maker,
        "channels": 2,
        "lifecycle": lifecycle,
        "packages": [{"code": "SO-8", "pinout": "DUAL-8X", "theta_ja": "160 K/W"}],
        "temperature": {"min": "-40 degC", "max": "85 degC"},
        "price": {"unit": price, "currency": "USD"},
        "supply": {"range": {"min": supply, "max": "32 V"}, "current_per_channel": "500 uA"},
        "input": {
            "rail_to_rail": False,
            "cm_headroom_neg": "0 V",
            "cm_headroom_pos": "1.5 V",
            "offset_voltage": "2 mV",
            "bias_current": "20 nA",
            "noise_density": "30 nV/rtHz",
        },
        "dynamics": {
            "gbw": "1 MHz",
            "slew_rise": "0.5 V/us",
            "slew_fall": "0.5 V/us",
            "cap_load_limit": "200 pF",
        },
        "output": {
            "topology": "class-ab",
            "stage_current": "100 uA",
            "source_limit": "20 mA",
            "sink_limit": "20 mA",
            "swing_pos": [
                {"current": "0 A", "headroom": "0.1 V"},
                {"current": "10 mA", "headroom": "0.5 V"},
            ],
            "swing_neg": [
                {"current": "0 A", "headroom": "0.1 V"},
                {"current": "10 mA", "headroom": "0.5 V"},
            ],
        },
    }


CATALOGUE = {
    "makers": [
        {"name": ORRIN, "suffix_rules": ["-TR$", "/RL$"]},
        {"name": PELLAM, "suffix_rules": ["-T7$"]},
    ],
    "parts": [
        part("ORR-100", ORRIN),
        part("ORR-200", ORRIN, "obsolete"),
        part("ORR-300", ORRIN, "not-for-new-designs"),
        part("ORR-101", ORRIN, price=0.25),  # the cheapest of the equal substitutes
        part("ORR-HV1", ORRIN, supply="10 V"),  # needs at least 10 V
        part("AB-100", ORRIN),
        part("AB100", PELLAM),
        part("PEL-200", PELLAM),
    ],
}


@pytest.fixture(scope="module")
def catalogue(module_db_url: str) -> tuple[pd.DataFrame, list[dict]]:
    eng = open_catalogue(module_db_url)
    load_documents(eng, validate_documents([("hand.json", copy.deepcopy(CATALOGUE))]))
    out = parts_frame(eng), makers(eng)
    eng.dispose()
    return out


def bom(text: str) -> bytes:
    return text.encode("utf-8")


def run(catalogue: Any, source: Any, **kw: Any):
    frame, mk = catalogue
    return check_bom(frame, source, mk, **kw)


def codes(line: Any) -> set[str]:
    return {f.code for f in line.findings}


# ---- matching rules ---------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("written", "rule", "expect", "stripped"),
    [
        ("ORR-100", "exact", "ORR-100", ()),
        ("  ORR-100 ", "exact", "ORR-100", ()),  # CSV padding is not a difference
        ("orr-100", "normalised", "ORR-100", ()),  # case
        ("ORR 100", "normalised", "ORR-100", ()),  # spaces
        ("ORR100", "normalised", "ORR-100", ()),  # dash left out
        ("ORR\u2013100", "normalised", "ORR-100", ()),  # en dash from a spreadsheet
        ("ORR-100-TR", "suffix", "ORR-100", ("-TR",)),  # packing suffix
        ("orr-100-tr", "suffix", "ORR-100", ("-tr",)),  # rules apply regardless of case
        ("ORR-100/RL-TR", "suffix", "ORR-100", ("-TR", "/RL")),  # two suffixes
        ("ORR 100-TR", "suffix", "ORR-100", ("-TR",)),
        ("PEL-200-T7", "suffix", "PEL-200", ("-T7",)),
        ("PEL-200/RL", "none", None, ()),  # /RL is Orrin's rule, not Pellam's
        ("ORR-999", "none", None, ()),
    ],
)
def test_matching_rules(
    catalogue: Any, written: str, rule: str, expect: str | None, stripped: tuple[str, ...]
) -> None:
    m = PartMatcher(*catalogue).match(written)
    assert (m.rule, m.part_number, m.stripped) == (rule, expect, stripped)


def test_ambiguous_normalised_match_and_the_maker_cell(catalogue: Any) -> None:
    matcher = PartMatcher(*catalogue)
    m = matcher.match("ab 100")
    assert m.part_number is None and set(m.candidates) == {"AB-100", "AB100"}
    assert matcher.match("ab 100", maker=PELLAM).part_number == "AB100"
    assert matcher.match("AB100").rule == "exact"  # an exact hit is never ambiguous


def test_bad_suffix_rule_is_reported(catalogue: Any) -> None:
    with pytest.raises(InputError, match=r"suffix language|not part of the language") as exc:
        PartMatcher(catalogue[0], [{"name": "X", "suffix_rules": ["(unclosed"]}])
    assert exc.value.problems[0].pointer == "/makers/0/suffix_rules/0"


def test_normalise() -> None:
    assert normalise(" Orr \u2212 100\tA ") == "orr100a"
    assert normalise("\ufeffORR-100") == "orr100"  # a byte-order mark pasted into a cell


@pytest.mark.parametrize(
    ("cell", "maker", "same"),
    [
        ("Orrin Devices", ORRIN, True),
        ("orrin devices", ORRIN, True),
        ("Orrin", ORRIN, True),  # the maker's first word: a short name (common practice)
        ("Orrin Dev.", ORRIN, True),
        ("Orr", ORRIN, False),  # the first word must be whole
        ("Pellam", ORRIN, False),
        ("Orrin Devices Europe", ORRIN, False),
    ],
)
def test_maker_cells(cell: str, maker: str, same: bool) -> None:
    from partsel.solver.bom.matching import maker_matches

    assert maker_matches(cell, maker) is same


def test_usual_header_words_and_quantities(catalogue: Any) -> None:
    """Headers as BOM tools write them (common practice), a quantity with a count word, a
    short maker name, and a lower-case part number with a packing suffix."""
    raw = bom(
        "RefDes,Mfr Part #,Qty,Manufacturer\nU1,orr100-tr,1 pcs,Orrin\nU2,PEL-200,2x,Pellam Micro\n"
    )
    rep = run(catalogue, raw)
    assert rep.columns == {
        "designators": "RefDes",
        "part_number": "Mfr Part #",
        "quantity": "Qty",
        "maker": "Manufacturer",
        "design": None,
    }
    a, b = rep.lines
    assert (a.match.rule, a.match.part_number, a.quantity) == ("suffix", "ORR-100", 1)
    assert "maker-mismatch" not in codes(a)
    assert (b.match.part_number, b.quantity) == ("PEL-200", 2)
    assert rep.warnings == ()
    for header in ("MPN", "Manufacturer Part Number", "Part Number", "mpn"):
        r = run(catalogue, bom(f"Designator,{header},Quantity\nU1,ORR-100,1\n"))
        assert r.columns["part_number"] == header and r.columns["designators"] == "Designator"
    # a designator column under another name is warned about, not silently ignored
    r = run(catalogue, bom("Ref. Designators Used,MPN\nU1,ORR-100\n"))
    assert r.columns["designators"] is None
    assert r.warnings and "--column designators=" in r.warnings[0]


# ---- lifecycle, design and substitutes --------------------------------------------------------

DESIGN_5V = {
    "name": "5 V buffer",
    "supply": {"positive": "5 V"},
    "signal": {"bias": "2.5 V", "amplitude": "0.5 V", "frequency": "1 kHz"},
    "amplifier": {"configuration": "non-inverting", "gain": 1},
    "load": {"resistance": "10 kohm", "reference": "2.5 V", "coupling": "dc"},
}


def test_lifecycle_out_of_spec_and_substitutes(catalogue: Any) -> None:
    text = (
        "designators,part_number,quantity\n"
        "U1,ORR-100,1\n"
        "U2,ORR-200,1\n"
        "U3,ORR-300,1\n"
        "U4,ORR-HV1,1\n"
        "U5,NOPE-9,1\n"
    )
    rep = run(catalogue, bom(text), design=design_from_mapping(DESIGN_5V))
    ok, old, nrnd, hv, unknown = rep.lines
    assert ok.status == "ok" and ok.findings == ()
    assert "obsolete" in codes(old)
    assert "not-for-new-designs" in codes(nrnd)
    assert {f.severity for f in nrnd.findings} == {"warning"}
    # 5 V total supply against a 10 V minimum (the part's supply range)
    assert "out-of-spec" in codes(hv)
    assert any("supply range" in f.message for f in hv.findings)
    assert codes(unknown) == {"unknown-part"}
    # substitutes: for the lifecycle risks and the line out of spec, never for a clear line
    assert ok.substitutes == ()
    assert "ORR-101" in [s.part_number for s in old.substitutes]
    assert "ORR-101" in [s.part_number for s in nrnd.substitutes]
    assert all(s.circuit_pass for s in hv.substitutes[:1])
    assert rep.exit_code == 1
    assert rep.summary()["with_findings"] == 4


def test_all_clear_exits_zero(catalogue: Any) -> None:
    rep = run(catalogue, bom("part_number,quantity\nORR-100,2\nPEL-200-T7,1\n"))
    assert [ln.status for ln in rep.lines] == ["ok", "ok"]
    assert rep.exit_code == 0


def test_per_line_design_relative_to_the_bom(catalogue: Any, tmp_path: Path) -> None:
    (tmp_path / "designs").mkdir()
    (tmp_path / "designs" / "buf.json").write_text(json.dumps(DESIGN_5V), encoding="utf-8")
    path = tmp_path / "board.csv"
    path.write_text(
        "part_number,design\nORR-HV1,designs/buf.json\nORR-HV1,\nORR-100,designs/missing.json\n",
        encoding="utf-8",
    )
    rep = run(catalogue, path, design_loader=load_design)
    in_design, alone, missing = rep.lines
    assert in_design.design == "5 V buffer" and "out-of-spec" in codes(in_design)
    assert alone.design is None and alone.status == "ok"
    assert codes(missing) == {"bad-design"}
    assert run(catalogue, path).lines[0].findings[0].code == "bad-design"  # no loader given


# ---- designators and quantities ----------------------------------------------------------------


def test_designators_and_quantities() -> None:
    assert parse_designators("U1, U3-U5;U7 U9-11") == (
        ("U1", "U3", "U4", "U5", "U7", "U9", "U10", "U11"),
        None,
    )
    assert parse_designators("U5-U2")[1] is not None
    assert parse_quantity("2") == (2, None)
    assert parse_quantity("2.0") == (2, None)  # spreadsheets write whole numbers so
    assert parse_quantity("1 pcs") == parse_quantity("1 PCS") == (1, None)
    assert parse_quantity("3x") == (3, None) and parse_quantity("4 ea") == (4, None)
    for bad in ("abc", "0", "-1", "2.5", "inf"):
        q, problem = parse_quantity(bad)
        assert q is None and problem, bad
    assert parse_quantity("") == (None, None)


def test_malformed_cells_are_line_findings(catalogue: Any) -> None:
    text = (
        "designators,part_number,quantity\n"
        "U1-U3,ORR-100,2\n"  # three designators, quantity 2
        "U4,ORR-100,abc\n"
        "U5,ORR-100,0\n"
        "U6,ORR-100,2.5\n"
        "U7,ORR-100,\n"
        "U1,ORR-100,1\n"  # U1 again
        "U9,,1\n"
        "U10,ORR-100\n"  # short row
        "U11,ORR-100,1,extra\n"
        "U12-U2,ORR-100,1\n"
    )
    rep = run(catalogue, bom(text))
    got = [codes(ln) for ln in rep.lines]
    assert got == [
        {"quantity-mismatch"},
        {"bad-quantity"},
        {"bad-quantity"},
        {"bad-quantity"},
        {"no-quantity"},
        {"duplicate-designator"},
        {"no-part-number"},
        {"short-row", "no-quantity"},
        {"extra-cells"},
        {"bad-designators"},
    ]
    assert [ln.line for ln in rep.lines] == list(range(2, 12))
    assert all(f.code in FINDING_CODES for ln in rep.lines for f in ln.findings)


# ---- malformed files --------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        (b"", "empty"),
        (b"  \n\n \n", "empty"),
        (b"designators,part_number,quantity\n", "no lines"),
        (b"refs,pn_x,qty\nU1,ORR-100,1\n", "no part-number column"),
        (b"part_number,part number\nORR-100,x\n", "2 times"),
        (b"\x00\x01\x02binary\x00", "not a text CSV"),
        (b'part_number,quantity\n"ORR-100,1\n', "not a readable CSV"),
    ],
)
def test_unreadable_boms_are_clear_input_errors(catalogue: Any, raw: bytes, message: str) -> None:
    with pytest.raises(InputError, match=message):
        run(catalogue, raw)


def test_missing_column_names_what_it_looked_for(catalogue: Any) -> None:
    raw = b"Ref,Manufacturer Part,Count\nU1,ORR-100,1\n"
    with pytest.raises(InputError) as exc:
        run(catalogue, raw)
    p = exc.value.problems[0]
    assert p.pointer == "/columns/part_number" and "'Manufacturer Part'" in p.message
    cols = {"part_number": "Manufacturer Part", "quantity": "count", "designators": "REF"}
    rep = run(catalogue, raw, columns=cols)
    assert rep.lines[0].match.part_number == "ORR-100" and rep.lines[0].quantity == 1
    assert rep.columns["part_number"] == "Manufacturer Part"
    with pytest.raises(InputError, match="unknown BOM column role"):
        run(catalogue, raw, columns={"partnumber": "x"})


def test_encoding_problems(catalogue: Any) -> None:
    """A Latin-1 byte (0xB5, the micro sign) in a UTF-8 read is a finding of that line only;
    read as Latin-1 it is clean. UTF-16 with a byte-order mark and UTF-8 with one are read."""
    raw = "part_number,note\nORR-100,10 \u00b5F nearby\nPEL-200,ok\n".encode("latin-1")
    rep = run(catalogue, raw)
    assert codes(rep.lines[0]) == {"encoding"}
    assert "\ufffd" in rep.lines[0].cells[1]
    assert rep.lines[0].match.part_number == "ORR-100"
    assert rep.lines[1].status == "ok"
    assert run(catalogue, raw, encoding="latin-1").exit_code == 0
    text = "part_number;quantity\nORR-100;1\n"
    for enc in ("utf-16", "utf-8-sig"):
        rep = run(catalogue, text.encode(enc))
        assert rep.delimiter == ";" and rep.lines[0].match.rule == "exact", enc
    with pytest.raises(InputError, match="unknown text encoding"):
        run(catalogue, raw, encoding="no-such-codec")


def test_file_errors(catalogue: Any, tmp_path: Path) -> None:
    with pytest.raises(InputError, match="no such BOM file"):
        run(catalogue, tmp_path / "missing.csv")
    with pytest.raises(InputError, match="folder"):
        run(catalogue, tmp_path)


# ---- outputs ----------------------------------------------------------------------------------


def test_csv_output_merges_back(catalogue: Any, tmp_path: Path) -> None:
    """The BOM's own columns come back unchanged, line for line, with partsel_* added."""
    text = 'designators,part_number,quantity,note\n"U1, U2",ORR-200,2,"keep, this"\nU3,x,1,\n'
    rep = run(catalogue, bom(text))
    out = tmp_path / "out.csv"
    rep.write_csv(out)
    with out.open(encoding="utf-8", newline="") as fh:
        rows = list(csv.reader(fh))
    original = list(csv.reader(io.StringIO(text)))
    assert rows[0][:4] == original[0]
    assert [r[:4] for r in rows[1:]] == [r[:4] for r in original[1:]]
    head = rows[0]
    assert head[4:] == [
        "partsel_line",
        "partsel_status",
        "partsel_match",
        "partsel_part_number",
        "partsel_maker",
        "partsel_lifecycle",
        "partsel_findings",
        "partsel_messages",
        "partsel_substitutes",
    ]
    first = dict(zip(head, rows[1], strict=True))
    assert first["partsel_status"] == "finding" and "obsolete" in first["partsel_findings"]
    assert "ORR-101" in first["partsel_substitutes"]


def test_json_validates_against_the_schema(catalogue: Any) -> None:
    Draft202012Validator.check_schema(SCHEMA)
    text = (
        "designators,part_number,quantity,maker\nU1,ORR-200,1,\nU2,ab 100,1,\nU3,ORR-HV1,x,"
        f"{PELLAM}\nU4,NOPE,1,\n"
    )
    rep = run(catalogue, bom(text), design=design_from_mapping(DESIGN_5V))
    data = json.loads(json.dumps(rep.to_dict(), allow_nan=False))
    Draft202012Validator(SCHEMA).validate(data)
    assert data["lines"][2]["findings"][0]["code"] == "bad-quantity"
    assert {f["code"] for f in data["lines"][2]["findings"]} >= {"maker-mismatch"}


def test_schema_finding_codes_follow_the_module() -> None:
    assert SCHEMA["$defs"]["finding"]["properties"]["code"]["enum"] == list(FINDING_CODES)


def test_frame_input(catalogue: Any) -> None:
    frame = pd.DataFrame({"part_number": ["orr 100", None], "quantity": [1, 2]})
    rep = run(catalogue, read_bom(frame))
    assert rep.lines[0].match.rule == "normalised"
    assert codes(rep.lines[1]) == {"no-part-number"}
