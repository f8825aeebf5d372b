"""Output paths checked before any work is done: a command that will write a file (a figure, a
deck, an export, a checked BOM) first makes sure it can, and stops with a message naming the
path and the operating system's reason otherwise (exit 2), instead of failing after the work."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from partsel.errors import InputError


def _probe(folder: Path, target: Path) -> None:
    """Create and remove a scratch file in ``folder`` (the one sure test of writability)."""
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".partsel-probe-")
    except OSError as exc:
        raise InputError(f"cannot write here: {exc.strerror or exc}", file=str(target)) from None
    os.close(fd)
    Path(tmp).unlink(missing_ok=True)


def output_file(path: str | os.PathLike[str]) -> Path:
    """``path`` as a file partsel can write (InputError naming it and the reason if not)."""
    p = Path(path)
    if p.is_dir():
        raise InputError("is a folder, not a file", file=str(p))
    folder = p.parent if str(p.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"no such folder: {folder}", file=str(p))
    if p.exists() and not os.access(p, os.W_OK):
        raise InputError("cannot write here: permission denied", file=str(p))
    _probe(folder, p)
    return p


def output_folder(path: str | os.PathLike[str]) -> Path:
    """``path`` as a folder partsel can write files into, created if missing."""
    p = Path(path)
    if p.exists() and not p.is_dir():
        raise InputError("is a file, not a folder", file=str(p))
    try:
        p.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the folder: {exc.strerror or exc}", file=str(p)) from None
    _probe(p, p)
    return p
