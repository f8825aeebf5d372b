"""The one CSV writer (partsel.io.csvout): read back with Python's csv module, no cell starts
like a formula (OWASP's CSV-injection list: = + - @ tab CR) unless it is a plain number; the
quote is the only change; pandas' own output for ordinary data; line endings, byte-order mark,
raw columns, atomic files and unwritable paths."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import pandas as pd
import pytest
from conftest import CATALOGUE_DATA
from hypothesis import given
from hypothesis import strategies as st

from partsel.catalogue import load_paths, open_catalogue, parts_frame
from partsel.errors import InputError
from partsel.io.csvout import FORMULA_START, NUMBER, neutralise, write_frame, write_rows

_DANGEROUS = (*FORMULA_START, "\uff1d", "\uff0b", "\uff0d", "\uff20")


def _read(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline="")))


def _inert(cell: str) -> bool:
    return not cell.startswith(_DANGEROUS) or bool(NUMBER.fullmatch(cell))


_CELL = st.one_of(
    st.text(max_size=12),
    st.builds(lambda a, b: a + b, st.sampled_from(_DANGEROUS), st.text(max_size=10)),
    st.floats(),
    st.integers(),
    st.none(),
)


@given(st.lists(st.lists(_CELL, min_size=3, max_size=3), max_size=6))
def test_no_cell_reads_back_as_a_formula(rows: list[list[object]]) -> None:
    buf = io.StringIO()
    write_rows(buf, rows, header=["a", "=b", "c"])
    back = _read(buf.getvalue())
    assert back[0] == ["a", "'=b", "c"]
    assert len(back) == len(rows) + 1
    for written, given_row in zip(back[1:], rows, strict=True):
        for cell, value in zip(written, given_row, strict=True):
            assert _inert(cell), cell
            # the leading quote is the only change
            original = cell[1:] if cell != str(value) and cell.startswith("'") else cell
            expected = "" if value is None or value != value else (
                repr(value) if isinstance(value, float) else str(value)
            )  # fmt: skip
            assert original == expected


@pytest.mark.parametrize(("cell", "written"), [
    ("=HYPERLINK(\"x\")", "'=HYPERLINK(\"x\")"),
    ("+1+1", "'+1+1"), ("@SUM(A1:A9)", "'@SUM(A1:A9)"), ("\tx", "'\tx"), ("\r=1", "'\r=1"),
    ("-3.3", "-3.3"), ("+5", "+5"), ("-1e-06", "-1e-06"), (".5", ".5"),
    ("-3.3 V", "'-3.3 V"), ("-inf", "'-inf"), ("\uff1dcmd", "'\uff1dcmd"),
    ("QFA-2210", "QFA-2210"), ("", ""),
])  # fmt: skip
def test_neutralise(cell: str, written: str) -> None:
    """Rule: a leading quote for text starting with a formula character, plain numbers kept
    (common practice, as OWASP's CSV-injection note recommends)."""
    assert neutralise(cell) == written


def test_raw_columns_line_endings_and_byte_order_mark(tmp_path: Path) -> None:
    f = tmp_path / "out.csv"
    n = write_rows(
        f, [["=1", "=2"]], header=["bom_cell", "partsel_note"], line_ending="\r\n", bom=True,
        keep_raw={"bom_cell"},
    )  # fmt: skip
    assert n == 1
    assert f.read_bytes() == b"\xef\xbb\xbfbom_cell,partsel_note\r\n=1,'=2\r\n"


@pytest.fixture
def frame(tmp_path: Path) -> pd.DataFrame:
    engine = open_catalogue(f"sqlite:///{tmp_path / 'c.sqlite'}")
    try:
        load_paths(engine, [CATALOGUE_DATA])
        return parts_frame(engine)
    finally:
        engine.dispose()


def test_ordinary_frame_is_written_as_pandas_writes_it(frame: pd.DataFrame) -> None:
    """The catalogue export of ordinary data is unchanged by the switch to this writer
    (pandas' to_csv is the reference)."""
    buf = io.StringIO()
    assert write_frame(frame, buf) == len(frame)
    assert buf.getvalue() == frame.to_csv(index=False, lineterminator="\n")


def test_hostile_cells_in_a_frame(frame: pd.DataFrame) -> None:
    frame = frame.copy()
    frame.loc[0, "part_number"] = "=cmd|'/C calc'!A0"
    frame.loc[1, "notes" if "notes" in frame.columns else "family"] = "@SUM(1+1)"
    buf = io.StringIO()
    write_frame(frame, buf, line_ending="\r\n")
    rows = _read(buf.getvalue())
    assert rows[1][list(frame.columns).index("part_number")] == "'=cmd|'/C calc'!A0"
    assert all(_inert(c) for row in rows for c in row)
    assert buf.getvalue().count("\r\n") == len(frame) + 1


def test_unwritable_path_names_the_path(tmp_path: Path) -> None:
    target = tmp_path / "no-such-folder" / "out.csv"
    with pytest.raises(InputError) as info:
        write_rows(target, [["a"]])
    (p,) = info.value.problems
    assert p.file == str(target) and "cannot write" in p.message


def test_a_failed_write_leaves_no_file(tmp_path: Path) -> None:
    def rows():
        yield ["a"]
        raise RuntimeError("interrupted")

    target = tmp_path / "out.csv"
    with pytest.raises(RuntimeError):
        write_rows(target, rows())
    assert list(tmp_path.iterdir()) == []
