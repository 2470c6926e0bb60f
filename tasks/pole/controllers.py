"""Hand-designed controllers, written as networks: known-good baselines for the pole tasks.

``lqr_gains`` designs a discrete linear-quadratic regulator for the task's cart-pole,
linearised about the upright rest state (friction left out: its sign term has no
derivative at rest), with the force held over one control step (zero-order hold).
The gains become networks of identity nodes, so they run in the same episode kernels as
evolved networks:

* ``state_feedback_network``: for tasks that see velocities, F = -K s.
* ``difference_network``: for tasks without velocities. A recurrent hidden node per input
  remembers last step's value; velocities are estimated by backward differences.

Output mapping: with the linear force mapping F = max_force (2 out - 1), the output node
computes out = 0.5 + F / (2 max_force); forces beyond the limits are clipped by the task.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import scipy.linalg

from neuroyard.core.network import Connection, Network, Node

from .physics import Physics
from .plain import plain_derivatives
from .tasks import PoleBalancing


def linearise(phys: Physics, eps: float = 1e-6) -> tuple[np.ndarray, np.ndarray]:
    """(A, B) of ds/dt = A s + B F about the upright rest state, by central differences."""
    phys = phys._replace(cart_friction=0.0, pole_friction=0.0)
    n = 2 + 2 * phys.masses.shape[0]
    zero = np.zeros(n)
    a = np.zeros((n, n))
    for j in range(n):
        d = np.zeros(n)
        d[j] = eps
        up = np.array(plain_derivatives(phys, zero + d, 0.0))
        down = np.array(plain_derivatives(phys, zero - d, 0.0))
        a[:, j] = (up - down) / (2.0 * eps)
    b = np.array(plain_derivatives(phys, zero, eps)) - np.array(plain_derivatives(phys, zero, -eps))
    return a, (b / (2.0 * eps)).reshape(n, 1)


def lqr_gains(
    task: PoleBalancing, state_weights: Sequence[float], force_weight: float = 1.0
) -> np.ndarray:
    """Gains K (F = -K s) minimising sum of s'Qs + r F^2 per control step.

    ``state_weights`` is the diagonal of Q (one per state variable), ``force_weight`` r.
    """
    a, b = linearise(task.physics)
    n = a.shape[0]
    dt = task.settings["tau"] * task.settings["substeps"]
    block = scipy.linalg.expm(np.block([[a, b], [np.zeros((1, n + 1))]]) * dt)
    ad, bd = block[:n, :n], block[:n, n:]
    q = np.diag(np.asarray(state_weights, dtype=np.float64))
    r = np.array([[force_weight]])
    p = scipy.linalg.solve_discrete_are(ad, bd, q, r)
    return np.linalg.solve(r + bd.T @ p @ bd, bd.T @ p @ ad)[0]


def _output_node(node_id: int) -> Node:
    return Node(node_id, "output", "identity", bias=0.5)


def state_feedback_network(task: PoleBalancing, gains: Sequence[float]) -> Network:
    """Feedforward network computing F = -K s from the task's scaled inputs."""
    rules = task.rules
    to_output = 1.0 / (2.0 * task.settings["max_force"])
    n = rules.obs_index.shape[0]
    nodes = [Node(i, "input") for i in range(n)] + [_output_node(n)]
    conns = [
        Connection(i, n, -gains[int(k)] * float(rules.obs_scale[i]) * to_output)
        for i, k in enumerate(rules.obs_index)
    ]
    return Network(tuple(nodes), tuple(conns))


def difference_network(task: PoleBalancing, gains: Sequence[float]) -> Network:
    """Recurrent network for position-only inputs: v ~ (s(t) - s(t-1)) / control step."""
    rules = task.rules
    to_output = 1.0 / (2.0 * task.settings["max_force"])
    dt = task.settings["tau"] * task.settings["substeps"]
    m = rules.obs_index.shape[0]
    out = 2 * m
    nodes = [Node(i, "input") for i in range(m)]
    nodes += [Node(m + i, "hidden", "identity") for i in range(m)]
    nodes.append(_output_node(out))
    conns = [Connection(i, m + i, 1.0) for i in range(m)]  # delay: last step's input
    for i, k in enumerate(rules.obs_index):
        k_pos, k_vel = gains[int(k)], gains[int(k) + 1]
        scale = float(rules.obs_scale[i]) * to_output
        conns.append(Connection(i, out, -(k_pos + k_vel / dt) * scale))
        conns.append(Connection(m + i, out, k_vel / dt * scale))
    return Network(tuple(nodes), tuple(conns), "recurrent")
