"""Benchmark of partsel's start-up: ``partsel --help``, ``partsel list`` and the terminal UI from
launch to a ranked table (a script; not collected by pytest, asserts nothing about time).

Run from the project root: ``python tests/bench/bench_startup.py``. Each figure is the median
wall time of repeated fresh processes, printed with its ratio to the interpreter's own start
(``python -c pass``), so that a slower or busier machine moves both. Targets (issue 14):
``--help`` under 0.3 s, ``list`` on the default catalogue under 0.8 s, the terminal UI from
launch to a ranked table under 1.5 s.

The catalogue is the sample one, in a throw-away user data folder (the first run fills it, and
a first run of the UI fills the throw-away cache folder with the compiled stepper, as the first
use on a machine does; the figures are for the runs after that). Python writes its bytecode
files as on a user's machine (``PYTHONDONTWRITEBYTECODE`` is removed from the runs' environment:
a setting that recompiles every module at every start is not what a user has).
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

PROJECT = Path(__file__).resolve().parents[2]
DESIGN = PROJECT / "sample-catalog" / "designs" / "line-driver-5v.toml"

#: Runs the terminal UI headless and prints the seconds from the process start (taken before
#: any import) to the first ranked table on screen.
TUI_PROBE = """
import time, sys
t0 = time.perf_counter()
import asyncio
from partsel.tui.app import PartselApp
from partsel.catalogue import open_catalogue

async def main():
    app = PartselApp(open_catalogue(), design=sys.argv[1], simulate=False)
    async with app.run_test(size=(120, 40)) as pilot:
        while app.ranking is None or app.rank_count == 0:
            await pilot.pause(0.005)
        await pilot.pause()
        print(time.perf_counter() - t0 + float(sys.argv[2]))

asyncio.run(main())
"""


def timed(cmd: list[str], env: dict[str, str], runs: int) -> float:
    """Median wall time of ``runs`` fresh processes, s."""
    out = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run(cmd, env=env, capture_output=True, check=True)
        out.append(time.perf_counter() - t0)
    return statistics.median(out)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=7)
    args = ap.parse_args()
    with tempfile.TemporaryDirectory() as home:
        env = dict(os.environ, HOME=home, XDG_DATA_HOME=str(Path(home) / "data"))
        env.pop("PARTSEL_DB", None)
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        partsel = str(Path(sys.executable).with_name("partsel"))
        subprocess.run([partsel, "list"], env=env, capture_output=True, check=True)  # first fill
        base = timed([sys.executable, "-c", "pass"], env, args.runs)
        print(f"interpreter start (python -c pass): {base:.3f} s")
        for label, cmd, target in (
            ("partsel --help", [partsel, "--help"], 0.3),
            ("partsel list (default catalogue)", [partsel, "list"], 0.8),
        ):
            t = timed(cmd, env, args.runs)
            print(f"{label}: {t:.3f} s, {t / base:.1f}x the interpreter (target < {target} s)")
        # The UI: the interpreter's start is added to the time the probe measures inside; the
        # first run (compiled stepper written to the cache folder) is not counted.
        tui = []
        for _ in range(1 + max(3, args.runs // 2)):
            r = subprocess.run(
                [sys.executable, "-c", TUI_PROBE, str(DESIGN), f"{base:.4f}"],
                env=env,
                capture_output=True,
                text=True,
                check=True,
            )
            tui.append(float(r.stdout.strip().splitlines()[-1]))
        tui = tui[1:]
        t = statistics.median(tui)
        print(
            f"terminal UI, launch to ranked table: {t:.3f} s, {t / base:.1f}x the interpreter "
            "(target < 1.5 s)"
        )


if __name__ == "__main__":
    main()
