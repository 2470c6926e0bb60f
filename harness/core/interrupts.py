"""Ctrl-C that cannot be lost: a record that it was pressed, beside the KeyboardInterrupt.

Python raises KeyboardInterrupt wherever the main thread happens to be when SIGINT comes;
inside a callback (an import lock's, a garbage-collector hook, a library's C callback) the
exception is printed as "ignored" and dropped, and a long campaign would go on. The command
line installs :func:`raise_and_record` at once (:mod:`neuroyard.cli.entry`), so every Ctrl-C
is also recorded in :data:`PRESSED`; a campaign's loop (:func:`neuroyard.execution.campaign.
execute`) records Ctrl-C only while it runs, checks :data:`PRESSED` at every turn and raises
KeyboardInterrupt there, where it is safe, then clears it (the interruption is handled).
A KeyboardInterrupt dropped that way is recorded, so the command line also keeps Python
from printing it as "ignored" (:func:`quiet_dropped`): the one line it prints on the way out
says what happened.
"""

from __future__ import annotations

import contextlib
import signal
import sys
import threading
from collections.abc import Iterator
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


def quiet_dropped() -> None:
    """Make this process's hook for exceptions Python cannot raise (``sys.unraisablehook``)
    skip a KeyboardInterrupt that :func:`raise_and_record` recorded, and report everything
    else as before."""
    previous = sys.unraisablehook

    def hook(unraisable: Any) -> None:
        if isinstance(unraisable.exc_value, KeyboardInterrupt) and PRESSED.is_set():
            return
        previous(unraisable)

    sys.unraisablehook = hook


@contextlib.contextmanager
def deferred() -> Iterator[threading.Event]:
    """While the block runs, a Ctrl-C (SIGINT) is only recorded in :data:`PRESSED` (which
    the block yields), for the caller to act on where it is safe: raised wherever the signal
    fell, it could land in a callback that drops it (numba's, Dask's, an import lock's), or
    halfway through starting something that then cannot be ended. A Ctrl-C recorded before
    the block (and perhaps dropped) counts too."""
    previous = install(record_only)
    try:
        yield PRESSED
    finally:
        if previous is not None:
            signal.signal(signal.SIGINT, previous)
