"""The catalogue database: migrations, SQLite settings, load/update/rollback, frames, dumps.

Every test uses a temporary SQLite file or an in-memory database, never the user's default."""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path
from typing import Any

import pandas as pd
import pytest
import sqlalchemy as sa
from alembic.autogenerate import compare_metadata
from alembic.migration import MigrationContext
from conftest import CATALOGUE_DATA, PROJECT
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import partsel
import partsel.catalogue.store as store
from partsel.catalogue import (
    FLAT_COLUMN_NAMES,
    default_db_path,
    dump_documents,
    export_catalogue,
    find_sample_catalogue,
    get_part,
    head_revision,
    load_documents,
    load_paths,
    make_engine,
    makers,
    migrate,
    open_catalogue,
    parts_frame,
    validate_documents,
)
from partsel.catalogue.columns import FLOAT_COLUMN_NAMES
from partsel.catalogue.tables import metadata
from partsel.errors import InputError


def rows(engine: sa.Engine) -> dict[str, list[tuple[Any, ...]]]:
    """Every row of both tables, to compare a database before and after."""
    with engine.connect() as conn:
        return {
            t: [tuple(r) for r in conn.execute(sa.text(f"SELECT * FROM {t} ORDER BY id"))]
            for t in ("part", "maker")
        }


def test_migrations_match_the_models(engine: sa.Engine) -> None:
    """Alembic's autogenerate comparison finds nothing to change after upgrade to head."""
    with engine.connect() as conn:
        assert compare_metadata(MigrationContext.configure(conn), metadata) == []


def test_sqlite_uses_wal_and_busy_timeout(tmp_path: Path) -> None:
    engine = open_catalogue(f"sqlite:///{tmp_path / 'wal.sqlite'}")  # SQLite only
    with engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == 5000
    engine.dispose()


def test_migrate_twice_is_harmless(engine: sa.Engine) -> None:
    migrate(engine)
    with engine.connect() as conn:
        assert conn.exec_driver_sql("SELECT version_num FROM alembic_version").scalar() == (
            head_revision()
        )


def test_load_reports_added_changed_unchanged(engine: sa.Engine, quill_doc: dict) -> None:
    first = load_paths(engine, [CATALOGUE_DATA])
    assert sorted(first.added) == ["BWD-R71", "QFA-2210", "QFA-2214"]
    assert sorted(first.makers_added) == ["Brightwater Devices", "Quillfeather Analog"]
    again = load_paths(engine, [CATALOGUE_DATA])
    assert again.counts()["unchanged"] == 3 and not again.added and not again.changed

    same = copy.deepcopy(quill_doc)  # same values, other spelling: unchanged
    same["parts"][0]["output"]["stage_current"] = {"min": 3e-5, "typ": 5e-05, "max": "0.08 mA"}
    same["parts"][1]["dynamics"]["slew_rise"] = {"typ": "0.5 V/us"}
    report = load_documents(engine, validate_documents([("same.yaml", same)]))
    assert report.unchanged == ["QFA-2210", "QFA-2214"]
    assert get_part(engine, "QFA-2210").version == 1

    changed = copy.deepcopy(quill_doc)
    changed["parts"][1]["notes"] = "new note"
    changed["makers"][0]["suffix_rules"] = ["-TR$"]
    report = load_documents(engine, validate_documents([("chg.yaml", changed)]))
    assert (report.changed, report.unchanged) == (["QFA-2214"], ["QFA-2210"])
    assert report.makers_changed == ["Quillfeather Analog"]
    stored = get_part(engine, "qfa-2214")  # any case
    assert stored.version == 2 and stored.record["notes"] == "new note"


def test_bad_file_stores_nothing(engine: sa.Engine, tmp_path: Path, quill_doc: dict) -> None:
    load_paths(engine, [CATALOGUE_DATA / "brightwater.json"])
    before = rows(engine)
    quill_doc["parts"][1]["dynamics"]["gbw"] = "-1 MHz"
    (tmp_path / "q.json").write_text(json.dumps(quill_doc), encoding="utf-8")
    with pytest.raises(InputError):
        load_paths(engine, [tmp_path / "q.json", CATALOGUE_DATA / "brightwater.json"])
    assert rows(engine) == before


def test_error_while_storing_rolls_back(engine: sa.Engine, monkeypatch: pytest.MonkeyPatch) -> None:
    """Makers are written before parts; a failure in the parts step undoes them too."""
    before = rows(engine)

    def broken(*_args: object) -> None:
        raise RuntimeError("disk full")

    monkeypatch.setattr(store, "_load_parts", broken)
    with pytest.raises(RuntimeError):
        load_paths(engine, [CATALOGUE_DATA])
    assert rows(engine) == before


def test_dry_run_stores_nothing(engine: sa.Engine) -> None:
    report = load_paths(engine, [CATALOGUE_DATA], dry_run=True)
    assert len(report.added) == 3 and report.dry_run
    assert rows(engine) == {"part": [], "maker": []}


def test_frame_is_one_query_with_typed_flat_columns(engine: sa.Engine) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    statements: list[str] = []
    sa.event.listen(
        engine, "before_cursor_execute", lambda _c, _cur, stmt, *_a: statements.append(stmt)
    )
    df = parts_frame(engine)
    assert len(statements) == 1
    assert tuple(df.columns) == FLAT_COLUMN_NAMES
    assert list(df["part_number"]) == ["BWD-R71", "QFA-2210", "QFA-2214"]
    assert df["gbw_typ"].dtype == "float64" and df["channels"].dtype == "int64"
    assert df["rail_to_rail_input"].dtype == bool
    assert math.isnan(df.loc[2, "price"])
    assert df.loc[1, "slew_rise_min"] == pytest.approx(0.3e6)


def test_empty_frame_has_the_columns(engine: sa.Engine) -> None:
    df = parts_frame(engine)
    assert df.empty and tuple(df.columns) == FLAT_COLUMN_NAMES


def test_dump_gives_records_back(engine: sa.Engine, quill_doc: dict) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    docs = dump_documents(engine)
    assert docs["Quillfeather Analog"]["parts"] == quill_doc["parts"]
    assert docs["Quillfeather Analog"]["makers"] == quill_doc["makers"]


@pytest.mark.parametrize("fmt", ["yaml", "json"])
def test_export_then_load_round_trip(engine: sa.Engine, tmp_path: Path, fmt: str) -> None:
    load_paths(engine, [CATALOGUE_DATA])
    files = export_catalogue(engine, tmp_path / "out", fmt)  # type: ignore[arg-type]
    assert sorted(f.name for f in files) == [
        f"brightwater-devices.{fmt}",
        f"quillfeather-analog.{fmt}",
    ]
    other = open_catalogue(f"sqlite:///{tmp_path / 'second.sqlite'}")
    assert len(load_paths(other, [tmp_path / "out"]).added) == 3
    assert dump_documents(other) == dump_documents(engine)
    pd.testing.assert_frame_equal(parts_frame(other), parts_frame(engine))
    assert makers(other) == makers(engine)
    other.dispose()


# --- property: any valid record survives load -> dump -> load -------------------------------

_PREFIX = {"": 1.0, "m": 1e-3, "u": 1e-6, "n": 1e-9, "k": 1e3, "M": 1e6}


def _quantity(unit: str, lo: float, hi: float) -> st.SearchStrategy[Any]:
    """A value as an SI float or as a string with a prefixed unit."""

    def text(x: float, prefix: str) -> Any:
        return f"{x / _PREFIX[prefix]!r} {prefix}{unit}"

    si = st.floats(lo, hi, allow_nan=False)
    return st.one_of(si, st.builds(text, si, st.sampled_from(sorted(_PREFIX))))


def _spec(unit: str, lo: float, hi: float) -> st.SearchStrategy[Any]:
    def build(values: list[float], sides: list[str], bare: bool) -> Any:
        values = sorted(values)[: len(sides)]
        if bare:
            return values[0]
        return dict(zip(sorted(sides, key=["min", "typ", "max"].index), values, strict=True))

    return st.one_of(
        _quantity(unit, lo, hi),
        st.builds(
            build,
            st.lists(st.floats(lo, hi), min_size=3, max_size=3),
            st.lists(st.sampled_from(["min", "typ", "max"]), min_size=1, max_size=3, unique=True),
            st.just(False),
        ),
    )


_record = st.fixed_dictionaries(
    {
        "part_number": st.from_regex(r"\AZX[A-Z]-[0-9]{1,4}[A-Z]?\Z"),
        "maker": st.sampled_from(["Zephyr Linear", "Ostara Parts"]),
        "channels": st.sampled_from([1, 2, 4]),
        "lifecycle": st.sampled_from(["active", "obsolete", "not-for-new-designs"]),
        "packages": st.just([{"code": "SO-8", "pinout": "DUAL-8A", "theta_ja": "150 K/W"}]),
        "temperature": st.just({"min": "-40 degC", "max": "125 degC"}),
        "supply": st.fixed_dictionaries(
            {"range": st.just({"min": "2 V", "max": "36 V"})},
            optional={"current_per_channel": _spec("A", 1e-6, 1e-2)},
        ),
        "dynamics": st.fixed_dictionaries(
            {},
            optional={
                "gbw": _spec("Hz", 1e4, 1e9),
                "slew_rise": _spec("V/s", 1e3, 1e9),
                "min_stable_gain": st.sampled_from([1, 2, 5]),
            },
        ),
        "output": st.fixed_dictionaries(
            {"topology": st.sampled_from(["class-ab", "cmos-rail-to-rail", "class-a"])},
            optional={"stage_current": _spec("A", 1e-6, 1e-2), "dead_band": _spec("V", 0.0, 2.0)},
        ),
    },
    optional={"notes": st.text(max_size=20), "family": st.text(min_size=1, max_size=10)},
)
_records = st.lists(
    _record, min_size=1, max_size=6, unique_by=lambda r: r["part_number"].casefold()
)


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_records)
def test_round_trip_property(records: list[dict[str, Any]]) -> None:
    """load -> dump gives the records back; loading the dump changes nothing."""
    eng = make_engine("sqlite://")
    migrate(eng)
    try:
        load_documents(eng, validate_documents([("gen.json", {"parts": records})]))
        dumped = dump_documents(eng)
        back = [p for d in dumped.values() for p in d["parts"]]
        key = lambda r: r["part_number"]  # noqa: E731
        assert sorted(back, key=key) == sorted(records, key=key)
        frame = parts_frame(eng)
        report = load_documents(eng, validate_documents(list(dumped.items())))
        assert sorted(report.unchanged) == sorted(r["part_number"] for r in records)
        pd.testing.assert_frame_equal(parts_frame(eng), frame)
    finally:
        eng.dispose()


# --- default database -------------------------------------------------------------------------


def test_default_database_is_created_and_seeded(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    monkeypatch.setenv("PARTSEL_SAMPLE_CATALOG", str(CATALOGUE_DATA))
    path = default_db_path()
    assert str(path).startswith(str(Path.home()))  # conftest's temporary home, not the user's
    assert not path.exists()
    eng = open_catalogue()
    assert path.exists()
    assert len(parts_frame(eng)) == 3
    eng.dispose()
    eng = open_catalogue()  # second use: not filled again
    assert get_part(eng, "QFA-2210").version == 1
    assert len(parts_frame(eng)) == 3
    eng.dispose()


def test_bad_sample_catalogue_leaves_no_default_file(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    (tmp_path / "bad.yaml").write_text("parts: [{part_number: X}]\n", encoding="utf-8")
    monkeypatch.setenv("PARTSEL_SAMPLE_CATALOG", str(tmp_path))
    with pytest.raises(InputError):
        open_catalogue()
    assert not default_db_path().exists()


def test_env_url_wins_and_is_not_seeded(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("PARTSEL_SAMPLE_CATALOG", str(CATALOGUE_DATA))
    monkeypatch.setenv("PARTSEL_DB", f"sqlite:///{tmp_path / 'env.sqlite'}")
    eng = open_catalogue()
    assert (tmp_path / "env.sqlite").exists() and not default_db_path().exists()
    assert parts_frame(eng).empty
    eng.dispose()


def test_sample_catalogue_is_the_package_data() -> None:
    """The sample comes with the package (sample-catalog/ in the checkout links to it)."""
    found = find_sample_catalogue()
    assert found is not None and found == (PROJECT / "sample-catalog" / "parts").resolve()
    assert found.is_relative_to(Path(partsel.__file__).resolve().parent)


def test_packed_floats_agree_with_the_columns(engine: sa.Engine) -> None:
    """The frame reads floats from float_block; they must equal the queryable SQL columns."""
    load_paths(engine, [CATALOGUE_DATA])
    from partsel.catalogue.tables import part_table as t

    with engine.connect() as conn:
        direct = pd.read_sql(
            sa.select(*(t.c[n] for n in FLAT_COLUMN_NAMES)).order_by(t.c.part_key), conn
        )
    df = parts_frame(engine)
    for col in FLOAT_COLUMN_NAMES:
        pd.testing.assert_series_equal(df[col], direct[col].astype("float64"), check_names=False)
