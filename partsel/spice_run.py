"""Run an ngspice deck (partsel's exported macro-model, or a test bench of
:mod:`partsel.characterise.benches`) and read back what it wrote.

Kept out of :mod:`partsel.physics` (which stays free of subprocesses). ngspice runs in batch
mode (``ngspice -b``) in a working folder, as a list of arguments (never through a shell); the
deck's control block writes one ``wrdata`` file per analysis there (single scale column, header
line), each read back with numpy. ``no_init=True`` also passes ``-n``: no ``.spiceinit`` from
the user's home or the working folder is read (the characterisation benches run with it, so
that nothing outside the deck takes part).
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np

#: Executable looked up on PATH unless ``PARTSEL_NGSPICE`` names another.
NGSPICE = "ngspice"


def ngspice_path() -> str | None:
    """Path of the ngspice executable, or None when it is not installed."""
    return shutil.which(os.environ.get("PARTSEL_NGSPICE", NGSPICE))


class NgspiceError(RuntimeError):
    """ngspice failed or wrote no data.

    ``kind`` says how: ``"missing"`` (not installed), ``"timeout"``, ``"failed"`` (an error
    exit, an error in its log, or no data written); ``log`` holds ngspice's output (empty
    when it did not run) and ``deck`` the path of the deck.
    """

    def __init__(self, message: str, *, kind: str = "failed", log: str = "", deck: str = ""):
        super().__init__(message)
        self.kind, self.log, self.deck = kind, log, deck


#: Lines of ngspice's log that make a run count as failed.
_FAILURE = re.compile(r"\berror\b|timestep too small|singular matrix", re.IGNORECASE)


def _data_files(deck: str) -> list[str]:
    files = re.findall(r"^\s*wrdata\s+(\S+)", deck, flags=re.MULTILINE | re.IGNORECASE)
    if not files:
        raise ValueError("the deck has no 'wrdata <file> ...' line in its control block")
    return list(dict.fromkeys(files))


def _data_file(deck: str) -> str:
    return _data_files(deck)[0]


def _read_data(path: Path) -> dict[str, np.ndarray]:
    lines = path.read_text(encoding="utf-8").splitlines()
    if not lines:
        raise NgspiceError(f"{path}: empty data file")
    names = lines[0].split()
    values = np.loadtxt(lines[1:], dtype=float, ndmin=2)
    if values.shape[1] != len(names):
        raise NgspiceError(f"{path}: {len(names)} names but {values.shape[1]} columns")
    return {name: values[:, k].copy() for k, name in enumerate(names)}


def run_ngspice_tables(
    deck: str,
    workdir: str | Path,
    *,
    deck_name: str = "partsel.cir",
    timeout_s: float = 300.0,
    no_init: bool = False,
) -> dict[str, dict[str, np.ndarray]]:
    """Run ``deck`` in ngspice inside ``workdir``; return every ``wrdata`` file's columns by
    name, keyed by the file name (in the order the deck names them).

    Raises
    ------
    NgspiceError
        If ngspice is missing, exits with an error, reports one (e.g. "timestep too small"),
        takes longer than ``timeout_s`` seconds (it is then killed), or writes no data.
    """
    exe = ngspice_path()
    if exe is None:
        raise NgspiceError("ngspice is not installed (Debian package 'ngspice')", kind="missing")
    work = Path(workdir)
    work.mkdir(parents=True, exist_ok=True)
    deck_path = work / deck_name
    deck_path.write_text(deck, encoding="utf-8")
    files = _data_files(deck)
    for name in files:
        data = work / name
        if data.exists():
            data.unlink()
    args = [exe, "-b", *(["-n"] if no_init else []), deck_path.name]
    try:
        proc = subprocess.run(
            args, cwd=work, capture_output=True, text=True, timeout=timeout_s, check=False,
            errors="replace",
        )  # fmt: skip
    except subprocess.TimeoutExpired as exc:
        raise NgspiceError(
            f"ngspice did not finish {deck_path} in {timeout_s:g} s",
            kind="timeout",
            deck=str(deck_path),
        ) from exc
    log = proc.stdout + proc.stderr
    (work / (deck_name + ".log")).write_text(log, encoding="utf-8")
    bad = [ln for ln in log.splitlines() if _FAILURE.search(ln)]
    missing = [name for name in files if not (work / name).exists()]
    if proc.returncode != 0 or bad or missing:
        tail = "\n".join((bad or log.splitlines())[-15:])
        raise NgspiceError(
            f"ngspice failed on {deck_path} (exit {proc.returncode}):\n{tail}",
            log=log,
            deck=str(deck_path),
        )
    return {name: _read_data(work / name) for name in files}


def run_ngspice_columns(
    deck: str, workdir: str | Path, *, deck_name: str = "partsel.cir", timeout_s: float = 300.0
) -> dict[str, np.ndarray]:
    """Run ``deck`` in ngspice inside ``workdir``; return the (first) data file's columns by
    name (see :func:`run_ngspice_tables`)."""
    tables = run_ngspice_tables(deck, workdir, deck_name=deck_name, timeout_s=timeout_s)
    return tables[_data_file(deck)]


def run_ngspice(deck: str, workdir: str | Path) -> tuple[np.ndarray, np.ndarray]:
    """Run ``deck`` in ngspice inside ``workdir``; return time (s) and v(out) (V)."""
    cols = run_ngspice_columns(deck, workdir)
    return cols["time"], cols["v(out)"]
