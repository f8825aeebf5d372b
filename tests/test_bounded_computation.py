"""Class 7 of the reliability issue: every computation has a step budget. Extreme designs (a
signal period of hours or of 1e300 s, a GBW of 1e12 Hz) finish with figures or with a clear
message, never a hang. Each case runs in a subprocess under tests/limited.py's CPU-time and
memory limits (10 s CPU, 1 GiB): a hang fails the test instead of stalling CI. This is a hang
guard, not a speed target (speed: tests/bench/bench_bounded.py).

Physics checked alongside: at 1 uHz the AC-coupled load (10 uF in series with 10 kohm) draws
about omega * C * A = 6e-11 A, far below any pull-down current, so the class-B stage stays in one
conduction mode (series-RC admittance, analytic).
"""

from __future__ import annotations

import json
import textwrap
from pathlib import Path

import pytest
from limited import describe, run_limited
from typer.testing import CliRunner

from partsel.cli.main import app
from partsel.physics import stepper

SAMPLE_DESIGN = Path(__file__).resolve().parents[1] / "partsel/sample/designs/line-driver-5v.toml"


@pytest.fixture(scope="module", autouse=True)
def _compiled() -> None:
    """Compile (or load) the stepper here, so that the limited children load it from the
    cache folder this process exported (NUMBA_CACHE_DIR) instead of compiling under the limit."""
    stepper.warm_up()


CHILD = """
import json, math
import numpy as np, pandas as pd
from physics_helpers import line_design, stage_columns
from partsel.api import Session

cols = stage_columns(["class-b-pulldown", "class-ab", "class-a"], **{extra})
frame = pd.DataFrame(cols)
frame["part_number"] = ["B1", "AB1", "A1"]
with Session(frame) as s:
    parts = s.predict(line_design(frequency_hz={f}), basis="typical").parts()
print(json.dumps(parts))
"""


def _predict(f: float, **extra: float) -> list[dict]:
    proc = run_limited(textwrap.dedent(CHILD.format(f=repr(f), extra=repr(extra))))
    assert proc.returncode == 0, describe(proc)
    return json.loads(proc.stdout)


def test_slow_signals_still_simulate() -> None:
    """10 Hz and 0.01 Hz: the simulation converges (the step is 1e3..1e5 loop time constants)."""
    for f in (10.0, 0.01):
        for d in _predict(f):
            assert d["simulation"]["converged"] is True, (f, d["part_number"])
            assert d["simulation"]["note"] is None
            assert d["simulation"]["thd_f"] is not None


@pytest.mark.parametrize("f", [1e-6, 1e-300])
def test_a_period_of_days_is_given_up_with_a_reason(f: float) -> None:
    parts = _predict(f)
    for d in parts:
        sim = d["simulation"]
        assert sim["converged"] is False, d["part_number"]
        assert sim["thd_f"] is None
        assert "did not converge and was stopped" in sim["note"]
        assert "closed-form figures stand" in sim["note"]
    b = next(d for d in parts if d["part_number"] == "B1")
    # series RC at 1 uHz: |Y| ~ omega*C = 6.3e-11 S, current ~ 6e-11 A << I_pd: one mode
    assert b["prediction"]["conduction"] == "one-mode"
    assert abs(b["prediction"]["i_out_max_a"]) < 1e-9


def test_a_gbw_of_1e12_hz_is_bounded() -> None:
    """A loop 1e6 times faster than usual: whatever the solve does, it ends, and a part it gave
    up says so; the closed form still speaks for every part."""
    parts = _predict(1e3, gbw=1e12)
    for d in parts:
        sim = d["simulation"]
        assert isinstance(sim["converged"], bool)
        assert (sim["note"] is None) == sim["converged"]
        assert d["prediction"]["conduction"] in ("one-mode", "marginal", "changes-mode", "biased")


def test_a_frequency_beyond_double_precision_is_a_message(tmp_path: Path) -> None:
    text = SAMPLE_DESIGN.read_text(encoding="utf-8")
    lines = [
        'frequency = "1e300 Hz"' if ln.startswith("frequency") else ln for ln in text.splitlines()
    ]
    design = tmp_path / "absurd.toml"
    design.write_text("\n".join(lines) + "\n", encoding="utf-8")
    db = f"sqlite:///{tmp_path / 'c.sqlite'}"
    runner = CliRunner()
    parts = SAMPLE_DESIGN.parents[1] / "parts"
    assert runner.invoke(app, ["--db", db, "load", str(parts)]).exit_code == 0
    r = runner.invoke(app, ["--db", db, "predict", str(design), "HKE-262"])
    assert r.exit_code == 2, r.output
    assert "overflow double-precision arithmetic" in r.output
    assert "/signal/frequency" in r.output and "1e+300 Hz" in r.output
    assert "Traceback" not in r.output
