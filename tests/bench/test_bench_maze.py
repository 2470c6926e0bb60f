"""Speed of the maze robot's episodes (issue 17 acceptance). Run with:

    pytest -m bench --benchmark-enable tests/bench/test_bench_maze.py

Targets: full 400-step episodes on maze-hard-v3 through the task's batch path
(``MazeTask.evaluate_batch`` on a compiled population) >= 2,000 evaluations per second on
one core, and >= 30x a plain-Python loop that steps the same robot with pymunk doing the
geometry (tests/bench/maze_pymunk_robot.py), measured side by side in one run on the
same networks; both sides must end every episode that is robust to rounding at the same
position (see POSITION_TOLERANCE: the others are counted and reported).

The networks are a NEAT-sized population of random NEAT-like networks picked to move the
robot around: each makes at least half of its moves and gets at least four radii from the
start (most random networks drive into a wall within a few steps and stay there).

Times are CPU seconds of this process (time.process_time): the targets are per core, and
on a shared 2-core machine wall time also counts waiting. pytest-benchmark's table and
JSON also record wall times.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace

import kernel_workloads as workloads  # tests/bench is on pytest's pythonpath
import maze_pymunk_robot
import numpy as np
import pytest

from neuroyard import tasks
from neuroyard.core.batch import CompiledBatch, compile_batch
from neuroyard.core.network import Connection, Network, Node
from neuroyard.reference.neat import NoveltyNeat
from neuroyard.tasks.maze import MazeTask
from neuroyard.tasks.maze.robot import N_INPUTS, RADIUS, run_batch

pytestmark = pytest.mark.bench

TASK = "maze-hard-v3"
EVALUATIONS_PER_SECOND_TARGET = 2_000.0  # issue 17
RATIO_TARGET = 30.0  # issue 17
# The maze experiment's population size, App. A, Table 1 (reference/SOURCES.md: lehman2011),
# and NEAT's initial weight range, both from the reference evolvers' defaults.
NEAT_OPTIONS = NoveltyNeat.options.resolve({})
POPULATION = NEAT_OPTIONS["population_size"]
WEIGHT_RANGE = NEAT_OPTIONS["weight_init_range"]
# A network counts as moving the robot around when, in its numba episode, the robot makes
# at least half of its moves and ends up at least this far from the start at some point.
MIN_MOVED_FRACTION = 0.5
MIN_REACH = 4 * RADIUS
MAX_CANDIDATES = 20 * POPULATION
# Both sides compute the same network on rangefinder readings that differ by rounding
# (pymunk's ray fraction against our ray parameter / RANGE: about 1e-16 where sampled
# while this benchmark was written; tests/test_maze_pymunk.py bounds it). Some
# episodes amplify such differences (steep sigmoids in a closed sensor-motor loop), others
# forget them. An episode counts as robust to rounding when nudging its start by
# PROBE_NUDGE units (x, y) or radians (heading), each way, moves its numba end by at most
# POSITION_TOLERANCE; every robust episode must end at the same position on both sides
# within POSITION_TOLERANCE, which any different rule (a move decided otherwise, a wrong
# sensor) breaks by far more.
POSITION_TOLERANCE = 1e-9
PROBE_NUDGE = 1e-12  # 100x the rangefinder rounding in units (1e-16 * RANGE)
MIN_ROBUST_SHARE = 0.5  # the agreement check must cover at least half the population


def neat_like_network(rng: np.random.Generator) -> Network:
    """A network as NEAT grows them for the maze: every input and the bias linked to both
    neat_sigmoid outputs with weights U(-w, w) (w = NEAT's initial weight range), then 1-4
    hidden nodes, each splitting a random enabled link the NEAT way (the old link is
    disabled, the new incoming link gets weight 1, the outgoing one the old weight:
    reference/SOURCES.md: stanley2002; NEAT settings)."""
    n_in = N_INPUTS
    bias, outputs = n_in, (n_in + 1, n_in + 2)
    nodes = [Node(k, "input") for k in range(n_in)] + [Node(bias, "bias")]
    nodes += [Node(k, "output", "neat_sigmoid") for k in outputs]
    conns = [
        Connection(s, t, float(rng.uniform(-WEIGHT_RANGE, WEIGHT_RANGE)))
        for t in outputs
        for s in range(n_in + 1)
    ]
    for hidden in range(n_in + 3, n_in + 3 + int(rng.integers(1, 5))):
        k = int(rng.choice([i for i, c in enumerate(conns) if c.enabled]))
        old = conns[k]
        conns[k] = replace(old, enabled=False)
        nodes.append(Node(hidden, "hidden", "neat_sigmoid"))
        conns += [Connection(old.source, hidden, 1.0), Connection(hidden, old.target, old.weight)]
    return Network(tuple(nodes), tuple(conns), "feedforward")


@dataclass(frozen=True)
class Movement:
    """How a network's episode moves the robot: the fraction of steps whose move was made
    (0 .. 1) and the largest distance from the start reached (units of length)."""

    moved_fraction: float
    reach: float


def movement(task: MazeTask, network: Network) -> Movement:
    path = task.trajectory(compile_batch([network], N_INPUTS, 2).network(0))
    moved = np.hypot(*np.diff(path, axis=0).T) > 0.0
    return Movement(float(moved.mean()), float(np.hypot(*(path - path[0]).T).max()))


@dataclass(frozen=True)
class Population:
    """The benchmark's networks, their compiled batch and how they move the robot."""

    networks: list[Network]
    batch: CompiledBatch
    movements: list[Movement]
    candidates: int  # random networks drawn to find them

    def summary(self) -> dict[str, float]:
        return {
            "networks": len(self.networks),
            "candidates_drawn": self.candidates,
            "hidden_nodes_mean": float(np.mean([n.hidden_nodes for n in self.networks])),
            "moved_fraction_mean": float(np.mean([m.moved_fraction for m in self.movements])),
            "reach_mean": float(np.mean([m.reach for m in self.movements])),
        }


def moving_population(task: MazeTask, seed: int = 0) -> Population:
    """The first POPULATION random NEAT-like networks that move the robot around (most
    random networks drive into a wall within a few steps and stay there)."""
    rng = np.random.default_rng(seed)
    networks: list[Network] = []
    movements: list[Movement] = []
    for drawn in range(1, MAX_CANDIDATES + 1):
        network = neat_like_network(rng)
        moves = movement(task, network)
        if moves.moved_fraction >= MIN_MOVED_FRACTION and moves.reach >= MIN_REACH:
            networks.append(network)
            movements.append(moves)
            if len(networks) == POPULATION:
                batch = compile_batch(networks, N_INPUTS, 2)
                return Population(networks, batch, movements, drawn)
    raise AssertionError(f"only {len(networks)} of {MAX_CANDIDATES} random networks move")


@pytest.fixture(scope="module")
def maze():
    task = tasks.make(TASK)
    assert task.maze.steps == 400
    return task, moving_population(task)


def numba_final_positions(task: MazeTask, batch: CompiledBatch) -> list[tuple[float, float]]:
    return [e.behaviour for e in task.evaluate_batch(batch)]


def robust_to_rounding(task: MazeTask, batch: CompiledBatch) -> np.ndarray:
    """bool per network: its numba episode ends within POSITION_TOLERANCE of where it ends
    from the start nudged by +-PROBE_NUDGE in x, in y and in the heading (six runs)."""
    steps, walls, goal = task.maze.steps, task.maze.walls, task.goal
    final = run_batch(batch, walls, task.start, goal, steps)
    spread = np.zeros(batch.size)
    for nudge in np.vstack([np.eye(3), -np.eye(3)]) * PROBE_NUDGE:
        moved = run_batch(batch, walls, task.start + nudge, goal, steps) - final
        spread = np.maximum(spread, np.hypot(*moved.T))
    return spread <= POSITION_TOLERANCE


def test_bench_maze_batch_throughput(benchmark, maze) -> None:
    """Evaluations (full 400-step episodes) per second per core through evaluate_batch on
    the compiled batch of a moving population (compiling is not timed)."""
    task, population = maze
    numba_final_positions(task, population.batch)  # loads or compiles the kernels

    def evaluate() -> list[tuple[float, float]]:
        return numba_final_positions(task, population.batch)

    if not benchmark.disabled:
        benchmark.pedantic(evaluate, rounds=20, iterations=1, warmup_rounds=1)
    seconds = workloads.median_seconds(evaluate, 20, timer=time.process_time)
    rate = len(population.networks) / seconds
    benchmark.extra_info.update(evaluations_per_second=rate, **population.summary())
    print(f"\n{TASK}: {rate:,.0f} evaluations/s on one core ({population.summary()})")
    assert rate >= EVALUATIONS_PER_SECOND_TARGET


def test_bench_maze_vs_pymunk_loop(benchmark, maze) -> None:
    """The same population through evaluate_batch and through the plain-Python pymunk
    loop, in interleaved rounds (kernel_workloads.compare on CPU time). The final
    positions of every episode robust to rounding must agree; the others are counted."""
    task, population = maze
    space = maze_pymunk_robot.wall_space(task.maze.walls)
    start = tuple(task.start.tolist())
    goal = tuple(task.goal.tolist())
    nets = [population.batch.network(i) for i in range(population.batch.size)]

    def pymunk_final_positions() -> list[tuple[float, float]]:
        return [maze_pymunk_robot.episode(n, space, start, goal, task.maze.steps) for n in nets]

    numba_final = np.array(numba_final_positions(task, population.batch))
    pymunk_final = np.array(pymunk_final_positions())
    gap = np.hypot(*(numba_final - pymunk_final).T)
    robust = robust_to_rounding(task, population.batch)
    assert robust.mean() >= MIN_ROBUST_SHARE, robust.sum()
    worst = int(np.where(robust, gap, -1.0).argmax())
    assert gap[worst] <= POSITION_TOLERANCE, (worst, numba_final[worst], pymunk_final[worst])
    refused = np.array([m.moved_fraction < 1.0 for m in population.movements])
    assert (robust & refused).any()  # the check covers episodes where the wall rule acted
    agreement = {
        "robust_networks": int(robust.sum()),
        "robust_with_refused_moves": int((robust & refused).sum()),
        "robust_max_final_gap": float(gap[worst]),
        "sensitive_networks": int((~robust).sum()),
        "sensitive_apart_beyond_tolerance": int((gap[~robust] > POSITION_TOLERANCE).sum()),
        "sensitive_max_final_gap": float(gap[~robust].max(initial=0.0)),
    }

    if not benchmark.disabled:  # the pymunk loop, for pytest-benchmark's table
        benchmark.pedantic(pymunk_final_positions, rounds=3, iterations=1)
    work = workloads.Workload(
        description=f"{len(nets)} networks, {task.maze.steps}-step episodes on {TASK}",
        kernel=lambda: numba_final_positions(task, population.batch),
        reference=pymunk_final_positions,
        kernel_repeats=30,
        reference_repeats=3,
        ratio_target=RATIO_TARGET,
    )
    result = workloads.compare(work, timer=time.process_time)
    numba_rate = len(nets) / result.kernel_s
    pymunk_rate = len(nets) / result.reference_s
    benchmark.extra_info.update(
        description=work.description,
        evaluations_per_second=numba_rate,
        pymunk_evaluations_per_second=pymunk_rate,
        ratio=result.ratio,
        **agreement,
    )
    print(
        f"\nnumba {numba_rate:,.0f} evaluations/s, pymunk loop {pymunk_rate:,.1f}; "
        f"ratio {result.ratio:.1f}x; final positions: {agreement}"
    )
    assert result.ratio >= RATIO_TARGET
