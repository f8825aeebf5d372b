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

from circuits.characterise import CLASS_B, open_loop_gbw
from test_transistor_level_opamp import LOADS, build, table


def main() -> None:
    with tempfile.TemporaryDirectory() as tmp:
        measured, results = build(Path(tmp))
        gbws = {r: open_loop_gbw(CLASS_B, Path(tmp) / f"gbw-{r:.0f}", r) for r in LOADS}
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
