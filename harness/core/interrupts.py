"""Ctrl-C that cannot be lost: a record that it was pressed, beside the KeyboardInterrupt.

Python raises KeyboardInterrupt wherever the main thread happens to be when SIGINT comes;
inside a callback (an import lock's, a garbage-collector hook, a library's C callback) the
exception is printed as "ignored" and dropped, and a long campaign would go on. The command
line installs :func:`raise_and_record` at once (:mod:`neuroyard.cli.entry`), so every Ctrl-C
is also recorded in :data:`PRESSED`; a campaign's loop (:func:`neuroyard.execution.campaign.
execute`) records Ctrl-C only while it runs, checks :data:`PRESSED` at every turn and raises
KeyboardInterrupt there, where it is safe, then clears it (the interruption is handled).
"""

from __future__ import annotations

import signal
import threading
from typing import Any

PRESSED = threading.Event()


def raise_and_record(signum: int, frame: Any) -> None:
    """A SIGINT handler: record the Ctrl-C, then raise KeyboardInterrupt as Python does."""
    PRESSED.set()
    raise KeyboardInterrupt


def record_only(signum: int, frame: Any) -> None:
    """A SIGINT handler: record the Ctrl-C for the next safe point to act on."""
    PRESSED.set()


def install(handler: Any) -> Any:
    """Make ``handler`` this process's SIGINT handler, unless Ctrl-C is ignored (``nohup``,
    a background job: left ignored) or this is not the main thread; return the handler it
    replaced (None when nothing was replaced)."""
    if threading.current_thread() is not threading.main_thread():
        return None
    previous = signal.getsignal(signal.SIGINT)
    if previous in (signal.SIG_IGN, None):
        return None
    signal.signal(signal.SIGINT, handler)
    return previous
