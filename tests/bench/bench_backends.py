"""Benchmark of the catalogue on both backends: bulk load, frame read (what ranking does, one
query), unchanged reload and a single version-checked edit, for N synthetic parts.

Run: ``python tests/bench/bench_backends.py [N ...] [--pg URL]`` (default 1000 10000 100000).
SQLite uses a temporary file. PostgreSQL uses ``--pg`` or ``$PARTSEL_TEST_PG_URL`` (a role that
may create databases: each N gets a new database, dropped afterwards); without either, only
SQLite is measured. Parts are invented (see bench_catalogue.py). Not a pytest test.
"""

from __future__ import annotations

import argparse
import os
import random
import sys
import tempfile
import time
import uuid
from collections.abc import Callable, Iterator
from contextlib import AbstractContextManager, contextmanager
from pathlib import Path

import sqlalchemy as sa

sys.path.insert(0, str(Path(__file__).resolve().parent))
from bench_catalogue import synthetic_part

from partsel.catalogue import (
    edit_part,
    get_part,
    load_documents,
    open_catalogue,
    parts_frame,
    validate_documents,
)

#: Makes a fresh, empty database for one run and yields its URL.
UrlMaker = Callable[[], AbstractContextManager[str]]


@contextmanager
def sqlite_url() -> Iterator[str]:
    with tempfile.TemporaryDirectory() as tmp:
        yield f"sqlite:///{Path(tmp) / 'bench.sqlite'}"


def pg_url_factory(admin_url: str) -> UrlMaker:
    @contextmanager
    def make() -> Iterator[str]:
        admin = sa.create_engine(admin_url, isolation_level="AUTOCOMMIT")
        name = f"partsel_bench_{uuid.uuid4().hex[:8]}"
        with admin.connect() as conn:
            conn.exec_driver_sql(f'CREATE DATABASE "{name}"')
        try:
            yield sa.make_url(admin_url).set(database=name).render_as_string(False)
        finally:
            with admin.connect() as conn:
                conn.exec_driver_sql(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
            admin.dispose()

    return make


def best_of(k: int, fn: Callable[[], object]) -> float:
    times = []
    for _ in range(k):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def bench(n: int, backends: dict[str, UrlMaker]) -> None:
    rng = random.Random(n)
    docs = validate_documents(
        [("synthetic.json", {"parts": [synthetic_part(i, rng) for i in range(n)]})]
    )
    for name, make_url in backends.items():
        with make_url() as url:
            engine = open_catalogue(url)
            try:
                t0 = time.perf_counter()
                report = load_documents(engine, docs, user="bench")
                t_load = time.perf_counter() - t0
                frame = parts_frame(engine)
                t_frame = best_of(3, lambda e=engine: parts_frame(e))
                t0 = time.perf_counter()
                again = load_documents(engine, docs, user="bench")
                t_reload = time.perf_counter() - t0
                part = get_part(engine, "SYN-000000")
                record = {**part.record, "notes": "edited"}
                t0 = time.perf_counter()
                edit_part(engine, record, part.version, user="bench")
                t_edit = time.perf_counter() - t0
            finally:
                engine.dispose()
        assert len(frame) == n == len(report.added) == len(again.unchanged)
        print(
            f"N={n:>7} {name:<10}: load {t_load:7.2f} s | frame {t_frame:6.3f} s "
            f"({frame.shape[1]} columns, best of 3) | reload unchanged {t_reload:6.2f} s | "
            f"one edit {t_edit * 1e3:6.1f} ms",
            flush=True,
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("n", nargs="*", type=int, default=[1000, 10000, 100000])
    ap.add_argument("--pg", default=os.environ.get("PARTSEL_TEST_PG_URL"), help="admin URL")
    args = ap.parse_args()
    backends: dict[str, UrlMaker] = {"sqlite": sqlite_url}
    if args.pg:
        backends["postgresql"] = pg_url_factory(args.pg)
    else:
        print("no PostgreSQL URL (--pg or PARTSEL_TEST_PG_URL): SQLite only", file=sys.stderr)
    for n in args.n:
        bench(n, backends)


if __name__ == "__main__":
    main()
