"""Benchmark of the input edge: import cost of partsel.units, quantity parse time, the bounded
reader against the plain parsers, and how fast hostile inputs are refused.

Run: ``python tests/bench/bench_input_edge.py``. Not a pytest test; prints figures only.

- import: wall time of ``python -c "import partsel.units"`` as a ratio to ``python -c pass``
  (median of 15 runs each), and the cumulative figure of ``python -X importtime``;
- parse: microseconds per call, first call (cache cleared) and repeated;
- reader: the sample catalogue repeated 60 times (3,060 invented parts) as JSON and YAML, read
  by partsel.io.textfile.read_structured and by the plain parser (json.loads, PyYAML's
  SafeLoader), as a ratio;
- hostile: seconds to refuse each hostile input and the peak of traced memory (tracemalloc).
"""

from __future__ import annotations

import copy
import json
import statistics
import subprocess
import sys
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path

import yaml

PROJECT = Path(__file__).resolve().parents[2]


def _wall(code: str, runs: int = 15) -> float:
    times = []
    for _ in range(runs):
        t0 = time.perf_counter()
        subprocess.run([sys.executable, "-c", code], check=True)
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def bench_import() -> None:
    base = _wall("pass")
    units = _wall("import partsel.units")
    out = subprocess.run(
        [sys.executable, "-X", "importtime", "-c", "import partsel.units"],
        capture_output=True,
        text=True,
        check=True,
    ).stderr.splitlines()
    cumulative = next(line for line in reversed(out) if line.rstrip().endswith("partsel.units"))
    micros = int(cumulative.split("|")[1])
    print(
        f"import partsel.units: {units * 1e3:.0f} ms wall vs {base * 1e3:.0f} ms for the bare "
        f"interpreter (ratio {units / base:.2f}); -X importtime cumulative {micros / 1e3:.1f} ms"
    )


def bench_parse() -> None:
    from partsel.units import _parse_string, parse_quantity

    for text, dim in (("4.7 kohm", "resistance"), ("0.5 V/us", "slew"), ("4k7", "resistance"),
                      ("-40 degC", "temperature"), ("40 nV/rtHz", "noise_voltage")):  # fmt: skip
        n = 20_000
        t0 = time.perf_counter()
        for _ in range(n):
            _parse_string.cache_clear()
            parse_quantity(text, dim)
        first = (time.perf_counter() - t0) / n
        t0 = time.perf_counter()
        for _ in range(n):
            parse_quantity(text, dim)
        cached = (time.perf_counter() - t0) / n
        print(f"parse {text!r:>14}: {first * 1e6:5.1f} us first, {cached * 1e6:5.2f} us repeated")


def _catalogue(copies: int) -> dict:
    parts = []
    for f in sorted((PROJECT / "sample-catalog" / "parts").glob("*.yaml")):
        parts += yaml.safe_load(f.read_text(encoding="utf-8"))["parts"]
    out = []
    for k in range(copies):
        for p in parts:
            q = copy.deepcopy(p)
            q["part_number"] = f"{p['part_number']}-{k}"
            out.append(q)
    return {"parts": out}


def _best(f: Callable[[], object], runs: int = 3) -> float:
    best = float("inf")
    for _ in range(runs):
        t0 = time.perf_counter()
        f()
        best = min(best, time.perf_counter() - t0)
    return best


def bench_reader() -> None:
    from partsel.io.textfile import read_structured

    doc = _catalogue(60)
    jtext, ytext = json.dumps(doc, indent=1), yaml.safe_dump(doc, sort_keys=False)
    n = len(doc["parts"])
    jnew = _best(lambda: read_structured(jtext, syntax="JSON"))
    jref = _best(lambda: json.loads(jtext))
    ynew = _best(lambda: read_structured(ytext, syntax="YAML"), runs=1)
    yref = _best(lambda: yaml.load(ytext, Loader=yaml.SafeLoader), runs=1)
    print(f"reader, {n} parts, JSON {len(jtext) / 1e6:.1f} MB: {jnew:.2f} s vs json.loads "
          f"{jref:.2f} s (ratio {jnew / jref:.1f})")  # fmt: skip
    print(f"reader, {n} parts, YAML {len(ytext) / 1e6:.1f} MB: {ynew:.2f} s vs SafeLoader "
          f"{yref:.2f} s (ratio {ynew / yref:.2f})")  # fmt: skip


def _laughs() -> str:
    lines = ['l0: &l0 "lol"']
    lines += [f"l{k}: &l{k} [" + ", ".join([f"*l{k - 1}"] * 9) + "]" for k in range(1, 10)]
    return "\n".join(lines) + "\nnotes: *l9\n"


def bench_hostile() -> None:
    from partsel.errors import InputError
    from partsel.io.textfile import read_structured
    from partsel.units import parse_quantity

    n = 100_000
    cases: list[tuple[str, Callable[[], object]]] = [
        ("JSON 100,000 brackets", lambda: read_structured("[" * n + "]" * n, syntax="JSON")),
        ("YAML 100,000 brackets", lambda: read_structured("[" * n, syntax="YAML")),
        ("TOML 100,000 brackets", lambda: read_structured("a = " + "[" * n, syntax="TOML")),
        ("TOML 100,000 dotted keys", lambda: read_structured("a" + ".a" * n + "=1", syntax="TOML")),
        ("YAML nested aliases 9**9", lambda: read_structured(_laughs(), syntax="YAML")),
        ("JSON 5,000-digit number", lambda: read_structured("9" * 5000, syntax="JSON")),
        ("YAML 5,000-digit number", lambda: read_structured("a: " + "9" * 5000, syntax="YAML")),
        ("quantity 5 V * 10 ** 10 ** 10", lambda: parse_quantity("5 V * 10**10**10", "voltage")),
    ]  # fmt: skip

    def refuse(f: Callable[[], object]) -> str:
        try:
            f()
        except InputError:
            return "refused"
        return "ACCEPTED"

    for name, f in cases:
        refuse(f)  # warm up: lazy imports, the YAML loader class
        t0 = time.perf_counter()
        verdict = refuse(f)
        dt = time.perf_counter() - t0
        tracemalloc.start()  # a second run for memory (tracing slows Python down)
        refuse(f)
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        print(f"hostile {name:<32} {verdict} in {dt * 1e3:7.1f} ms, peak {peak / 2**20:6.1f} MiB")


if __name__ == "__main__":
    bench_import()
    bench_parse()
    bench_reader()
    bench_hostile()
