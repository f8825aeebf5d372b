"""Run a deck from :func:`partsel.physics.spice.spice_deck` in ngspice and read its waveform.

Kept out of :mod:`partsel.physics` (which stays free of subprocesses). ngspice runs in batch
mode (``ngspice -b``) in a working folder; the deck's control block writes a ``wrdata`` file
there (single time column, header line), which is read back with numpy.
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
    """ngspice failed or wrote no data."""


def _data_file(deck: str) -> str:
    m = re.search(r"^\s*wrdata\s+(\S+)", deck, flags=re.MULTILINE | re.IGNORECASE)
    if not m:
        raise ValueError("the deck has no 'wrdata <file> ...' line in its control block")
    return m.group(1)


def run_ngspice_columns(
    deck: str, workdir: str | Path, *, deck_name: str = "partsel.cir", timeout_s: float = 300.0
) -> dict[str, np.ndarray]:
    """Run ``deck`` in ngspice inside ``workdir``; return the data file's columns by name.

    Raises
    ------
    NgspiceError
        If ngspice is missing, exits with an error, reports one (e.g. "timestep too small"),
        takes longer than ``timeout_s`` seconds, or writes no data.
    """
    exe = ngspice_path()
    if exe is None:
        raise NgspiceError("ngspice is not installed (Debian package 'ngspice')")
    work = Path(workdir)
    work.mkdir(parents=True, exist_ok=True)
    deck_path = work / deck_name
    deck_path.write_text(deck, encoding="utf-8")
    data = work / _data_file(deck)
    if data.exists():
        data.unlink()
    try:
        proc = subprocess.run(
            [exe, "-b", deck_path.name],
            cwd=work,
            capture_output=True,
            text=True,
            timeout=timeout_s,
            check=False,
        )
    except subprocess.TimeoutExpired as exc:
        raise NgspiceError(f"ngspice did not finish {deck_path} in {timeout_s} s") from exc
    log = proc.stdout + proc.stderr
    (work / (deck_name + ".log")).write_text(log, encoding="utf-8")
    bad = [
        ln
        for ln in log.splitlines()
        if re.search(r"\berror\b|timestep too small|singular matrix", ln, re.IGNORECASE)
    ]
    if proc.returncode != 0 or bad or not data.exists():
        tail = "\n".join((bad or log.splitlines())[-15:])
        raise NgspiceError(f"ngspice failed on {deck_path} (exit {proc.returncode}):\n{tail}")
    lines = data.read_text(encoding="utf-8").splitlines()
    names = lines[0].split()
    values = np.loadtxt(lines[1:], dtype=float, ndmin=2)
    if values.shape[1] != len(names):
        raise NgspiceError(f"{data}: {len(names)} names but {values.shape[1]} columns")
    return {name: values[:, k].copy() for k, name in enumerate(names)}


def run_ngspice(deck: str, workdir: str | Path) -> tuple[np.ndarray, np.ndarray]:
    """Run ``deck`` in ngspice inside ``workdir``; return time (s) and v(out) (V)."""
    cols = run_ngspice_columns(deck, workdir)
    return cols["time"], cols["v(out)"]
