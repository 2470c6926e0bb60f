"""Crash logs: the traceback of an internal error, kept in a file the one-line message names.

Logs go to ``$NEUROYARD_CRASH_DIR`` when set, else ``$XDG_STATE_HOME/neuroyard/crashes``
(``~/.local/state/neuroyard/crashes``), else, when neither can be written, the system's
temporary folder. One file per error: ``crash-<UTC time>-<process id>-<n>.log``.
"""

from __future__ import annotations

import itertools
import os
import platform
import sys
import tempfile
import time
from pathlib import Path

from neuroyard import __version__

_COUNTER = itertools.count()


def _folders() -> list[Path]:
    chosen = os.environ.get("NEUROYARD_CRASH_DIR")
    state = os.environ.get("XDG_STATE_HOME") or str(Path.home() / ".local" / "state")
    folders = [Path(chosen)] if chosen else []
    return [*folders, Path(state) / "neuroyard" / "crashes", Path(tempfile.gettempdir())]


def write(traceback_text: str, context: str = "") -> Path | None:
    """Write a crash log holding ``traceback_text`` (and ``context``: what was being done);
    return its path, or None when no folder could take it."""
    stamp = time.strftime("%Y%m%dT%H%M%SZ", time.gmtime())
    name = f"crash-{stamp}-{os.getpid()}-{next(_COUNTER)}.log"
    header = (
        f"neuroyard {__version__}, Python {platform.python_version()}, {platform.platform()}\n"
        f"command: {' '.join(sys.argv)}\n" + (f"while: {context}\n" if context else "") + "\n"
    )
    for folder in _folders():
        try:
            folder.mkdir(parents=True, exist_ok=True)
            path = folder / name
            path.write_text(header + traceback_text)
            return path
        except OSError:
            continue
    return None


class InternalError(RuntimeError):
    """A fault of neuroyard itself (not of the input, nor of an evolver), reported with the
    crash log that holds its traceback. A campaign's runs that stop on one are not stored
    and run again when the campaign resumes.

    Args:
        message: what went wrong, in one line.
        crash_log: the file holding the traceback (None when no log could be written).

    Example:
        >>> import neuroyard
        >>> error = neuroyard.InternalError("2 run(s) stopped on an internal error", None)
        >>> error.crash_log is None, isinstance(error, neuroyard.NeuroyardError)
        (True, False)
    """

    def __init__(self, message: str, crash_log: Path | None) -> None:
        super().__init__(message)
        self.crash_log = crash_log
