"""The one-time compile of the stepper is announced: the cache check reads numba's own cache
files, and the command line tells a person at a terminal (never a pipe) before it starts."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from rich.console import Console

from partsel.cli import common
from partsel.physics import stepper, stepper_layout


def test_cache_check_sees_what_numba_wrote() -> None:
    # numba itself writes the index files (cache=True); after a warm-up in this process the
    # cache folder the stepper exported holds this interpreter's compiled stepper.run.
    stepper.warm_up()
    assert stepper_layout.cache_dir() == Path(stepper.numba.config.CACHE_DIR)
    assert stepper_layout.compiled_cache_present()


def test_an_empty_cache_folder_is_cold(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path))
    assert not stepper_layout.compiled_cache_present()
    # another interpreter's files do not count: they are not loaded by this one
    other = tmp_path / "physics_0"
    other.mkdir()
    (other / "stepper.run-590.py27.nbi").write_bytes(b"")
    assert not stepper_layout.compiled_cache_present()
    tag = f"py{sys.version_info.major}{sys.version_info.minor}"
    (other / f"stepper.run-590.{tag}.nbi").write_bytes(b"")
    assert stepper_layout.compiled_cache_present()


def test_listeners_hear_only_of_a_real_compile(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    heard: list[int] = []
    monkeypatch.setattr(stepper_layout, "COMPILE_LISTENERS", [lambda: heard.append(1)])
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(tmp_path))
    stepper_layout.before_stepper_import()  # stepper already loaded in this process
    assert heard == []
    monkeypatch.delitem(sys.modules, "partsel.physics.stepper")
    stepper_layout.before_stepper_import()  # cold cache, not loaded: a compile is coming
    assert heard == [1]
    monkeypatch.setenv("NUMBA_CACHE_DIR", str(Path(stepper.numba.config.CACHE_DIR)))
    stepper.warm_up()
    stepper_layout.before_stepper_import()  # warm cache: loaded, not compiled
    assert heard == [1]


def test_notice_only_at_a_terminal(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    common.compile_notice()  # stderr is captured here: not a terminal
    assert capsys.readouterr().err == ""
    monkeypatch.setattr(common, "err_console", lambda: Console(stderr=True, force_terminal=True))
    common.compile_notice()
    err = capsys.readouterr().err
    assert "compiling partsel's simulation engine" in err and "once" in err


def test_the_command_line_registers_the_notice(cli) -> None:
    r = cli("list")
    assert r.exit_code == 0
    assert common.compile_notice in stepper_layout.COMPILE_LISTENERS
