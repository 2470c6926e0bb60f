"""Broken evolvers for the fault-injection suite: one class per kind of fault.

Not part of the package; tests put this folder on sys.path and load them by
``faulty_evolvers:ClassName``. Each behaves for ``FAULT_GENERATION`` generations (so the
harness has stored some progress) and then misbehaves in its own way; each class says what
the harness must make of it.
"""

from __future__ import annotations

import ctypes
import math
import os
import signal
import threading
import time
from collections.abc import Sequence

from neuroyard.core.network import Connection, Network, Node

FAULT_GENERATION = 2
BATCH = 5


def xor_network(weight: float = 0.5, activation: str = "neat_sigmoid", bias: float = 0.0):
    """A valid 2-input network: inputs and bias feed the output directly."""
    nodes = (
        Node(0, "input"),
        Node(1, "input"),
        Node(2, "bias"),
        Node(3, "output", activation, bias=bias),
    )
    conns = (Connection(0, 3, weight), Connection(1, 3, -weight), Connection(2, 3, 0.1))
    return Network(nodes, conns)


class Healthy:
    """Asks BATCH fixed networks each generation; the base of every faulty evolver."""

    def __init__(self) -> None:
        self.generation = 0

    def start(self, problem, seed):
        self.problem = problem

    def faulty(self) -> bool:
        return self.generation >= FAULT_GENERATION

    def ask(self):
        return [xor_network(0.1 * (k + 1)) for k in range(BATCH)]

    def tell(self, evaluations):
        self.generation += 1


class RaisesInStart(Healthy):
    """start() raises: failed, 'start() raised RuntimeError: ...'."""

    def start(self, problem, seed):
        raise RuntimeError("cannot start")


class RaisesInAsk(Healthy):
    """ask() raises: failed, 'ask() in generation 2 raised ...'."""

    def ask(self):
        if self.faulty():
            raise RuntimeError("cannot ask")
        return super().ask()


class RaisesInTell(Healthy):
    """tell() raises: failed, 'tell() in generation 2 raised ...'."""

    def tell(self, evaluations):
        if self.faulty():
            raise RuntimeError("cannot tell")
        super().tell(evaluations)


class EmptyBatch(Healthy):
    """ask() returns []: failed, 'ask() returned an empty batch in generation 2'."""

    def ask(self):
        return [] if self.faulty() else super().ask()


class NotANetwork(Healthy):
    """ask() returns a dict among the networks: failed, 'candidate 1 ... is a dict'."""

    def ask(self):
        batch = super().ask()
        if self.faulty():
            batch[1] = {"nodes": [], "connections": []}
        return batch


class InvalidNetwork(Healthy):
    """A connection to a node that does not exist: failed, 'invalid network: ...'."""

    def ask(self):
        batch = super().ask()
        if self.faulty():
            net = batch[0]
            batch[0] = Network(net.nodes, (*net.connections, Connection(0, 99, 1.0)))
        return batch


class NonFiniteWeights(Healthy):
    """A NaN weight: failed, 'invalid network: ... weight' (the format allows finite only)."""

    def ask(self):
        return [xor_network(math.nan)] * BATCH if self.faulty() else super().ask()


class OverflowingOutputs(Healthy):
    """Valid weights near 1e308 whose sums overflow to inf - inf = NaN: not failed; every
    such evaluation gets the worst fitness (0) and the log counts it."""

    def ask(self):
        if not self.faulty():
            return super().ask()
        nodes = (
            Node(0, "input"),
            Node(1, "input"),
            Node(2, "bias"),
            Node(3, "hidden", "identity"),
            Node(4, "output", "identity"),
        )
        conns = (
            Connection(2, 3, 1e308),
            Connection(2, 4, 1e308),
            Connection(3, 4, 1e308),  # 1e308 * 1e308 = inf
            Connection(2, 4, -1e308),
            Connection(3, 4, -1e308),  # -inf: inf + -inf = NaN
        )
        return [Network(nodes, conns)] * BATCH


class UnboundedOutputs(Healthy):
    """An identity output with bias 100: not failed; its error is taken after clipping the
    output to [0, 1], so the fitness stays within [0, 16] (version 1 scored 155,236)."""

    def ask(self):
        if not self.faulty():
            return super().ask()
        return [xor_network(1.0, "identity", bias=100.0)] * BATCH


class HangsInAsk(Healthy):
    """ask() sleeps for an hour: failed, 'ask() ran past N s in generation 2'."""

    def ask(self):
        if self.faulty():
            time.sleep(3600)
        return super().ask()


class HangsInTell(Healthy):
    """tell() spins for an hour: failed, 'tell() ran past N s in generation 2'."""

    def tell(self, evaluations):
        if self.faulty():
            end = time.monotonic() + 3600
            while time.monotonic() < end:
                pass
        super().tell(evaluations)


class _SlowSequence(Sequence):
    """A batch whose length takes an hour to tell."""

    def __init__(self, items):
        self.items = items

    def __len__(self):
        time.sleep(3600)
        return len(self.items)

    def __getitem__(self, k):
        return self.items[k]


class LazyBatchHangs(Healthy):
    """ask() returns a sequence that hangs when read: the reading belongs to the call, so
    it is failed, 'ask() ran past N s in generation 2'."""

    def ask(self):
        batch = super().ask()
        return _SlowSequence(batch) if self.faulty() else batch


class ExitsInAsk(Healthy):
    """os._exit(1) in ask(): failed, 'evolver process exited with status 1 during ask()'."""

    def ask(self):
        if self.faulty():
            os._exit(1)
        return super().ask()


class KilledInTell(Healthy):
    """The process kills itself (SIGKILL, as the kernel's out-of-memory killer would):
    failed, 'evolver process was killed by signal 9 (SIGKILL) during tell()'."""

    def tell(self, evaluations):
        if self.faulty():
            os.kill(os.getpid(), signal.SIGKILL)
        super().tell(evaluations)


class CrashesInAsk(Healthy):
    """A segmentation fault in native code: failed, 'killed by signal 11 (SIGSEGV)'."""

    def ask(self):
        if self.faulty():
            ctypes.string_at(0)
        return super().ask()


class MemoryBlowUp(Healthy):
    """ask() allocates without end: failed, 'ask() in generation 2 ran out of memory'."""

    def ask(self):
        if self.faulty():
            hoard = []
            while True:
                hoard.append(bytearray(64 * 2**20))
        return super().ask()


class HugeBatch(Healthy):
    """ask() returns 100,000 networks: failed, '... more than the batch limit of 10,000'."""

    def ask(self):
        if self.faulty():
            return [xor_network()] * 100_000
        return super().ask()


class BadStats(Healthy):
    """stats() returns text: failed, "stats() in generation 2: value 'mood' is 'odd'"."""

    def stats(self):
        return {"mood": "odd"} if self.faulty() else {"mood": 1.0}


class RaisesInStop(Healthy):
    """stop() raises after the budget is spent: failed, 'stop() raised ...'."""

    def stop(self, outcome):
        raise RuntimeError(f"cannot stop after {outcome.status}")


class DiesInHarness:
    """Balances the single pole with a regulator (long evaluations: the harness's own code
    runs for most of a generation) and, while the harness evaluates generation 0, kills the
    worker (the parent of the evolver's own process) from a thread: the worker dies outside
    any evolver call. With ``once`` it does so only while the file ``marker`` does not exist
    (creating it), so the run's second attempt is undisturbed; the supervisor must start the
    run again and store the same record as an undisturbed run."""

    def __init__(self, marker: str = "", once: bool = True) -> None:
        self.marker, self.once = marker, once

    def start(self, problem, seed):
        from neuroyard.tasks import make
        from neuroyard.tasks.pole.controllers import lqr_gains, state_feedback_network

        task = make(problem.task, **problem.settings)
        self.network = state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1]))

    def ask(self):
        if not (self.once and os.path.exists(self.marker)):
            if self.once:
                open(self.marker, "w").close()
            threading.Timer(0.1, os.kill, args=(os.getppid(), signal.SIGKILL)).start()
        return [self.network] * 10

    def tell(self, evaluations):
        pass


class Unhurried(Healthy):
    """Well-behaved but slow: each ask() takes ``pause`` seconds, so a test can disturb a run
    from outside (kill its worker) while it is in progress. Its record must not show it."""

    def __init__(self, pause: float = 0.05) -> None:
        super().__init__()
        self.pause = pause

    def ask(self):
        time.sleep(self.pause)
        return super().ask()
