"""Versions and history of parts: who changed what and when, record differences, conflicts.

Every stored part carries a version (1 when added, +1 per change). Each version is kept in the
``part_history`` table with who made it (the OS user or a name given with ``--user``), when
(UTC), how (``added``, ``changed``, ``restored``, or ``baseline`` for the state found when
history keeping began) and the record before and after. An edit names the version it was made
against; when the catalogue has moved on since, :class:`ConflictError` says who changed the
part, when, and which fields (JSON pointers, RFC 6901) with their values then and now.
"""

from __future__ import annotations

import getpass
import json
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any, Literal

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from partsel.catalogue.tables import history_table
from partsel.errors import InputError, Problem, json_pointer

Action = Literal["added", "changed", "restored", "baseline"]

#: Shown for a field that a record does not have.
ABSENT = "(absent)"


def current_user(explicit: str | None = None) -> str:
    """Who is making a change: ``explicit`` if given, else the OS user (``getpass.getuser``)."""
    if explicit and explicit.strip():
        return explicit.strip()
    try:
        return getpass.getuser()
    except (OSError, KeyError):  # no login name and no passwd entry (some containers)
        return "unknown"


def as_utc(when: datetime) -> datetime:
    """``when`` as an aware UTC time (SQLite gives back naive UTC times)."""
    return when.replace(tzinfo=UTC) if when.tzinfo is None else when.astimezone(UTC)


def format_time(when: datetime) -> str:
    """A time for people: ``2025-01-31 14:05:09 UTC``."""
    return f"{as_utc(when):%Y-%m-%d %H:%M:%S} UTC"


@dataclass(frozen=True)
class FieldChange:
    """One field that differs between two records: its JSON pointer and both values.

    ``old`` / ``new`` are the values as given in the records, or None when absent
    (``old_present`` / ``new_present`` tell an absent field from a null).
    """

    pointer: str
    old: Any
    new: Any
    old_present: bool = True
    new_present: bool = True

    def text(self) -> str:
        """``/dynamics/gbw/typ: "1 MHz" → "1.2 MHz"``."""
        return f"{self.pointer}: {self._show(self.old, self.old_present)} → " + self._show(
            self.new, self.new_present
        )

    @staticmethod
    def _show(value: Any, present: bool) -> str:
        return json.dumps(value, ensure_ascii=False) if present else ABSENT

    def to_dict(self) -> dict[str, Any]:
        """``{pointer, old, new}`` with an absent value as ``null``."""
        return {
            "pointer": self.pointer,
            "old": self.old if self.old_present else None,
            "new": self.new if self.new_present else None,
        }


def record_changes(old: Any, new: Any, _path: tuple[str | int, ...] = ()) -> list[FieldChange]:
    """The fields in which record ``new`` differs from ``old``, in document order.

    Objects are compared key by key (keys of ``old`` first, then keys only ``new`` has), lists of
    equal length item by item; anything else, and lists whose length changed, as a whole.
    """
    if isinstance(old, dict) and isinstance(new, dict):
        out: list[FieldChange] = []
        for key in [*old, *(k for k in new if k not in old)]:
            path = (*_path, key)
            if key not in new:
                out.append(FieldChange(json_pointer(*path), old[key], None, new_present=False))
            elif key not in old:
                out.append(FieldChange(json_pointer(*path), None, new[key], old_present=False))
            else:
                out += record_changes(old[key], new[key], path)
        return out
    if isinstance(old, list) and isinstance(new, list) and len(old) == len(new):
        return [c for i, (a, b) in enumerate(zip(old, new, strict=True)) for c in
                record_changes(a, b, (*_path, i))]  # fmt: skip
    if old == new and type(old) is type(new):
        return []
    return [FieldChange(json_pointer(*_path), old, new)]


@dataclass(frozen=True)
class HistoryEntry:
    """One stored version of a part."""

    part_number: str
    version: int
    action: Action
    changed_by: str
    changed_at: datetime
    source: str | None
    old_record: dict[str, Any] | None
    new_record: dict[str, Any]

    def changes(self) -> list[FieldChange]:
        """Fields changed by this version (every field for an addition or a baseline)."""
        return record_changes(self.old_record or {}, self.new_record)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form: version, action, who, when (ISO 8601 UTC), source, changes, records."""
        return {
            "part_number": self.part_number,
            "version": self.version,
            "action": self.action,
            "changed_by": self.changed_by,
            "changed_at": as_utc(self.changed_at).isoformat(),
            "source": self.source,
            "changes": [c.to_dict() for c in self.changes()] if self.old_record else [],
            "old_record": self.old_record,
            "new_record": self.new_record,
        }


def _entry(row: sa.Row[Any]) -> HistoryEntry:
    return HistoryEntry(
        part_number=row.part_number,
        version=row.version,
        action=row.action,
        changed_by=row.changed_by,
        changed_at=as_utc(row.changed_at),
        source=row.source,
        old_record=json.loads(row.old_record_json) if row.old_record_json else None,
        new_record=json.loads(row.new_record_json),
    )


def read_history(
    conn: Connection, key: str, *, after: int = 0, version: int | None = None
) -> list[HistoryEntry]:
    """History rows of the part with ``key``: versions above ``after`` (or just ``version``)."""
    t = history_table
    stmt = sa.select(t).where(t.c.part_key == key)
    stmt = stmt.where(t.c.version == version) if version is not None else stmt
    stmt = stmt.where(t.c.version > after).order_by(t.c.version)
    return [_entry(r) for r in conn.execute(stmt)]


def part_history(engine: Engine, part_number: str) -> list[HistoryEntry]:
    """Every kept version of ``part_number`` (any case), oldest first; [] for an unknown part."""
    with engine.connect() as conn:
        return read_history(conn, part_number.strip().casefold())


def history_row(
    *,
    key: str,
    part_number: str,
    version: int,
    action: Action,
    user: str,
    when: datetime,
    source: str | None,
    old_json: str | None,
    new_json: str,
) -> dict[str, Any]:
    """Values of one ``part_history`` row."""
    return {
        "part_key": key,
        "part_number": part_number,
        "version": version,
        "action": action,
        "changed_by": user,
        "changed_at": when,
        "source": source,
        "old_record_json": old_json,
        "new_record_json": new_json,
    }


class ConflictError(InputError):
    """An edit made against a version of a part that is no longer the stored one.

    Attributes
    ----------
    part_number: the part.
    expected_version: the version the edit was made against (0: the part was thought new).
    current_version: the version stored now (0: there is no such part).
    since: the versions stored after ``expected_version`` (who, when, how).
    changes: fields that differ between ``expected_version`` and the stored record (empty
        when the older record is not kept, or there is none).
    """

    def __init__(
        self,
        part_number: str,
        expected_version: int,
        current_version: int,
        since: Sequence[HistoryEntry],
        changes: Sequence[FieldChange],
        *,
        file: str | None = None,
        expected_record_kept: bool = True,
    ) -> None:
        self.part_number = part_number
        self.expected_version = expected_version
        self.current_version = current_version
        self.since = list(since)
        self.changes = list(changes)
        if current_version == 0:
            head = (
                f"conflict: the edit was made against version {expected_version}, but there "
                "is no such part in the catalogue (add it with --expect-version 0)"
            )
        elif expected_version == 0:
            head = (
                f"conflict: the part was to be added, but the catalogue already holds version "
                f"{current_version}"
            )
        elif expected_version > current_version:
            head = (
                f"conflict: the edit was made against version {expected_version}, but the "
                f"catalogue holds only up to version {current_version}"
            )
        else:
            head = (
                f"conflict: the edit was made against version {expected_version}, but the "
                f"catalogue now holds version {current_version}"
            )
        problems = [Problem(head + "; the edit was refused", file, part_number)]
        for e in self.since:
            problems.append(
                Problem(
                    f"version {e.version} {e.action} by {e.changed_by} at "
                    f"{format_time(e.changed_at)}" + (f" ({e.source})" if e.source else ""),
                    None,
                    part_number,
                )
            )
        for c in self.changes:
            problems.append(
                Problem(
                    f"changed since version {expected_version}: "
                    f"{FieldChange._show(c.old, c.old_present)} → "
                    f"{FieldChange._show(c.new, c.new_present)}",
                    None,
                    part_number,
                    c.pointer,
                )
            )
        if 0 < expected_version < current_version and not expected_record_kept:
            problems.append(
                Problem(
                    f"the record of version {expected_version} predates the kept history, so "
                    "the fields changed since cannot be listed",
                    None,
                    part_number,
                )
            )
        super().__init__(problems=problems)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form of the conflict."""
        return {
            "part_number": self.part_number,
            "expected_version": self.expected_version,
            "current_version": self.current_version,
            "since": [
                {
                    "version": e.version,
                    "action": e.action,
                    "changed_by": e.changed_by,
                    "changed_at": as_utc(e.changed_at).isoformat(),
                    "source": e.source,
                }
                for e in self.since
            ],
            "changes": [c.to_dict() for c in self.changes],
        }


def conflict_error(
    conn: Connection,
    key: str,
    part_number: str,
    expected_version: int,
    current_version: int,
    current_record: dict[str, Any] | None,
    *,
    file: str | None = None,
) -> ConflictError:
    """The :class:`ConflictError` for an edit against ``expected_version`` (reads the history)."""
    since = read_history(conn, key, after=expected_version) if current_version else []
    changes: list[FieldChange] = []
    kept = True
    if current_record is not None and 0 < expected_version < current_version:
        then = read_history(conn, key, version=expected_version)
        kept = bool(then)
        if then:
            changes = record_changes(then[0].new_record, current_record)
    return ConflictError(
        part_number,
        expected_version,
        current_version,
        since,
        changes,
        file=file,
        expected_record_kept=kept,
    )
