"""Evolvers that cheat: each tries to have a run stored as solved when it is not, or with
a solution smaller than it is. Not part of the package; tests put this folder on sys.path
and load them by ``cheating_evolvers:ClassName``.

They reach the harness's objects the way any code in the same process can: through the
garbage collector (``gc.get_objects()``). That works when the evolver shares a process
with the runner (``--in-process``); in an evolver process of its own they find nothing to
forge. Whatever the cheat, the coordinator re-verifies the solved claim before storing it
(neuroyard.execution.verification), which is what tests/test_verification.py shows.
"""

from __future__ import annotations

import gc

from neuroyard.core.network import Connection, Network, Node
from neuroyard.records.runs import RunRecord
from neuroyard.tasks.base import SuccessCheck, Task

BATCH = 4


def constant_network(weight: float) -> Network:
    """A 2-input network whose output ignores its inputs: it never solves XOR."""
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output", "sigmoid"))
    return Network(nodes, (Connection(2, 3, weight),))


def xor_network() -> Network:
    """XOR from threshold units (hidden OR and AND; the output is OR and not AND): solves
    XOR with 2 hidden nodes and 6 enabled connections."""
    nodes = (
        Node(0, "input"),
        Node(1, "input"),
        Node(3, "hidden", "step", bias=-0.5),
        Node(4, "hidden", "step", bias=-1.5),
        Node(5, "output", "step", bias=-0.5),
    )
    connections = (
        Connection(0, 3, 1.0),
        Connection(1, 3, 1.0),
        Connection(0, 4, 1.0),
        Connection(1, 4, 1.0),
        Connection(3, 5, 1.0),
        Connection(4, 5, -1.0),
    )
    return Network(nodes, connections)


def own_record(seed: int) -> RunRecord | None:
    """The record of the run this evolver is in, found among every object of the process:
    its evolver seed is ``seed`` and it has no timing yet (the runner times a run after
    ``stop()``); None in a process that holds none."""
    for obj in gc.get_objects():
        if isinstance(obj, RunRecord) and obj.seed == seed and not obj.timing:
            return obj
    return None


class Constant:
    """Asks BATCH constant networks each generation: honest, and never solves XOR."""

    def start(self, problem, seed):
        self.seed = seed

    def ask(self):
        return [constant_network(0.1 * (k + 1)) for k in range(BATCH)]

    def tell(self, evaluations):
        pass


class ClaimsSolved(Constant):
    """Never solves; in ``stop()``, after the harness has set the outcome, it marks its
    run's record solved in few evaluations. The stored best network (a constant one) does
    not pass XOR's success test."""

    def stop(self, outcome):
        record = own_record(self.seed)
        if record is not None:
            record.status, record.failure = "solved", None
            record.evaluations, record.generations = BATCH, 1


class PassesEveryTest(Constant):
    """Never solves; in its first ``tell()`` it replaces the success test of every task in
    the process with one that always passes, so the runner itself records the run solved
    (with a constant network) in the next generation."""

    def tell(self, evaluations):
        for obj in gc.get_objects():
            if isinstance(obj, Task) and obj.id == "xor-v2":
                obj.success_test = lambda net, evaluation: SuccessCheck(True, 1)


class SolvesAtOnce:
    """Honest: solves XOR in its first generation with :func:`xor_network`."""

    def start(self, problem, seed):
        self.seed = seed

    def ask(self):
        return [xor_network()]

    def tell(self, evaluations):
        pass


class ShrinksItsSolution(SolvesAtOnce):
    """Solves XOR honestly in its first generation with a network of 2 hidden nodes and
    6 connections, then in ``stop()`` records it as 0 hidden nodes and 1 connection."""

    def stop(self, outcome):
        record = own_record(self.seed)
        if record is not None:
            record.hidden_nodes, record.connections = 0, 1
