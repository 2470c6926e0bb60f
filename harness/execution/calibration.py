"""The calibration loop: a fixed amount of work, timed once per process, so that run speeds
measured on different machines (or on one machine under different load) can be compared.

A run's *relative speed* is its evaluations per second multiplied by the seconds this loop
takes in the process that made the run (see :mod:`.runner`, ``timing["calibration"]``):
evaluations per calibration unit. A machine twice as slow takes about twice as long for
both, and the figure stays about the same.

The work stands for the two kinds of time a run spends (ours, chosen from what a run of the
reference NEAT on XOR spends its time on): interpreted Python that builds and changes
small objects (an evolver's genome bookkeeping: dictionaries of genes keyed by node pairs,
sorting, sums) and a compiled numba loop over float arrays (the harness's network
kernels: weighted sums and a squashing function, step by step), in about equal shares on
the machine it was written on. The loop is self-contained and never changes with the rest
of neuroyard: a change of it would change every relative speed recorded before, so a new
loop must be recorded under a new timing key, never under ``calibration``.

One unit takes about a twentieth of a second; it is timed :data:`REPEATS` times after one
untimed unit (numba loads or compiles its loop, and the interpreter specialises the Python
part: a first unit takes about twice as long) and the median is kept: robust to one
disturbed repetition, yet it follows a load that lasts (another process sharing the CPU).
A load that changes after the calibration (other work starting on a shared machine) is not
followed: the figure is for a machine that runs only the campaign.
"""

from __future__ import annotations

import os
import statistics
import time

import numba
import numpy as np

REPEATS = 7  # timed repetitions of one unit; the median is kept (ours)
_GENES = 400  # genes of the Python part's genome (ours)
_ROUNDS = 120  # mutation-and-sort rounds of the Python part (ours)
_NODES = 24  # nodes of the numba part's fully connected network (ours)
_STEPS = 40_000  # steps of the numba part (ours)

_seconds: dict[int, float] = {}  # process id -> seconds of one unit, measured in it


def _python_part() -> int:
    """Genome-like bookkeeping in plain Python: a dictionary of ``_GENES`` connection genes
    keyed by (source, target), changed by a fixed linear congruential sequence for
    ``_ROUNDS`` rounds (perturb a weight, add a gene, drop one), sorted and summed each
    round. Returns a checksum, so the work cannot be skipped."""
    state = 12345
    genes: dict[tuple[int, int], list[float]] = {}
    for k in range(_GENES):
        genes[(k % 37, k // 37 + 40)] = [((k * 7919) % 1000) / 500.0 - 1.0, 1.0]
    checksum = 0
    for _ in range(_ROUNDS):
        for key in list(genes)[::3]:
            state = (state * 1103515245 + 12345) % 2**31
            genes[key][0] += (state % 2001 - 1000) / 10_000.0
        state = (state * 1103515245 + 12345) % 2**31
        genes[(state % 53, state % 61 + 40)] = [0.5, 1.0]
        del genes[min(genes)]
        ordered = sorted(genes.items(), key=lambda item: (item[1][0], item[0]))
        checksum = (checksum + sum(i for (i, _), _ in ordered[:50]) + len(ordered)) % 2**31
    return checksum


@numba.njit(cache=True)
def _numba_part(weights: np.ndarray, steps: int) -> float:
    """``steps`` steps of a fully connected network of ``len(weights)`` nodes: each step
    every node takes the weighted sum of all node values and squashes it with tanh."""
    n = weights.shape[0]
    values = np.full(n, 0.1)
    scratch = np.zeros(n)
    total = 0.0
    for _ in range(steps):
        for i in range(n):
            s = 0.0
            for j in range(n):
                s += weights[i, j] * values[j]
            scratch[i] = np.tanh(s)
        values, scratch = scratch, values
        total += values[0]
    return total


def load() -> None:
    """Load (or compile) the numba part's kernel in this process, untimed."""
    _numba_part(_weights(), 1)


def _weights() -> np.ndarray:
    return np.random.default_rng(1).uniform(-0.5, 0.5, (_NODES, _NODES))


def _unit(weights: np.ndarray) -> float:
    """Seconds (wall, ``time.perf_counter``) of one unit of work: both parts once."""
    start = time.perf_counter()
    _python_part()
    _numba_part(weights, _STEPS)
    return time.perf_counter() - start


def measure(repeats: int = REPEATS) -> float:
    """Seconds of one calibration unit, timed now in this process: the median of
    ``repeats`` timings after one untimed unit (the warm-up, see the module docstring).
    Not cached: under a load that comes and goes, two calls may differ."""
    weights = _weights()
    _unit(weights)
    return statistics.median(_unit(weights) for _ in range(repeats))


def seconds() -> float:
    """Seconds of one calibration unit in this process: :func:`measure` the first time it
    is called in a process, the same figure afterwards. Cached by process id, so a worker
    forked from a process that measured measures again itself."""
    pid = os.getpid()
    if pid not in _seconds:
        _seconds[pid] = measure()
    return _seconds[pid]
