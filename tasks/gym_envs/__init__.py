"""neuroyard's tasks with a per-step form as Gymnasium environments.

Importing this package registers, in Gymnasium's registry, one environment per
registered pole task (:class:`.pole_env.PoleEnv`) and maze task (:class:`.maze_env.MazeEnv`)
under the id ``neuroyard/<task id>`` (:func:`gym_id`: ``neuroyard/pole2-markov-v1``,
``neuroyard/maze-hard-v3``; Gymnasium reads namespace ``neuroyard``, the name and the
version from it, so a new version of a task is a new version of its environment). Retired
task ids have none. Gymnasium 1.x has no entry-point group that loads third-party
environments, so the import is the registration::

    import gymnasium
    import neuroyard.tasks.gym_envs  # noqa: F401
    env = gymnasium.make("neuroyard/pole2-markov-v1", render_mode="rgb_array")

or, with Gymnasium's ``module:id`` form (``make`` imports the module first)::

    env = gymnasium.make("neuroyard.tasks.gym_envs:neuroyard/pole2-markov-v1")

Keyword arguments of ``make`` are the task's settings
(``episode_steps=1000``; a task that needs a setting needs it here too:
``gymnasium.make("neuroyard/maze-file-v1", file=PATH)``). No ``max_episode_steps`` is
registered: every environment truncates at its task's horizon itself, which follows the
settings. ``reward_threshold`` is registered where the task's success at its default
settings is a return at or above a number (:meth:`.pole_env.PoleEnv.reward_threshold`,
:meth:`.maze_env.MazeEnv.reward_threshold`).
"""

from __future__ import annotations

import gymnasium

from ..registry import task_class, task_ids
from .base import NAMESPACE, TaskEnv, gym_id
from .maze_env import MazeEnv
from .pole_env import PoleEnv

ENVIRONMENTS: tuple[type[TaskEnv], ...] = (PoleEnv, MazeEnv)


def _register_environments() -> list[str]:
    """Register an environment for every registered task of a family that
    :data:`ENVIRONMENTS` drives; returns the Gymnasium ids, sorted."""
    registered = []
    for task_id in task_ids():
        cls = task_class(task_id)
        for env in ENVIRONMENTS:
            if issubclass(cls, env.family):
                gymnasium.register(
                    id=gym_id(task_id),
                    entry_point=f"{env.__module__}:{env.__name__}",
                    reward_threshold=env.reward_threshold(cls),
                    kwargs={"task_id": task_id},
                )
                registered.append(gym_id(task_id))
    return sorted(registered)


ENV_IDS: tuple[str, ...] = tuple(_register_environments())

__all__ = ["ENV_IDS", "NAMESPACE", "MazeEnv", "PoleEnv", "TaskEnv", "gym_id"]
