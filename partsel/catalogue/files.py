"""Reading catalogue files (YAML or JSON) and collecting them from folders."""

from __future__ import annotations

from collections.abc import Iterable
from pathlib import Path
from typing import Any

from partsel.errors import InputError, Problem
from partsel.io.textfile import read_structured

#: File name endings read as catalogue files when a folder is given.
CATALOGUE_SUFFIXES: tuple[str, ...] = (".yaml", ".yml", ".json")


def _syntax(suffix: str) -> str:
    return "JSON" if suffix.lower() == ".json" else "YAML"


def parse_text(text: str, *, file: str, suffix: str) -> Any:
    """Parse ``text`` as JSON (``suffix == ".json"``) or YAML; raise InputError naming ``file``.

    The bounded reader :func:`partsel.io.textfile.read_structured` does the work (limits on
    size, depth, aliases, numbers; unique keys).
    """
    return read_structured(text, syntax=_syntax(suffix), file=file)  # type: ignore[arg-type]


def read_document(path: Path) -> Any:
    """Read one catalogue file (JSON by a ``.json`` ending, else YAML) into Python data."""
    return read_structured(Path(path), syntax=_syntax(Path(path).suffix), file=str(path))  # type: ignore[arg-type]


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
