"""Balancing episodes: dynamics and network together in one numba call.

One control step: the network reads the observed state variables (each divided by its
scale: :func:`observe`), steps once, its first output is mapped to a force, the force is
held for ``substeps`` integration steps, then the failure limits are checked
(:func:`control_step`). The count of control steps completed inside the limits is the
number of steps balanced. :func:`balance` runs a whole episode in one call; the
Gymnasium environments (``neuroyard.tasks.gym_envs``) call the same functions from Python
one control step at a time.

Failure: ``|x| > track_limit`` or any ``|theta_i| > failure_angle`` (a NaN state also
fails). For the damped fitness the kernel also returns the sum, over the last
``JIGGLE_WINDOW`` balanced steps, of ``|x| + |x_dot| + |theta_1| + |theta_dot_1|`` in raw
units (Gruau, Whitley & Pyeatt 1996, from memory;
reference/SOURCES.md: gruau1996; damped fitness), or 0 when fewer steps were balanced.
"""

from __future__ import annotations

from typing import NamedTuple

import numba
import numpy as np

from neuroyard.core.compiled import CompiledNetwork, new_state, step
from neuroyard.reference.published import protocol

from .physics import KERNEL, Physics, integration_step, new_workspace, pack_constants

# Gruau, Whitley & Pyeatt 1996: the damped fitness looks at the last 100 steps
# (reference/figures/pole.toml, table damped_fitness).
JIGGLE_WINDOW: int = protocol("pole", "damped_fitness")["window"]

# Force mapping codes used inside the kernels.
FORCE_MAPPINGS: dict[str, int] = {"linear": 0, "bang-bang": 1}


class EpisodeRules(NamedTuple):
    """How the network sees and moves the cart, and when an episode fails.

    ``obs_index``: state indices the network sees, in input order; ``obs_scale``: the
    divisor of each. ``force_mapping``: 0 = linear, F = max_force * clip(2 out - 1, -1, 1);
    1 = bang-bang, F = +max_force if out > 0.5 else -max_force. Lengths in m, angles in rad.
    """

    obs_index: np.ndarray  # uint32
    obs_scale: np.ndarray  # float64
    force_mapping: int
    max_force: float
    substeps: int
    track_limit: float
    failure_angle: float


@numba.njit(**KERNEL)
def failed(rules: EpisodeRules, state: np.ndarray) -> bool:
    """True when the cart is off the track or a pole is past the failure angle (or NaN)."""
    if not abs(state[0]) <= rules.track_limit:
        return True
    for k in range(2, state.shape[0], 2):  # noqa: SIM110 - no generators in numba
        if not abs(state[k]) <= rules.failure_angle:
            return True
    return False


@numba.njit(inline="always", **KERNEL)
def observe(rules: EpisodeRules, state: np.ndarray, inputs: np.ndarray) -> None:
    """Write the network's inputs at ``state`` into ``inputs``: each observed state
    variable divided by its scale, in input order."""
    for j in range(rules.obs_index.shape[0]):
        inputs[j] = state[rules.obs_index[j]] / rules.obs_scale[j]


@numba.njit(inline="always", **KERNEL)
def applied_force(rules: EpisodeRules, output: float) -> float:
    """The force (N) the network's first ``output`` gives under the rules' force mapping;
    finite for every output (a NaN compares false: -max_force)."""
    if rules.force_mapping == 1:
        return rules.max_force if output > 0.5 else -rules.max_force
    return rules.max_force * min(1.0, max(-1.0, 2.0 * output - 1.0))


@numba.njit(**KERNEL)
def control_step(
    c: np.ndarray,
    tau: float,
    euler: bool,
    rules: EpisodeRules,
    state: np.ndarray,
    output: float,
    ws: np.ndarray,
) -> bool:
    """One control step after the network has stepped: the force of ``output``
    (:func:`applied_force`) held for ``rules.substeps`` integration steps of ``tau``
    seconds (``state`` advanced in place); returns whether the episode failed
    (:func:`failed`). ``c`` from :func:`~.physics.pack_constants`, ``ws`` from
    :func:`~.physics.new_workspace`. :func:`balance` makes the same calls in its loop
    (written out there: a call of this function in the loop measured 10-15% slower)."""
    force = applied_force(rules, output)
    for _ in range(rules.substeps):
        integration_step(c, tau, euler, state, force, ws)
    return failed(rules, state)


@numba.njit(inline="always", **KERNEL)
def jiggle_term(state: np.ndarray) -> float:
    """One balanced step's term of the jiggle sum: ``|x| + |x_dot| + |theta_1| +
    |theta_dot_1|`` in raw units."""
    return abs(state[0]) + abs(state[1]) + abs(state[2]) + abs(state[3])


@numba.njit(inline="always", **KERNEL)
def jiggle_sum(window: np.ndarray, steps: int) -> float:
    """The jiggle sum after ``steps`` balanced steps whose terms (:func:`jiggle_term`) went
    into the ring buffer ``window`` (slot ``step % JIGGLE_WINDOW``): the sum of the last
    ``JIGGLE_WINDOW`` terms, or 0 when fewer steps were balanced."""
    return window.sum() if steps >= JIGGLE_WINDOW else 0.0


@numba.njit(**KERNEL)
def balance(
    net: CompiledNetwork,
    phys: Physics,
    rules: EpisodeRules,
    start: np.ndarray,
    max_steps: int,
    record: np.ndarray,
) -> tuple[int, float]:
    """Run one episode of at most ``max_steps`` control steps from ``start``.

    Returns (steps balanced, jiggle sum of the last JIGGLE_WINDOW steps). When ``record``
    has rows, row 0 gets the start state and row k the state after balanced step k (rows
    past the end of the episode are left untouched); pass a (0, n) array to skip.
    """
    values, scratch = new_state(net)
    state = start.copy()
    inputs = np.empty(rules.obs_index.shape[0], dtype=np.float64)
    outputs = np.zeros(net.out_idx.shape[0], dtype=np.float64)
    window = np.zeros(JIGGLE_WINDOW, dtype=np.float64)
    keep = record.shape[0]
    if keep > 0:
        record[0] = state
    c = pack_constants(phys)
    ws = new_workspace(phys.masses.shape[0])
    tau, euler = phys.tau, phys.integrator == 1
    steps = 0
    while steps < max_steps:
        observe(rules, state, inputs)
        step(net, values, scratch, inputs, outputs)
        force = applied_force(rules, outputs[0])
        for _ in range(rules.substeps):
            integration_step(c, tau, euler, state, force, ws)
        if failed(rules, state):
            break
        window[steps % JIGGLE_WINDOW] = jiggle_term(state)
        steps += 1
        if steps < keep:
            record[steps] = state
    return steps, jiggle_sum(window, steps)


@numba.njit(**KERNEL)
def count_balanced(
    net: CompiledNetwork,
    phys: Physics,
    rules: EpisodeRules,
    starts: np.ndarray,
    max_steps: int,
) -> int:
    """Number of rows of ``starts`` from which ``net`` balances all ``max_steps`` steps."""
    n_state = starts.shape[1]
    no_record = np.empty((0, n_state), dtype=np.float64)
    passed = 0
    for k in range(starts.shape[0]):
        steps, _ = balance(net, phys, rules, starts[k], max_steps, no_record)
        if steps == max_steps:
            passed += 1
    return passed
