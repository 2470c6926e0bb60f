"""The pole and maze tasks as Gymnasium environments (neuroyard.tasks.gym_envs).

Outside source: Gymnasium's own environment checker
(``gymnasium.utils.env_checker.check_env``), run on every registered neuroyard
environment with every warning it gives counted. Inside reference: the harness's
whole-episode numba kernels (``balance``, ``run_episode``, ``simulate``): the same
controller or the same actions must give the same trajectory to 1e-12 and a return equal
to the task's fitness. (The pole physics themselves are checked against gymnasium's
CartPole and pymunk in test_pole_gymnasium.py and test_pole_pymunk.py.)
"""

from __future__ import annotations

import math
import warnings

import gymnasium
import numpy as np
import pytest
from gymnasium.utils.env_checker import check_env

import neuroyard.tasks.gym_envs as gym_envs
from neuroyard.core.batch import compile_network
from neuroyard.core.compiled import new_state, step
from neuroyard.core.errors import TaskError
from neuroyard.core.network import Connection, Network, Node
from neuroyard.tasks.maze import MazeTask, shipped_maze
from neuroyard.tasks.pole import PoleBalancing, balance, simulate
from neuroyard.tasks.pole.controllers import difference_network, lqr_gains, state_feedback_network
from neuroyard.tasks.registry import make, retired, task_class, task_ids

TOLERANCE = 1e-12  # issue 19 item 1: the same trajectory to 1e-12
POLE_IDS = sorted(t for t in task_ids() if issubclass(task_class(t), PoleBalancing))
MAZE_IDS = sorted(t for t in task_ids() if issubclass(task_class(t), MazeTask))
# the settings a task needs to be built (maze-file-v1 needs a file: a shipped one)
NEEDED = {"maze-file-v1": {"file": str(shipped_maze("medium"))}}
# check_env's advice on Box bounds: the pole observations are unbounded on purpose (the
# velocities have no bound and a failing step's state lies past the limits)
UNBOUNDED_ADVICE = (
    "A Box observation space minimum value is -infinity",
    "A Box observation space maximum value is infinity",
)


def gym_make(task_id: str, **kwargs) -> gymnasium.Env:
    return gymnasium.make(gym_envs.gym_id(task_id), **NEEDED.get(task_id, {}), **kwargs)


class Controller:
    """A compiled network stepped from Python with the core's kernels, as an agent."""

    def __init__(self, network: Network, inputs: int, outputs: int) -> None:
        self.net = compile_network(network, inputs, outputs)
        self.values, self.scratch = new_state(self.net)
        self.outputs = np.zeros(outputs, dtype=np.float64)

    def act(self, observation: np.ndarray) -> np.ndarray:
        step(self.net, self.values, self.scratch, observation, self.outputs)
        return self.outputs.copy()


def run_env(env: gymnasium.Env, controller: Controller, key: str):
    """One episode: the info entry ``key`` after reset and after every step, the rewards,
    and the final (terminated, truncated)."""
    observation, info = env.reset(seed=5)
    states, rewards = [np.array(info[key], dtype=np.float64)], []
    while True:
        observation, reward, terminated, truncated, info = env.step(controller.act(observation))
        rewards.append(reward)
        if terminated:  # the failing step is not part of the harness's record
            return np.array(states), np.array(rewards), terminated, truncated
        states.append(np.array(info[key], dtype=np.float64))
        if truncated:
            return np.array(states), np.array(rewards), terminated, truncated


def random_network(rng: np.random.Generator, inputs: int, outputs: int) -> Network:
    """A recurrent network with two hidden nodes, every link present, weights N(0, 2)."""
    nodes = [Node(k, "input") for k in range(inputs)]
    nodes += [Node(inputs + j, "output", "sigmoid") for j in range(outputs)]
    nodes += [Node(inputs + outputs + h, "hidden", "tanh") for h in range(2)]
    sources = [n.id for n in nodes]
    targets = [n.id for n in nodes if n.kind != "input"]
    links = [Connection(s, t, float(rng.normal(0.0, 2.0))) for s in sources for t in targets]
    return Network(tuple(nodes), tuple(links), "recurrent")


# -- registration ---------------------------------------------------------------------


def test_every_task_with_a_step_form_has_an_environment():
    assert POLE_IDS and MAZE_IDS
    registered = gym_envs.ENV_IDS
    assert registered == tuple(sorted(f"neuroyard/{t}" for t in POLE_IDS + MAZE_IDS))
    for env_id in registered:
        spec = gymnasium.spec(env_id)
        assert spec.namespace == "neuroyard"
        assert f"{spec.name}-v{spec.version}" == env_id.removeprefix("neuroyard/")
    for old_id in retired():
        assert f"neuroyard/{old_id}" not in gymnasium.registry


def test_reward_thresholds_are_the_success_criteria_at_default_settings():
    assert gymnasium.spec("neuroyard/pole2-markov-v1").reward_threshold == 100_000
    assert gymnasium.spec("neuroyard/pole2-nonmarkov-v1").reward_threshold is None
    hard = make("maze-hard-v3")
    assert gymnasium.spec("neuroyard/maze-hard-v3").reward_threshold == hard.maze.diagonal - 5.0
    assert gymnasium.spec("neuroyard/maze-gen-v3").reward_threshold is None


def test_make_passes_the_task_settings():
    env = gymnasium.make("neuroyard/maze-gen-v3", seed=3, deception=0.2).unwrapped
    assert env.task.settings == {"size": 200.0, "seed": 3, "deception": 0.2}
    env = gymnasium.make("neuroyard/pole2-markov-v1", episode_steps=20).unwrapped
    assert env.horizon == 20


def test_gymnasium_module_form_imports_and_makes():
    """Gymnasium's ``module:id`` form: make imports the module that registers the id."""
    env = gymnasium.make("neuroyard.tasks.gym_envs:neuroyard/pole1-markov-v1")
    assert env.unwrapped.task.id == "pole1-markov-v1"


# -- gymnasium's checker --------------------------------------------------------------


@pytest.mark.parametrize("task_id", POLE_IDS + MAZE_IDS)
def test_gymnasium_env_checker_passes(task_id):
    """check_env raises on a broken contract and warns on smaller faults; every warning
    fails here but the advice on the poles' unbounded observations."""
    env = gym_make(task_id, render_mode="rgb_array")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        check_env(env.unwrapped)
    messages = [str(w.message) for w in caught]
    allowed = UNBOUNDED_ADVICE if task_id in POLE_IDS else ()
    unexpected = [m for m in messages if not any(a in m for a in allowed)]
    assert not unexpected, unexpected
    frame = env.unwrapped.render()
    assert frame.ndim == 3 and frame.shape[2] == 3 and frame.dtype == np.uint8
    assert (frame != 255).any()  # something is drawn


@pytest.mark.parametrize("task_id", POLE_IDS + MAZE_IDS)
def test_spaces_are_the_networks_interface(task_id):
    env = gym_make(task_id).unwrapped
    spec = env.task.spec
    assert env.observation_space.shape == (spec.inputs,)
    assert env.action_space.shape == (spec.outputs,)
    assert env.action_space.dtype == env.observation_space.dtype == np.float64
    assert (env.action_space.low == 0.0).all() and (env.action_space.high == 1.0).all()


# -- the poles against the harness kernels ----------------------------------------------


def pole_controllers(task_id: str):
    """An LQR controller that balances (difference network without velocities), and a
    random network that fails early; the Markov tasks' gains serve both forms."""
    task = make(task_id)
    markov = make(task_id.replace("nonmarkov", "markov"))
    weights = [1, 1, 100, 1] + ([100, 1] if task.n_poles == 2 else [])
    gains = lqr_gains(markov, weights)
    balancing = (
        state_feedback_network(task, gains) if task.velocities else difference_network(task, gains)
    )
    rng = np.random.default_rng(len(task_id))
    return {"lqr": balancing, "random": random_network(rng, task.spec.inputs, 1)}


@pytest.mark.parametrize("task_id", POLE_IDS)
def test_pole_trajectory_and_return_match_the_harness(task_id):
    settings = {"episode_steps": 1500} if task_id != "pole2-nonmarkov-v1" else {}
    task = make(task_id, **settings)
    cap = task.settings["episode_steps"]
    lengths = {}
    for name, network in pole_controllers(task_id).items():
        net = compile_network(network, task.spec.inputs, 1)
        record = np.zeros((cap + 1, task.start.shape[0]))
        steps, _ = balance(net, task.physics, task.rules, task.start, cap, record)
        env = gym_make(task_id, **settings)
        ours, rewards, terminated, truncated = run_env(
            env, Controller(network, task.spec.inputs, 1), "state"
        )
        assert len(ours) == steps + 1, name
        assert np.abs(ours - record[: steps + 1]).max() <= TOLERANCE, name
        assert (terminated, truncated) == (steps < cap, steps == cap), name
        fitness = task.evaluate(net).fitness
        assert math.isclose(rewards.sum(), fitness, rel_tol=TOLERANCE), (name, fitness)
        if not task.damped:
            assert rewards.tolist() == [1.0] * steps + [0.0] * (steps < cap)
        lengths[name] = steps
    assert lengths["lqr"] == cap and lengths["random"] < cap  # both ends were compared


def test_pole_balancing_controller_is_truncated_at_the_horizon():
    task = make("pole2-markov-v1")
    env = gym_make("pole2-markov-v1", episode_steps=200)
    network = state_feedback_network(task, lqr_gains(task, [1, 1, 100, 1, 100, 1]))
    states, rewards, terminated, truncated = run_env(env, Controller(network, 6, 1), "state")
    assert (terminated, truncated, len(rewards), rewards.sum()) == (False, True, 200, 200.0)


def test_pole_actions_follow_the_output_rule_open_loop():
    """Actions inside and outside [0, 1], +-inf and NaN, against ``simulate`` fed the
    forces the spec's output rule names (linear: F = 10 clip(2 out - 1, -1, 1), NaN as
    -10 N; bang-bang: +10 N above 0.5, else -10 N)."""
    rng = np.random.default_rng(7)
    actions = rng.uniform(-0.5, 1.5, 60)
    actions[[3, 10, 20]] = [np.inf, -np.inf, np.nan]
    for mapping, rule in (
        ("linear", lambda a: -10.0 if np.isnan(a) else 10.0 * np.clip(2 * a - 1, -1, 1)),
        ("bang-bang", lambda a: 10.0 if a > 0.5 else -10.0),
    ):
        settings = {"force_mapping": mapping, "failure_angle": 1e6, "track_limit": 1e6}
        task = make("pole1-markov-v1", **settings)
        expected = simulate(task.physics, task.start, np.array([rule(a) for a in actions]), 2)
        env = gym_make("pole1-markov-v1", **settings)
        _, info = env.reset()
        states = [info["state"]]
        for action in actions:
            _, _, terminated, _, info = env.step(np.array([action]))
            assert not terminated
            states.append(info["state"])
        assert np.abs(np.array(states) - expected).max() <= TOLERANCE, mapping


def test_pole_start_is_fixed_whatever_the_seed():
    env = gym_make("pole2-nonmarkov-v1")
    task = env.unwrapped.task
    first, _ = env.reset(seed=1)
    second, _ = env.reset(seed=2)
    np.testing.assert_array_equal(first, second)
    # the observation is the network's input: x / 2.4, theta_1 / 36 deg, theta_2 / 36 deg
    np.testing.assert_allclose(first, [0.0, task.settings["start_angle"] / math.radians(36), 0.0])


# -- the mazes against the harness kernel -----------------------------------------------


@pytest.mark.parametrize("task_id", MAZE_IDS)
def test_maze_trajectory_and_return_match_the_harness(task_id):
    task = make(task_id, **NEEDED.get(task_id, {}))
    rng = np.random.default_rng(11)
    moved = 0.0
    for _ in range(3):
        network = random_network(rng, 10, 2)
        net = compile_network(network, 10, 2)
        path = task.trajectory(net)
        env = gym_make(task_id)
        poses, rewards, terminated, truncated = run_env(env, Controller(network, 10, 2), "pose")
        assert (terminated, truncated) == (False, True)
        assert len(poses) == task.maze.steps + 1
        assert np.abs(poses[:, :2] - path).max() <= TOLERANCE
        fitness = task.evaluate(net).fitness
        assert math.isclose(rewards.sum(), fitness, rel_tol=TOLERANCE), fitness
        moved = max(moved, float(np.hypot(*(path[-1] - path[0]))))
    assert moved > 20.0  # the networks drove somewhere


def test_maze_nan_and_out_of_range_actions_follow_the_output_rule():
    """NaN counts as 0.5 (no turn, no move); values past [0, 1] are clipped."""
    env = gym_make("maze-open-v1")
    _, start = env.reset()
    _, reward, *_, info = env.step(np.array([np.nan, np.nan]))
    assert info["pose"] == start["pose"]
    _, _, _, _, clipped = env.step(np.array([7.0, 3.0]))
    env.reset()
    _, _, _, _, saturated = env.step(np.array([1.0, 1.0]))
    assert clipped["pose"] == saturated["pose"]


# -- frames and errors ----------------------------------------------------------------


@pytest.mark.parametrize("task_id", ["pole2-markov-v1", "maze-medium-v1"])
def test_rgb_frames_follow_the_state(task_id):
    env = gym_make(task_id, render_mode="rgb_array")
    env.reset()
    before = env.render()
    env.step(np.full(env.action_space.shape, 1.0))
    env.step(np.full(env.action_space.shape, 1.0))
    after = env.render()
    assert before.shape == after.shape and before.dtype == np.uint8
    assert (before != after).any()


def test_bad_use_is_one_clear_error():
    env = gym_make("pole1-markov-v1").unwrapped
    with pytest.raises(TaskError, match="call reset"):
        env.step([0.5])
    env.reset()
    with pytest.raises(TaskError, match=r"must be an array of shape \(1,\)"):
        env.step([0.5, 0.5])
    with pytest.raises(TaskError, match="takes no options, got start"):
        env.reset(options={"start": [0.0] * 4})
    with (
        pytest.warns(UserWarning, match="not in the possible render_modes"),  # gymnasium's
        pytest.raises(TaskError, match="render_mode 'ansi' is not one of rgb_array"),
    ):
        gym_make("pole1-markov-v1", render_mode="ansi")
    with pytest.raises(TaskError, match="not a PoleBalancing task"):
        gym_envs.PoleEnv("maze-open-v1")
    with pytest.raises(TaskError, match="'file' is required"):
        gymnasium.make("neuroyard/maze-file-v1")
    env = gym_make("pole2-markov-v1", episode_steps=1).unwrapped
    env.reset()
    env.step([0.5])
    with pytest.raises(TaskError, match="episode is over"):
        env.step([0.5])
