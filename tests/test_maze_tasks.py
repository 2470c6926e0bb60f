"""The maze tasks: the protocol of Lehman & Stanley 2011
(reference/SOURCES.md: lehman2011; maze protocol), the radar's geometry, and that our hard
maze traps the straight route."""

from __future__ import annotations

import math

import numpy as np
import pytest

from neuroyard import tasks
from neuroyard.core.batch import compile_batch, compile_network
from neuroyard.core.network import Connection, Network, Node
from neuroyard.tasks.maze import sense
from neuroyard.tasks.maze.robot import MAX_SPEED, RADIUS

MAZE_TASKS = ("maze-open-v1", "maze-medium-v1", "maze-hard-v3")


def constant_network(turn: float, speed: float) -> Network:
    """Ten inputs, no links, identity outputs fixed at (turn, speed) by their biases."""
    nodes = [Node(k, "input") for k in range(10)]
    nodes += [Node(10, "output", "identity", turn), Node(11, "output", "identity", speed)]
    return Network(tuple(nodes), (), "feedforward")


@pytest.mark.parametrize("task_id", MAZE_TASKS)
def test_spec_states_the_published_interface(task_id):
    spec = tasks.make(task_id).spec
    assert (spec.inputs, spec.outputs, spec.behaviour_size) == (10, 2, 2)
    assert len(spec.observations) == 10 and len(spec.actions) == 2
    assert spec.default_budget == 250_000  # lehman2011, sec. 6 (VERIFIED)
    assert [m.name for m in spec.metrics] == ["final_distance"]
    assert spec.metrics[0].better == "lower"
    assert spec.min_fitness == 0.0 and spec.max_fitness == pytest.approx(math.hypot(200, 200))


def test_hard_maze_straight_route_ends_in_the_trap():
    """Driving straight at full speed from the start (which faces up, the goal lying up and
    to the right) stops under the long wall at y = 160, one radius below it, more than 18
    units from the goal (maze of ours: the goal (40, 170) lies over the wall)."""
    task = tasks.make("maze-hard-v3")
    net = compile_network(constant_network(0.5, 1.0), 10, 2)
    evaluation = task.evaluate(net)
    x, y = evaluation.behaviour
    assert x == pytest.approx(30.0)
    assert 160.0 - RADIUS - MAX_SPEED < y <= 160.0 - RADIUS  # blocked only when closer
    check = task.success_test(net, evaluation)
    assert not check.solved and check.details["final_distance"] > 18.0
    expected = math.hypot(200, 200) - math.hypot(30.0 - 40.0, 170.0 - y)
    assert evaluation.fitness == pytest.approx(expected)


def test_nan_outputs_mean_no_turn_and_no_move():
    """A network whose outputs are NaN (inf - inf) leaves the robot at its start, as the
    spec's output rule says, and still gets a finite fitness."""
    nodes = [Node(k, "input") for k in range(10)]
    nodes += [Node(10, "output"), Node(11, "output"), Node(12, "hidden", "identity", 1e308, 10.0)]
    links = [Connection(12, out, w) for out in (10, 11) for w in (1e308, -1e308)]
    net = compile_network(Network(tuple(nodes), tuple(links), "feedforward"), 10, 2)
    task = tasks.make("maze-open-v1")
    still = task.evaluate(net)
    assert still.behaviour == (30.0, 30.0)
    assert still.fitness == pytest.approx(math.hypot(200, 200) - math.hypot(140, 140))


def test_batch_equals_single_evaluations():
    task = tasks.make("maze-medium-v1")
    rng = np.random.default_rng(3)
    nets = []
    for _ in range(5):
        nodes = [Node(k, "input") for k in range(10)]
        nodes += [Node(10 + j, "output", "tanh", float(rng.normal())) for j in range(2)]
        links = [Connection(i, 10 + j, float(rng.normal())) for i in range(10) for j in range(2)]
        nets.append(Network(tuple(nodes), tuple(links), "feedforward"))
    batch = compile_batch(nets, 10, 2, "net {}".format)
    single = [task.evaluate(compile_network(n, 10, 2)) for n in nets]
    assert task.evaluate_batch(batch) == single


@pytest.mark.parametrize(
    ("bearing", "slice_on"),
    [(0.0, 0), (-90.0, 1), (180.0, 2), (90.0, 3), (44.0, 0), (46.0, 3), (-44.0, 0), (-46.0, 1)],
)
def test_radar_slice_holds_the_goal_direction(bearing, slice_on):
    """Slices in input order front, right, back, left, each 90 degrees wide around its
    direction (lehman2011; maze robot: four quarters, from memory); counter-clockwise
    bearings are positive, so -90 degrees is to the right."""
    walls = np.array([[0.0, 0.0, 1.0, 0.0]])
    heading = math.radians(30.0)
    angle = heading + math.radians(bearing)
    goal = np.array([50.0 + 20.0 * math.cos(angle), 50.0 + 20.0 * math.sin(angle)])
    out = np.zeros(10)
    sense(walls, goal, 50.0, 50.0, heading, out)
    expected = np.zeros(4)
    expected[slice_on] = 1.0
    np.testing.assert_array_equal(out[6:], expected)
