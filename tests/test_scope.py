"""partsel.io.scope.read_capture: the usual shapes of oscilloscope CSV files, and refusals that
name the file and line.

The shapes are common practice for bench instruments' CSV export (a block of settings lines,
a header naming each channel with its unit, separators by locale with a decimal comma where
the separator is not a comma, sometimes a row of units of its own, sometimes settings in the
first columns beside the data); the files here are written by the tests. Unit scales are
checked against pint (an independent unit library).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pint
import pytest

from partsel.errors import InputError
from partsel.io.scope import MIN_SAMPLES, read_capture

UREG = pint.UnitRegistry()
N = 100


def _signal() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    t = np.arange(N) * 1e-5 - 2e-4
    return t, 2.5 + 0.5 * np.sin(2e3 * math.pi * t), 2.5 + np.sin(2e3 * math.pi * t)


def _write(tmp_path: Path, text: str, name: str = "cap.csv") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def _rows(sep: str, comma: bool, t_scale: float = 1.0, v_scale: float = 1.0) -> str:
    t, vi, vo = _signal()
    lines = []
    for a, b, c in zip(t / t_scale, vi / v_scale, vo / v_scale, strict=True):
        row = sep.join(f"{x:.9g}" for x in (a, b, c))
        lines.append(row.replace(".", ",") if comma else row)
    return "\n".join(lines) + "\n"


def _check(cap, t_tol: float = 1e-9, v_tol: float = 1e-6) -> None:
    t, vi, vo = _signal()
    assert cap.n == N
    assert np.allclose(cap.t_s, t, atol=t_tol, rtol=0)
    assert np.allclose(cap.v_out, vo, atol=v_tol, rtol=0)
    if cap.v_in is not None:
        assert np.allclose(cap.v_in, vi, atol=v_tol, rtol=0)


def _scale(unit: str, to: str) -> float:
    return float(UREG.Quantity(1.0, unit).to(to).magnitude)


def test_plain_comma_file_with_units_in_the_header(tmp_path: Path) -> None:
    p = _write(tmp_path, "Time (s),CH1 (V),CH2 (V)\n" + _rows(",", False))
    cap = read_capture(p)
    _check(cap)
    assert [c.name for c in cap.columns] == ["Time", "CH1", "CH2"]


def test_settings_block_semicolons_decimal_comma_and_millivolts(tmp_path: Path) -> None:
    head = "Instrument;bench scope\nSample interval;10 us\nRecord length;100\n\n"
    text = head + "Time [ms];CH1 [mV];CH2 [mV]\n" + _rows(";", True, 1e-3, 1e-3)
    cap = read_capture(_write(tmp_path, text))
    _check(cap, t_tol=1e-12, v_tol=1e-6)
    assert cap.columns[0].scale == pytest.approx(_scale("ms", "s"))
    assert cap.columns[2].scale == pytest.approx(_scale("mV", "V"))
    assert cap.first_line == 6


def test_tabs_microseconds_and_a_latin1_micro_sign(tmp_path: Path) -> None:
    text = "t/\xb5s\tin/V\tout/V\n" + _rows("\t", True, 1e-6)
    p = tmp_path / "cap.txt"
    p.write_bytes(text.encode("cp1252"))
    cap = read_capture(p)
    _check(cap, t_tol=1e-12)
    assert cap.columns[0].scale == pytest.approx(_scale("us", "s"))


def test_a_row_of_units_under_the_header(tmp_path: Path) -> None:
    text = "x-axis,1,2\nsecond,Volt,Volt\n" + _rows(",", False)
    cap = read_capture(_write(tmp_path, text))  # channels named 1 and 2: numbers are positions
    _check(cap)


def test_settings_beside_the_data(tmp_path: Path) -> None:
    """Settings in the first columns of the first rows, the data in the last two."""
    t, _, vo = _signal()
    lines = []
    for k, (a, c) in enumerate(zip(t, vo, strict=True)):
        settings = {0: ("Record Length", "100", "Points"), 1: ("Sample Interval", "1e-05", "s")}
        first = settings.get(k, ("", "", ""))
        lines.append(",".join([*first, f"{a:.9g}", f"{c:.9g}"]))
    cap = read_capture(_write(tmp_path, "\n".join(lines) + "\n"))
    assert cap.n == N - 2 and cap.v_in is None  # the two settings rows are not data
    assert np.allclose(cap.t_s, t[2:]) and np.allclose(cap.v_out, vo[2:])


def test_no_header_and_spaces(tmp_path: Path) -> None:
    cap = read_capture(_write(tmp_path, _rows(" ", False)))
    _check(cap)


def test_columns_by_name_or_number(tmp_path: Path) -> None:
    p = _write(tmp_path, "Time (s),CH1 (V),CH2 (V)\n" + _rows(",", False))
    _, vi, _ = _signal()
    cap = read_capture(p, columns="time,ch1")  # output = CH1, no input
    assert cap.v_in is None and np.allclose(cap.v_out, vi)
    cap = read_capture(p, columns="1,3,2")
    assert np.allclose(cap.v_in, _signal()[2]) and np.allclose(cap.v_out, vi)
    for bad, words in (("time,CH9", "names no column"), ("1,7", "no column 7"), ("x", "two")):
        with pytest.raises(InputError, match=words):
            read_capture(p, columns=bad)


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (lambda row: "saturated," + row, "cell 'saturated' is not a number"),
        (lambda row: row + ",9", "4 numbers where the data rows have 3"),
        (lambda row: row.split(",", 1)[1], "2 numbers where the data rows have 3"),
    ],
)
def test_bad_rows_are_refused_with_their_line(tmp_path: Path, change, words: str) -> None:
    lines = _rows(",", False).splitlines()
    lines[20] = change(lines[20])
    text = "Time (s),CH1 (V),CH2 (V)\n" + "\n".join(lines) + "\n"
    p = _write(tmp_path, text)
    with pytest.raises(InputError) as exc:
        read_capture(p)
    assert str(exc.value).startswith(f"{p}: line 22: {words}")


def test_time_must_increase(tmp_path: Path) -> None:
    lines = _rows(",", False).splitlines()
    lines[30], lines[31] = lines[31], lines[30]
    text = "Time (s),CH1 (V),CH2 (V)\n" + "\n".join(lines) + "\n"
    with pytest.raises(InputError, match="line 33: the time does not increase"):
        read_capture(_write(tmp_path, text))


def test_units_that_are_not_time_or_voltage(tmp_path: Path) -> None:
    with pytest.raises(InputError, match=r"line 1, column 'CH2': unit 'A' is not a unit of"):
        read_capture(_write(tmp_path, "Time (s),CH1 (V),CH2 (A)\n" + _rows(",", False)))
    with pytest.raises(InputError, match="not a unit of time"):
        read_capture(_write(tmp_path, "Time (V),CH1 (V),CH2 (V)\n" + _rows(",", False)))


def test_too_short_empty_and_binary(tmp_path: Path) -> None:
    short = "\n".join(_rows(",", False).splitlines()[: MIN_SAMPLES - 1]) + "\n"
    with pytest.raises(InputError, match="rows of data"):
        read_capture(_write(tmp_path, "Time (s),a (V),b (V)\n" + short))
    with pytest.raises(InputError, match="empty"):
        read_capture(_write(tmp_path, "\n\n"))
    with pytest.raises(InputError, match="no rows of numbers"):
        read_capture(_write(tmp_path, "just,text\nand,more\n"))
    b = tmp_path / "x.bin"
    b.write_bytes(b"\x00\x01" * 50)
    with pytest.raises(InputError, match="NUL"):
        read_capture(b)
