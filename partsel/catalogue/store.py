"""Load, read back and export the stored catalogue.

Loading is one transaction: every file is validated first, then parts are inserted or updated;
any error rolls back, so nothing is stored. A part counts as unchanged when its canonical form
(SI floats, see :mod:`partsel.catalogue.validate`) equals the stored one, so ``"50 uA"`` and
``5e-05`` are the same value.
"""

from __future__ import annotations

import hashlib
import json
import math
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd
import sqlalchemy as sa
import yaml
from sqlalchemy.engine import Connection, Engine

from partsel.catalogue.columns import (
    COLUMN_BY_NAME,
    FLAT_COLUMN_NAMES,
    FLOAT_BLOCK_DTYPE,
    FLOAT_COLUMN_NAMES,
    OTHER_COLUMN_NAMES,
)
from partsel.catalogue.normalise import flatten_canonical
from partsel.catalogue.schema import FORMAT_NAME
from partsel.catalogue.tables import maker_table, part_table
from partsel.catalogue.validate import CatalogueDocument, read_and_validate

ExportFormat = Literal["yaml", "json"]


@dataclass(frozen=True)
class LoadReport:
    """What a load did (or, with ``dry_run``, would do): part numbers per outcome."""

    added: list[str] = field(default_factory=list)
    changed: list[str] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)
    makers_added: list[str] = field(default_factory=list)
    makers_changed: list[str] = field(default_factory=list)
    dry_run: bool = False

    def counts(self) -> dict[str, int]:
        """Numbers of parts added, changed, unchanged and makers added, changed."""
        return {
            "added": len(self.added),
            "changed": len(self.changed),
            "unchanged": len(self.unchanged),
            "makers_added": len(self.makers_added),
            "makers_changed": len(self.makers_changed),
        }


@dataclass(frozen=True)
class StoredPart:
    """One stored part: the record as given, its flat SI row, version and last change."""

    record: dict[str, Any]
    flat: dict[str, Any]
    version: int
    updated_at: datetime


def part_key(part_number: str) -> str:
    """Case-insensitive key of a part number."""
    return part_number.strip().casefold()


def content_hash(canonical: dict[str, Any]) -> str:
    """Hash of a canonical record (values already rounded), equal for records that mean the same."""
    text = json.dumps(canonical, sort_keys=True, ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _table_row(part: dict[str, Any], canon: dict[str, Any]) -> dict[str, Any]:
    """The stored columns of one part (flat columns with NaN as NULL, packed floats, record)."""
    flat = flatten_canonical(canon)
    row = {k: (None if v != v else v) for k, v in flat.items()}  # NaN -> NULL
    row["float_block"] = np.array(
        [flat[n] for n in FLOAT_COLUMN_NAMES], dtype=FLOAT_BLOCK_DTYPE
    ).tobytes()
    row["part_key"] = part_key(part["part_number"])
    row["record_json"] = json.dumps(part, ensure_ascii=False)
    return row


def _load_makers(conn: Connection, docs: Sequence[CatalogueDocument], report: LoadReport) -> None:
    existing = {r.name_key: r for r in conn.execute(sa.select(maker_table))}
    wanted: dict[str, dict[str, Any]] = {}
    for doc in docs:
        for m in doc.makers:
            wanted.setdefault(
                m["name"].strip().casefold(),
                {"name": m["name"], "suffix_rules": m.get("suffix_rules", [])},
            )
        for p in doc.parts:  # makers named only by their parts get a record without rules
            key = p["maker"].strip().casefold()
            if key not in wanted and key not in existing:
                wanted[key] = {"name": p["maker"], "suffix_rules": None}
    for key, m in wanted.items():
        row = existing.get(key)
        rules = m["suffix_rules"]
        if row is None:
            conn.execute(
                sa.insert(maker_table).values(
                    name=m["name"], name_key=key, suffix_rules=rules or []
                )
            )
            report.makers_added.append(m["name"])
        elif rules is not None and list(row.suffix_rules) != list(rules):
            conn.execute(
                sa.update(maker_table).where(maker_table.c.id == row.id).values(suffix_rules=rules)
            )
            report.makers_changed.append(row.name)


def _load_parts(conn: Connection, docs: Sequence[CatalogueDocument], report: LoadReport) -> None:
    t = part_table
    existing = {
        k: (i, h, v)
        for k, i, h, v in conn.execute(
            sa.select(t.c.part_key, t.c.id, t.c.content_hash, t.c.version)
        )
    }
    now = datetime.now(UTC)
    inserts: list[dict[str, Any]] = []
    updates: list[dict[str, Any]] = []
    for doc in docs:
        for part, canon in zip(doc.parts, doc.canonical_parts, strict=True):
            digest = content_hash(canon)
            old = existing.get(part_key(part["part_number"]))
            if old is None:
                row = _table_row(part, canon)
                inserts.append({**row, "content_hash": digest, "version": 1, "updated_at": now})
                report.added.append(part["part_number"])
            elif old[1] != digest:
                row = _table_row(part, canon)
                updates.append(
                    {
                        **row,
                        "content_hash": digest,
                        "version": old[2] + 1,
                        "updated_at": now,
                        "_pk": old[0],
                    }
                )
                report.changed.append(part["part_number"])
            else:
                report.unchanged.append(part["part_number"])
    if inserts:
        conn.execute(sa.insert(t), inserts)
    if updates:
        conn.execute(sa.update(t).where(t.c.id == sa.bindparam("_pk")), updates)


def load_documents(
    engine: Engine, docs: Sequence[CatalogueDocument], *, dry_run: bool = False
) -> LoadReport:
    """Store validated documents in one transaction (``dry_run``: roll back, report only)."""
    report = LoadReport(dry_run=dry_run)
    with engine.connect() as conn:
        trans = conn.begin()
        try:
            _load_makers(conn, docs, report)
            _load_parts(conn, docs, report)
        except BaseException:
            trans.rollback()
            raise
        if dry_run:
            trans.rollback()
        else:
            trans.commit()
    return report


def load_paths(engine: Engine, paths: Iterable[str | Path], *, dry_run: bool = False) -> LoadReport:
    """Validate catalogue files and folders, then store them (see :func:`load_documents`).

    Raises InputError listing every problem of every file; nothing is stored then.
    """
    return load_documents(engine, read_and_validate(paths), dry_run=dry_run)


_FRAME_DTYPES = {"int": "int64", "bool": "bool", "str": "str"}


def parts_frame(engine: Engine, where: sa.ColumnElement[bool] | None = None) -> pd.DataFrame:
    """All parts (or those matching ``where``) as a frame of the flat columns, in one query.

    One row per part, ordered by part number (case-insensitive); float columns are SI floats
    with NaN for unknown values (column list: :data:`partsel.catalogue.columns.FLAT_COLUMNS`).
    The float columns are read from the packed ``float_block`` (see
    :mod:`partsel.catalogue.tables`), which keeps 100k parts to about a second.
    """
    t = part_table
    stmt = sa.select(*(t.c[n] for n in OTHER_COLUMN_NAMES), t.c.float_block)
    stmt = stmt.order_by(t.c.part_key)
    if where is not None:
        stmt = stmt.where(where)
    with engine.connect() as conn:
        rows = conn.execute(stmt).fetchall()
    n = len(rows)
    cols = list(zip(*rows, strict=True)) if rows else [()] * (len(OTHER_COLUMN_NAMES) + 1)
    data: dict[str, Any] = {
        name: pd.array(list(values), dtype=_FRAME_DTYPES[COLUMN_BY_NAME[name].kind])
        for name, values in zip(OTHER_COLUMN_NAMES, cols, strict=False)
    }
    floats = np.frombuffer(b"".join(cols[-1]), dtype=FLOAT_BLOCK_DTYPE)
    floats = floats.reshape(n, len(FLOAT_COLUMN_NAMES)).astype("float64")
    for j, name in enumerate(FLOAT_COLUMN_NAMES):
        data[name] = floats[:, j]
    return pd.DataFrame({name: data[name] for name in FLAT_COLUMN_NAMES})


def _flat_from_row(row: sa.Row[Any]) -> dict[str, Any]:
    out = {}
    for name in FLAT_COLUMN_NAMES:
        v = row._mapping[name]
        out[name] = math.nan if v is None and COLUMN_BY_NAME[name].kind == "float" else v
    return out


def get_part(engine: Engine, part_number: str) -> StoredPart | None:
    """The stored part with ``part_number`` (case-insensitive), or None."""
    t = part_table
    with engine.connect() as conn:
        row = conn.execute(sa.select(t).where(t.c.part_key == part_key(part_number))).first()
    if row is None:
        return None
    return StoredPart(json.loads(row.record_json), _flat_from_row(row), row.version, row.updated_at)


def part_numbers(engine: Engine) -> list[str]:
    """Every stored part number, sorted case-insensitively."""
    t = part_table
    with engine.connect() as conn:
        return list(conn.scalars(sa.select(t.c.part_number).order_by(t.c.part_key)))


def makers(engine: Engine) -> list[dict[str, Any]]:
    """Every maker record ``{name, suffix_rules}``, sorted by name."""
    t = maker_table
    with engine.connect() as conn:
        rows = conn.execute(sa.select(t.c.name, t.c.suffix_rules).order_by(t.c.name_key))
        return [{"name": n, "suffix_rules": list(r)} for n, r in rows]


def dump_documents(engine: Engine) -> dict[str, dict[str, Any]]:
    """The stored catalogue as documents of format ``partsel.catalogue/1``, one per maker.

    Keys are maker names; part records come back as given when loaded, in load order.
    """
    t = part_table
    docs: dict[str, dict[str, Any]] = {}
    by_key: dict[str, str] = {}
    for m in makers(engine):
        docs[m["name"]] = {"format": FORMAT_NAME, "makers": [m], "parts": []}
        by_key[m["name"].strip().casefold()] = m["name"]
    with engine.connect() as conn:
        for maker, text in conn.execute(sa.select(t.c.maker, t.c.record_json).order_by(t.c.id)):
            docs[by_key[maker.strip().casefold()]]["parts"].append(json.loads(text))
    return docs


def _slug(name: str) -> str:
    return re.sub(r"[^a-z0-9]+", "-", name.casefold()).strip("-") or "maker"


def export_catalogue(engine: Engine, directory: Path, fmt: ExportFormat = "yaml") -> list[Path]:
    """Write one loadable catalogue file per maker into ``directory``; return the files."""
    directory.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    used: set[str] = set()
    for name, doc in dump_documents(engine).items():
        stem = _slug(name)
        n = 2
        while stem in used:
            stem, n = f"{_slug(name)}-{n}", n + 1
        used.add(stem)
        path = directory / f"{stem}.{fmt}"
        if fmt == "json":
            text = json.dumps(doc, indent=2, ensure_ascii=False) + "\n"
        else:
            text = yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=100)
        path.write_text(text, encoding="utf-8")
        written.append(path)
    return written
