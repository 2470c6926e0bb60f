"""Any Gymnasium environment as a task (``gym-env-v1``, ``--task gym:ENV_ID``).

The references are gymnasium's own: the spaces' bounds as its environments define them
(``gymnasium/envs/classic_control/cartpole.py``: x within +-2 x 2.4 m, the angle within
+-2 x 12 degrees, both velocities unbounded, ``Discrete(2)``; ``pendulum.py``: cos, sin in
[-1, 1], angular velocity in [-8, 8], torque ``Box(-2, 2)``; ``continuous_mountain_car.py``:
position in [-1.2, 0.6], velocity in [-0.07, 0.07], force ``Box(-1, 1)``), its
registrations (``gymnasium.spec``), and episodes of its environments stepped here in plain
Python, without neuroyard's code.
"""

from __future__ import annotations

import math

import gymnasium as gym
import numpy as np
import pytest
from gymnasium.envs.classic_control.cartpole import CartPoleEnv

from neuroyard.cli.main import main
from neuroyard.core.batch import compile_batch, compile_network
from neuroyard.core.errors import TaskError
from neuroyard.core.network import Connection, Network, Node, fully_connected
from neuroyard.records.store import ResultStore
from neuroyard.reference.published import figures_for
from neuroyard.tasks import make
from neuroyard.tasks.gym_task import interface as io
from neuroyard.tasks.gym_task.episodes import episode
from neuroyard.tasks.gym_task.returns import STEP_REWARDS, return_bounds, step_reward_range
from neuroyard.tasks.gym_task.task import episode_seeds
from neuroyard.tasks.registry import parse_task

TASK = "gym-env-v1"
TWELVE_DEGREES = 12 * 2 * math.pi / 360  # cartpole.py: theta_threshold_radians


def cartpole(seed: int = 0, **settings):
    return make(TASK, seed, env="CartPole-v1", **settings)


def inputs_of(task, observation) -> np.ndarray:
    """The network inputs the task makes of one observation."""
    face = task.face
    out = np.zeros(face.inputs)
    flat = face.flat(np.asarray(observation, dtype=task.env.observation_space.dtype))
    io.observe(flat, face.centre, face.inverse_half_width, face.bounded, out)
    return out


def box_action_of(task, outputs) -> np.ndarray:
    face = task.face
    action = np.zeros(face.outputs, dtype=face.action_dtype)
    io.scale_action(
        np.asarray(outputs, dtype=np.float64), face.action_low, face.action_span, action
    )
    return action


def angle_controller(angle_weight: float = 1.0, velocity_weight: float = 1.0) -> Network:
    """A hand-written linear policy: output 1 (push right) = angle_weight * input 2 (pole
    angle) + velocity_weight * input 3 (its angular velocity), output 0 = 0; the larger
    output is the action, so the cart is pushed the way the pole leans or falls."""
    nodes = [Node(k, "input") for k in range(4)]
    nodes += [Node(4, "output", "identity"), Node(5, "output", "identity")]
    conns = (Connection(2, 5, angle_weight), Connection(3, 5, velocity_weight))
    return Network(tuple(nodes), conns)


def test_gym_form_names_the_task():
    assert parse_task("gym:CartPole-v1") == (TASK, {"env": "CartPole-v1"})
    with pytest.raises(TaskError, match="nothing after 'gym:'"):
        parse_task("gym:")


def test_cartpole_is_gymnasiums_own_environment():
    task = cartpole()
    assert type(task.env.unwrapped) is CartPoleEnv
    assert task.settings["max_steps"] == gym.spec("CartPole-v1").max_episode_steps == 500
    assert task.settings["threshold"] == gym.spec("CartPole-v1").reward_threshold == 475.0


def test_discrete_observations_scale_from_cartpoles_bounds():
    """cartpole.py: x in [-4.8, 4.8], angle in [-24, 24] degrees, velocities unbounded."""
    task = cartpole()
    spec = task.spec
    assert (spec.inputs, spec.outputs) == (4, 2)
    got = inputs_of(task, [1.2, 3.0, -0.1, -1.0])
    angle = float(np.float32(-0.1)) / float(np.float32(2 * TWELVE_DEGREES))
    expected = [1.2 / 4.8, 3.0 / (1 + 3.0), angle, -1.0 / (1 + 1.0)]
    np.testing.assert_allclose(got, expected, rtol=1e-6)
    np.testing.assert_allclose(inputs_of(task, [4.8, 0.0, 2 * TWELVE_DEGREES, 0.0])[[0, 2]], 1.0)
    np.testing.assert_allclose(inputs_of(task, [-4.8, 0, -2 * TWELVE_DEGREES, 0])[[0, 2]], -1.0)
    assert "squashed by x / (1 + |x|)" in spec.observations[1]
    assert "[-4.8, 4.8] onto [-1, 1]" in spec.observations[0]


def test_unbounded_dimensions_are_squashed_by_x_over_one_plus_abs_x():
    task = cartpole()
    assert list(task.face.bounded) == [True, False, True, False]
    for x, y in [(0.0, 0.0), (1.0, 0.5), (-3.0, -0.75), (9.0, 0.9), (1e30, 1.0)]:
        assert inputs_of(task, [0.0, x, 0.0, x])[[1, 3]] == pytest.approx([y, y], rel=1e-6)
    values = [inputs_of(task, [0.0, v, 0.0, 0.0])[1] for v in np.linspace(-50, 50, 101)]
    assert all(np.diff(values) > 0) and max(map(abs, values)) < 1.0


def test_discrete_action_is_the_index_of_the_largest_output():
    for outputs, action in [
        ([0.3, 0.7], 1),
        ([0.7, 0.3], 0),
        ([0.5, 0.5], 0),  # ties: the lowest index
        ([math.nan, -5.0], 1),  # NaN is never the largest
        ([math.nan, math.nan], 0),
        ([math.inf, math.inf], 0),
        ([-math.inf, 2.0], 1),
        ([-math.inf, -math.inf], 0),
    ]:
        assert io.largest(np.array(outputs)) == action, outputs


def test_box_outputs_scale_onto_pendulums_torque_bounds():
    """pendulum.py: observation cos, sin in [-1, 1], angular velocity in [-8, 8]; the
    torque is Box(-2, 2, (1,))."""
    task = make(TASK, env="Pendulum-v1", threshold=-200.0)
    assert (task.spec.inputs, task.spec.outputs) == (3, 1)
    np.testing.assert_allclose(inputs_of(task, [0.5, -1.0, 4.0]), [0.5, -1.0, 0.5])
    np.testing.assert_allclose(inputs_of(task, [1.0, 0.0, -8.0]), [1.0, 0.0, -1.0])
    for out, torque in [
        (0.0, -2.0), (1.0, 2.0), (0.25, -1.0), (0.5, 0.0), (7.0, 2.0), (-3.0, -2.0),
        (math.inf, 2.0), (-math.inf, -2.0), (math.nan, 0.0),
    ]:  # fmt: skip
        assert box_action_of(task, [out]) == pytest.approx([torque]), out
    assert box_action_of(task, [0.3]).dtype == task.env.action_space.dtype


def test_box_mapping_on_mountain_car_continuous():
    """continuous_mountain_car.py: position in [-1.2, 0.6], velocity in [-0.07, 0.07];
    the force is Box(-1, 1, (1,)); the registration gives threshold 90 and 999 steps."""
    task = make(TASK, env="MountainCarContinuous-v0")
    assert task.settings["threshold"] == gym.spec("MountainCarContinuous-v0").reward_threshold
    got = inputs_of(task, [-0.3, 0.035])
    np.testing.assert_allclose(got, [2 * (-0.3 + 1.2) / 1.8 - 1, 0.5], rtol=1e-6, atol=1e-7)
    assert box_action_of(task, [0.75]) == pytest.approx([0.5])
    assert box_action_of(task, [math.nan]) == pytest.approx([0.0])


def test_an_unknown_environment_is_one_line_and_exit_2(capsys):
    with pytest.raises(TaskError, match="gym env 'NoSuchEnv-v0' is not registered in gymnasium"):
        make(TASK, env="NoSuchEnv-v0")
    assert main(["tasks", "gym:NoSuchEnv-v0"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "NoSuchEnv-v0" in err
    assert main(["evaluate", "x.json", "--task", "gym:CartPole-v99"]) == 2
    assert "CartPole-v99" in capsys.readouterr().err


def test_an_environment_without_a_threshold_needs_one(capsys):
    assert gym.spec("Pendulum-v1").reward_threshold is None  # gymnasium registers none
    assert main(["tasks", "gym:Pendulum-v1"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert "Pendulum-v1" in err and "--setting threshold=VALUE" in err
    assert make(TASK, env="Pendulum-v1", threshold=-150.0).settings["threshold"] == -150.0


@pytest.mark.filterwarnings("ignore:.*CartPole-v0 is out of date")  # the table has v0 too
def test_return_bounds_of_the_table_hold_on_the_environments_own_episodes():
    """Every reward of episodes with extreme and random actions lies in the per-step range
    of returns.py (gymnasium's documentation of each environment, section Rewards)."""
    for env_id in STEP_REWARDS:
        env = gym.make(env_id)
        low, high = step_reward_range(env_id, env)
        space = env.action_space
        space.seed(3)
        if isinstance(space, gym.spaces.Box):
            extremes = [space.low, space.high]
        else:
            extremes = [space.start, space.start + space.n - 1]
        for k, fixed in enumerate([*extremes, None]):
            env.reset(seed=k)
            for _ in range(300):
                action = space.sample() if fixed is None else fixed
                _, reward, terminated, truncated, _ = env.step(action)
                assert low <= reward <= high, (env_id, reward)
                if terminated or truncated:
                    break
    assert return_bounds((1.0, 1.0), 500) == (0.0, 500.0)
    assert return_bounds((-1.0, 0.0), 500) == (-500.0, 0.0)
    pendulum = make(TASK, env="Pendulum-v1", threshold=-200.0)
    assert pendulum.spec.min_fitness == pytest.approx(-16.2736044 * 200, abs=1e-4)
    assert pendulum.spec.max_fitness == 0.0


def test_an_environment_of_unknown_rewards_needs_its_lowest_return():
    with pytest.raises(TaskError, match="Blackjack-v1: gymnasium registers no max_episode"):
        make(TASK, env="Blackjack-v1", threshold=0.0)
    with pytest.raises(TaskError, match="--setting min_return=VALUE"):
        make(TASK, env="Blackjack-v1", threshold=0.0, max_steps=20)
    task = make(TASK, env="Blackjack-v1", threshold=0.0, max_steps=20, min_return=-1.0)
    assert (task.spec.min_fitness, task.spec.max_fitness) == (-1.0, None)
    # a Tuple of Discrete spaces: gymnasium's flatten gives one-hot blocks, 32 + 11 + 2
    assert task.spec.inputs == 45
    with pytest.raises(TaskError, match="lies above the highest return"):
        cartpole(threshold=501.0)


def test_training_and_validation_seeds_are_disjoint_and_fixed_by_the_task_seed():
    train, valid = episode_seeds(11, 5, 100)
    assert len(set(train)) == 5 and len(set(valid)) == 100 and not set(train) & set(valid)
    assert episode_seeds(11, 5, 100) == (train, valid)
    assert episode_seeds(11, 5, 7)[0] == train  # one set does not depend on the other's size
    assert episode_seeds(12, 5, 100)[0] != train
    assert cartpole(11).training_seeds == train


def random_batch(task, count: int = 12, seed: int = 0):
    spec = task.spec
    rng = np.random.default_rng(seed)
    links = len(fully_connected(spec.inputs, spec.outputs).connections)
    networks = [
        fully_connected(spec.inputs, spec.outputs, rng.normal(0, 3, links), activation="tanh")
        for _ in range(count)
    ]
    return compile_batch(networks, spec.inputs, spec.outputs)


@pytest.mark.parametrize(
    "env, settings", [("CartPole-v1", {}), ("Pendulum-v1", {"threshold": -200.0})]
)
def test_fitness_is_deterministic_and_the_same_on_both_paths(env, settings):
    """The same network and task seed give the same fitness: in one task, in another task
    built with the seed, one network at a time and through the vector environment."""
    one, other = make(TASK, 3, env=env, **settings), make(TASK, 3, env=env, **settings)
    batch = random_batch(one, count=20)
    plain = [one.evaluate(batch.network(i)).fitness for i in range(batch.size)]
    plain_counts = (one.episodes_run, one.steps_run)
    vector = [e.fitness for e in other.evaluate_batch(batch)]
    assert plain == vector
    assert plain_counts == (other.episodes_run, other.steps_run) and plain_counts[0] == 20 * 5
    assert [one.evaluate(batch.network(i)).fitness for i in range(batch.size)] == plain
    assert len(set(plain)) > 1  # the networks differ, so the check has teeth
    spec = one.spec
    assert all(spec.min_fitness <= f <= spec.max_fitness for f in plain)


def test_episodes_follow_gymnasiums_cartpole_under_a_hand_policy():
    """An episode of the task against the same policy in a plain gymnasium loop (seeded
    reset, action 1 when the scaled angle plus the squashed angular velocity is positive)."""
    task = cartpole()
    net = compile_network(angle_controller(1.0, 0.2), 4, 2)
    half_width = float(task.env.observation_space.high[2])
    env = gym.make("CartPole-v1")
    for seed in (1, 2, 3):
        ours = episode(task.env, task.face, net, seed)
        observation, _ = env.reset(seed=seed)
        total, steps, done = 0.0, 0, False
        while not done:
            theta, omega = float(observation[2]), float(observation[3])
            push_right = theta / half_width + 0.2 * omega / (1 + abs(omega)) > 0.0
            observation, reward, terminated, truncated, _ = env.step(int(push_right))
            total, steps, done = total + reward, steps + 1, terminated or truncated
        assert (ours.total, ours.steps) == (total, steps), seed


def test_a_hand_written_controller_balances_cartpole_and_a_zero_network_does_not():
    task = cartpole(7)
    net = compile_network(angle_controller(), 4, 2)
    fitness = task.evaluate(net)
    check = task.success_test(net, fitness)
    assert check.solved and check.evaluations == 100
    assert check.details["validation_return"] >= 475.0
    assert check.details["episodes"] == 5 and check.details["env_steps"] == 5 * fitness.fitness

    zero = compile_network(fully_connected(4, 2), 4, 2)  # equal outputs: always action 0
    check = task.success_test(zero, task.evaluate(zero))
    assert not check.solved and check.details["validation_return"] < 20
    assert check.details["episodes"] == 10


def test_the_listing_shows_the_task_and_its_form(capsys):
    assert main(["tasks", "gym:CartPole-v1"]) == 0
    out = capsys.readouterr().out
    assert "gym-env-v1: 4 inputs, 2 outputs" in out
    assert "at least 475 (gymnasium's registered reward_threshold of CartPole-v1)" in out
    assert "metric env_steps" in out and "threshold = None" in out
    assert main(["tasks"]) == 0
    assert "gym-env-v1: needs env" in capsys.readouterr().out


def test_cartpoles_threshold_figure_is_gymnasiums_registration():
    (figure, *_) = figures_for(TASK)
    registration = gym.spec("CartPole-v1")
    assert figure.values["mean_validation_return"] == registration.reward_threshold
    assert figure.protocol["task.max_steps"] == registration.max_episode_steps
    assert figure.may_gate and all(
        f.protocol["task.env"] == "CartPole-v1" for f in figures_for(TASK)
    )


def test_a_run_records_episodes_steps_and_the_validation_return(tmp_path, capsys):
    store = tmp_path / "gym.sqlite"
    code = main([
        "run", "--evolver", "rwg", "--task", "gym:CartPole-v1", "--runs", "1", "--seed", "1",
        "--budget", "300", "--store", str(store), "--in-process", "--quiet",
    ])  # fmt: skip
    assert code == 0, capsys.readouterr().err
    with ResultStore(store, write=False) as s:
        (record,) = s.records()
    assert (
        record.task_settings["threshold"] == 475.0 and record.task_settings["env"] == "CartPole-v1"
    )
    tested = [row.champion_test for row in record.log if row.champion_test]
    assert tested and all(
        t["episodes"] == 5 * row.evaluations
        for t, row in zip(tested, [r for r in record.log if r.champion_test], strict=True)
    )
    assert all(t["env_steps"] >= t["episodes"] for t in tested)
    assert record.success_evaluations == 100 * len(tested)
    if record.status == "solved":
        assert record.success_details["validation_return"] >= 475.0
