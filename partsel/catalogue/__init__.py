"""The catalogue layer: validate catalogue files, store them (SQLModel/SQLAlchemy), read frames.

Typical use::

    from partsel.catalogue import open_catalogue, load_paths, parts_frame

    engine = open_catalogue()              # default SQLite file, $PARTSEL_DB, or a URL
    report = load_paths(engine, ["my-parts/"])
    df = parts_frame(engine)               # one row per part, flat SI columns

    part = get_part(engine, "QFA-2210")    # record, flat row, version
    edit_part(engine, {**part.record, "notes": "checked"}, part.version)  # ConflictError if stale
    part_history(engine, "QFA-2210")       # every version: who, when, old and new record

The same code runs on SQLite and on PostgreSQL (``postgresql+psycopg://user@host/db``).
"""

import importlib
from typing import TYPE_CHECKING, Any

#: Where each name of the catalogue layer lives. Names are imported on first use (PEP 562), so
#: that a quick command (``partsel list``) pays only for the modules it needs.
_HOME: dict[str, str] = {
    "FLAT_COLUMN_NAMES": "partsel.catalogue.columns",
    "FLAT_COLUMNS": "partsel.catalogue.columns",
    "META_COLUMNS": "partsel.catalogue.columns",
    "PARAM_COLUMNS": "partsel.catalogue.columns",
    "SWING_COLUMNS": "partsel.catalogue.columns",
    "FlatColumn": "partsel.catalogue.columns",
    "BusyError": "partsel.catalogue.db",
    "ReadOnlyError": "partsel.catalogue.db",
    "backend": "partsel.catalogue.db",
    "default_db_path": "partsel.catalogue.db",
    "find_sample_catalogue": "partsel.catalogue.db",
    "head_revision": "partsel.catalogue.db",
    "is_read_only": "partsel.catalogue.db",
    "make_engine": "partsel.catalogue.db",
    "migrate": "partsel.catalogue.db",
    "open_catalogue": "partsel.catalogue.db",
    "resolve_db_url": "partsel.catalogue.db",
    "schema_revision": "partsel.catalogue.db",
    "collect_files": "partsel.catalogue.files",
    "read_document": "partsel.catalogue.files",
    "ConflictError": "partsel.catalogue.history",
    "FieldChange": "partsel.catalogue.history",
    "HistoryEntry": "partsel.catalogue.history",
    "current_user": "partsel.catalogue.history",
    "part_history": "partsel.catalogue.history",
    "record_changes": "partsel.catalogue.history",
    "flatten_canonical": "partsel.catalogue.normalise",
    "normalise_part": "partsel.catalogue.normalise",
    "swing_points": "partsel.catalogue.normalise",
    "build_schema": "partsel.catalogue.schema",
    "schema_text": "partsel.catalogue.schema",
    "EditResult": "partsel.catalogue.store",
    "LoadReport": "partsel.catalogue.store",
    "StoredPart": "partsel.catalogue.store",
    "dump_documents": "partsel.catalogue.store",
    "edit_document": "partsel.catalogue.store",
    "edit_part": "partsel.catalogue.store",
    "export_catalogue": "partsel.catalogue.store",
    "get_part": "partsel.catalogue.store",
    "load_documents": "partsel.catalogue.store",
    "load_paths": "partsel.catalogue.store",
    "makers": "partsel.catalogue.store",
    "part_numbers": "partsel.catalogue.store",
    "parts_frame": "partsel.catalogue.store",
    "restore_part": "partsel.catalogue.store",
    "temperature_data": "partsel.catalogue.store",
    "CatalogueDocument": "partsel.catalogue.validate",
    "canonical_part": "partsel.catalogue.validate",
    "read_and_validate": "partsel.catalogue.validate",
    "validate_document": "partsel.catalogue.validate",
    "validate_documents": "partsel.catalogue.validate",
}


def __getattr__(name: str) -> Any:
    home = _HOME.get(name)
    if home is None:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(importlib.import_module(home), name)
    globals()[name] = value
    return value


if TYPE_CHECKING:
    from partsel.catalogue.columns import (
        FLAT_COLUMN_NAMES,
        FLAT_COLUMNS,
        META_COLUMNS,
        PARAM_COLUMNS,
        SWING_COLUMNS,
        FlatColumn,
    )
    from partsel.catalogue.db import (
        BusyError,
        ReadOnlyError,
        backend,
        default_db_path,
        find_sample_catalogue,
        head_revision,
        is_read_only,
        make_engine,
        migrate,
        open_catalogue,
        resolve_db_url,
        schema_revision,
    )
    from partsel.catalogue.files import collect_files, read_document
    from partsel.catalogue.history import (
        ConflictError,
        FieldChange,
        HistoryEntry,
        current_user,
        part_history,
        record_changes,
    )
    from partsel.catalogue.normalise import flatten_canonical, normalise_part, swing_points
    from partsel.catalogue.schema import build_schema, schema_text
    from partsel.catalogue.store import (
        EditResult,
        LoadReport,
        StoredPart,
        dump_documents,
        edit_document,
        edit_part,
        export_catalogue,
        get_part,
        load_documents,
        load_paths,
        makers,
        part_numbers,
        parts_frame,
        restore_part,
        temperature_data,
    )
    from partsel.catalogue.validate import (
        CatalogueDocument,
        canonical_part,
        read_and_validate,
        validate_document,
        validate_documents,
    )

__all__ = [
    "FLAT_COLUMNS",
    "FLAT_COLUMN_NAMES",
    "META_COLUMNS",
    "PARAM_COLUMNS",
    "SWING_COLUMNS",
    "BusyError",
    "CatalogueDocument",
    "ConflictError",
    "EditResult",
    "FieldChange",
    "FlatColumn",
    "HistoryEntry",
    "LoadReport",
    "ReadOnlyError",
    "StoredPart",
    "backend",
    "build_schema",
    "canonical_part",
    "collect_files",
    "current_user",
    "default_db_path",
    "dump_documents",
    "edit_document",
    "edit_part",
    "export_catalogue",
    "find_sample_catalogue",
    "flatten_canonical",
    "get_part",
    "head_revision",
    "is_read_only",
    "load_documents",
    "load_paths",
    "make_engine",
    "makers",
    "migrate",
    "normalise_part",
    "open_catalogue",
    "part_history",
    "part_numbers",
    "parts_frame",
    "read_and_validate",
    "read_document",
    "record_changes",
    "resolve_db_url",
    "restore_part",
    "schema_revision",
    "schema_text",
    "swing_points",
    "temperature_data",
    "validate_document",
    "validate_documents",
]
