"""Speed of the Gymnasium task (``gym-env-v1``): the Python cost per environment step, and
the vector path of ``evaluate_batch`` against one network at a time. Run with:

    pytest -m bench --benchmark-enable tests/bench/test_bench_gym.py \
        --benchmark-json=results/benchmarks/gym_speed.json

Per workload (a population of networks, K = 5 episodes each), measured side by side in
interleaved rounds on CPU time (kernel_workloads.compare), in microseconds per environment
step of the episodes:

* ``env_only``: gymnasium's environment alone, stepped as often as the episodes step it,
  with actions from a fixed list (its own cost: dynamics, wrappers, space checks);
* ``plain``: ``Task.evaluate`` one network at a time (one numba call per step);
* ``vector``: ``Task.evaluate_batch``, the whole population in a ``SyncVectorEnv`` of
  ``SLOTS`` sub-environments (one numba call per vector step for every slot). Its idle
  steps (slots without a job at the end of a batch) are reported beside.

``ratio`` = plain / vector (above 1: the vector path is faster). For CartPole-v1 the
environment's own vectorised form (``CartPoleVectorEnv``) is timed too, stepping its
sub-environments with fixed actions; the task cannot use it, since it draws every
sub-environment's start from one generator and so cannot start an episode from a given
seed, and the fitness would depend on the batch it was evaluated in.

Targets (ours): the task's own Python cost per step (plain - env_only) at most the
environment's own cost (plain <= 2 x env_only), and the vector path used for batches at
least 0.8 times as fast as the plain one on every workload (else ``evaluate_batch``
should not use it).
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import gymnasium as gym
import kernel_workloads as workloads  # tests/bench is on pytest's pythonpath
import numpy as np
import pytest

from neuroyard.core.batch import CompiledBatch, compile_batch
from neuroyard.core.network import Connection, Network, Node, fully_connected
from neuroyard.tasks import make
from neuroyard.tasks.gym_task.task import SLOTS, GymEnvTask

pytestmark = pytest.mark.bench

POPULATION = 150  # NEAT's population size (reference/SOURCES.md: stanley2002; NEAT settings)
PLAIN_TO_ENV_TARGET = 2.0
VECTOR_RATIO_TARGET = 0.8
NATIVE_ENVS = 64


def angle_controller(weights: np.ndarray) -> Network:
    """Output 1 = w . inputs, output 0 = 0: with w near (0, 0, 1, 1) it balances the pole
    for the whole episode (tests/test_gym_task.py)."""
    nodes = [Node(k, "input") for k in range(4)]
    nodes += [Node(4, "output", "identity"), Node(5, "output", "identity")]
    return Network(tuple(nodes), tuple(Connection(k, 5, float(w)) for k, w in enumerate(weights)))


def random_networks(task: GymEnvTask, count: int, seed: int) -> list[Network]:
    """Fully connected networks with N(0, 3) weights, tanh (most fail CartPole quickly)."""
    spec = task.spec
    rng = np.random.default_rng(seed)
    links = len(fully_connected(spec.inputs, spec.outputs).connections)
    return [
        fully_connected(spec.inputs, spec.outputs, rng.normal(0, 3, links), activation="tanh")
        for _ in range(count)
    ]


@dataclass(frozen=True)
class Workload:
    name: str
    task: GymEnvTask
    batch: CompiledBatch


def workload(name: str) -> Workload:
    rng = np.random.default_rng(1)
    if name == "cartpole-random":
        task = make("gym-env-v1", 1, env="CartPole-v1")
        networks = random_networks(task, POPULATION, 0)
    elif name == "cartpole-balancing":
        task = make("gym-env-v1", 1, env="CartPole-v1")
        networks = [angle_controller([0, 0, 1, 1] + rng.normal(0, 0.1, 4)) for _ in range(50)]
    else:
        task = make("gym-env-v1", 1, env="Pendulum-v1", threshold=-200.0)
        networks = random_networks(task, 50, 0)
    spec = task.spec
    task.warm_up()
    return Workload(name, task, compile_batch(networks, spec.inputs, spec.outputs))


def env_only(task: GymEnvTask, steps: int) -> None:
    """Step the task's environment ``steps`` times with actions from a fixed list,
    resetting with a seed where an episode ends."""
    env = task.make_env()
    space = env.action_space
    space.seed(0)
    actions = [space.sample() for _ in range(64)]
    env.reset(seed=0)
    for t in range(steps):
        _, _, terminated, truncated, _ = env.step(actions[t % 64])
        if terminated or truncated:
            env.reset(seed=t)


def native_cartpole_microseconds() -> float:
    """Microseconds per sub-environment step of CartPole-v1's own vector form."""
    vec = gym.make_vec("CartPole-v1", num_envs=NATIVE_ENVS, vectorization_mode="vector_entry_point")
    vec.reset(seed=0)
    actions = np.arange(NATIVE_ENVS) % 2
    rounds = 2000

    def run() -> None:
        for _ in range(rounds):
            vec.step(actions)

    return workloads.median_seconds(run, 3, timer=time.process_time) / (rounds * NATIVE_ENVS) * 1e6


@pytest.mark.parametrize("name", ["cartpole-random", "cartpole-balancing", "pendulum-random"])
def test_bench_gym_plain_against_vector(benchmark, name: str) -> None:
    work = workload(name)
    task, batch = work.task, work.batch
    nets = [batch.network(i) for i in range(batch.size)]

    def plain() -> list[float]:
        return [task.evaluate(net).fitness for net in nets]

    def vector() -> list[float]:
        return [e.fitness for e in task.evaluate_batch(batch)]

    before = task.steps_run
    assert plain() == vector()  # the same episodes on both paths
    steps = (task.steps_run - before) // 2
    idle = task.run_jobs(batch, task.training_seeds).idle_steps
    if not benchmark.disabled:
        benchmark.pedantic(vector, rounds=3, iterations=1)
    description = (
        f"{batch.size} networks x {len(task.training_seeds)} episodes of "
        f"{task.settings['env']}, {steps:,} environment steps"
    )
    paths = workloads.Workload(description, vector, plain, kernel_repeats=5, reference_repeats=5)
    result = workloads.compare(paths, timer=time.process_time)
    bare = workloads.median_seconds(lambda: env_only(task, steps), 5, timer=time.process_time)
    per_step = {
        "env_only": bare / steps * 1e6,
        "plain": result.reference_s / steps * 1e6,
        "vector": result.kernel_s / steps * 1e6,
    }
    figures: dict[str, float | str] = {
        "description": description,
        **{f"{k}_microseconds_per_step": v for k, v in per_step.items()},
        "task_python_microseconds_per_step": per_step["plain"] - per_step["env_only"],
        "ratio_plain_over_vector": result.ratio,
        "environment_steps": steps,
        "idle_slot_steps": idle,
        "slots": min(SLOTS, batch.size * len(task.training_seeds)),
        "networks": batch.size,
    }
    if name.startswith("cartpole"):
        figures["cartpole_vector_env_microseconds_per_step"] = native_cartpole_microseconds()
    benchmark.extra_info.update(figures)
    print(
        f"\n{name}: " + ", ".join(f"{k} {v:.3g}" for k, v in figures.items() if k != "description")
    )
    assert per_step["plain"] <= PLAIN_TO_ENV_TARGET * per_step["env_only"]
    assert result.ratio >= VECTOR_RATIO_TARGET
