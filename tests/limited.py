"""Run Python code in a subprocess under a CPU-time and memory limit (resource.setrlimit), so
that a hang or a blow-up of hostile input fails a test instead of stalling CI."""

from __future__ import annotations

import os
import resource
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

#: CPU seconds the subprocess may use (a hang or an exponential blow-up ends with SIGXCPU).
CPU_SECONDS = 10
#: Address space of the subprocess, bytes (1 GiB: an expansion blow-up ends in MemoryError).
ADDRESS_SPACE = 1 << 30
#: Wall-clock limit, seconds (a process waiting rather than computing; generous on a shared
#: two-core machine).
WALL_SECONDS = 120
PROJECT = Path(__file__).resolve().parents[1]


def _limits(cpu_seconds: int, address_space: int) -> Callable[[], None]:
    def limit() -> None:
        resource.setrlimit(resource.RLIMIT_CPU, (cpu_seconds, cpu_seconds))
        resource.setrlimit(resource.RLIMIT_AS, (address_space, address_space))

    return limit


def child_env(env: dict[str, str] | None = None) -> dict[str, str]:
    """The environment of a limited child: this one, one BLAS thread, tests/ on the path."""
    return {
        **os.environ,
        "OPENBLAS_NUM_THREADS": "1",  # each BLAS thread reserves address space
        "OMP_NUM_THREADS": "1",
        "PYTHONPATH": os.pathsep.join([str(PROJECT / "tests"), os.environ.get("PYTHONPATH", "")]),
        **(env or {}),
    }


def start_limited(
    code: str, *, env: dict[str, str] | None = None, cwd: Path | None = None
) -> subprocess.Popen[str]:
    """Start ``python -c code`` under the limits with pipes for stdin, stdout and stderr."""
    return subprocess.Popen(
        [sys.executable, "-c", code],
        preexec_fn=_limits(CPU_SECONDS, ADDRESS_SPACE),
        stdin=subprocess.PIPE,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=child_env(env),
        cwd=cwd,
    )


def run_limited(
    code: str,
    *,
    env: dict[str, str] | None = None,
    cwd: Path | None = None,
    cpu_seconds: int = CPU_SECONDS,
    address_space: int = ADDRESS_SPACE,
) -> subprocess.CompletedProcess[str]:
    """Run ``python -c code`` with the limits; return the finished process (stdout, stderr)."""
    return subprocess.run(
        [sys.executable, "-c", code],
        preexec_fn=_limits(cpu_seconds, address_space),  # in the child, before Python runs
        capture_output=True,
        text=True,
        timeout=WALL_SECONDS,
        env=child_env(env),
        cwd=cwd,
        check=False,
    )


def describe(proc: subprocess.CompletedProcess[str]) -> str:
    """Exit code and the end of stderr, for assertion messages."""
    return f"exit {proc.returncode}; stderr: {proc.stderr[-2000:]}"
