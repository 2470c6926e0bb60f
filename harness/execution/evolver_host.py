"""The evolver's own process: where a Python evolver runs, apart from the harness.

The worker forks one such process per run (:class:`~.isolation.IsolatedEvolver`); the
kernel ends it when the worker ends. Before any evolver code runs, the new process cuts
itself off from the worker (:func:`_detach`):
a session of its own (so ending its process group ends what it started), every file
descriptor closed but its end of the pipe and the standard streams, its standard output
sent to standard error (an evolver's prints never reach neuroyard's output), the worker's
shared memory unmapped (the supervisor's status block: only the worker writes it), and
the run's memory limit set as both soft and hard limit (a process may lower its hard
limit, never raise it). Then it loads the evolver (a factory given as a class arrives
pickled and is unpickled only here), builds it, and answers the worker's requests.

Requests (worker to this process, pickled: this process trusts the worker): ``("start",
problem, seed, max_batch)``, ``("settings",)``, ``("ask", generation)`` for the first
batch, ``("tell", fitness, behaviours, generation, more)`` (the evaluations as lists),
``("stop", outcome)``. A ``tell`` is
answered by up to three replies, without waiting for a request between them: the
``tell``'s, then the ``stats()`` of the generation (when the evolver has it), then, with
``more`` (the run goes on), the next generation's batch: one exchange per generation
instead of three, in the order of the contract's calls. Replies (this process to
the worker, bytes, never pickled, since the worker does not trust this process): a tag
byte, then ``O`` + JSON value (done; for the build, the optional methods the evolver
has), ``B`` + a :class:`~neuroyard.core.flat.FlatBatch` (``ask``), ``F`` + JSON reason (the
evolver broke the contract, :mod:`.contract`), ``R`` + JSON ``[type, message]`` (the
evolver raised), ``M`` (out of memory). The process ends after ``stop`` or when the pipe
closes, and always by ``os._exit``: it never returns into the worker's code.
"""

from __future__ import annotations

import ctypes
import gc
import multiprocessing.heap
import os
import resource
import sys
from functools import partial
from multiprocessing.connection import Connection
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.evolver import Evaluation
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.contract import (
    RunFault,
    checked_batch,
    checked_settings,
    checked_stats,
    flat_batch,
)
from neuroyard.execution.descendants import address_space, die_with_parent

OPTIONAL = ("settings", "stats", "stop")  # evolver methods the contract makes optional
MAX_FD = 65536  # descriptors closed above the pipe's: at least the usual soft limit


def serve(conn: Connection, spec: EvolverSpec, memory_limit_mb: int | None, worker: int) -> None:
    """The new process's life (module docstring), forked by the process ``worker``; never
    returns."""
    status = 1
    gc.freeze()  # the worker's objects: never traversed here, so their pages stay shared
    try:
        die_with_parent(worker)
        _detach(conn, memory_limit_mb)
        status = _answer(conn, spec)
    finally:
        os._exit(status)


def _detach(conn: Connection, memory_limit_mb: int | None) -> None:
    """Cut this process off from the worker before evolver code runs (module docstring)."""
    os.setsid()
    keep = conn.fileno()
    os.closerange(3, keep)
    os.closerange(keep + 1, MAX_FD)
    null = os.open(os.devnull, os.O_RDONLY)
    os.dup2(null, 0)
    os.close(null)
    os.dup2(2, 1)
    # the streams may have been others (a test's capture, on descriptors closed above)
    sys.stdout = sys.stderr = open(  # noqa: SIM115 - the process ends by os._exit
        2, "w", buffering=1, closefd=False, errors="backslashreplace"
    )
    _unmap_shared_memory()
    if memory_limit_mb is not None:
        limit = address_space() + memory_limit_mb * 1024 * 1024
        _, hard = resource.getrlimit(resource.RLIMIT_AS)
        if hard != resource.RLIM_INFINITY:
            limit = min(limit, hard)
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))


def _unmap_shared_memory() -> None:
    """Unmap every block of :mod:`multiprocessing`'s shared memory this process inherited
    (the supervisor's status blocks): a write to one would now fault here, not reach the
    worker. Read from the module's own record of its blocks (arenas)."""
    heap = getattr(multiprocessing.heap.BufferWrapper, "_heap", None)
    munmap = ctypes.CDLL(None, use_errno=True).munmap
    munmap.argtypes = (ctypes.c_void_p, ctypes.c_size_t)
    for arena in getattr(heap, "_arenas", ()):
        address = ctypes.addressof(ctypes.c_char.from_buffer(arena.buffer))
        munmap(address, arena.size)


def _answer(conn: Connection, spec: EvolverSpec) -> int:
    """Build the evolver and answer requests until ``stop`` (0) or a closed pipe (1)."""
    built: list[Any] = []
    if not _replying(conn, partial(_built, spec, built)):
        return 0
    evolver = built[0]
    offers = {name for name in OPTIONAL if hasattr(evolver, name)}
    session: dict[str, Any] = {}
    while True:
        try:
            request = conn.recv()
        except (EOFError, OSError):
            return 1
        kind = request[0]
        if kind == "tell":  # then, unasked, stats and (with more to come) the next batch
            _, fitness, behaviours, generation, more = request
            evaluations = tuple(map(Evaluation, fitness, behaviours))
            steps = [partial(_told, evolver, evaluations)]
            if "stats" in offers:
                steps.append(partial(_stats, evolver, generation))
            if more:
                steps.append(partial(_asked, evolver, generation + 1, session))
            for step in steps:
                if not _replying(conn, step):
                    break
        else:
            _replying(conn, partial(_handle, evolver, request, session))
        if kind == "stop":
            return 0


def _built(spec: EvolverSpec, built: list[Any]) -> bytes:
    evolver = spec.build()
    built.append(evolver)
    return _tagged(b"O", [name for name in OPTIONAL if hasattr(evolver, name)])


def _replying(conn: Connection, work: Any) -> bool:
    """Run ``work`` and send its reply, or how it failed; whether it succeeded."""
    try:
        reply = work()
    except RunFault as fault:
        _send(conn, b"F", str(fault))
    except MemoryError:
        conn.send_bytes(b"M")
    except BaseException as exc:  # an evolver's fault, KeyboardInterrupt and SystemExit too
        _send(conn, b"R", [type(exc).__name__, _words(exc)])
    else:
        conn.send_bytes(reply)
        return True
    return False


def _handle(evolver: Any, request: tuple, session: dict[str, Any]) -> bytes:
    """The reply to ``start``, ``settings``, ``ask`` (the first batch) or ``stop``."""
    kind = request[0]
    if kind == "start":
        problem, seed, session["max_batch"] = request[1], request[2], request[3]
        session["shape"] = (problem.inputs, problem.outputs)
        evolver.start(problem, seed)
        return _tagged(b"O", None)
    if kind == "settings":
        return _tagged(b"O", checked_settings(evolver.settings()))
    if kind == "ask":
        return _asked(evolver, request[1], session)
    if kind == "stop":
        evolver.stop(request[1])
        return _tagged(b"O", None)
    raise RuntimeError(f"unknown request {kind!r}")


def _asked(evolver: Any, generation: int, session: dict[str, Any]) -> bytes:
    batch = checked_batch(evolver.ask(), generation, session["max_batch"])
    inputs, outputs = session["shape"]
    return b"B" + flat_batch(batch, inputs, outputs, generation).to_bytes()


def _told(evolver: Any, evaluations: tuple) -> bytes:
    evolver.tell(evaluations)
    return _tagged(b"O", None)


def _stats(evolver: Any, generation: int) -> bytes:
    return _tagged(b"O", checked_stats(evolver.stats(), generation))


def _tagged(tag: bytes, value: Any) -> bytes:
    return tag + jsonsafe.dumps(value).encode()


def _send(conn: Connection, tag: bytes, value: Any) -> None:
    conn.send_bytes(_tagged(tag, value))


def _words(exc: BaseException) -> str:
    """``str(exc)``, or its ``repr`` when ``str`` itself fails."""
    try:
        return str(exc)
    except Exception:  # an exception whose __str__ raises
        return repr(exc)
