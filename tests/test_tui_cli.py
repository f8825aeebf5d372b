"""``partsel`` without a command: the terminal UI in a terminal, the help otherwise (so scripts
and CI never wait on a screen)."""

from __future__ import annotations

from types import SimpleNamespace
from typing import Any

import pytest
from typer.testing import CliRunner


class _Stream:
    def __init__(self, tty: bool) -> None:
        self.tty = tty

    def isatty(self) -> bool:
        return self.tty


def _invoke(monkeypatch: pytest.MonkeyPatch, db_url: str, tty: bool) -> tuple[Any, list[Any]]:
    import partsel.cli.main as cli_main
    import partsel.tui

    calls: list[Any] = []
    monkeypatch.setattr(partsel.tui, "run_tui", lambda engine, **kw: calls.append((engine, kw)))
    monkeypatch.setattr(cli_main, "sys", SimpleNamespace(stdin=_Stream(tty), stdout=_Stream(tty)))
    result = CliRunner().invoke(cli_main.app, ["--db", db_url, "--user", "tester"])
    return result, calls


def test_no_command_in_a_terminal_opens_the_ui(
    monkeypatch: pytest.MonkeyPatch, db_url: str
) -> None:
    """In a terminal the UI opens on the catalogue chosen with --db, with --user passed on."""
    result, calls = _invoke(monkeypatch, db_url, tty=True)
    assert result.exit_code == 0, result.output
    assert len(calls) == 1
    engine, kw = calls[0]
    assert str(engine.url) == db_url
    assert kw == {"user": "tester"}


def test_no_command_without_a_terminal_prints_help(
    monkeypatch: pytest.MonkeyPatch, db_url: str
) -> None:
    """Without a terminal: the help, exit code 0, and no UI."""
    result, calls = _invoke(monkeypatch, db_url, tty=False)
    assert result.exit_code == 0
    assert calls == []
    assert "Usage" in result.output


def _invoke_ui(
    monkeypatch: pytest.MonkeyPatch, db_url: str, args: list[str], tty: bool = True
) -> tuple[Any, list[Any]]:
    import partsel.cli.main as cli_main
    import partsel.tui

    calls: list[Any] = []
    monkeypatch.setattr(
        partsel.tui, "run_tui", lambda engine, design, **kw: calls.append((engine, design, kw))
    )
    monkeypatch.setattr(cli_main, "sys", SimpleNamespace(stdin=_Stream(tty), stdout=_Stream(tty)))
    result = CliRunner().invoke(cli_main.app, ["--db", db_url, "--user", "tester", "ui", *args])
    return result, calls


def test_ui_opens_the_given_design(monkeypatch: pytest.MonkeyPatch, db_url: str) -> None:
    """``partsel ui DESIGN`` starts the UI with that design as read by the design reader."""
    from pathlib import Path

    from partsel.design import load_design

    path = Path(__file__).resolve().parents[1] / "sample-catalog/designs/adc-buffer-3v3.toml"
    result, calls = _invoke_ui(monkeypatch, db_url, [str(path)])
    assert result.exit_code == 0, result.output
    assert len(calls) == 1
    engine, design, kw = calls[0]
    assert str(engine.url) == db_url and kw == {"user": "tester"}
    assert design == load_design(path)


def test_ui_without_a_design_opens_the_sample(monkeypatch: pytest.MonkeyPatch, db_url: str) -> None:
    """``partsel ui`` alone: the UI's own first design (the sample line driver)."""
    result, calls = _invoke_ui(monkeypatch, db_url, [])
    assert result.exit_code == 0, result.output
    assert [(d, kw) for _e, d, kw in calls] == [(None, {"user": "tester"})]


def test_ui_bad_design_exits_2_before_the_ui(
    monkeypatch: pytest.MonkeyPatch, db_url: str, tmp_path: Any
) -> None:
    """A design file that cannot be read: its problem with the file named, exit code 2, no UI;
    a missing file likewise."""
    bad = tmp_path / "bad.toml"
    bad.write_text('name = "bad"\n[supply]\npositive = "5 kg"\n', encoding="utf-8")
    for path in (bad, tmp_path / "nosuch.toml"):
        result, calls = _invoke_ui(monkeypatch, db_url, [str(path)])
        assert result.exit_code == 2
        assert calls == []
        assert path.name in result.output and "error" in result.output


def test_ui_without_a_terminal_exits_2(monkeypatch: pytest.MonkeyPatch, db_url: str) -> None:
    """Without a terminal ``partsel ui`` says so (exit 2) instead of waiting on a screen."""
    result, calls = _invoke_ui(monkeypatch, db_url, [], tty=False)
    assert result.exit_code == 2 and calls == []
    assert "terminal" in result.output
