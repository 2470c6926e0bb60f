"""Where and with what a run was made: library versions, git commit, host name."""

from __future__ import annotations

import platform
import socket
import subprocess
from functools import cache
from pathlib import Path

import numba
import numpy

from neuroyard import __version__


@cache
def git_commit() -> str | None:
    """The commit of the neuroyard source tree, when it is a git checkout; else None."""
    try:
        out = subprocess.run(
            ["git", "rev-parse", "HEAD"],
            cwd=Path(__file__).resolve().parent,
            capture_output=True,
            text=True,
            timeout=5,
        )
    except (OSError, subprocess.SubprocessError):
        return None
    return out.stdout.strip() or None if out.returncode == 0 else None


@cache
def versions() -> dict[str, str | None]:
    return {
        "python": platform.python_version(),
        "numpy": numpy.__version__,
        "numba": numba.__version__,
        "neuroyard": __version__,
        "git_commit": git_commit(),
    }


def host() -> str:
    return socket.gethostname()
