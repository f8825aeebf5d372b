"""Reading catalogue files (YAML or JSON) and collecting them from folders."""

from __future__ import annotations

import json
from collections.abc import Iterable
from pathlib import Path
from typing import Any

import yaml

from partsel.errors import InputError, Problem

#: File name endings read as catalogue files when a folder is given.
CATALOGUE_SUFFIXES: tuple[str, ...] = (".yaml", ".yml", ".json")


class _UniqueKeyLoader(yaml.SafeLoader):
    """YAML safe loader that refuses duplicate mapping keys (which would lose data silently)."""


def _construct_mapping(
    loader: _UniqueKeyLoader, node: yaml.MappingNode, deep: bool = False
) -> dict[Any, Any]:
    loader.flatten_mapping(node)
    out: dict[Any, Any] = {}
    for key_node, value_node in node.value:
        key = loader.construct_object(key_node, deep=deep)
        if key in out:
            mark = key_node.start_mark
            raise yaml.constructor.ConstructorError(None, None, f"duplicate key {key!r}", mark)
        out[key] = loader.construct_object(value_node, deep=deep)
    return out


_UniqueKeyLoader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)


def parse_text(text: str, *, file: str, suffix: str) -> Any:
    """Parse ``text`` as JSON (``suffix == ".json"``) or YAML; raise InputError naming ``file``."""
    if suffix.lower() == ".json":
        try:
            return json.loads(text)
        except json.JSONDecodeError as exc:
            raise InputError(
                f"malformed JSON: {exc.msg} at line {exc.lineno} column {exc.colno}", file=file
            ) from None
    try:
        return yaml.load(text, Loader=_UniqueKeyLoader)  # a SafeLoader subclass
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f" at line {mark.line + 1} column {mark.column + 1}" if mark else ""
        what = getattr(exc, "problem", None) or str(exc)
        raise InputError(f"malformed YAML: {what}{where}", file=file) from None


def read_document(path: Path) -> Any:
    """Read one catalogue file (YAML or JSON by its name ending) into Python objects."""
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read file: {exc}", file=str(path)) from None
    return parse_text(text, file=str(path), suffix=path.suffix)


def find_files(paths: Iterable[str | Path]) -> tuple[list[Path], list[Problem]]:
    """Expand files and folders (searched recursively for YAML/JSON files) into a file list.

    Returns the files and a problem for every path that does not exist or holds no
    catalogue file.
    """
    out: list[Path] = []
    problems: list[Problem] = []
    for raw in paths:
        p = Path(raw)
        if p.is_dir():
            found = sorted(
                f for f in p.rglob("*") if f.is_file() and f.suffix.lower() in CATALOGUE_SUFFIXES
            )
            if not found:
                problems.append(Problem("folder holds no .yaml, .yml or .json file", str(p)))
            out.extend(found)
        elif p.is_file():
            out.append(p)
        else:
            problems.append(Problem("no such file or folder", str(p)))
    return out, problems


def collect_files(paths: Iterable[str | Path]) -> list[Path]:
    """Like :func:`find_files`, but raise InputError listing every bad path."""
    out, problems = find_files(paths)
    if problems:
        raise InputError(problems=problems)
    return out
