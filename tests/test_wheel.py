"""The wheel carries the sample: installed outside the checkout, partsel fills the default
catalogue from its package data and finds the sample design, as an editable install does."""

from __future__ import annotations

import json
import os
import site
import subprocess
import sys
import venv
from pathlib import Path

import pytest

PROJECT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def installed(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A fresh virtual environment with partsel's wheel (built from this checkout) installed,
    and the dependencies of the test environment made visible through a ``.pth`` line (no
    download; the editable install of the test environment is not active there: a directory
    named in a ``.pth`` file is only appended to ``sys.path``, its own ``.pth`` files are not
    run)."""
    base = tmp_path_factory.mktemp("wheel")
    dist = base / "dist"
    r = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w", str(dist), str(PROJECT)],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert r.returncode == 0, r.stderr
    wheel = next(dist.glob("partsel-*.whl"))
    env_dir = base / "venv"
    venv.EnvBuilder(with_pip=False).create(env_dir)
    py = env_dir / "bin" / "python"
    r = subprocess.run(
        [
            sys.executable,
            "-m",
            "pip",
            "--python",
            str(py),
            "install",
            "-q",
            "--no-deps",
            str(wheel),
        ],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert r.returncode == 0, r.stderr
    purelib = subprocess.run(
        [str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.strip()
    deps = "\n".join(site.getsitepackages())
    (Path(purelib) / "partsel-test-deps.pth").write_text(deps + "\n", encoding="utf-8")
    return env_dir


def test_installed_wheel_fills_the_default_catalogue_from_package_data(
    installed: Path, tmp_path: Path
) -> None:
    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {
        k: v for k, v in os.environ.items() if not k.startswith(("PARTSEL_", "PYTHON", "VIRTUAL"))
    }
    env.update(HOME=str(tmp_path), XDG_DATA_HOME=str(tmp_path / "data"))
    bin_dir = installed / "bin"
    where = subprocess.run(
        [str(bin_dir / "python"), "-c", "import partsel, partsel.sample as s; "
         "print(partsel.__file__); print(s.designs_folder())"],
        cwd=work, env=env, capture_output=True, text=True, check=True,
    ).stdout.split()  # fmt: skip
    assert Path(where[0]).is_relative_to(installed), where
    assert (Path(where[1]) / "line-driver-5v.toml").is_file()
    r = subprocess.run(
        [str(bin_dir / "partsel"), "list", "--json"],
        cwd=work,
        env=env,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert r.returncode == 0, r.stderr
    parts = json.loads(r.stdout)
    assert len(parts) == 51  # the sample catalogue's parts (sample-catalog/parts/README.md)
    r = subprocess.run(
        [
            str(bin_dir / "python"),
            "-c",
            "from partsel.tui.app import sample_designs; print(len(sample_designs()))",
        ],
        cwd=work,
        env=env,
        capture_output=True,
        text=True,
        check=True,
    )
    assert int(r.stdout) == len(list((PROJECT / "sample-catalog" / "designs").glob("*.toml")))
