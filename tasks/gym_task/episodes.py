"""Episodes of networks in a Gymnasium environment: one at a time, or many in a vector env.

An episode starts with ``env.reset(seed=s)`` and a reset network, then steps until the
environment terminates or truncates it (its time limit); its return is the sum of its
rewards in step order. Both paths give the same episode for the same network and seed
(``tests/test_gym_task.py`` checks it), so a fitness does not depend on the path:

* :func:`episode`: one environment, one network; one numba call per step
  (:func:`~.interface.discrete_action` or :func:`~.interface.box_action`) beside
  gymnasium's ``step``.
* :func:`episodes_in_slots`: a ``gymnasium.vector.SyncVectorEnv`` of M sub-environments
  with autoreset disabled works through a list of (network, seed) jobs: each slot runs one
  job; when its episode ends, the slot is reset with the next job's seed
  (``reset(seed=..., options={"reset_mask": ...})``). One numba call per vector step
  computes the actions of every slot. A slot left without a job is still stepped by the
  vector environment (it cannot step a subset); its steps are counted apart (``idle``).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from neuroyard.core.batch import CompiledBatch
from neuroyard.core.compiled import CompiledNetwork, new_state

from .interface import Interface, box_action, box_actions, discrete_action, discrete_actions

if TYPE_CHECKING:  # for annotations only: gymnasium (~0.2 s to import) loads on use
    import gymnasium as gym
    from gymnasium.vector import SyncVectorEnv

IDLE_SEED = 0  # seed of the episodes a slot without a job runs (their results are dropped)


@dataclass(frozen=True)
class Episode:
    """One episode's return (sum of rewards) and the environment steps it took."""

    total: float
    steps: int


def episode(env: gym.Env, face: Interface, net: CompiledNetwork, seed: int) -> Episode:
    """Run ``net`` for one episode of ``env`` from ``env.reset(seed=seed)``."""
    observation, _ = env.reset(seed=seed)
    values, scratch = new_state(net)
    inputs = np.zeros(face.inputs, dtype=np.float64)
    outputs = np.zeros(face.outputs, dtype=np.float64)
    action = np.zeros(face.outputs, dtype=face.action_dtype)
    total, steps, done = 0.0, 0, False
    while not done:
        flat = face.flat(observation)
        if face.discrete:
            chosen = face.action_start + discrete_action(
                net, values, scratch, flat, face.centre, face.inverse_half_width,
                face.bounded, inputs, outputs,
            )  # fmt: skip
        else:
            box_action(
                net, values, scratch, flat, face.centre, face.inverse_half_width,
                face.bounded, inputs, outputs, face.action_low, face.action_span, action,
            )  # fmt: skip
            chosen = action.reshape(face.action_shape).copy()
        observation, reward, terminated, truncated, _ = env.step(chosen)
        total += float(reward)
        steps += 1
        done = terminated or truncated
    return Episode(total, steps)


def vector_env(make_env: Callable[[], gym.Env], slots: int) -> SyncVectorEnv:
    """A vector environment of ``slots`` sub-environments built by ``make_env``, with
    autoreset disabled (:func:`episodes_in_slots` resets each slot itself)."""
    from gymnasium.vector import AutoresetMode, SyncVectorEnv  # on use: see the top

    return SyncVectorEnv([make_env] * slots, copy=False, autoreset_mode=AutoresetMode.DISABLED)


@dataclass(frozen=True)
class SlotRun:
    """What :func:`episodes_in_slots` did: the episode of every job, in job order, and the
    steps taken by slots without a job (vector steps x idle slots)."""

    episodes: list[Episode]
    idle_steps: int


def episodes_in_slots(
    vec: SyncVectorEnv, face: Interface, batch: CompiledBatch, jobs: Sequence[tuple[int, int]]
) -> SlotRun:
    """Run every job (network index in ``batch``, episode seed) in the slots of ``vec``
    (module docstring); returns their episodes in job order."""
    slots = vec.num_envs
    network = np.full(slots, -1, dtype=np.int64)  # network of each slot's job, -1 idle
    job_of = np.full(slots, -1, dtype=np.int64)
    fresh = np.ones(slots, dtype=np.bool_)
    size = int(batch.n_nodes.max())
    values = np.zeros((slots, size), dtype=np.float64)
    scratch = np.zeros((slots, size), dtype=np.float64)
    inputs = np.zeros(face.inputs, dtype=np.float64)
    outputs = np.zeros(face.outputs, dtype=np.float64)
    if face.discrete:
        actions = np.zeros(slots, dtype=np.int64)
    else:
        actions = np.zeros((slots, face.outputs), dtype=face.action_dtype)
    totals = np.zeros(slots, dtype=np.float64)
    steps = np.zeros(slots, dtype=np.int64)
    results: list[Episode | None] = [None] * len(jobs)
    pending = iter(range(len(jobs)))
    seeds = []
    for s in range(slots):
        k = next(pending, -1)
        job_of[s] = k
        network[s] = jobs[k][0] if k >= 0 else -1
        seeds.append(jobs[k][1] if k >= 0 else IDLE_SEED)
    observations, _ = vec.reset(seed=seeds)
    idle_steps = 0
    while (job_of >= 0).any():
        flat = face.flat_batch(observations, vec.observation_space, slots)
        if face.discrete:
            discrete_actions(
                batch, network, fresh, values, scratch, flat, face.centre,
                face.inverse_half_width, face.bounded, inputs, outputs, face.action_start,
                actions,
            )  # fmt: skip
            chosen = actions.tolist()  # Python ints: gymnasium checks them faster
        else:
            box_actions(
                batch, network, fresh, values, scratch, flat, face.centre,
                face.inverse_half_width, face.bounded, inputs, outputs, face.action_low,
                face.action_span, actions,
            )  # fmt: skip
            chosen = actions.reshape((slots, *face.action_shape))
        observations, rewards, terminated, truncated, _ = vec.step(chosen)
        fresh[:] = False
        busy = job_of >= 0
        idle_steps += slots - int(busy.sum())
        totals[busy] += rewards[busy]
        steps[busy] += 1
        ended = np.flatnonzero(terminated | truncated)
        if ended.shape[0] == 0:
            continue
        mask = np.zeros(slots, dtype=np.bool_)
        seeds = [IDLE_SEED] * slots
        for s in ended.tolist():
            if job_of[s] >= 0:
                results[job_of[s]] = Episode(float(totals[s]), int(steps[s]))
            k = next(pending, -1)
            job_of[s] = k
            network[s] = jobs[k][0] if k >= 0 else -1
            seeds[s] = jobs[k][1] if k >= 0 else IDLE_SEED
            totals[s], steps[s], fresh[s], mask[s] = 0.0, 0, True, True
        observations, _ = vec.reset(seed=seeds, options={"reset_mask": mask})
    done = [r for r in results if r is not None]
    if len(done) != len(jobs):
        raise RuntimeError(f"{len(jobs) - len(done)} of {len(jobs)} jobs were not run")
    return SlotRun(done, idle_steps)
