"""Workloads of the kernel speed benchmark (issue 2 item 10), each in two forms.

Shared by ``tests/bench/test_bench_kernels.py`` (pytest-benchmark) and ``kernel_speed.py``
(the script that writes ``kernel_speed.json``). Every workload does the same work twice:
through the compiled numba kernels, and through the plain-Python :class:`ReferenceNet`;
the speed ratio is reference time / kernel time, both measured in the same process.
"""

from __future__ import annotations

import os
import platform
import statistics
import subprocess
import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np

from neuroyard import tasks
from neuroyard.core.batch import CompiledBatch, compile_batch, compile_network
from neuroyard.core.compiled import run_sequence
from neuroyard.core.network import Connection, Network, Node
from neuroyard.core.reference_activation import ReferenceNet
from neuroyard.records.provenance import versions

XOR_BATCH = 150  # networks per batch, issue 2 item 10
RECURRENT_STEPS = 100_000
RATIO_TARGET = 30.0  # issue 2 item 10, for the 100k-step case
WARM_START_TARGET_S = 1.0  # issue 2 item 10


@dataclass(frozen=True)
class Workload:
    """One job done by the kernels (``kernel``) and by plain Python (``reference``).

    Both callables return the outputs they computed (fitness values or network outputs),
    so :meth:`check` can confirm that they did the same work.
    """

    description: str
    kernel: Callable[[], Any]
    reference: Callable[[], Any]
    kernel_repeats: int
    reference_repeats: int
    ratio_target: float | None = None

    def check(self) -> None:
        """Run both forms once (this also compiles or loads the numba kernels) and compare."""
        kernel = np.asarray(self.kernel(), dtype=np.float64)
        reference = np.asarray(self.reference(), dtype=np.float64)
        np.testing.assert_allclose(kernel, reference, rtol=1e-12, atol=1e-12)


def timed(fn: Callable[[], Any], timer: Callable[[], float]) -> float:
    start = timer()
    fn()
    return timer() - start


def median_seconds(
    fn: Callable[[], Any], repeats: int, timer: Callable[[], float] = time.perf_counter
) -> float:
    """Median time of ``repeats`` calls of ``fn`` in seconds: wall time by default, or the
    process's CPU time with ``timer=time.process_time`` (less disturbed by other work)."""
    return statistics.median(timed(fn, timer) for _ in range(repeats))


@dataclass(frozen=True)
class Comparison:
    """Medians of both forms of a workload (seconds) and the speed ratio."""

    kernel_s: float
    reference_s: float
    ratio: float


def compare(work: Workload, timer: Callable[[], float] = time.perf_counter) -> Comparison:
    """Time both forms in interleaved rounds, so a change in the machine's load hits both.

    Each round times the reference once and the kernel ``kernel_repeats //
    reference_repeats`` times; the ratio is the median over rounds of (reference time /
    median kernel time of the round).
    """
    per_round = max(1, work.kernel_repeats // work.reference_repeats)
    kernel_all: list[float] = []
    reference_all: list[float] = []
    ratios: list[float] = []
    for _ in range(work.reference_repeats):
        reference = timed(work.reference, timer)
        kernel = [timed(work.kernel, timer) for _ in range(per_round)]
        reference_all.append(reference)
        kernel_all += kernel
        ratios.append(reference / statistics.median(kernel))
    return Comparison(
        kernel_s=statistics.median(kernel_all),
        reference_s=statistics.median(reference_all),
        ratio=statistics.median(ratios),
    )


# --- XOR batch -------------------------------------------------------------------------


def xor_networks(count: int = XOR_BATCH, seed: int = 0) -> list[Network]:
    """Random NEAT-like XOR networks: the minimal start topology plus 0-3 split connections.

    Start: inputs 0, 1 and bias 2 connected to output 3 (neat_sigmoid), weights U(-2, 2).
    Each added hidden node splits a random enabled connection the NEAT way (the old link is
    disabled, the new incoming link gets weight 1, the outgoing one the old weight: Stanley &
    Miikkulainen 2002, sec. 3.1, tagged SECONDARY-NOTES in
    reference/SOURCES.md: stanley2002; NEAT settings) and gets
    one extra incoming link from another input or the bias half the time.
    """
    rng = np.random.default_rng(seed)
    networks = []
    for _ in range(count):
        nodes = [Node(0, "input"), Node(1, "input"), Node(2, "bias")]
        nodes.append(Node(3, "output", "neat_sigmoid"))
        conns = [Connection(s, 3, float(w)) for s, w in enumerate(rng.uniform(-2, 2, 3))]
        for hidden in range(4, 4 + int(rng.integers(0, 4))):
            k = int(rng.choice([i for i, c in enumerate(conns) if c.enabled]))
            old = conns[k]
            conns[k] = replace(old, enabled=False)
            nodes.append(Node(hidden, "hidden", "neat_sigmoid"))
            conns += [
                Connection(old.source, hidden, 1.0),
                Connection(hidden, old.target, old.weight),
            ]
            if rng.random() < 0.5:
                source = int(rng.choice([s for s in (0, 1, 2) if s != old.source]))
                conns.append(Connection(source, hidden, float(rng.uniform(-2, 2))))
        networks.append(Network(tuple(nodes), tuple(conns)))
    return networks


def reference_fitness(ref: ReferenceNet, patterns: Sequence[Sequence[float]], targets) -> float:
    """Boolean-task fitness (P - sum |o - t|)^2 of a feedforward network, in plain Python."""
    error = 0.0
    for pattern, target in zip(patterns, targets, strict=True):
        ref.reset()
        error += abs(ref.step(pattern)[0] - target)
    return (len(patterns) - error) ** 2


def xor_batch(compile_in_timing: bool) -> Workload:
    """150 XOR networks evaluated the way the runner does it: ``compile_batch`` (checks
    and compiles a whole generation in one call), then ``evaluate_batch`` of
    ``tasks.make("xor-v2")``.

    With ``compile_in_timing`` the kernel side checks and compiles the batch and the
    reference side builds a ReferenceNet per network; without it both sides get prepared
    networks and only evaluation is timed.
    """
    task = tasks.make("xor-v2")
    networks = xor_networks()
    patterns, targets = task.patterns.tolist(), task.targets.tolist()

    def fitness(batch: CompiledBatch) -> list[float]:
        return [e.fitness for e in task.evaluate_batch(batch)]

    if compile_in_timing:

        def kernel() -> list[float]:
            return fitness(compile_batch(networks, 2, 1))

        def reference() -> list[float]:
            return [reference_fitness(ReferenceNet(n), patterns, targets) for n in networks]

        what = "check + compile + evaluate"
    else:
        batch = compile_batch(networks, 2, 1)
        refs = [ReferenceNet(n) for n in networks]

        def kernel() -> list[float]:
            return fitness(batch)

        def reference() -> list[float]:
            return [reference_fitness(r, patterns, targets) for r in refs]

        what = "evaluate prepared networks"
    hidden = sum(n.hidden_nodes for n in networks)
    return Workload(
        description=f"{len(networks)} NEAT-like XOR networks ({hidden} hidden nodes in all), {what}",
        kernel=kernel,
        reference=reference,
        kernel_repeats=60,
        reference_repeats=20,
    )


# --- recurrent 100k steps --------------------------------------------------------------


def recurrent_network(seed: int = 0) -> Network:
    """10 nodes (3 inputs, bias, 4 tanh hidden, 2 sigmoid outputs), 20 distinct connections.

    Connections are drawn from all (any node -> hidden or output) pairs, self-loops
    included, with weights U(-1, 1): bounded activations and inputs keep the state in the
    normal float range (no slow subnormals).
    """
    rng = np.random.default_rng(seed)
    nodes = [Node(i, "input") for i in range(3)] + [Node(3, "bias")]
    nodes += [Node(i, "hidden", "tanh", float(rng.uniform(-0.5, 0.5))) for i in range(4, 8)]
    nodes += [Node(i, "output", "sigmoid") for i in (8, 9)]
    pairs = [(s, t) for t in range(4, 10) for s in range(10)]
    chosen = rng.choice(len(pairs), size=20, replace=False)
    conns = tuple(Connection(*pairs[k], float(rng.uniform(-1, 1))) for k in sorted(chosen))
    return Network(tuple(nodes), conns, "recurrent")


def recurrent_episode(steps: int = RECURRENT_STEPS) -> Workload:
    """The recurrent network stepped ``steps`` times: one ``run_sequence`` kernel call."""
    network = recurrent_network()
    inputs = np.random.default_rng(1).uniform(-1.0, 1.0, (steps, network.n_inputs))
    rows = inputs.tolist()
    compiled = compile_network(network)
    ref = ReferenceNet(network)

    def kernel() -> np.ndarray:
        return run_sequence(compiled, inputs, False)

    def reference() -> list[list[float]]:
        ref.reset()
        return [ref.step(row) for row in rows]

    return Workload(
        description=(
            f"recurrent network, {len(network.nodes)} nodes, {network.enabled_connections} "
            f"connections, {steps:,} steps in one kernel call"
        ),
        kernel=kernel,
        reference=reference,
        kernel_repeats=28,
        reference_repeats=7,
        ratio_target=RATIO_TARGET,
    )


# Name -> builder; building prepares networks and inputs, so it is done only when needed.
WORKLOADS: dict[str, Callable[[], Workload]] = {
    "xor_batch_150": lambda: xor_batch(compile_in_timing=True),
    "xor_batch_150_evaluate_only": lambda: xor_batch(compile_in_timing=False),
    "recurrent_100k_steps": recurrent_episode,
}


# --- second process with a warm numba cache --------------------------------------------

FIRST_EVALUATION = """
import time
from neuroyard import tasks
from neuroyard.core.batch import compile_network
from neuroyard.core.network import fully_connected
task = tasks.make("xor-v2")
task.evaluate(compile_network(fully_connected(2, 1, [1.0, -1.0, 0.5]), 2, 1))
print(time.time(), time.process_time())
"""


@dataclass(frozen=True)
class FirstEvaluation:
    """A new process's way to its first evaluation: wall seconds from spawning it, and the
    CPU seconds it used (the part that does not grow when other work shares the machine)."""

    wall_s: float
    cpu_s: float


def first_evaluation() -> FirstEvaluation:
    """Spawn ``python -c`` and time it until its first XOR evaluation is done.

    Covers interpreter start, imports, numba cache loading (or compiling, on a cold
    cache), checking, compiling and evaluating one network; not the process exit.
    """
    start = time.time()
    done = subprocess.run(
        [sys.executable, "-c", FIRST_EVALUATION], capture_output=True, text=True, check=True
    )
    finished, cpu = (float(x) for x in done.stdout.split()[-2:])
    return FirstEvaluation(wall_s=finished - start, cpu_s=cpu)


def warm_start(repeats: int) -> list[FirstEvaluation]:
    """Warm the numba cache with one process, then time ``repeats`` further processes."""
    first_evaluation()
    return [first_evaluation() for _ in range(repeats)]


# --- machine ---------------------------------------------------------------------------


def machine_info() -> dict[str, Any]:
    """Host facts that bear on the timings (the load average shows other work running)."""
    cpu = platform.processor()
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    return {
        "platform": platform.platform(),
        "cpu": cpu,
        "cpu_count": os.cpu_count(),
        "load_average_1min": os.getloadavg()[0] if hasattr(os, "getloadavg") else None,
        "niceness": os.nice(0) if hasattr(os, "nice") else None,
        "versions": versions(),
    }
