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
