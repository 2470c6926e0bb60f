"""What every neuroyard task environment shares: the task it wraps, the episode's
bookkeeping, the reward rule and the checks of the calls.

Reward rule (one for every task): a step's reward is the change of the task's fitness of
the episode had it ended after the step, against had it ended before it, with 0 before the
first step. An episode's return is then the fitness the harness gives the same episode
(up to the rounding of the sum; a fitness the harness records as the task's worst because
the formula had no value counts as that worst, ``TaskSpec.min_fitness``).
"""

from __future__ import annotations

import math
from typing import Any, ClassVar

import gymnasium
import numpy as np

from neuroyard.core.errors import TaskError

from ..base import Task
from ..registry import make

NAMESPACE = "neuroyard"
RENDER_MODES = ("rgb_array",)


def gym_id(task_id: str) -> str:
    """The Gymnasium id of neuroyard task ``task_id``: ``neuroyard/`` + the task id
    (``pole2-markov-v1`` -> ``neuroyard/pole2-markov-v1``; Gymnasium reads name
    ``pole2-markov`` and version 1 from it)."""
    return f"{NAMESPACE}/{task_id}"


class TaskEnv(gymnasium.Env[np.ndarray, np.ndarray]):
    """A neuroyard task one step at a time. Subclasses set ``family`` (the task class they
    drive), the spaces, and implement :meth:`_start`, :meth:`_advance`, :meth:`_observe`,
    :meth:`_fitness`, :meth:`_info` and :meth:`_frame`.

    Built with the task id and the task's settings (``gymnasium.make(id, **settings)``:
    every setting the task declares, defaults for the rest); ``render_mode`` None or
    ``"rgb_array"``. The task is built with task seed 0: no task of a family with a
    per-step form draws from it.
    """

    metadata: ClassVar[dict[str, Any]] = {"render_modes": list(RENDER_MODES), "render_fps": 50}
    family: ClassVar[type[Task]]

    def __init__(self, task_id: str, render_mode: str | None = None, **settings: Any) -> None:
        self.task = make(task_id, 0, **settings)
        if not isinstance(self.task, self.family):
            raise TaskError(
                f"task {task_id} is not a {self.family.__name__} task: "
                f"{type(self).__name__} cannot drive it"
            )
        if render_mode is not None and render_mode not in RENDER_MODES:
            raise TaskError(
                f"environment {gym_id(task_id)}: render_mode {render_mode!r} is not one of "
                f"{', '.join(RENDER_MODES)}"
            )
        self.render_mode = render_mode
        self.task_spec = self.task.spec
        self.horizon = self._horizon()
        self.steps = 0
        self.fitness = 0.0
        self._over: bool | None = None  # None: not reset yet

    # -- what subclasses supply -------------------------------------------------------
    def _horizon(self) -> int:
        """Control steps of one episode; the step that reaches it is truncated."""
        raise NotImplementedError

    def _start(self) -> None:
        """Put the simulation at the task's start state."""
        raise NotImplementedError

    def _advance(self, action: np.ndarray) -> bool:
        """One step under ``action`` (the network's outputs); True when the task failed."""
        raise NotImplementedError

    def _observe(self) -> np.ndarray:
        """The network's input vector at the current state (a new array)."""
        raise NotImplementedError

    def _fitness(self) -> float:
        """The task's fitness of the episode if it ended now (NaN: the formula has none)."""
        raise NotImplementedError

    def _info(self) -> dict[str, Any]:
        """Figures of the current state for ``info`` (a new dict)."""
        raise NotImplementedError

    def _frame(self) -> np.ndarray:
        """The current state drawn: an (H, W, 3) uint8 array."""
        raise NotImplementedError

    # -- gymnasium's interface ----------------------------------------------------------
    def reset(
        self, *, seed: int | None = None, options: dict[str, Any] | None = None
    ) -> tuple[np.ndarray, dict[str, Any]]:
        """Start an episode at the task's start state, which is fixed (``seed`` seeds
        :attr:`np_random`, Gymnasium's contract; nothing in the dynamics draws from it).
        There are no options: a non-empty ``options`` is refused."""
        if options:
            raise TaskError(
                f"environment {gym_id(self.task.id)}: reset() takes no options, got "
                f"{', '.join(map(str, options))}"
            )
        super().reset(seed=seed)
        self._start()
        self.steps = 0
        self.fitness = 0.0
        self._over = False
        return self._observe(), self._info()

    def step(self, action: Any) -> tuple[np.ndarray, float, bool, bool, dict[str, Any]]:
        """One control step with ``action``, the network's output vector before the task's
        output rule (values outside the action space are treated by that rule, as the
        harness treats a network's outputs). Returns (observation, reward, terminated:
        the task's failure, truncated: the episode's horizon reached, info)."""
        if self._over is None:
            raise TaskError(f"environment {gym_id(self.task.id)}: call reset() before step()")
        if self._over:
            raise TaskError(
                f"environment {gym_id(self.task.id)}: the episode is over, call reset()"
            )
        outputs = self.action_space.shape[0]
        try:
            values = np.asarray(action, dtype=np.float64).reshape(outputs)
        except (TypeError, ValueError):
            raise TaskError(
                f"environment {gym_id(self.task.id)}: the action must be an array of shape "
                f"({outputs},), got {action!r}"
            ) from None
        terminated = self._advance(values)
        if not terminated:
            self.steps += 1
        fitness = self._fitness()
        if math.isnan(fitness):
            fitness = self.task_spec.min_fitness
        reward = fitness - self.fitness
        self.fitness = fitness
        truncated = not terminated and self.steps >= self.horizon
        self._over = terminated or truncated
        return self._observe(), float(reward), terminated, truncated, self._info()

    def render(self) -> np.ndarray | None:
        """The current state as an RGB frame with ``render_mode="rgb_array"``; None (and a
        warning, as Gymnasium's own environments do) without a render mode."""
        if self.render_mode is None:
            gymnasium.logger.warn(
                f"environment {gym_id(self.task.id)}: render() without a render mode; "
                'make it with render_mode="rgb_array"'
            )
            return None
        if self._over is None:
            raise TaskError(f"environment {gym_id(self.task.id)}: call reset() before render()")
        return self._frame()
