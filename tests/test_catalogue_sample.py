"""The bundled demo catalogue (sample-catalog/parts) validates and is big enough to try
partsel out with: at least 40 parts from at least 5 makers."""

from __future__ import annotations

from conftest import SAMPLE_PARTS

from partsel.catalogue import load_paths, open_catalogue, parts_frame, read_and_validate


def test_sample_catalogue_validates() -> None:
    docs = read_and_validate([SAMPLE_PARTS])
    parts = [p for d in docs for p in d.parts]
    assert len(parts) >= 40
    assert len({p["maker"].casefold() for p in parts}) >= 5


def test_sample_catalogue_loads(db_url: str) -> None:
    eng = open_catalogue(db_url)
    report = load_paths(eng, [SAMPLE_PARTS])
    df = parts_frame(eng)
    assert len(df) == len(report.added) >= 40
    assert df["part_number"].str.casefold().is_unique
    eng.dispose()
