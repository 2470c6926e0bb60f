"""Evolvers used by the tests: well-behaved ones that count, and broken ones.

Not part of the package; tests put this folder on sys.path and load them by
``plugins_for_tests:ClassName``.
"""

from __future__ import annotations

import time

from neuroyard.core.network import Connection, Network, Node
from neuroyard.core.options import Option, OptionTable
from neuroyard.reference.neat import NeatEvolver


def constant_network(weight: float = 0.0, activation: str = "neat_sigmoid") -> Network:
    """A 2-input network whose output ignores its inputs (never solves XOR)."""
    nodes = (Node(0, "input"), Node(1, "input"), Node(2, "bias"), Node(3, "output", activation))
    return Network(nodes, (Connection(2, 3, weight),))


class Constant:
    """Asks ``batch`` copies of a constant network forever; counts what it is told and
    reports the counts as stats (``stats()`` is read after ``tell()``), and the outcome it
    was given in ``stop()`` as ``Constant.outcomes`` (this process only)."""

    outcomes: list = []

    def __init__(self, batch: int = 7) -> None:
        self.batch = batch
        self.asked = 0
        self.told = 0
        self.tells = 0

    def start(self, problem, seed):
        self.problem = problem

    def ask(self):
        self.asked += self.batch
        return [constant_network(0.1 * k) for k in range(self.batch)]

    def tell(self, evaluations):
        assert 1 <= len(evaluations) <= self.batch
        self.told += len(evaluations)
        self.tells += 1

    def stats(self):
        return {"asked": self.asked, "told": self.told, "tells": self.tells}

    def stop(self, outcome):
        Constant.outcomes.append(outcome)


class RaisesIn:
    """Raises in the named method (start, ask, tell or stats) at generation ``when``."""

    def __init__(self, method: str = "ask", when: int = 0) -> None:
        self.method, self.when, self.generation = method, when, 0

    def _maybe(self, name):
        if name == self.method and self.generation >= self.when:
            raise RuntimeError(f"boom in {name}")

    def start(self, problem, seed):
        self._maybe("start")

    def ask(self):
        self._maybe("ask")
        return [constant_network()]

    def tell(self, evaluations):
        self._maybe("tell")
        self.generation += 1

    def stats(self):
        self._maybe("stats")
        return {"generation": self.generation}


class Returns:
    """ask() returns a fixed bad value: 'empty', 'none', 'dict', 'invalid' or 'wrong_inputs'."""

    def __init__(self, what: str = "empty") -> None:
        self.what = what

    def start(self, problem, seed):
        pass

    def ask(self):
        if self.what == "empty":
            return []
        if self.what == "none":
            return None
        if self.what == "dict":
            return [{"nodes": []}]
        if self.what == "invalid":
            return [constant_network(activation="no-such-function")]
        if self.what == "wrong_inputs":
            nodes = (Node(0, "input"), Node(1, "output", "sigmoid"))
            return [Network(nodes, (Connection(0, 1, 1.0),))]
        raise ValueError(self.what)

    def tell(self, evaluations):
        pass


class ExitsInAsk(Returns):
    """Calls sys.exit inside ask()."""

    def ask(self):
        raise SystemExit(3)


class SlowedNeat(NeatEvolver):
    """The reference NEAT with a deliberate pause of ``ask_delay`` seconds in every ask():
    slower, and otherwise the same run (the pause takes no random numbers)."""

    options = OptionTable(
        "evolver plugins_for_tests:SlowedNeat",
        [
            *NeatEvolver.options,
            Option("ask_delay", 0.0, "pause in every ask()", unit="s", source="ours", low=0.0),
        ],
    )

    def __init__(self, **settings) -> None:
        resolved = self.options.resolve(settings)
        self.ask_delay = resolved.pop("ask_delay")
        super().__init__(**resolved)

    def ask(self):
        time.sleep(self.ask_delay)
        return super().ask()

    def settings(self):
        return {**super().settings(), "ask_delay": self.ask_delay}
