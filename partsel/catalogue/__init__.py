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
    "validate_document",
    "validate_documents",
]
