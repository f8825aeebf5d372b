"""Print the accuracy table of tests/test_transistor_level_opamp.py (a script, not collected).

Run from the project root: ``python tests/bench/accuracy_opamp.py``. Characterises the two
transistor-level op-amps of tests/circuits/, runs every case of the test module in ngspice and
prints partsel's errors per case (THD in dB, peak deviation in %, the bound's margin in dB),
and the class-B op-amp's open-loop gain-bandwidth (|A| f at 10 kHz, as its datasheet-like GBW
is measured) into each load of the grid: the output stage's resistance divides it with the load.
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

import numpy as np
from circuits.characterise import CLASS_B, MID_V, _deck
from test_transistor_level_opamp import LOADS, build, table

from partsel.spice_run import run_ngspice_columns


def open_loop_gbw_hz(r_load_ohm: float, work: Path) -> float:
    """|A(10 kHz)| x 10 kHz of the class-B op-amp, open loop (DC feedback through 1 GH), into
    ``r_load_ohm`` to mid-supply."""
    body = (
        f"Vin inp 0 DC {MID_V} AC 1\nX1 inp inn out vp 0 {CLASS_B.name}\nLfb out inn 1e9\n"
        f"Cg inn 0 1\nRL out lref {r_load_ohm!r}\nVlr lref 0 {MID_V}\n"
    )
    cols = run_ngspice_columns(_deck(CLASS_B, body, "ac dec 20 1k 100k", "vdb(out)"), work)
    k = int(np.argmin(np.abs(cols["frequency"] - 10e3)))
    return float(10 ** (cols["vdb(out)"][k] / 20) * cols["frequency"][k])


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        measured, results = build(Path(tmp))
        gbws = {r: open_loop_gbw_hz(r, Path(tmp) / f"gbw-{r:.0f}") for r in LOADS}
    for m in measured.values():
        print(
            f"{m.circuit.name}: GBW {m.gbw_hz / 1e6:.3f} MHz, SR {m.slew_rise_v_per_s / 1e6:.3f}"
            f" / {m.slew_fall_v_per_s / 1e6:.3f} V/us, stage current "
            f"{m.stage_current_a * 1e6:.2f} uA (probe {m.stage_current_probe_a * 1e6:.2f} uA), "
            f"dead band {m.dead_band_v:.3f} V, supply {m.supply_current_a * 1e6:.0f} uA"
        )
    for r, gbw in gbws.items():
        print(f"{CLASS_B.name}: open-loop GBW into {r:.0f} ohm: {gbw / 1e6:.3f} MHz")
    print("\n".join(table(results)))


if __name__ == "__main__":
    main()
