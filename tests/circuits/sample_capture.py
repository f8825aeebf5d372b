"""Write the sample scope capture of sample-catalog/captures/ (a script, not collected).

Run from the project root: ``python tests/circuits/sample_capture.py``. The transistor-level
class-B op-amp of this folder (``opamp_class_b.sub``, the circuit the sample part PCD-150 was
characterised on) stands in for a part on the bench: ngspice 39 runs it in the circuit of
``sample-catalog/captures/driver-2k.toml`` (gain 2 around 2.5 V, R_f = R_g = 100 kohm, 2 kohm
to 2.5 V, 0.4 V at 5 kHz at the input) for six periods, and the last four are written the way a
scope exports them (a block of settings, then time in microseconds and both channels in volts,
500 samples per period). The result is a capture partsel fit-capture can read, made from a
circuit partsel's macro-model is not.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from circuits.characterise import CLASS_B, MID_V, _deck  # noqa: E402

from partsel.spice_run import run_ngspice_columns  # noqa: E402

OUT = HERE.parents[1] / "sample-catalog" / "captures" / "pcd-150-driver-2k.csv"
FREQUENCY_HZ = 5e3
INPUT_PEAK_V = 0.4
LOAD_OHM = 2e3
PERIODS, KEPT, PER_PERIOD = 6, 4, 500


def main() -> None:
    period = 1.0 / FREQUENCY_HZ
    body = (
        f"Vin inp 0 SIN({MID_V!r} {INPUT_PEAK_V!r} {FREQUENCY_HZ!r})\nVref ref 0 {MID_V!r}\n"
        f"Rf out inn 100k\nRg inn ref 100k\nX1 inp inn out vp 0 {CLASS_B.name}\n"
        f"RL out ref {LOAD_OHM!r}\n"
    )
    step = period / 4096
    analysis = f"tran {step!r} {PERIODS * period!r} 0 {step!r}"
    with tempfile.TemporaryDirectory() as tmp:
        cols = run_ngspice_columns(_deck(CLASS_B, body, analysis, "v(out) v(inp)"), Path(tmp))
    start = (PERIODS - KEPT) * period
    t = start + np.arange(KEPT * PER_PERIOD) * period / PER_PERIOD
    v_in = np.interp(t, cols["time"], cols["v(inp)"])
    v_out = np.interp(t, cols["time"], cols["v(out)"])
    OUT.parent.mkdir(parents=True, exist_ok=True)
    with OUT.open("w", encoding="utf-8", newline="\n") as fh:
        fh.write(
            "Source,transistor-level stand-in for a bench capture (tests/circuits/"
            "sample_capture.py)\nCircuit,opamp_class_b in sample-catalog/captures/driver-2k.toml\n"
            f"Sample interval,{period / PER_PERIOD:.4g} s\nRecord length,{t.size}\n\n"
            "Time (us),CH1 (V),CH2 (V)\n"
        )
        for a, b, c in zip((t - start) * 1e6, v_in, v_out, strict=True):
            fh.write(f"{a:.3f},{b:.5f},{c:.5f}\n")
    print(f"wrote {OUT} ({t.size} samples)")


if __name__ == "__main__":
    main()
