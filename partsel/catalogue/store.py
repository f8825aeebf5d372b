"""Load, edit, restore, read back and export the stored catalogue.

Loading is one transaction: every file is validated first, then parts are inserted or updated;
any error rolls back, so nothing is stored. A part counts as unchanged when its canonical form
(SI floats, see :mod:`partsel.catalogue.validate`) equals the stored one, so ``"50 uA"`` and
``5e-05`` are the same value.

Every change runs in :func:`partsel.catalogue.db.write_transaction` (one writer at a time, on
SQLite and PostgreSQL alike), bumps the part's version and keeps a history row (who, when, old
and new record; see :mod:`partsel.catalogue.history`). :func:`edit_part` and
:func:`restore_part` change one part only if it is still at the version the caller read, and
raise :class:`~partsel.catalogue.history.ConflictError` otherwise.
"""

from __future__ import annotations

import hashlib
import json
import math
import re
import struct
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import TYPE_CHECKING, Any, Literal

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from partsel.catalogue.columns import (
    COLUMN_BY_NAME,
    FLAT_COLUMN_NAMES,
    FLOAT_BLOCK_DTYPE,
    FLOAT_COLUMN_NAMES,
    OTHER_COLUMN_NAMES,
)
from partsel.catalogue.db import backend, write_transaction
from partsel.catalogue.history import (
    Action,
    FieldChange,
    as_utc,
    conflict_error,
    current_user,
    history_row,
    read_history,
    record_changes,
)
from partsel.catalogue.schema import FORMAT_NAME
from partsel.catalogue.tables import history_table, maker_table, part_table
from partsel.errors import InputError, Problem

if TYPE_CHECKING:
    import pandas as pd

    from partsel.catalogue.validate import CatalogueDocument

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
    warnings: list[Problem] = field(default_factory=list)  #: implausible values, kept as given

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
    """One stored part: the record as given, its flat SI row, version and last change (UTC)."""

    record: dict[str, Any]
    flat: dict[str, Any]
    version: int
    updated_at: datetime
    updated_by: str | None = None


@dataclass(frozen=True)
class EditResult:
    """What :func:`edit_part` or :func:`restore_part` did to one part.

    ``action`` is None when the new record means the same as the stored one (nothing stored);
    ``version`` is the part's version afterwards; ``changes`` the fields that differ from the
    record stored before.
    """

    part_number: str
    version: int
    action: Action | None
    changes: list[FieldChange] = field(default_factory=list)

    @property
    def changed(self) -> bool:
        """True when a new version was stored."""
        return self.action is not None


@dataclass(frozen=True)
class _Change:
    """Who makes a change, when, and through which command (None in a dry run)."""

    user: str
    when: datetime
    via: str


#: Rows per ``IN (...)`` list when reading records by id (below SQLite's variable limit).
_ID_CHUNK = 900


def part_key(part_number: str) -> str:
    """Case-insensitive key of a part number."""
    return part_number.strip().casefold()


def content_hash(canonical: dict[str, Any]) -> str:
    """Hash of a canonical record (values already rounded), equal for records that mean the same."""
    text = json.dumps(canonical, sort_keys=True, ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


_FLOAT_STRUCT = struct.Struct(f"<{len(FLOAT_COLUMN_NAMES)}d")  # FLOAT_BLOCK_DTYPE, "<f8"


def _pack_floats(values: list[float]) -> bytes:
    """The ``float_block`` of one part: its float columns, little-endian float64."""
    return _FLOAT_STRUCT.pack(*(float(v) for v in values))


def _table_row(part: dict[str, Any], canon: dict[str, Any]) -> dict[str, Any]:
    """The stored columns of one part (flat columns with NaN as NULL, packed floats, record)."""
    from partsel.catalogue.normalise import flatten_canonical  # (lazy: not for reads)

    flat = flatten_canonical(canon)
    row = {k: (None if v != v else v) for k, v in flat.items()}  # NaN -> NULL
    row["float_block"] = _pack_floats([flat[n] for n in FLOAT_COLUMN_NAMES])
    row["part_key"] = part_key(part["part_number"])
    row["record_json"] = json.dumps(part, ensure_ascii=False)
    return row


def _load_makers(
    conn: Connection, docs: Sequence[CatalogueDocument], report: LoadReport, write: bool = True
) -> None:
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
            if write:
                conn.execute(
                    sa.insert(maker_table).values(
                        name=m["name"], name_key=key, suffix_rules=rules or []
                    )
                )
            report.makers_added.append(m["name"])
        elif rules is not None and list(row.suffix_rules) != list(rules):
            if write:
                conn.execute(
                    sa.update(maker_table)
                    .where(maker_table.c.id == row.id)
                    .values(suffix_rules=rules)
                )
            report.makers_changed.append(row.name)


def _records_by_id(conn: Connection, ids: Sequence[int]) -> dict[int, str]:
    t = part_table
    out: dict[int, str] = {}
    for k in range(0, len(ids), _ID_CHUNK):
        chunk = ids[k : k + _ID_CHUNK]
        rows = conn.execute(sa.select(t.c.id, t.c.record_json).where(t.c.id.in_(chunk)))
        out.update((i, text) for i, text in rows)
    return out


def _load_parts(
    conn: Connection,
    docs: Sequence[CatalogueDocument],
    report: LoadReport,
    change: _Change | None,
) -> None:
    """Add or update the documents' parts (``change`` None: only fill the report)."""
    t = part_table
    existing = {
        k: (i, h, v)
        for k, i, h, v in conn.execute(
            sa.select(t.c.part_key, t.c.id, t.c.content_hash, t.c.version)
        )
    }
    inserts: list[dict[str, Any]] = []
    updates: list[dict[str, Any]] = []
    history: list[dict[str, Any]] = []
    old_ids: list[tuple[dict[str, Any], int]] = []  # history row of a changed part, its id
    for doc in docs:
        for part, canon in zip(doc.parts, doc.canonical_parts, strict=True):
            digest = content_hash(canon)
            key = part_key(part["part_number"])
            old = existing.get(key)
            if old is not None and old[1] == digest:
                report.unchanged.append(part["part_number"])
                continue
            (report.added if old is None else report.changed).append(part["part_number"])
            if change is None:
                continue
            row = _table_row(part, canon)
            row.update(
                content_hash=digest,
                version=1 if old is None else old[2] + 1,
                updated_at=change.when,
                updated_by=change.user,
            )
            (inserts if old is None else updates).append(
                row if old is None else {**row, "_pk": old[0]}
            )
            history.append(
                history_row(
                    key=key,
                    part_number=part["part_number"],
                    version=row["version"],
                    action="added" if old is None else "changed",
                    user=change.user,
                    when=change.when,
                    source=f"{change.via} {doc.file}",
                    old_json=None,  # filled in below for changed parts
                    new_json=row["record_json"],
                )
            )
            if old is not None:
                old_ids.append((history[-1], old[0]))
    if change is None:
        return
    old_records = _records_by_id(conn, [pk for _, pk in old_ids])
    for h, pk in old_ids:
        h["old_record_json"] = old_records[pk]
    if inserts:
        conn.execute(sa.insert(t), inserts)
    if updates:
        conn.execute(sa.update(t).where(t.c.id == sa.bindparam("_pk")), updates)
    if history:
        conn.execute(sa.insert(history_table), history)


def load_documents(
    engine: Engine,
    docs: Sequence[CatalogueDocument],
    *,
    dry_run: bool = False,
    user: str | None = None,
    via: str = "load",
) -> LoadReport:
    """Store validated documents in one transaction (``dry_run``: read only, report only).

    ``user`` is who makes the change (default: the OS user), ``via`` names the command in the
    history ("load", "import-sheet"). Raises ReadOnlyError for a read-only catalogue (a dry run
    is allowed there) and BusyError when another writer holds the catalogue too long.
    """
    report = LoadReport(dry_run=dry_run, warnings=[w for d in docs for w in d.warnings])
    if dry_run:
        with engine.connect() as conn:
            _load_makers(conn, docs, report, False)
            _load_parts(conn, docs, report, None)
        return report
    with write_transaction(engine, via) as conn:
        change = _Change(current_user(user), datetime.now(UTC), via)  # time taken under the lock
        _load_makers(conn, docs, report, True)
        _load_parts(conn, docs, report, change)
    return report


def load_paths(
    engine: Engine,
    paths: Iterable[str | Path],
    *,
    dry_run: bool = False,
    user: str | None = None,
    progress: Callable[[int], None] | None = None,
) -> LoadReport:
    """Validate catalogue files and folders, then store them (see :func:`load_documents`).

    Raises InputError listing every problem of every file; nothing is stored then.
    ``progress(1)`` is called as each file has been read.
    """
    from partsel.catalogue.validate import read_and_validate  # (lazy: not for reads)

    docs = read_and_validate(paths, progress=progress)
    return load_documents(engine, docs, dry_run=dry_run, user=user)


# --- one part at a time, against a known version ----------------------------------------------


def _replace_part(
    conn: Connection,
    part: dict[str, Any],
    canon: dict[str, Any],
    expected_version: int,
    change: _Change,
    action: Action,
    source: str,
    file: str | None,
) -> EditResult:
    """Store ``part`` if its stored version is ``expected_version`` (0: not stored yet)."""
    t = part_table
    pn = part["part_number"]
    key = part_key(pn)
    row = conn.execute(
        sa.select(t.c.id, t.c.version, t.c.record_json, t.c.content_hash).where(t.c.part_key == key)
    ).first()
    current = 0 if row is None else row.version
    old_record = None if row is None else json.loads(row.record_json)
    if current != expected_version:
        raise conflict_error(conn, key, pn, expected_version, current, old_record, file=file)
    digest = content_hash(canon)
    if row is not None and row.content_hash == digest:
        return EditResult(pn, current, None, [])
    new = _table_row(part, canon)
    new.update(
        content_hash=digest, version=current + 1, updated_at=change.when, updated_by=change.user
    )
    if row is None:
        conn.execute(sa.insert(t).values(**new))
        action = "added"
    else:
        done = conn.execute(
            sa.update(t).where(t.c.id == row.id, t.c.version == current).values(**new)
        )
        if done.rowcount != 1:  # cannot happen under the writer lock; never overwrite blindly
            raise conflict_error(conn, key, pn, expected_version, current + 1, None, file=file)
    conn.execute(
        sa.insert(history_table).values(
            history_row(
                key=key,
                part_number=pn,
                version=current + 1,
                action=action,
                user=change.user,
                when=change.when,
                source=source,
                old_json=None if row is None else row.record_json,
                new_json=new["record_json"],
            )
        )
    )
    return EditResult(pn, current + 1, action, record_changes(old_record or {}, part))


def edit_document(
    engine: Engine,
    doc: CatalogueDocument,
    expected_version: int,
    *,
    user: str | None = None,
    source: str | None = None,
) -> EditResult:
    """Replace one part with the single part of validated ``doc`` (its makers are stored too).

    Refused with :class:`~partsel.catalogue.history.ConflictError` unless the stored part is at
    ``expected_version`` (0: the part must not exist yet, and is added).
    """
    if len(doc.parts) != 1:
        raise InputError(
            f"an edit holds exactly one part; this one holds {len(doc.parts)} (use load for "
            "several)",
            file=doc.file,
            pointer="/parts",
        )
    part, canon = doc.parts[0], doc.canonical_parts[0]
    src = source or f"edit {doc.file}"
    with write_transaction(engine, f"edit {part['part_number']}") as conn:
        change = _Change(current_user(user), datetime.now(UTC), "edit")
        _load_makers(conn, [doc], LoadReport(), True)
        return _replace_part(conn, part, canon, expected_version, change, "changed", src, doc.file)


def _record_problems(exc: InputError, label: str) -> InputError:
    """Problems of a record validated as ``/parts/0`` of a document, with record pointers."""
    probs = [
        Problem(
            p.message,
            p.file if p.file != label else None,
            p.record,
            p.pointer.removeprefix("/parts/0") if p.pointer.startswith("/parts/0") else p.pointer,
        )
        for p in exc.problems
    ]
    return InputError(problems=probs)


def _validated_record(record: dict[str, Any], label: str) -> CatalogueDocument:
    from partsel.catalogue.validate import validate_documents

    try:
        (doc,) = validate_documents([(label, {"parts": [record]})])
    except InputError as exc:
        raise _record_problems(exc, label) from None
    return doc


def edit_part(
    engine: Engine,
    record: dict[str, Any],
    expected_version: int,
    *,
    user: str | None = None,
    source: str | None = None,
) -> EditResult:
    """Replace the stored part ``record["part_number"]`` with ``record``, if still unchanged.

    ``expected_version`` is the version the record was read at (:attr:`StoredPart.version`;
    0 to add a new part). The record is validated first (InputError with pointers into the
    record); then, in one write transaction, the edit is refused with
    :class:`~partsel.catalogue.history.ConflictError` (who changed what since) if the part has
    moved on, else stored as the next version with a history row. A record that means the same
    as the stored one stores nothing (``action`` None).
    """
    label = "edited record"
    doc = _validated_record(record, label)
    return edit_document(engine, doc, expected_version, user=user, source=source or "edit")


def restore_part(
    engine: Engine,
    part_number: str,
    version: int,
    *,
    expected_version: int | None = None,
    user: str | None = None,
) -> EditResult:
    """Store the record ``part_number`` had at ``version`` again, as a new version.

    The history keeps every version, so a restore can itself be undone. With
    ``expected_version`` the restore is refused (ConflictError) if the part has moved on since
    the caller looked. Raises InputError for an unknown part or version, or when the old record
    does not pass today's validation.
    """
    key = part_key(part_number)
    with write_transaction(engine, f"restore {part_number}") as conn:
        change = _Change(current_user(user), datetime.now(UTC), "restore")
        t = part_table
        current = conn.execute(sa.select(t.c.version).where(t.c.part_key == key)).scalar()
        if current is None:
            raise InputError(f"no part {part_number!r} in the catalogue", record=part_number)
        then = read_history(conn, key, version=version)
        if not then:
            kept = [e.version for e in read_history(conn, key)]
            raise InputError(
                f"no version {version} of {part_number} is kept; kept versions: "
                + (", ".join(map(str, kept)) or "none"),
                record=part_number,
                pointer="/version",
            )
        record = then[0].new_record
        label = f"version {version} of {part_number}"
        doc = _validated_record(record, label)
        return _replace_part(
            conn,
            doc.parts[0],
            doc.canonical_parts[0],
            current if expected_version is None else expected_version,
            change,
            "restored",
            f"restore of version {version}",
            None,
        )


_FRAME_DTYPES = {"int": "int64", "bool": "bool", "str": "str"}


def _key_order(engine: Engine, column: sa.ColumnElement[str]) -> sa.ColumnElement[str]:
    """``column`` for ORDER BY in code-point order on every backend (PostgreSQL databases
    usually sort text by a language collation, SQLite by code points)."""
    return column.collate("C") if backend(engine) == "postgresql" else column


def _part_rows(engine: Engine, where: sa.ColumnElement[bool] | None) -> list[sa.Row[Any]]:
    t = part_table
    stmt = sa.select(*(t.c[n] for n in OTHER_COLUMN_NAMES), t.c.float_block)
    stmt = stmt.order_by(_key_order(engine, t.c.part_key))
    if where is not None:
        stmt = stmt.where(where)
    with engine.connect() as conn:
        return list(conn.execute(stmt).fetchall())


def parts_frame(engine: Engine, where: sa.ColumnElement[bool] | None = None) -> pd.DataFrame:
    """All parts (or those matching ``where``) as a frame of the flat columns, in one query.

    One row per part, ordered by part number (case-insensitive); float columns are SI floats
    with NaN for unknown values (column list: :data:`partsel.catalogue.columns.FLAT_COLUMNS`).
    The float columns are read from the packed ``float_block`` (see
    :mod:`partsel.catalogue.tables`), which keeps 100k parts to about a second.
    """
    import numpy as np
    import pandas as pd

    rows = _part_rows(engine, where)
    n = len(rows)
    cols = list(zip(*rows, strict=True)) if rows else [()] * (len(OTHER_COLUMN_NAMES) + 1)
    data: dict[str, Any] = {
        name: pd.array(list(values), dtype=_FRAME_DTYPES[COLUMN_BY_NAME[name].kind])
        for name, values in zip(OTHER_COLUMN_NAMES, cols, strict=False)
    }
    floats = np.frombuffer(b"".join(map(bytes, cols[-1])), dtype=FLOAT_BLOCK_DTYPE)
    floats = floats.reshape(n, len(FLOAT_COLUMN_NAMES)).astype("float64")
    for j, name in enumerate(FLOAT_COLUMN_NAMES):
        data[name] = floats[:, j]
    return pd.DataFrame({name: data[name] for name in FLAT_COLUMN_NAMES})


def temperature_data(
    engine: Engine, where: sa.ColumnElement[bool] | None = None
) -> dict[str, dict[str, Any]]:
    """The specs each part gives at two or more ambient temperatures: casefolded part number ->
    parameter key -> :data:`partsel.params.TemperatureCurve` (parts without any
    absent). Read from the stored records (``record_json``): only the records that mention
    the field are parsed, so a catalogue without temperature points costs one filtered query.
    """
    from partsel.catalogue.normalise import temperature_curves
    from partsel.catalogue.schema import TEMPERATURE_POINTS
    from partsel.catalogue.validate import canonical_part

    t = part_table
    stmt = sa.select(t.c.part_key, t.c.record_json).where(
        t.c.record_json.contains(f'"{TEMPERATURE_POINTS}"')
    )
    if where is not None:
        stmt = stmt.where(where)
    with engine.connect() as conn:
        rows = conn.execute(stmt).fetchall()
    out: dict[str, dict[str, Any]] = {}
    for key, text in rows:
        canon, problems = canonical_part(json.loads(text))
        if problems:  # stored records were checked on load; an invalid one gives no curves
            continue
        curves = temperature_curves(canon)
        if curves:
            out[str(key)] = curves
    return out


def parts_records(
    engine: Engine, where: sa.ColumnElement[bool] | None = None
) -> list[dict[str, Any]]:
    """The rows of :func:`parts_frame` as plain dicts (no pandas: for quick listings), in the
    same order, with NaN for unknown floats."""
    out = []
    for row in _part_rows(engine, where):
        rec = dict(zip(OTHER_COLUMN_NAMES, row[:-1], strict=True))
        rec.update(zip(FLOAT_COLUMN_NAMES, _FLOAT_STRUCT.unpack(bytes(row[-1])), strict=True))
        out.append({name: rec[name] for name in FLAT_COLUMN_NAMES})
    return out


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
    return StoredPart(
        json.loads(row.record_json),
        _flat_from_row(row),
        row.version,
        as_utc(row.updated_at),
        row.updated_by,
    )


def part_numbers(engine: Engine) -> list[str]:
    """Every stored part number, sorted case-insensitively."""
    t = part_table
    with engine.connect() as conn:
        return list(
            conn.scalars(sa.select(t.c.part_number).order_by(_key_order(engine, t.c.part_key)))
        )


def makers(engine: Engine) -> list[dict[str, Any]]:
    """Every maker record ``{name, suffix_rules}``, sorted by name."""
    t = maker_table
    with engine.connect() as conn:
        rows = conn.execute(
            sa.select(t.c.name, t.c.suffix_rules).order_by(_key_order(engine, t.c.name_key))
        )
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


def export_catalogue(
    engine: Engine,
    directory: Path,
    fmt: ExportFormat = "yaml",
    *,
    progress: Callable[[int], None] | None = None,
) -> list[Path]:
    """Write one loadable catalogue file per maker into ``directory``; return the files
    (``progress(1)`` as each is written)."""
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
            import yaml

            text = yaml.safe_dump(doc, sort_keys=False, allow_unicode=True, width=100)
        path.write_text(text, encoding="utf-8")
        written.append(path)
        if progress is not None:
            progress(1)
    return written
