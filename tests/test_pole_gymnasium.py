"""Single pole against gymnasium's CartPole-v1, an independent implementation.

Source: gymnasium 1.x ``envs/classic_control/cartpole.py`` (the Barto, Sutton & Anderson
1983 cart-pole: frictionless, explicit Euler, tau = 0.02 s, +-10 N bang-bang, failure at
12 deg or |x| > 2.4 m). Its equations are written in the Barto form, ours in Wieland's
form; both describe the same rigid body, so the states must agree to rounding.
"""

from __future__ import annotations

import gymnasium as gym
import numpy as np

from neuroyard.core.batch import compile_network
from neuroyard.core.network import fully_connected
from neuroyard.tasks.pole import failed, simulate
from neuroyard.tasks.registry import make

TOLERANCE = 1e-9  # issue 4 item 4


def gym_env():
    return gym.make("CartPole-v1").unwrapped


def gym_mode_task(env):
    """Our single pole with the settings of the gymnasium simulator, read from ``env``."""
    return make(
        "pole1-markov-v1",
        integrator=env.kinematics_integrator,  # "euler" in CartPole-v1
        tau=env.tau,
        substeps=1,
        cart_friction=0.0,
        pole_friction=0.0,
        cart_mass=env.masscart,
        long_pole_mass=env.masspole,
        long_pole_half_length=env.length,  # gymnasium's "length" is the half length
        gravity=env.gravity,
        max_force=env.force_mag,
        force_mapping="bang-bang",
        failure_angle=env.theta_threshold_radians,
        track_limit=env.x_threshold,
        start_angle=0.01,
    )


def gym_episode(env, seed: int, choose) -> tuple[np.ndarray, np.ndarray, list[bool]]:
    """Start state, actions and per-step termination flags of one gymnasium episode."""
    env.reset(seed=seed)
    states = [np.array(env.state, dtype=np.float64)]
    actions, terminated = [], []
    done = False
    while not done and len(actions) < 500:
        action = choose(states[-1])
        _, _, done, _, _ = env.step(action)
        actions.append(action)
        terminated.append(bool(done))
        states.append(np.array(env.state, dtype=np.float64))
    return np.array(states), np.array(actions), terminated


def test_single_pole_matches_gymnasium_until_failure() -> None:
    """Uniformly random actions, replayed open loop from gymnasium's start state."""
    env = gym_env()
    task = gym_mode_task(env)
    rng = np.random.default_rng(4)
    worst = 0.0
    lengths = []
    for episode in range(100):
        states, actions, terminated = gym_episode(env, 1000 + episode, lambda _: rng.integers(2))
        forces = np.where(actions == 1, env.force_mag, -env.force_mag)
        ours = simulate(task.physics, states[0], forces, 1)
        worst = max(worst, float(np.abs(ours - states).max()))
        assert [bool(failed(task.rules, s)) for s in ours[1:]] == terminated, f"episode {episode}"
        lengths.append(len(actions))
    assert worst < TOLERANCE, f"max deviation from gymnasium {worst:.3g}"
    assert terminated[-1] and max(lengths) > 40  # whole episodes up to failure were compared


def test_single_pole_one_step_map_matches_gymnasium_on_long_episodes() -> None:
    """Mostly stabilising random actions give long episodes (up to 500 steps). Replaying
    them open loop would amplify rounding differences of ~1e-16 exponentially (the upright
    pole is unstable), so here each gymnasium state is stepped once and compared."""
    env = gym_env()
    task = gym_mode_task(env)
    rng = np.random.default_rng(5)

    def choose(state: np.ndarray) -> int:
        right = int(state[2] + 0.5 * state[3] > 0.0)  # the push that rights the pole
        return right if rng.random() < 0.8 else 1 - right

    worst = 0.0
    steps = 0
    for episode in range(20):
        states, actions, _ = gym_episode(env, 2000 + episode, choose)
        for k, action in enumerate(actions):
            force = np.array([env.force_mag if action == 1 else -env.force_mag])
            ours = simulate(task.physics, states[k], force, 1)[1]
            worst = max(worst, float(np.abs(ours - states[k + 1]).max()))
        steps += len(actions)
    assert worst < TOLERANCE, f"max one-step deviation from gymnasium {worst:.3g}"
    assert steps > 20 * 100


def test_balance_episode_length_matches_gymnasium_linear_policies() -> None:
    """A linear threshold policy as a network: same episode length as in gymnasium."""
    env = gym_env()
    task = gym_mode_task(env)
    rng = np.random.default_rng(7)
    scales = task.rules.obs_scale
    lengths = []
    for trial in range(40):
        w = rng.normal(size=4) * np.array([0.1, 0.5, 10.0, 2.0])
        # step activation: out = 1 when (w . obs) > 0; bang-bang maps out > 0.5 to +10 N
        network = fully_connected(4, 1, list(w * scales) + [0.0], activation="step")
        net = compile_network(network)
        env.reset(seed=trial)
        start = np.array(env.state, dtype=np.float64)
        steps_gym = 0
        done = False
        while not done and steps_gym < 500:
            _, _, done, _, _ = env.step(int(np.dot(w, env.state) > 0.0))
            if not done:
                steps_gym += 1
        task.start[:] = start
        assert task.run(net, 500) == steps_gym, f"trial {trial}"
        lengths.append(steps_gym)
    assert max(lengths) == 500 and min(lengths) < 50  # both balancing and failing policies
