"""Evolvers that cheat on purpose, written from the attacks of issue 33: each tries to fool
the harness from inside its own calls, or to outlive or overrun its run.

Not part of the package; tests put this folder on sys.path and load them by
``isolation_cheats:ClassName``. Each asks fixed networks that cannot solve XOR (no hidden
node), so a run that is stored as solved was fooled. Each behaves for
``faulty_evolvers.FAULT_GENERATION`` generations, then cheats; each class says what it
tries.
"""

from __future__ import annotations

import gc
import os
import resource
import signal
import subprocess
import sys
import time

from faulty_evolvers import Healthy

from neuroyard.core.network import Connection, Network, Node


class TaskPatcher(Healthy):
    """Finds the task through the garbage collector and replaces its success test, and
    its class's, with one that always passes: in the worker's process, the next success
    test would call it and store the run as solved."""

    def ask(self):
        if self.faulty() and not getattr(self, "patched", False):
            self.patched = True
            from neuroyard.tasks.base import SuccessCheck, Task

            def passes(*args, **kwargs):
                return SuccessCheck(True, 1, {})

            for cls in _subclasses(Task):
                cls.success_test = passes
            for obj in gc.get_objects():
                if isinstance(obj, Task):
                    obj.success_test = passes
        return super().ask()


class RecordForger(Healthy):
    """Finds the run's record through the garbage collector and sets its evaluation count
    back to 1 after tell() of its first ``FORGED`` generations: in the worker's process, the
    run would go on past its budget and be stored with a forged count."""

    FORGED = 10

    def tell(self, evaluations):
        super().tell(evaluations)
        if self.generation > self.FORGED:
            return
        from neuroyard.records.runs import RunRecord

        for obj in gc.get_objects():
            if isinstance(obj, RunRecord):
                obj.evaluations = 1


class LyingNetwork(Network):
    """A network that reports a size other than its own."""

    @property
    def hidden_nodes(self) -> int:
        return 0

    @property
    def enabled_connections(self) -> int:
        return 1


class SizeLiar(Healthy):
    """Asks networks with one hidden node and five connections whose class says they have
    none and one: the record would show the class's figures."""

    def ask(self):
        nodes = (
            Node(0, "input"), Node(1, "input"), Node(2, "bias"),
            Node(3, "hidden", "tanh"), Node(4, "output", "neat_sigmoid"),
        )  # fmt: skip
        links = (
            Connection(0, 3, 0.5), Connection(1, 3, -0.5), Connection(2, 3, 0.1),
            Connection(3, 4, 1.0), Connection(2, 4, 0.2),
        )  # fmt: skip
        return [LyingNetwork(nodes, links) for _ in range(5)]


class LimitRaiser(Healthy):
    """Raises its own memory limit (soft) to the hard limit, then holds 1.7 GB: in the
    worker's process the soft limit was the only bound."""

    def ask(self):
        if self.faulty():
            _, hard = resource.getrlimit(resource.RLIMIT_AS)
            resource.setrlimit(resource.RLIMIT_AS, (hard, hard))
            self.hoard = bytearray(1_700 * 2**20)
        return super().ask()


class StatusIdler(Healthy):
    """Writes "no call in progress" into the supervisor's status block of the worker
    (found through the garbage collector), then hangs in ask(): in the worker's process the
    supervisor saw no call and no time limit held."""

    def ask(self):
        if self.faulty():
            for obj in gc.get_objects():
                if type(obj).__name__.startswith("c_double_Array"):
                    obj[0] = 0.0  # the call in progress: none
            time.sleep(25)
        return super().ask()


class Detacher(Healthy):
    """Starts a child in its own session, a grandchild left behind by a double fork, and a
    plain child, each sleeping ten minutes, and writes their process ids to the file
    ``pids``: nothing would end them with the run."""

    def __init__(self, pids: str = "") -> None:
        super().__init__()
        self.pids = pids

    def start(self, problem, seed):
        super().start(problem, seed)
        sleeper = [sys.executable, "-c", "import time; time.sleep(600)"]
        started = [
            subprocess.Popen(sleeper, start_new_session=True).pid,
            subprocess.Popen(sleeper).pid,
            _double_fork(),
        ]
        with open(self.pids, "a") as fh:
            fh.write("".join(f"{pid}\n" for pid in started))


class ParentKiller(Healthy):
    """Kills its parent process: in the worker's process that was the coordinator."""

    def ask(self):
        if self.faulty():
            os.kill(os.getppid(), signal.SIGKILL)
            time.sleep(5)
        return super().ask()


class Printer(Healthy):
    """Prints to standard output in every call: it must not land in neuroyard's output."""

    def ask(self):
        print("a line the evolver printed")
        return super().ask()


class Interrupter(Healthy):
    """Raises KeyboardInterrupt in ask(): in the worker's process that stopped the
    campaign as a Ctrl-C would."""

    def ask(self):
        if self.faulty():
            raise KeyboardInterrupt
        return super().ask()


class Exiter(Healthy):
    """Raises SystemExit(3) in tell()."""

    def tell(self, evaluations):
        super().tell(evaluations)
        if self.faulty():
            raise SystemExit(3)


def _subclasses(cls: type) -> list[type]:
    found, todo = [], [cls]
    while todo:
        c = todo.pop()
        found.append(c)
        todo.extend(c.__subclasses__())
    return found


def _double_fork() -> int:
    """A sleeping grandchild whose parent has exited; its process id."""
    read, write = os.pipe()
    child = os.fork()
    if child == 0:
        os.close(read)
        grandchild = os.fork()
        if grandchild == 0:
            os.close(write)
            os.setsid()
            time.sleep(600)
            os._exit(0)
        os.write(write, str(grandchild).encode())
        os._exit(0)
    os.close(write)
    os.waitpid(child, 0)
    pid = int(os.read(read, 32))
    os.close(read)
    return pid
