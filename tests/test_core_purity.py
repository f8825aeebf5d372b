"""The core stays pure: every module of partsel.physics and partsel.solver (and the people's
formatter partsel.present) imports no database, command-line or UI code, nor the unit library
or a file parser, and none of partsel's own database, CLI, UI or API layers."""

from __future__ import annotations

import pkgutil
import subprocess
import sys

import pytest

import partsel.physics
import partsel.solver

#: Libraries the core must not import.
FORBIDDEN = ("sqlmodel", "sqlalchemy", "alembic", "typer", "textual", "rich", "pint", "yaml")
#: partsel's own outer layers.
OUTER = ("partsel.catalogue", "partsel.cli", "partsel.tui", "partsel.api", "partsel.design")


def core_modules() -> list[str]:
    names = ["partsel.present"]
    for pkg in (partsel.physics, partsel.solver):
        names.append(pkg.__name__)
        for info in pkgutil.walk_packages(pkg.__path__, pkg.__name__ + "."):
            names.append(info.name)
    return sorted(set(names))


@pytest.mark.parametrize("module", core_modules())
def test_core_module_imports_nothing_outside_the_core(module: str) -> None:
    # what the core's own dependencies load for themselves (numba reads an optional YAML
    # configuration) is theirs, not the core's: it is imported first and left out
    code = (
        "import sys, importlib, numpy, pandas; before = set(sys.modules); "
        "importlib.util.find_spec('numba') and importlib.import_module('numba'); "
        "before = set(sys.modules); "
        f"importlib.import_module({module!r}); "
        f"bad = [m for m in sys.modules if m not in before and m.split('.')[0] in {FORBIDDEN!r} "
        f"or any(m == o or m.startswith(o + '.') for o in {OUTER!r})]; print(','.join(bad))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True
    ).stdout.strip()
    assert out == "", f"{module} imports {out}"
