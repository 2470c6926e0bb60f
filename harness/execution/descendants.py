"""Every process a run started, ended when the run ends, however it detached.

An evolver (its own process, or a ``process:`` program) may start processes, and those may
leave its session (``setsid``) or double-fork so that their parent is gone. A worker makes
itself a *child subreaper* (Linux ``prctl(PR_SET_CHILD_SUBREAPER)``): a process below it
whose parent dies is re-parented to the worker instead of to init, so it stays among the
worker's descendants, which :func:`end_descendants` finds through ``/proc`` and kills until
none is left. An evolver's own process dies with its worker (:func:`die_with_parent`).
Elsewhere than Linux none of this is available, and :func:`end_descendants` ends nothing
(harness/README.md says so).
"""

from __future__ import annotations

import contextlib
import ctypes
import os
import signal
import sys
import time
from pathlib import Path

PR_SET_PDEATHSIG = 1  # linux/prctl.h
PR_SET_CHILD_SUBREAPER = 36
PROC = Path("/proc")
ROUNDS = 50  # most passes of kill-and-look-again (a process may fork while we kill)


def become_subreaper() -> bool:
    """Make this process the subreaper of its descendants; False where that is not
    available."""
    if not sys.platform.startswith("linux"):
        return False
    libc = ctypes.CDLL(None, use_errno=True)
    return libc.prctl(PR_SET_CHILD_SUBREAPER, 1, 0, 0, 0) == 0


def die_with_parent(parent: int) -> None:
    """Have the kernel kill this process when its parent ``parent`` ends (Linux; nothing
    elsewhere), and end at once when that parent is gone already."""
    if sys.platform.startswith("linux"):
        ctypes.CDLL(None, use_errno=True).prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    if os.getppid() != parent:
        os._exit(1)


def _parents() -> dict[int, int]:
    """Every live process of the machine mapped to its parent (from ``/proc/PID/stat``;
    a zombie, which has ended and waits to be reaped, is left out)."""
    found = {}
    for entry in PROC.iterdir() if PROC.is_dir() else ():
        if not entry.name.isdigit():
            continue
        try:
            text = (entry / "stat").read_text()
        except OSError:  # gone meanwhile
            continue
        # "pid (comm) state ppid ...": comm may hold spaces and parentheses
        fields = text[text.rfind(")") + 2 :].split()
        if len(fields) > 1 and fields[0] != "Z" and fields[1].isdigit():
            found[int(entry.name)] = int(fields[1])
    return found


def descendants(pid: int) -> list[int]:
    """The live processes below ``pid`` (children, their children, ...), now."""
    children: dict[int, list[int]] = {}
    for child, parent in _parents().items():
        children.setdefault(parent, []).append(child)
    out: list[int] = []
    todo = list(children.get(pid, ()))
    while todo:
        p = todo.pop()
        out.append(p)
        todo.extend(children.get(p, ()))
    return out


def end_descendants(pid: int | None = None) -> int:
    """Kill every process below ``pid`` (default: this process) until none is left, and
    reap this process's ended children; returns how many were killed."""
    root = os.getpid() if pid is None else pid
    killed = 0
    for _ in range(ROUNDS):
        found = descendants(root)
        if not found:
            break
        for p in found:
            with contextlib.suppress(ProcessLookupError, PermissionError):
                os.kill(p, signal.SIGKILL)
                killed += 1
        time.sleep(0.005)  # a killed process leaves the list once the kernel has ended it
    if root == os.getpid():
        _reap_children()
    return killed


def _reap_children() -> None:
    """Collect the exit status of every ended child of this process (no zombies left)."""
    while True:
        try:
            pid, _ = os.waitpid(-1, os.WNOHANG)
        except ChildProcessError:
            return
        if pid == 0:
            return


def address_space() -> int:
    """This process's virtual memory size in bytes (VmSize; 0 where /proc has no such
    line), the base the run's memory limit is added to."""
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith("VmSize:"):
                return int(line.split()[1]) * 1024
    return 0
