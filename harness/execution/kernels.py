"""The numba kernels of a campaign: loaded once per process, compiled two at a time, and
announced when they must first be compiled.

numba compiles a kernel on its first call on a machine and keeps the result in its cache
(``__pycache__`` beside the module, or ``NUMBA_CACHE_DIR``); later processes load it from
there. A campaign loads the kernels of its tasks, of the batch compiler and of the speed
calibration in the coordinating process before its first worker starts (:func:`prepare`):
a worker forked afterwards inherits them loaded. On a machine whose cache is cold the
compiling happens once, after one line that says so (``notice``), and on two cores: a child
process compiles the batch compiler, the largest kernel, while this process compiles the
tasks' kernels, running the batch compiler as plain Python for their warm-up networks
(:func:`~neuroyard.core.batch.compiler_as_python`); then this process loads the compiler
from the cache the child wrote. ``tests/bench/test_bench_kernel_loading.py`` measures it.
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import sys
import time
from collections.abc import Callable, Iterable, Iterator

from numba.core import event

from neuroyard.core import batch
from neuroyard.execution import calibration
from neuroyard.tasks import Task

COMPILING = (
    "neuroyard: compiling the numba kernels of {tasks} for this machine; this happens once, "
    "later runs load them from numba's cache"
)

_WARM: set[str] = set()


def _key(task: Task) -> str:
    return json.dumps([task.id, task.settings], sort_keys=True, default=str)


def load_kernels(task: Task) -> float:
    """Load (or compile) the task's numba kernels, once per process and task setting
    (:meth:`~neuroyard.tasks.base.Task.warm_up`), so that it is not charged to the first
    run's harness time. Returns the seconds spent (0.0 when already done in this process)."""
    key = _key(task)
    if key in _WARM:
        return 0.0
    start = time.perf_counter()
    task.warm_up()
    _WARM.add(key)
    return time.perf_counter() - start


def prepare(tasks: Iterable[Task], notice: Callable[[str], None] | None = None) -> float:
    """Load the kernels of ``tasks``, of the batch compiler and of the calibration in this
    process (see the module docstring). When one is not in numba's cache, ``notice`` is
    called once, with the line :data:`COMPILING`, before the compiling starts. Returns the
    seconds spent."""
    start = time.perf_counter()
    tasks = [task for task in tasks if _key(task) not in _WARM]
    if not tasks:
        return 0.0
    names = ", ".join(dict.fromkeys(task.id for task in tasks))
    with _first_compile(lambda: notice(COMPILING.format(tasks=names)) if notice else None):
        helper = _in_child(batch.load_compiler)
        try:
            with batch.compiler_as_python() if helper else contextlib.nullcontext():
                for task in tasks:
                    load_kernels(task)
                calibration.load()
        finally:
            if helper:
                _reap(helper)
        batch.load_compiler()  # from the cache the child wrote, or compiled here
    return time.perf_counter() - start


def _in_child(work: Callable[[], None]) -> int | None:
    """Run ``work`` in a forked child process and return its pid; None where fork is not
    the way to start processes (not Linux), and then nothing is started."""
    if not sys.platform.startswith("linux"):
        return None
    pid = os.fork()
    if pid == 0:  # the child: compile, then leave without running the parent's cleanup
        status = 1
        try:
            work()
            status = 0
        finally:
            os._exit(status)
    return pid


def _reap(pid: int) -> None:
    """Wait for the child ``pid``; when this process is interrupted meanwhile (Ctrl-C), end
    the child first."""
    try:
        os.waitpid(pid, 0)
    except BaseException:
        with contextlib.suppress(ProcessLookupError):
            os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        raise


class _FirstCompile(event.Listener):
    """Calls ``said`` at the start of the first compilation it hears of in the process that
    made it (numba emits ``numba:compile`` only when a kernel is not in its cache; a child
    forked meanwhile inherits the listener and must not say it again), then stays silent."""

    def __init__(self, said: Callable[[], None]) -> None:
        self.said: Callable[[], None] | None = said
        self.owner = os.getpid()

    def on_start(self, event: event.Event) -> None:
        if self.said is not None and os.getpid() == self.owner:
            said, self.said = self.said, None
            said()

    def on_end(self, event: event.Event) -> None:
        pass


@contextlib.contextmanager
def _first_compile(said: Callable[[], None]) -> Iterator[None]:
    """While the block runs, ``said`` is called at the start of the first compilation."""
    with event.install_listener("numba:compile", _FirstCompile(said)):
        yield
