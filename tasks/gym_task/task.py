"""Any Gymnasium environment as a neuroyard task: ``--task gym:ENV_ID`` (``gym-env-v1``).

The environment is gymnasium's own, made with ``gymnasium.make(env, max_episode_steps=
max_steps, disable_env_checker=True)``: neuroyard re-implements no dynamics. Networks see
the observations and act as :mod:`.interface` says (inputs in [-1, 1] from the observation
space's bounds, ``x / (1 + |x|)`` for an unbounded dimension; the largest output of a
``Discrete`` space, outputs clipped to [0, 1] and scaled onto a ``Box``'s bounds).

* Fitness: the mean return over ``episodes`` (K) episodes. The K episode seeds are drawn
  once from the task seed (which the harness derives from the run), so every evaluation of
  a run meets the same K starts and the same network always gets the same fitness.
* Success: the mean return over ``validation_episodes`` episodes whose seeds are drawn from
  another stream of the task seed and differ from every training seed is at least
  ``threshold`` (default: the environment's registered ``reward_threshold``).
* Counts: an evaluation is K episodes. The task counts the episodes and environment steps
  its evaluations took; each success test reports them so far as the metrics ``episodes``
  and ``env_steps`` (so a solved run's record holds the episodes and steps it took to
  solve), beside ``validation_return`` and the steps of its own validation episodes
  (``validation_steps``, a detail). The harness counts the validation episodes as the
  success test's evaluations.
* Fitness bounds: ``[min_return, max_return]``, filled in when the task is built from the
  per-step reward range (:mod:`.returns`) times ``max_steps``; an environment whose range
  is not known needs ``min_return`` (``max_return`` may stay unbounded).

Settings left at None (``threshold``, ``max_steps``, ``min_return``, ``max_return``) are
filled in with the values found in gymnasium when the task is built, so every run records
the values it ran under.

``evaluate_batch`` runs a whole generation's episodes in a ``gymnasium.vector.SyncVectorEnv``
(:func:`.episodes.episodes_in_slots`); ``evaluate`` and the success test run one network in
one environment (:func:`.episodes.episode`); both give the same episodes.
``tests/bench/test_bench_gym.py`` measures the two paths side by side.
"""

from __future__ import annotations

import math
from functools import cached_property
from typing import TYPE_CHECKING, Any

import numpy as np

from neuroyard.core.batch import CompiledBatch, compile_batch
from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import TaskError
from neuroyard.core.evolver import Evaluation
from neuroyard.core.network import fully_connected
from neuroyard.core.numbers import value_text
from neuroyard.core.options import Option

from ..base import Metric, SuccessCheck, Task, TaskSpec
from ..registry import register, register_form
from . import interface as io
from .episodes import Episode, SlotRun, episode, episodes_in_slots, vector_env
from .returns import return_bounds, step_reward_range

if TYPE_CHECKING:  # for annotations only: gymnasium (~0.2 s to import) loads when a task is
    import gymnasium as gym  # built (registered, make_env), so neuroyard.tasks stays light

GYMNASIUM = (
    "Towers et al. (2024). Gymnasium: a standard interface for reinforcement learning "
    "environments (reference/SOURCES.md: towers2024; Gymnasium tasks)"
)
# Sub-environments of the vector environment: ours, the fastest of 8, 16, 32 and 64 on
# populations of short and of full-length episodes while the benchmark was written (more
# slots stand idle longer at the end of a batch, fewer amortise the numba call less).
SLOTS = 16
SEED_RANGE = 2**31  # episode seeds are drawn from [0, 2^31)
TRAINING_STREAM, VALIDATION_STREAM = 0, 1

VALIDATION_RETURN = Metric(
    "validation_return",
    "mean return over the validation episodes of the success test",
    unit="return",
)
EPISODES = Metric(
    "episodes",
    "episodes the run's evaluations ran up to this success test (K per evaluation; the "
    "success tests' own episodes not included)",
    unit="episodes",
    better="lower",
)
ENV_STEPS = Metric(
    "env_steps",
    "environment steps of the run's evaluations up to this success test (the success "
    "tests' own steps not included)",
    unit="steps",
    better="lower",
)


def episode_seeds(task_seed: int, training: int, validation: int) -> tuple[list[int], list[int]]:
    """The training and validation episode seeds of a task seed: ``training`` distinct
    seeds from one stream of ``SeedSequence(task_seed)``, then ``validation`` distinct
    seeds from a second stream, skipping any training seed (so the two sets are disjoint
    and neither depends on the other's size)."""

    def draw(stream: int, count: int, taken: set[int]) -> list[int]:
        rng = np.random.default_rng(np.random.SeedSequence(task_seed, spawn_key=(stream,)))
        seeds: list[int] = []
        while len(seeds) < count:
            for s in rng.integers(0, SEED_RANGE, size=count).tolist():
                if s not in taken and len(seeds) < count:
                    taken.add(s)
                    seeds.append(s)
        return seeds

    taken: set[int] = set()
    train = draw(TRAINING_STREAM, training, taken)
    return train, draw(VALIDATION_STREAM, validation, taken)


def registered(env_id: str) -> gym.envs.registration.EnvSpec:
    """Gymnasium's registration of ``env_id`` (a :class:`TaskError` names an unknown id)."""
    import gymnasium as gym  # on use: see the imports at the top

    try:
        return gym.spec(env_id)
    except gym.error.Error as exc:
        raise TaskError(f"gym env {env_id!r} is not registered in gymnasium: {exc}") from None


@register
class GymEnvTask(Task):
    """A Gymnasium environment, named by its registered id (module docstring)."""

    id = "gym-env-v1"
    needs = ("env",)
    options = (
        Option("env", None, "registered Gymnasium id of the environment (--task gym:ID)",
               kind=str, source="ours"),
        Option("episodes", 5, "episodes per evaluation (K); fitness is their mean return",
               low=1, high=1000, source="ours: few enough for cheap evaluations, enough "
               "starts that a network cannot fit a single one"),
        Option("validation_episodes", 100, "fresh episodes of the success test",
               low=1, high=100_000, source="OpenAI Gym's rule of solving: the mean over 100 "
               "consecutive episodes (from memory, MEMORY-high; reference/SOURCES.md: "
               "Gymnasium tasks)"),
        Option("threshold", None, "success: mean validation return at least this (None: "
               "the environment's registered reward_threshold)", kind=float,
               unit="return", source="gymnasium's registration of the environment"),
        Option("max_steps", None, "time limit of an episode in steps (None: the "
               "environment's registered max_episode_steps)", kind=int, low=1,
               high=1_000_000,  # ours: a bound on one evaluation's work
               source="gymnasium's registration of the environment"),
        Option("min_return", None, "lowest return of an episode, the fitness's lower "
               "bound (None: from the reward range neuroyard knows for the environment)",
               kind=float, unit="return", source="ours (neuroyard.tasks.gym_task.returns)"),
        Option("max_return", None, "highest return of an episode, the fitness's upper "
               "bound (None: from the known reward range, else no upper bound)",
               kind=float, unit="return", source="ours (neuroyard.tasks.gym_task.returns)"),
    )  # fmt: skip

    def __init__(self, seed: int = 0, /, **settings: Any) -> None:
        super().__init__(seed, **settings)  # check_settings made self.env and self.face
        s = self.settings
        self.training_seeds, self.validation_seeds = episode_seeds(
            seed, s["episodes"], s["validation_episodes"]
        )
        self._vector_envs: dict[int, gym.vector.VectorEnv] = {}
        self.episodes_run = 0  # episodes and environment steps of the evaluations so far
        self.steps_run = 0

    def check_settings(self) -> None:
        s = self.settings
        env_id = s["env"]
        if env_id is None:
            raise TaskError(f"task {self.id}: the setting 'env' is required (--task gym:ENV_ID)")
        self.registration = registered(env_id)
        if s["max_steps"] is None:
            s["max_steps"] = self.registration.max_episode_steps
        if s["max_steps"] is None:
            raise TaskError(
                f"gym env {env_id}: gymnasium registers no max_episode_steps for it; give "
                "the time limit with --setting max_steps=N"
            )
        self.env = self.make_env()
        self.face = io.interface(env_id, self.env)
        if s["threshold"] is None:
            s["threshold"] = self.registration.reward_threshold
        if s["threshold"] is None:
            raise TaskError(
                f"gym env {env_id}: gymnasium registers no reward_threshold for it; give the "
                "success threshold (a mean return over the validation episodes) with "
                "--setting threshold=VALUE"
            )
        s["threshold"] = float(s["threshold"])
        rewards = step_reward_range(env_id, self.env)
        if rewards is not None:
            low, high = return_bounds(rewards, s["max_steps"])
            s["min_return"] = low if s["min_return"] is None else s["min_return"]
            s["max_return"] = high if s["max_return"] is None else s["max_return"]
        if s["min_return"] is None:
            raise TaskError(
                f"gym env {env_id}: neuroyard does not know the range of its rewards; give "
                "the lowest return an episode can have with --setting min_return=VALUE "
                "(and the highest, if there is one, with --setting max_return=VALUE)"
            )
        if s["max_return"] is not None and not s["min_return"] < s["max_return"]:
            raise TaskError(
                f"gym env {env_id}: min_return {s['min_return']} must lie below max_return "
                f"{s['max_return']}"
            )
        if s["max_return"] is not None and s["threshold"] > s["max_return"]:
            raise TaskError(
                f"gym env {env_id}: threshold {s['threshold']} lies above the highest return "
                f"{s['max_return']}, so no network could pass the success test"
            )

    def make_env(self) -> gym.Env:
        """A new instance of the task's environment (its time limit ``max_steps``); a
        :class:`TaskError` names an environment gymnasium cannot make."""
        import gymnasium as gym  # on use: see the imports at the top

        env_id = self.settings["env"]
        try:
            return gym.make(
                env_id, max_episode_steps=self.settings["max_steps"], disable_env_checker=True
            )
        except (gym.error.Error, ImportError) as exc:
            raise TaskError(f"gym env {env_id}: gymnasium cannot make it: {exc}") from None

    def _vector(self, slots: int) -> gym.vector.VectorEnv:
        if slots not in self._vector_envs:
            self._vector_envs[slots] = vector_env(self.make_env, slots)
        return self._vector_envs[slots]

    def _count(self, episodes: list[Episode]) -> None:
        self.episodes_run += len(episodes)
        self.steps_run += sum(e.steps for e in episodes)

    def _mean_return(self, episodes: list[Episode]) -> float:
        return math.fsum(e.total for e in episodes) / len(episodes)

    def run_jobs(self, batch: CompiledBatch, seeds: list[int]) -> SlotRun:
        """Every network of ``batch`` for one episode from each of ``seeds``, in a vector
        environment of at most :data:`SLOTS` sub-environments; episodes in network order,
        then seed order."""
        jobs = [(i, s) for i in range(batch.size) for s in seeds]
        return episodes_in_slots(self._vector(min(SLOTS, len(jobs))), self.face, batch, jobs)

    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        """Mean return over the K training episodes (one environment, one network)."""
        episodes = [episode(self.env, self.face, net, s) for s in self.training_seeds]
        self._count(episodes)
        return Evaluation(self._mean_return(episodes))

    def evaluate_batch(self, batch: CompiledBatch) -> list[Evaluation]:
        """The fitness of every network of ``batch``, as :meth:`evaluate` gives it, from the
        episodes of the whole batch run in a vector environment."""
        if batch.size == 0:
            return []
        k = len(self.training_seeds)
        episodes = self.run_jobs(batch, self.training_seeds).episodes
        self._count(episodes)
        return [
            Evaluation(self._mean_return(episodes[i * k : (i + 1) * k])) for i in range(batch.size)
        ]

    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        """Mean return over the validation episodes at least ``threshold``; the details
        hold it and the episodes and steps of the evaluations so far (module docstring)."""
        episodes = [episode(self.env, self.face, net, s) for s in self.validation_seeds]
        mean = self._mean_return(episodes)
        return SuccessCheck(
            solved=mean >= self.settings["threshold"],
            evaluations=len(episodes),
            details={
                "validation_return": mean,
                "validation_steps": sum(e.steps for e in episodes),
                "episodes": self.episodes_run,
                "env_steps": self.steps_run,
            },
        )

    def warm_up(self) -> None:
        """Load the numba kernels on a minimal network and zero observations, without
        running an episode, so the counts start from zero."""
        face = self.face
        network = fully_connected(face.inputs, face.outputs)
        batch = compile_batch([network], face.inputs, face.outputs, "warm-up network".format)
        net = batch.network(0)
        flat = np.zeros(face.inputs, dtype=face.flat_dtype)
        values = np.zeros((1, net.n_nodes))
        scratch = np.zeros((1, net.n_nodes))
        inputs, outputs = np.zeros(face.inputs), np.zeros(face.outputs)
        slot = np.zeros(1, dtype=np.int64)
        fresh = np.ones(1, dtype=np.bool_)
        if face.discrete:
            io.discrete_action(net, values[0], scratch[0], flat, face.centre,
                               face.inverse_half_width, face.bounded, inputs, outputs)  # fmt: skip
            io.discrete_actions(batch, slot, fresh, values, scratch, flat[None, :],
                                face.centre, face.inverse_half_width, face.bounded, inputs,
                                outputs, face.action_start, np.zeros(1, dtype=np.int64))  # fmt: skip
        else:
            action = np.zeros(face.outputs, dtype=face.action_dtype)
            io.box_action(net, values[0], scratch[0], flat, face.centre,
                          face.inverse_half_width, face.bounded, inputs, outputs,
                          face.action_low, face.action_span, action)  # fmt: skip
            io.box_actions(batch, slot, fresh, values, scratch, flat[None, :], face.centre,
                           face.inverse_half_width, face.bounded, inputs, outputs,
                           face.action_low, face.action_span, action[None, :])  # fmt: skip

    @cached_property
    def _bounds_source(self) -> str:
        env_id = self.settings["env"]
        rewards = step_reward_range(env_id, self.env)
        if rewards is None:
            return "the settings min_return and max_return"
        low, high = rewards
        return (
            f"per-step rewards in [{value_text(low)}, {value_text(high)}] (gymnasium's "
            "documentation of "
            f"{env_id}, neuroyard.tasks.gym_task.returns) over at most "
            f"{self.settings['max_steps']} steps, unless given as settings"
        )

    @property
    def spec(self) -> TaskSpec:
        s = self.settings
        env_id, k = s["env"], s["episodes"]
        registered_threshold = self.registration.reward_threshold
        threshold_source = (
            f"gymnasium's registered reward_threshold of {env_id}"
            if registered_threshold is not None and s["threshold"] == registered_threshold
            else "the setting threshold"
        )
        space = self.env.observation_space
        return TaskSpec(
            id=self.id,
            inputs=self.face.inputs,
            outputs=self.face.outputs,
            fitness=f"mean return over {k} episodes of {env_id} (at most {s['max_steps']} "
            f"steps each); the same {k} episode seeds, drawn from the task seed, in every "
            f"evaluation of a run; bounds from {self._bounds_source}",
            success=f"mean return over {s['validation_episodes']} validation episodes (seeds "
            f"apart from the training ones) at least {s['threshold']:g} ({threshold_source})",
            default_budget=10_000,
            sources=(
                GYMNASIUM,
                f"{env_id}: gymnasium's environment, made with gymnasium.make "
                f"(entry point {self.registration.entry_point})",
                "observation scaling and action mapping: ours (neuroyard.tasks.gym_task.interface)",
            ),
            max_fitness=s["max_return"],
            min_fitness=s["min_return"],
            needs_memory=False,
            settings=dict(s),
            observations=io.describe_observations(self.face, space),
            actions=io.describe_actions(self.face, self.env.action_space),
            output_rule=io.output_rule(self.face),
            metrics=(VALIDATION_RETURN, EPISODES, ENV_STEPS),
        )


register_form("gym", GymEnvTask.id, "env")
