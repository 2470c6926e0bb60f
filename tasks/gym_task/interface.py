"""How a Gymnasium environment's spaces become a network's inputs and outputs (ours).

Observations. The observation space is flattened by gymnasium's own
``gymnasium.spaces.flatten_space`` / ``flatten`` (a ``Box`` is its values in C order; a
``Discrete(n)`` becomes a one-hot vector of n values in [0, 1]; a ``Tuple`` or ``Dict`` of
these is their concatenation). Each flat value x becomes one network input:

* a dimension with finite bounds [low, high] is scaled linearly onto [-1, 1]:
  ``2 (x - low) / (high - low) - 1`` (0 when low == high); a value outside its declared
  bounds maps outside [-1, 1] and is not clipped;
* a dimension with an infinite bound (velocities of CartPole-v1) is squashed by
  ``x / (1 + |x|)`` into (-1, 1): a fixed rule of ours, odd and monotonic, so the sign and
  the order of values are kept, 1 maps to 0.5, and no scale of the environment is assumed.

Actions. ``Discrete(n, start)``: n outputs, the action is ``start`` + the index of the
largest output (ties to the lowest index; a NaN output is never the largest, and when every
output is NaN the action is ``start``). ``Box`` with finite bounds: one output per action
value, ``low + clip(out, 0, 1) (high - low)``, a NaN output counting as 0.5 (the middle
of the bounds), so every output, infinities included, maps to an action inside the
bounds. Other action spaces, and a ``Box`` with an infinite bound, are refused.

The per-step work (scaling the observation, one network step, the action) is one numba
call (:func:`discrete_action`, :func:`box_action`); :func:`discrete_actions` and
:func:`box_actions` do the same for the slots of a vector environment in one call.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numba
import numpy as np

from neuroyard.core.batch import CompiledBatch, member
from neuroyard.core.compiled import CompiledNetwork, reset, step
from neuroyard.core.errors import TaskError
from neuroyard.core.numbers import value_text

if TYPE_CHECKING:  # for annotations only: the functions that read a space import gymnasium
    import gymnasium as gym  # (~0.2 s) on use, so importing neuroyard.tasks stays light
    from gymnasium import spaces

SQUASH = "x / (1 + |x|)"


@dataclass(frozen=True)
class Interface:
    """The mapping between one environment's spaces and a network (module docstring).

    ``centre``, ``inverse_half_width`` (float64[inputs]): a bounded input is
    ``(x - centre) * inverse_half_width``; ``bounded`` (bool[inputs]) False marks a
    squashed one. ``discrete``: the action space is ``Discrete`` (then ``action_start`` is
    its first action), else a ``Box`` with ``action_low``/``action_span`` (float64) whose
    actions have ``action_dtype`` and ``action_shape``."""

    observation_space: spaces.Space
    inputs: int
    outputs: int
    centre: np.ndarray
    inverse_half_width: np.ndarray
    bounded: np.ndarray
    discrete: bool
    action_start: int
    action_low: np.ndarray
    action_span: np.ndarray
    action_dtype: np.dtype
    action_shape: tuple[int, ...]
    box_observations: bool  # a Box: its values are flattened by reshaping, no gymnasium call
    flat_dtype: np.dtype  # of a flat observation: the Box's own, else float64

    def flat(self, observation: object) -> np.ndarray:
        """One observation as its flat vector (gymnasium's ``flatten`` for non-Box spaces)."""
        if self.box_observations:
            return np.asarray(observation).reshape(-1)
        from gymnasium import spaces  # on use: see the imports at the top

        return np.asarray(spaces.flatten(self.observation_space, observation), dtype=np.float64)

    def flat_batch(self, observations: object, batch_space: spaces.Space, n: int) -> np.ndarray:
        """The observations of a vector environment's ``n`` slots as an (n, inputs) array."""
        if self.box_observations:
            return np.asarray(observations).reshape(n, -1)
        from gymnasium.vector.utils import iterate  # on use: see the imports at the top

        items = iterate(batch_space, observations)
        return np.stack([self.flat(item) for item in items])


def interface(env_id: str, env: gym.Env) -> Interface:
    """The :class:`Interface` of ``env`` (a :class:`TaskError` names a space it cannot map)."""
    from gymnasium import spaces  # on use: see the imports at the top

    observation_space = env.observation_space
    try:
        flat_space = spaces.flatten_space(observation_space)
    except NotImplementedError:
        flat_space = None
    if not isinstance(flat_space, spaces.Box):
        raise TaskError(
            f"gym env {env_id}: observation space {observation_space} cannot be flattened "
            "into a Box of network inputs"
        )
    low = flat_space.low.astype(np.float64).reshape(-1)
    high = flat_space.high.astype(np.float64).reshape(-1)
    bounded = np.isfinite(low) & np.isfinite(high)
    width = np.where(bounded, high - low, 0.0)
    centre = np.where(bounded, low + width / 2.0, 0.0)
    inverse = np.divide(2.0, width, out=np.zeros_like(width), where=width > 0.0)
    action_space = env.action_space
    if isinstance(action_space, spaces.Discrete):
        outputs, start = int(action_space.n), int(action_space.start)
        a_low = a_span = np.zeros(0)
        dtype, shape = np.dtype(np.int64), ()
    elif isinstance(action_space, spaces.Box):
        a_low = action_space.low.astype(np.float64).reshape(-1)
        a_high = action_space.high.astype(np.float64).reshape(-1)
        if not (np.isfinite(a_low).all() and np.isfinite(a_high).all()):
            raise TaskError(
                f"gym env {env_id}: action space {action_space} has an infinite bound; "
                "outputs can only be scaled onto finite bounds"
            )
        outputs, start = a_low.shape[0], 0
        a_span = a_high - a_low
        dtype, shape = action_space.dtype, action_space.shape
    else:
        raise TaskError(
            f"gym env {env_id}: action space {action_space} is not supported "
            "(Discrete and Box only)"
        )
    return Interface(
        observation_space=observation_space,
        inputs=int(low.shape[0]),
        outputs=outputs,
        centre=centre,
        inverse_half_width=inverse,
        bounded=bounded,
        discrete=isinstance(action_space, spaces.Discrete),
        action_start=start,
        action_low=a_low,
        action_span=a_span,
        action_dtype=np.dtype(dtype),
        action_shape=tuple(shape),
        box_observations=isinstance(observation_space, spaces.Box),
        flat_dtype=np.dtype(
            observation_space.dtype if isinstance(observation_space, spaces.Box) else np.float64
        ),
    )


def describe_observations(face: Interface, space: spaces.Space) -> tuple[str, ...]:
    """Each input in order, with its bounds and how it is scaled (for the spec)."""
    from gymnasium import spaces  # on use: see the imports at the top

    flat = spaces.flatten_space(space)
    low, high = flat.low.reshape(-1), flat.high.reshape(-1)
    what = "" if isinstance(space, spaces.Box) else f" of {space} flattened by gymnasium"
    out = []
    for k in range(face.inputs):
        if face.bounded[k]:
            rule = f"scaled from [{value_text(low[k])}, {value_text(high[k])}] onto [-1, 1], not clipped"
        else:
            bounds = f"[{value_text(low[k])}, {value_text(high[k])}]"
            rule = f"bounds {bounds}: squashed by {SQUASH} into (-1, 1)"
        out.append(f"observation value {k}{what}: {rule}")
    return tuple(out)


def describe_actions(face: Interface, space: spaces.Space) -> tuple[str, ...]:
    """Each output in order and how it becomes the action (for the spec)."""
    if face.discrete:
        return tuple(
            f"score of action {face.action_start + k} of {space}: the action taken is the "
            "one whose output is largest"
            for k in range(face.outputs)
        )
    return tuple(
        f"action value {k} of {space}: {value_text(lo)} + clip(out, 0, 1) * {value_text(span)}"
        for k, (lo, span) in enumerate(zip(face.action_low, face.action_span, strict=True))
    )


def output_rule(face: Interface) -> str:
    """How out-of-range and non-finite outputs are treated (for the spec)."""
    if face.discrete:
        return (
            "only the order of the outputs counts: the largest wins (ties to the lowest "
            "index), +inf is largest, a NaN output is never chosen and all NaN gives the "
            "first action, so every output maps to a valid action"
        )
    return (
        "each output is clipped to [0, 1] before it is scaled onto the action's bounds "
        "(+-inf saturate), a NaN output counts as 0.5 (the middle of the bounds), so every "
        "action lies inside the bounds"
    )


@numba.njit(cache=True)
def observe(
    observation: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
) -> None:
    """Write the network inputs of one flat observation into ``inputs`` (module docstring)."""
    for k in range(inputs.shape[0]):
        x = float(observation[k])
        if bounded[k]:
            inputs[k] = (x - centre[k]) * inverse_half_width[k]
        else:
            inputs[k] = x / (1.0 + abs(x))


@numba.njit(cache=True)
def largest(outputs: np.ndarray) -> int:
    """Index of the largest output; ties to the lowest index, NaN never chosen, all NaN 0."""
    best = 0
    value = -np.inf
    for j in range(outputs.shape[0]):
        if outputs[j] > value:
            best = j
            value = outputs[j]
    return best


@numba.njit(cache=True)
def scale_action(
    outputs: np.ndarray, low: np.ndarray, span: np.ndarray, action: np.ndarray
) -> None:
    """``action[j] = low[j] + clip(outputs[j], 0, 1) * span[j]``, a NaN output as 0.5."""
    for j in range(outputs.shape[0]):
        o = outputs[j]
        if o != o:
            o = 0.5
        action[j] = low[j] + min(1.0, max(0.0, o)) * span[j]


@numba.njit(cache=True)
def discrete_action(
    net: CompiledNetwork,
    values: np.ndarray,
    scratch: np.ndarray,
    observation: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
) -> int:
    """One control step on a Discrete action space: the index of the largest output."""
    observe(observation, centre, inverse_half_width, bounded, inputs)
    step(net, values, scratch, inputs, outputs)
    return largest(outputs)


@numba.njit(cache=True)
def box_action(
    net: CompiledNetwork,
    values: np.ndarray,
    scratch: np.ndarray,
    observation: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
    low: np.ndarray,
    span: np.ndarray,
    action: np.ndarray,
) -> None:
    """One control step on a Box action space: the scaled outputs into ``action``."""
    observe(observation, centre, inverse_half_width, bounded, inputs)
    step(net, values, scratch, inputs, outputs)
    scale_action(outputs, low, span, action)


@numba.njit(cache=True)
def _slot_step(
    batch: CompiledBatch,
    network: int,
    fresh: bool,
    values: np.ndarray,
    scratch: np.ndarray,
    observation: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
) -> None:
    """One network step of a vector slot that runs network ``network`` of ``batch``;
    ``fresh``: the slot's episode has just started, so its network state is reset first."""
    net = member(batch, network)
    n = net.n_nodes
    if fresh:
        reset(net, values[:n])
    observe(observation, centre, inverse_half_width, bounded, inputs)
    step(net, values[:n], scratch[:n], inputs, outputs)


@numba.njit(cache=True)
def discrete_actions(
    batch: CompiledBatch,
    networks: np.ndarray,
    fresh: np.ndarray,
    values: np.ndarray,
    scratch: np.ndarray,
    observations: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
    start: int,
    actions: np.ndarray,
) -> None:
    """The actions of every slot of a vector environment on a Discrete space, in one call.
    Slot s runs network ``networks[s]`` of ``batch`` (-1: an idle slot, given action
    ``start``) with its own state ``values[s]``, ``scratch[s]``."""
    for s in range(networks.shape[0]):
        if networks[s] < 0:
            actions[s] = start
            continue
        _slot_step(
            batch, networks[s], fresh[s], values[s], scratch[s], observations[s],
            centre, inverse_half_width, bounded, inputs, outputs,
        )  # fmt: skip
        actions[s] = start + largest(outputs)


@numba.njit(cache=True)
def box_actions(
    batch: CompiledBatch,
    networks: np.ndarray,
    fresh: np.ndarray,
    values: np.ndarray,
    scratch: np.ndarray,
    observations: np.ndarray,
    centre: np.ndarray,
    inverse_half_width: np.ndarray,
    bounded: np.ndarray,
    inputs: np.ndarray,
    outputs: np.ndarray,
    low: np.ndarray,
    span: np.ndarray,
    actions: np.ndarray,
) -> None:
    """As :func:`discrete_actions` on a Box space: ``actions[s]`` gets slot s's scaled
    outputs (an idle slot the middle of the bounds)."""
    for s in range(networks.shape[0]):
        if networks[s] < 0:
            for j in range(low.shape[0]):
                actions[s, j] = low[j] + 0.5 * span[j]
            continue
        _slot_step(
            batch, networks[s], fresh[s], values[s], scratch[s], observations[s],
            centre, inverse_half_width, bounded, inputs, outputs,
        )  # fmt: skip
        scale_action(outputs, low, span, actions[s])
