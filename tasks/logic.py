"""Boolean function tasks: XOR (Stanley & Miikkulainen 2002, sec. 4.2) and N-bit parity.

Every input pattern (each input 0.0 or 1.0, the bits in input-node order) is presented to
a freshly reset network; the output for the pattern is read after one step (feedforward)
or after ``recurrent_steps`` steps with the inputs held (recurrent). With P patterns,
outputs o_p and targets t_p (the parity of the pattern's bits):

    fitness = (P - sum_p |clip(o_p, 0, 1) - t_p|)^2   (0 .. P^2; 16 for XOR)
    solved  = every o_p on the correct side of 0.5 (o_p > 0.5 where t_p = 1, else < 0.5)

The published fitness assumes outputs in [0, 1] (a sigmoid output unit); clipping keeps its
bounds for every activation, and leaves a [0, 1] output's fitness as published. A
non-finite output on any pattern makes the fitness NaN, which the harness records as the
worst fitness (0) and counts; such a network is never solved.

Version 2 of both tasks: version 1 applied the formula to unclipped outputs, so an
unbounded output unit could score far above the maximum (retired, see the registry).
"""

from __future__ import annotations

import itertools
from typing import Any

import numba
import numpy as np

from neuroyard.core.batch import CompiledBatch, member
from neuroyard.core.compiled import CompiledNetwork, new_state, reset, step
from neuroyard.core.evolver import Evaluation
from neuroyard.core.options import Option

from .base import SuccessCheck, Task, TaskSpec
from .registry import register, retire

NEAT_2002 = (
    "Stanley, K. O. & Miikkulainen, R. (2002). Evolving neural networks through augmenting "
    "topologies. Evolutionary Computation 10(2):99-127, sec. 4.2 "
    "(reference/SOURCES.md: stanley2002; XOR)"
)


@numba.njit(cache=True)
def score_patterns(
    net: CompiledNetwork, patterns: np.ndarray, targets: np.ndarray, steps: int
) -> tuple[float, bool]:
    """(fitness, solved) of ``net`` on all patterns; one call evaluates the whole table.

    Fitness is NaN (and solved False) when an output is not finite; see module docstring."""
    values, scratch = new_state(net)
    out = np.zeros(1, dtype=np.float64)
    error = 0.0
    solved = True
    for p in range(patterns.shape[0]):
        reset(net, values)
        for _ in range(steps):
            step(net, values, scratch, patterns[p], out)
        o = out[0]
        if not np.isfinite(o):
            return np.nan, False
        error += abs(min(1.0, max(0.0, o)) - targets[p])
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


FITNESS_RULE = "({n} - sum of |clip(output, 0, 1) - target| over the {n} patterns)^2"
OUTPUT_RULE = (
    "the output is clipped to [0, 1] before its error is taken (so the maximum holds for "
    "every activation); a non-finite output on any pattern gives the worst fitness, 0, and "
    "is never solved"
)


RECURRENT_STEPS = Option(
    "recurrent_steps",
    5,
    "network steps per pattern for a recurrent network (a feedforward one takes one)",
    source="ours (common practice: enough steps for a signal to cross a few hidden nodes)",
    low=1,
    high=1_000,  # ours: a bound on one evaluation's work, 200 times the default
)


class BooleanTask(Task):
    """A truth table learned by a network with one output; see module docstring."""

    options = (RECURRENT_STEPS,)

    def __init__(self, seed: int = 0, /, **settings) -> None:
        super().__init__(seed, **settings)
        self.patterns, self.targets = self.truth_table()

    def truth_table(self) -> tuple[np.ndarray, np.ndarray]:
        bits = self.bits
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

    @property
    def bits(self) -> int:
        """Inputs of the truth table."""
        raise NotImplementedError

    def _interface(self) -> dict[str, Any]:
        """The spec fields every truth-table task shares, from its number of bits."""
        bits = self.bits
        n = 2**bits
        return {
            "inputs": bits,
            "outputs": 1,
            "fitness": FITNESS_RULE.format(n=n),
            "max_fitness": float(n * n),
            "min_fitness": 0.0,
            "observations": tuple(
                f"bit {k + 1} of the pattern: 0.0 or 1.0 (no scaling)" for k in range(bits)
            ),
            "actions": (
                "the parity of the pattern's bits: read after one step (feedforward) or after "
                "recurrent_steps steps with the inputs held (recurrent), from a reset network; "
                "above 0.5 means 1, below 0.5 means 0",
            ),
            "output_rule": OUTPUT_RULE,
            "settings": dict(self.settings),
        }


@register
class Xor(BooleanTask):
    id = "xor-v2"

    bits = 2

    @property
    def spec(self) -> TaskSpec:
        return TaskSpec(
            id=self.id,
            success="every output on the correct side of 0.5 (from memory: the rounding rule "
            "of the authors' reference setup)",
            default_budget=100_000,
            sources=(NEAT_2002,),
            **self._interface(),
        )


@register
class Parity(BooleanTask):
    id = "parity-v2"
    options = (
        Option(
            "bits",
            3,
            "inputs of the parity function (2^bits patterns)",
            source="ours: 3 bits is the smallest parity harder than XOR; at most 12 "
            "(4,096 patterns per evaluation)",
            low=2,
            high=12,
        ),
        RECURRENT_STEPS,
    )

    @property
    def bits(self) -> int:
        return self.settings["bits"]

    @property
    def spec(self) -> TaskSpec:
        return TaskSpec(
            id=self.id,
            success="every output on the correct side of 0.5",
            default_budget=200_000,
            sources=(
                "N-bit parity generalises XOR; no NEAT-family reference figure is known, so it "
                "is an internal scaling test",
            ),
            **self._interface(),
        )


RETIRED = {
    "xor-v1": "xor-v2",
    "parity-v1": "parity-v2",
}
RETIRED_REASON = (
    "version 1 scored unclipped outputs, so a network with an unbounded output unit could "
    "score above the stated maximum; version 2 clips outputs to [0, 1] (the same fitness "
    "for outputs in [0, 1])"
)
for _old, _new in RETIRED.items():
    retire(_old, _new, RETIRED_REASON)
