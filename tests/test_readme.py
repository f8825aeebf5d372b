"""The README's two set-up commands: the first installs and runs partsel, the second installs
and runs the tests with the same test command as CI (.ci/run), for root and for sudo users."""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

PROJECT = Path(__file__).resolve().parents[1]


def setup_blocks() -> list[str]:
    text = (PROJECT / "README.md").read_text(encoding="utf-8")
    head = text.split("\n## ", 1)[0]
    return [b.strip() for b in re.findall(r"```sh\n(.*?)```", head, flags=re.DOTALL)]


def test_two_setup_commands_and_the_ci_test_command() -> None:
    run_it, test_it = setup_blocks()
    assert "pip install -e ." in run_it and run_it.endswith("partsel")
    ci = (PROJECT / ".ci" / "run").read_text(encoding="utf-8").strip().splitlines()
    assert ci[-1] == "python -m pytest -q"
    assert test_it.endswith("&& " + ci[-1])


def test_test_command_installs_ngspice_as_root_or_with_sudo() -> None:
    """The ngspice step chooses sudo only for a user who is not root (checked with bash)."""
    _, test_it = setup_blocks()
    prefix = test_it.split(";", 1)[0]  # S=$(...)
    for uid, want in (("0", ""), ("1000", "sudo")):
        script = f'id() {{ echo {uid}; }}; {prefix}; printf %s "$S"'
        out = subprocess.run(["bash", "-c", script], capture_output=True, text=True, check=True)
        assert out.stdout == want
