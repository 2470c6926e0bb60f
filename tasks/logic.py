"""Boolean function tasks: XOR (Stanley & Miikkulainen 2002, sec. 4.2) and N-bit parity.

Every input pattern (inputs 0 or 1) is presented to a freshly reset network; the output
for the pattern is read after one step (feedforward) or after ``recurrent_steps`` steps
with the inputs held (recurrent). With P patterns and outputs o_p, targets t_p:

    fitness = (P - sum_p |o_p - t_p|)^2          (maximum P^2; 16 for XOR)
    solved  = every o_p on the correct side of 0.5 (o_p > 0.5 where t_p = 1, else < 0.5)
"""

from __future__ import annotations

import itertools

import numba
import numpy as np

from neuroyard.harness.batch import CompiledBatch, member
from neuroyard.harness.compiled import CompiledNetwork, new_state, reset, step
from neuroyard.harness.errors import TaskError
from neuroyard.harness.evolver import Evaluation

from .base import SuccessCheck, Task, TaskSpec
from .registry import register

NEAT_2002 = (
    "Stanley, K. O. & Miikkulainen, R. (2002). Evolving neural networks through augmenting "
    "topologies. Evolutionary Computation 10(2):99-127, sec. 4.2"
)


@numba.njit(cache=True)
def score_patterns(
    net: CompiledNetwork, patterns: np.ndarray, targets: np.ndarray, steps: int
) -> tuple[float, bool]:
    """(fitness, solved) of ``net`` on all patterns; one call evaluates the whole table."""
    values, scratch = new_state(net)
    out = np.zeros(1, dtype=np.float64)
    error = 0.0
    solved = True
    for p in range(patterns.shape[0]):
        reset(net, values)
        for _ in range(steps):
            step(net, values, scratch, patterns[p], out)
        o = out[0]
        error += abs(o - targets[p])
        if targets[p] > 0.5:
            solved = solved and o > 0.5
        else:
            solved = solved and o < 0.5
    n = patterns.shape[0]
    return (n - error) ** 2, solved


@numba.njit(cache=True)
def score_batch(
    batch: CompiledBatch, patterns: np.ndarray, targets: np.ndarray, recurrent_steps: int
) -> np.ndarray:
    """Fitness of every network of a batch (as :func:`score_patterns`), in one call."""
    fitness = np.empty(batch.size, dtype=np.float64)
    for i in range(batch.size):
        net = member(batch, i)
        steps = recurrent_steps if net.recurrent else 1
        fitness[i] = score_patterns(net, patterns, targets, steps)[0]
    return fitness


class BooleanTask(Task):
    """A truth table learned by a network with one output; see module docstring."""

    defaults = {"recurrent_steps": 5}

    def __init__(self, seed: int = 0, **settings) -> None:
        super().__init__(seed, **settings)
        self.patterns, self.targets = self.truth_table()

    def check_settings(self) -> None:
        if self.settings["recurrent_steps"] < 1:
            raise TaskError(f"task {self.id}: setting 'recurrent_steps' must be at least 1")

    def truth_table(self) -> tuple[np.ndarray, np.ndarray]:
        bits = self.spec.inputs
        patterns = np.array(list(itertools.product((0.0, 1.0), repeat=bits)), dtype=np.float64)
        targets = (patterns.sum(axis=1) % 2).astype(np.float64)
        return patterns, targets

    def _score(self, net: CompiledNetwork) -> tuple[float, bool]:
        steps = self.settings["recurrent_steps"] if net.recurrent else 1
        return score_patterns(net, self.patterns, self.targets, steps)

    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        return Evaluation(float(self._score(net)[0]))

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        steps = self.settings["recurrent_steps"]
        return [
            Evaluation(f) for f in score_batch(batch, self.patterns, self.targets, steps).tolist()
        ]

    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        return SuccessCheck(solved=bool(self._score(net)[1]), evaluations=1)


@register
class Xor(BooleanTask):
    id = "xor-v1"

    @property
    def spec(self) -> TaskSpec:
        return TaskSpec(
            id=self.id,
            inputs=2,
            outputs=1,
            fitness="(4 - sum of |output - target| over the 4 patterns)^2, maximum 16",
            success="every output on the correct side of 0.5 (from memory: the rounding rule "
            "of the authors' reference setup; LITERATURE.md sec. 1.2)",
            default_budget=100_000,
            sources=(NEAT_2002,),
            max_fitness=16.0,
            settings=dict(self.settings),
        )


@register
class Parity(BooleanTask):
    id = "parity-v1"
    defaults = {"bits": 3, "recurrent_steps": 5}

    def check_settings(self) -> None:
        super().check_settings()
        if not 2 <= self.settings["bits"] <= 12:
            raise TaskError(
                f"task {self.id}: setting 'bits' must be 2..12, got {self.settings['bits']}"
            )

    @property
    def spec(self) -> TaskSpec:
        n = 2 ** self.settings["bits"]
        return TaskSpec(
            id=self.id,
            inputs=self.settings["bits"],
            outputs=1,
            fitness=f"({n} - sum of |output - target| over the {n} patterns)^2, maximum {n * n}",
            success="every output on the correct side of 0.5",
            default_budget=200_000,
            sources=(
                "N-bit parity generalises XOR; no NEAT-family reference figure is known "
                "(LITERATURE.md sec. 6), so it is an internal scaling test",
            ),
            max_fitness=float(n * n),
            settings=dict(self.settings),
        )
