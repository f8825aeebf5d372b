"""The bundled sample: an invented demo catalogue (``parts/``), example designs (``designs/``)
and a BOM (``bom/``), shipped as package data so that a wheel installed anywhere fills the
default catalogue and opens the sample design like a checkout does (``sample-catalog/`` in the
project folder is a link to this folder). Every maker, part number and value is invented."""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path


def sample_folder() -> Path:
    """The sample's folder (``parts/``, ``designs/``, ``bom/``) in the installed package."""
    return Path(str(files(__name__)))


def parts_folder() -> Path:
    """The sample catalogue's part files."""
    return sample_folder() / "parts"


def designs_folder() -> Path:
    """The example design files."""
    return sample_folder() / "designs"
