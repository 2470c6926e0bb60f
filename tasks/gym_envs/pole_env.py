"""The pole balancing tasks as Gymnasium environments (:class:`PoleEnv`).

One step is one control step of the harness's episode (:func:`~..pole.episodes.balance`)
made by the same numba functions: :func:`~..pole.episodes.observe` gives the observation,
:func:`~..pole.episodes.control_step` maps the action to the force, integrates
``substeps`` steps and checks the failure limits, :func:`~..pole.episodes.jiggle_term`
and :func:`~..pole.episodes.jiggle_sum` keep the damped fitness's jiggle sum.

* observation: the network's input vector, each observed state variable divided by its
  scale (``TaskSpec.observations``), float64, unbounded (the state is: while the episode
  runs, the position inputs stay within track_limit / scale_x and failure_angle /
  scale_angle, the velocities have no bound);
* action: the network's one output, a Box [0, 1] (the range the force mapping uses:
  ``TaskSpec.output_rule``; a value outside it saturates, NaN gives -max_force);
* reward: the change of the fitness (:mod:`.base`): 1 per balanced step for steps
  balanced, so the return is the steps balanced; for the damped fitness 0.1 / cap per
  balanced step plus the change of the anti-wiggle term 0.9 * 0.75 / jiggle sum, which
  has a value from the 100th step on;
* terminated: the cart left the track or a pole passed the failure angle (the step that
  fails is not counted, as in the harness); truncated: ``episode_steps`` steps balanced;
* start: the task's standard start, fixed (the long pole at ``start_angle``, all else 0);
* info: ``balanced_steps``, ``fitness`` (of the episode so far) and ``state`` (the
  simulator's state, SI units, in the layout of :mod:`..pole.physics`).
"""

from __future__ import annotations

from typing import Any, ClassVar

import gymnasium
import numpy as np

from ..pole.episodes import JIGGLE_WINDOW, control_step, jiggle_sum, jiggle_term, observe
from ..pole.physics import new_workspace, pack_constants
from ..pole.tasks import PoleBalancing
from . import frames
from .base import TaskEnv

HEIGHT, WIDTH = 400, 600  # pixels of a frame
MARGIN = 0.1  # share of the track's length left free on each side of a frame
CART_WIDTH, CART_HEIGHT = 0.4, 0.2  # m, drawn only
POLE_COLOURS = (frames.BROWN, frames.BLUE)


class PoleEnv(TaskEnv):
    """A pole task (:class:`~..pole.tasks.PoleBalancing`) one control step at a time."""

    family: ClassVar[type] = PoleBalancing

    def __init__(self, task_id: str, render_mode: str | None = None, **settings: Any) -> None:
        super().__init__(task_id, render_mode, **settings)
        task: PoleBalancing = self.task
        self.constants = pack_constants(task.physics)
        self.workspace = new_workspace(task.n_poles)
        self.euler = bool(task.physics.integrator == 1)
        self.state = task.start.copy()
        self.window = np.zeros(JIGGLE_WINDOW, dtype=np.float64)
        self.observation_space = gymnasium.spaces.Box(
            -np.inf, np.inf, shape=(self.task_spec.inputs,), dtype=np.float64
        )
        self.action_space = gymnasium.spaces.Box(0.0, 1.0, shape=(1,), dtype=np.float64)
        step_seconds = task.settings["tau"] * task.settings["substeps"]
        self.metadata = {**self.metadata, "render_fps": 1.0 / step_seconds}

    @classmethod
    def reward_threshold(cls, task_class: type[PoleBalancing]) -> float | None:
        """The return at and above which the task at its default settings counts as
        solved: ``success_steps`` when the fitness is steps balanced and an episode runs
        that long; None for the damped fitness (success also needs the generalization
        test) and for shorter episodes."""
        defaults = task_class.option_table().resolve({})
        if defaults.get("damped_fitness", False):
            return None
        if defaults["episode_steps"] < defaults["success_steps"]:
            return None
        return float(defaults["success_steps"])

    def _horizon(self) -> int:
        return int(self.task.settings["episode_steps"])

    def _start(self) -> None:
        self.state = self.task.start.copy()
        self.window[:] = 0.0

    def _advance(self, action: np.ndarray) -> bool:
        task: PoleBalancing = self.task
        failed = control_step(
            self.constants,
            task.physics.tau,
            self.euler,
            task.rules,
            self.state,
            float(action[0]),
            self.workspace,
        )
        if not failed:
            self.window[self.steps % JIGGLE_WINDOW] = jiggle_term(self.state)
        return bool(failed)

    def _observe(self) -> np.ndarray:
        inputs = np.empty(self.task_spec.inputs, dtype=np.float64)
        observe(self.task.rules, self.state, inputs)
        return inputs

    def _fitness(self) -> float:
        return self.task.episode_fitness(self.steps, float(jiggle_sum(self.window, self.steps)))

    def _info(self) -> dict[str, Any]:
        return {"balanced_steps": self.steps, "fitness": self.fitness, "state": self.state.copy()}

    def _frame(self) -> np.ndarray:
        """The track with its limits, the cart and the poles at their angles."""
        task: PoleBalancing = self.task
        limit = task.settings["track_limit"]
        scale = WIDTH / (2.0 * limit * (1.0 + 2.0 * MARGIN))  # pixels per metre
        ground = 0.8 * HEIGHT

        def column(x: float) -> float:
            return WIDTH / 2.0 + x * scale

        frame = frames.blank(HEIGHT, WIDTH)
        frames.segment(frame, (0.0, ground), (WIDTH, ground), 2.0, frames.BLACK)
        for side in (-limit, limit):
            frames.segment(
                frame, (column(side), ground - 20), (column(side), ground), 2.0, frames.RED
            )
        x = float(self.state[0])
        top = ground - CART_HEIGHT * scale
        frames.box(
            frame, column(x) - CART_WIDTH * scale / 2, top, column(x) + CART_WIDTH * scale / 2,
            ground, frames.GREY,
        )  # fmt: skip
        hinge = (column(x), top)
        for i, half in enumerate(task.physics.half_lengths):
            angle = float(self.state[2 + 2 * i])
            length = 2.0 * float(half) * scale
            tip = (hinge[0] + length * np.sin(angle), hinge[1] - length * np.cos(angle))
            frames.segment(frame, hinge, tip, max(3.0, 0.02 * scale), POLE_COLOURS[i % 2])
        frames.disc(frame, hinge, 3.0, frames.BLACK)
        return frame
