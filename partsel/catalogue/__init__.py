"""The catalogue layer: validate catalogue files, store them (SQLModel/SQLAlchemy), read frames.

Typical use::

    from partsel.catalogue import open_catalogue, load_paths, parts_frame

    engine = open_catalogue()              # default SQLite file, $PARTSEL_DB, or a URL
    report = load_paths(engine, ["my-parts/"])
    df = parts_frame(engine)               # one row per part, flat SI columns
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
    default_db_path,
    find_sample_catalogue,
    make_engine,
    migrate,
    open_catalogue,
    resolve_db_url,
)
from partsel.catalogue.files import collect_files, read_document
from partsel.catalogue.normalise import flatten_canonical, normalise_part, swing_points
from partsel.catalogue.schema import build_schema, schema_text
from partsel.catalogue.store import (
    LoadReport,
    StoredPart,
    dump_documents,
    export_catalogue,
    get_part,
    load_documents,
    load_paths,
    makers,
    part_numbers,
    parts_frame,
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
    "CatalogueDocument",
    "FlatColumn",
    "LoadReport",
    "StoredPart",
    "build_schema",
    "canonical_part",
    "collect_files",
    "default_db_path",
    "dump_documents",
    "export_catalogue",
    "find_sample_catalogue",
    "flatten_canonical",
    "get_part",
    "load_documents",
    "load_paths",
    "make_engine",
    "makers",
    "migrate",
    "normalise_part",
    "open_catalogue",
    "part_numbers",
    "parts_frame",
    "read_and_validate",
    "read_document",
    "resolve_db_url",
    "schema_text",
    "swing_points",
    "validate_document",
    "validate_documents",
]
