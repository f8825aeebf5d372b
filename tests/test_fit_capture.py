"""``partsel fit-capture``: a known part, simulated, written as a scope capture with noise and
an offset, is fitted back.

The capture is partsel's own simulation of the sample part BRQ-622 (class B) in the sample
line driver, with a stage current and dead band other than its catalogue values, simulated
with twice the fit's steps per period (so that the fit also carries the discretisation error
it would meet in a real capture), a 20 mV offset, white noise of 2 mV rms (the resolution of
an 8-bit scope at 50 mV/div, common practice), four periods at 500 samples per period behind
a block of header lines, semicolons and decimal commas. The fit recovers each parameter
within its own 95 % confidence interval, the intervals are narrow (a few percent) and the
residual equals the noise. Fixed seed: the noise is the same on every run.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from partsel.characterise.fit import MIN_STEPS
from partsel.physics.circuit import Design

PROJECT = Path(__file__).resolve().parents[1]
DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"
PARTS = PROJECT / "sample-catalog" / "parts"
TRUE = {"stage_current": 42e-6, "dead_band": 1.65}
NOISE_V = 2e-3
OFFSET_V = 0.02
T0_PERIODS = 0.37


def _truth(part: str, design: Design, **values: float) -> tuple[np.ndarray, np.ndarray]:
    """One period of the part's simulated output (on its step grid) with ``values``."""
    from partsel.api import Session
    from partsel.catalogue import load_paths, open_catalogue
    from partsel.physics.simulate import simulate

    eng = open_catalogue("sqlite://")
    load_paths(eng, [PARTS])
    s = Session(eng)
    st = s.table.stage("typical").take(s.rows([part]))
    ch = {}
    if "stage_current" in values:
        ch["stage_current_a"] = np.array([values["stage_current"]])
        ch["stage_current_high_a"] = ch["stage_current_a"]
    if "dead_band" in values:
        ch["dead_band_v"] = np.array([values["dead_band"]])
    steps = 2 * MIN_STEPS
    sim = simulate(st.replace(**ch), design, steps_per_period=steps)
    period = 1.0 / design.signal.frequency_hz
    return (np.arange(steps) + 1) * period / steps, sim.v_out[0]


def _capture(path: Path, part: str, *, seed: int = 7, **values: float) -> Path:
    from partsel.design import load_design

    design = load_design(DESIGN)
    grid, wave = _truth(part, design, **values)
    period = 1.0 / design.signal.frequency_hz
    rng = np.random.default_rng(seed)
    t = -2 * period + np.arange(2000) * (period / 500)
    t0 = T0_PERIODS * period
    phase = np.mod(t - t0, period)
    v_out = np.interp(phase, np.concatenate([[0.0], grid]), np.concatenate([[wave[-1]], wave]))
    v_out = v_out + OFFSET_V + rng.normal(0.0, NOISE_V, t.size)
    v_in = design.v_in(t - t0) + rng.normal(0.0, NOISE_V, t.size)
    with path.open("w", encoding="utf-8") as fh:
        fh.write("Instrument;bench scope\nSample interval;2 us\nProbe;10:1\n\n")
        fh.write("Time (ms);CH1 (V);CH2 (mV)\n")
        for a, b, c in zip(t * 1e3, v_in, v_out * 1e3, strict=True):
            fh.write(f"{a:.6f};{b:.5f};{c:.3f}\n".replace(".", ","))
    return path


@pytest.fixture
def loaded(cli):
    assert cli("load", PARTS).exit_code == 0
    return cli


@pytest.mark.parametrize("columns", [None, "time,CH2"], ids=["with input", "output only"])
def test_fit_recovers_the_parameters_within_their_intervals(
    loaded, tmp_path: Path, columns: str | None
) -> None:
    cap = _capture(tmp_path / "capture.csv", "BRQ-622", **TRUE)
    args = ["fit-capture", cap, "-d", DESIGN, "--part", "BRQ-622", "--json"]
    res = loaded(*args, *(["--columns", columns] if columns else []))
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    assert out["samples"] == 2000 and out["periods"] == pytest.approx(4.0, rel=1e-3)
    assert out["time_from_input"] is (columns is None)
    params = out["parameters"]
    assert set(params) == {"stage_current", "dead_band"}  # the line driver does not slew
    for key, true in TRUE.items():
        p = params[key]
        assert p["determined"]
        assert abs(p["value"] - true) <= p["ci95"], (key, p)
        assert p["ci95"] < 0.03 * true, (key, p)
    assert abs(out["offset"]["value"] - OFFSET_V) <= out["offset"]["ci95"]
    assert out["residual_rms_v"] == pytest.approx(NOISE_V, rel=0.05)
    if columns is not None:  # the time origin fitted from the output alone
        t0 = T0_PERIODS / 1e3  # 1 kHz design
        assert abs(out["time_shift"]["value"] - t0) <= max(out["time_shift"]["ci95"], 1e-9)


def test_store_updates_the_record_versioned(loaded, tmp_path: Path) -> None:
    cap = _capture(tmp_path / "capture.csv", "BRQ-622", **TRUE)
    res = loaded("fit-capture", cap, "-d", DESIGN, "--part", "BRQ-622", "--store")
    assert res.exit_code == 0, res.output
    assert "stage current" in res.stdout and "BRQ-622: version 2 stored (changed)" in res.output
    rec = json.loads(loaded("show", "BRQ-622", "--json").stdout)["record"]
    sc, db = rec["output"]["stage_current"], rec["output"]["dead_band"]
    assert sc["min"] == "30 uA" and sc["max"] == "80 uA"  # the datasheet's range is kept
    assert sc["typ"].endswith("uA") and float(sc["typ"].split()[0]) == pytest.approx(42, rel=0.01)
    assert float(db["typ"].split()[0]) == pytest.approx(1.65, rel=0.01)
    assert sc["at"]["note"] == "partsel fit-capture of capture.csv"
    hist = json.loads(loaded("history", "BRQ-622", "--json").stdout)
    assert hist[-1]["source"] == "fit-capture capture.csv"


def test_a_biased_stage_current_is_not_determined_and_not_stored(loaded, tmp_path: Path) -> None:
    """A class-AB stage in one mode: its quiescent current hardly shows in the waveform, so
    the fit reports its interval as wider than half its value and stores nothing of it."""
    cap = _capture(tmp_path / "ab.csv", "BRQ-722", stage_current=30e-6)
    res = loaded("fit-capture", cap, "-d", DESIGN, "--part", "BRQ-722", "--store", "--json")
    assert res.exit_code == 0, res.output
    out = json.loads(res.stdout)
    assert out["parameters"]["stage_current"]["determined"] is False
    assert "not determined by this capture" in res.output
    assert out["stored"]["action"] is None  # nothing changed: the record is the same


def test_bad_captures_exit_2_and_store_nothing(loaded, tmp_path: Path) -> None:
    cap = _capture(tmp_path / "capture.csv", "BRQ-622", **TRUE)
    lines = cap.read_text(encoding="utf-8").splitlines()
    bad = tmp_path / "bad.csv"
    bad.write_text("\n".join([*lines[:40], "overload;;", *lines[41:]]) + "\n", encoding="utf-8")
    res = loaded("fit-capture", bad, "-d", DESIGN, "--part", "BRQ-622", "--store")
    assert res.exit_code == 2 and f"{bad}: line 41:" in res.output
    res = loaded("fit-capture", cap, "-d", DESIGN, "--part", "NO-SUCH", "--store")
    assert res.exit_code == 2 and "NO-SUCH" in res.output
    short = tmp_path / "short.csv"
    short.write_text("\n".join(lines[:300]) + "\n", encoding="utf-8")  # 0.6 of a period
    res = loaded("fit-capture", short, "-d", DESIGN, "--part", "BRQ-622")
    assert res.exit_code == 2 and "less than one period" in res.output
    assert json.loads(loaded("history", "BRQ-622", "--json").stdout)[-1]["version"] == 1


def test_without_scipy_the_command_says_what_to_install(
    loaded, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    import sys

    cap = _capture(tmp_path / "capture.csv", "BRQ-622", **TRUE)
    monkeypatch.setitem(sys.modules, "scipy", None)
    res = loaded("fit-capture", cap, "-d", DESIGN, "--part", "BRQ-622")
    assert res.exit_code == 2 and "pip install 'partsel[fit]'" in res.output
