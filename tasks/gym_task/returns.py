"""Bounds of an episode's return, for the task's fitness bounds.

Gymnasium 1.x environments no longer declare the range of their rewards (``Env.reward_range``
is gone; a few older environments still set it). So the per-step reward range of the
classic-control environments is written here, each read from the "Rewards" section of the
environment's documentation in gymnasium's source (``gymnasium/envs/classic_control/*.py``;
reference/SOURCES.md: towers2024; Gymnasium tasks), and computed from the environment's own
constants where the documentation gives a formula. ``tests/test_gym_task.py`` holds every
entry to episodes of the environment itself.

With rewards in [r_low, r_high] per step and at most T steps, an episode's return lies in
``[min(0, r_low) T, max(0, r_high) T]`` (an episode has at least one step, so a lower bound
of 0 is safe when every reward is positive).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # for annotations only: importing gymnasium takes ~0.2 s
    import gymnasium as gym

# registered id -> per-step (lowest, highest) reward, from the unwrapped environment
STEP_REWARDS: dict[str, Callable[[gym.Env], tuple[float, float]]] = {
    # +1 for every step, the terminating one included (cartpole.py, Rewards)
    "CartPole-v0": lambda env: (1.0, 1.0),
    "CartPole-v1": lambda env: (1.0, 1.0),
    # -1 for every step (mountain_car.py, Rewards)
    "MountainCar-v0": lambda env: (-1.0, -1.0),
    # -0.1 action^2 each step, +100 on reaching the goal; the action is in its bounds
    # (continuous_mountain_car.py, Rewards)
    "MountainCarContinuous-v0": lambda env: (
        -0.1 * max(env.min_action**2, env.max_action**2),
        100.0,
    ),
    # -1 for every step that does not reach the target height, 0 for the one that does
    # (acrobot.py, Rewards)
    "Acrobot-v1": lambda env: (-1.0, 0.0),
    # -(theta^2 + 0.1 theta_dot^2 + 0.001 torque^2), theta normalised to [-pi, pi], at
    # most -(pi^2 + 0.1 max_speed^2 + 0.001 max_torque^2) (pendulum.py, Rewards)
    "Pendulum-v1": lambda env: (
        -(math.pi**2 + 0.1 * env.max_speed**2 + 0.001 * env.max_torque**2),
        0.0,
    ),
}


def step_reward_range(env_id: str, env: gym.Env) -> tuple[float, float] | None:
    """Per-step (lowest, highest) reward of ``env`` (registered as ``env_id``): our table,
    else the environment's own finite ``reward_range``; None when neither is known."""
    unwrapped = env.unwrapped
    if env_id in STEP_REWARDS:
        return STEP_REWARDS[env_id](unwrapped)
    declared = getattr(unwrapped, "reward_range", None)
    if declared is not None and all(math.isfinite(float(r)) for r in declared):
        low, high = declared
        return float(low), float(high)
    return None


def return_bounds(rewards: tuple[float, float], max_steps: int) -> tuple[float, float]:
    """(lowest, highest) return of an episode of at most ``max_steps`` steps whose rewards
    lie in ``rewards`` (module docstring)."""
    low, high = rewards
    return min(0.0, low) * max_steps, max(0.0, high) * max_steps
