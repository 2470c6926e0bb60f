"""Cart with N hinged poles: Wieland's equations of motion, integrated by numba kernels.

State layout (length 2 + 2N, SI units, angles in radians from vertical)::

    [x, x_dot, theta_1, theta_dot_1, ..., theta_N, theta_dot_N]

A positive force pushes the cart towards +x; a pole with theta > 0 leans towards +x.
For N = 1 and no friction this is the layout and sign convention of the classic
Barto, Sutton & Anderson 1983 cart-pole (and of gymnasium's CartPole internal state).

Equations of motion (Wieland 1991, as restated in reference/SOURCES.md: wieland1991; equations)
of poles that are uniform rods hinged at one end (``l_i`` is the **half** length,
``g = -gravity``)::

    x_dd      = (F - mu_c sgn(x_d) + sum_i Ft_i) / (M + sum_i mt_i)
    theta_dd_i = -(3 / (4 l_i)) (x_dd cos th_i + g sin th_i + mu_p th_d_i / (m_i l_i))
    Ft_i      = m_i l_i th_d_i^2 sin th_i + (3/4) m_i cos th_i (mu_p th_d_i / (m_i l_i) + g sin th_i)
    mt_i      = m_i (1 - (3/4) cos^2 th_i)

Integration: classical fourth-order Runge-Kutta (the published protocol) or explicit
Euler (the update rule of the classic single-pole simulator; used to check against it).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numba
import numpy as np

from neuroyard.core.errors import TaskError

WIELAND_1991 = (
    "Wieland, A. P. (1991). Evolving neural network controllers for unstable systems. "
    "IJCNN-91 Seattle, vol. II, 667-673 (N-pole cart equations; "
    "reference/SOURCES.md: wieland1991; equations)"
)

# Integrator codes used inside the kernels.
INTEGRATORS: dict[str, int] = {"rk4": 0, "euler": 1}


class Physics(NamedTuple):
    """Constants of one cart-pole system; build with :func:`make_physics`.

    ``gravity`` is the magnitude (9.8 m/s^2); ``masses``/``half_lengths`` have one entry
    per pole (kg, m); ``tau`` is one integration step in seconds.
    """

    cart_mass: float
    masses: np.ndarray
    half_lengths: np.ndarray
    gravity: float
    cart_friction: float
    pole_friction: float
    tau: float
    integrator: int


def make_physics(
    masses: tuple[float, ...] = (0.1, 0.01),
    half_lengths: tuple[float, ...] = (0.5, 0.05),
    cart_mass: float = 1.0,
    gravity: float = 9.8,
    cart_friction: float = 5e-4,
    pole_friction: float = 2e-6,
    tau: float = 0.01,
    integrator: str = "rk4",
) -> Physics:
    """Validated :class:`Physics`. Defaults: the double-pole constants of Wieland 1991 /
    Gomez & Miikkulainen 1999 (from memory, MEMORY-high;
    reference/SOURCES.md: wieland1991, gomez1999; constants)."""
    if len(masses) != len(half_lengths) or not masses:
        raise TaskError(
            f"pole physics: need one mass and one half length per pole, got "
            f"{len(masses)} masses and {len(half_lengths)} half lengths"
        )
    positive = {"cart_mass": cart_mass, "gravity": gravity, "tau": tau}
    positive.update({f"masses[{i}]": m for i, m in enumerate(masses)})
    positive.update({f"half_lengths[{i}]": h for i, h in enumerate(half_lengths)})
    for name, value in positive.items():
        if not value > 0.0:
            raise TaskError(f"pole physics: {name} must be > 0, got {value!r}")
    for name, value in (("cart_friction", cart_friction), ("pole_friction", pole_friction)):
        if not value >= 0.0:
            raise TaskError(f"pole physics: {name} must be >= 0, got {value!r}")
    if integrator not in INTEGRATORS:
        raise TaskError(
            f"pole physics: unknown integrator {integrator!r} (known: {', '.join(INTEGRATORS)})"
        )
    return Physics(
        cart_mass=float(cart_mass),
        masses=np.array(masses, dtype=np.float64),
        half_lengths=np.array(half_lengths, dtype=np.float64),
        gravity=float(gravity),
        cart_friction=float(cart_friction),
        pole_friction=float(pole_friction),
        tau=float(tau),
        integrator=INTEGRATORS[integrator],
    )


KERNEL = {"cache": True}

# Layout of the packed constants used inside the kernels (see pack_constants).
_CART_MASS, _G, _CART_FRICTION, _POLE_FRICTION, _PER_POLE = 0, 1, 2, 3, 4


@numba.njit(**KERNEL)
def pack_constants(phys: Physics) -> np.ndarray:
    """Physics constants in one flat array, per-pole terms precomputed.

    ``[M, g, mu_c, mu_p, m_1..m_N, m_i l_i.., 1/(m_i l_i).., 3/(4 l_i)..]`` with
    g = -gravity (the sign convention of Wieland's equations;
    reference/SOURCES.md: wieland1991; equations).
    One array instead of several: every array handed through the inner loop costs
    numba reference-count updates, which measured slower than the physics itself.
    """
    n = phys.masses.shape[0]
    c = np.empty(_PER_POLE + 4 * n, dtype=np.float64)
    c[_CART_MASS] = phys.cart_mass
    c[_G] = -phys.gravity
    c[_CART_FRICTION] = phys.cart_friction
    c[_POLE_FRICTION] = phys.pole_friction
    for i in range(n):
        ml = phys.masses[i] * phys.half_lengths[i]
        c[_PER_POLE + i] = phys.masses[i]
        c[_PER_POLE + n + i] = ml
        c[_PER_POLE + 2 * n + i] = 1.0 / ml
        c[_PER_POLE + 3 * n + i] = 0.75 / phys.half_lengths[i]
    return c


@numba.njit(**KERNEL)
def new_workspace(n_poles: int) -> np.ndarray:
    """Scratch for :func:`integration_step`: rows k1..k4, trial state, per-pole terms."""
    return np.zeros((6, 2 + 3 * n_poles), dtype=np.float64)


@numba.njit(inline="always", **KERNEL)
def derivatives(c: np.ndarray, state: np.ndarray, force: float, ws: np.ndarray, row: int) -> None:
    """Write d(state)/dt into ``ws[row]``; ``c`` from :func:`pack_constants`."""
    n = (c.shape[0] - _PER_POLE) // 4
    g = c[_G]
    mu_p = c[_POLE_FRICTION]
    x_dot = state[1]
    num = force
    if x_dot > 0.0:
        num -= c[_CART_FRICTION]
    elif x_dot < 0.0:
        num += c[_CART_FRICTION]
    den = c[_CART_MASS]
    for i in range(n):
        m = c[_PER_POLE + i]
        th_dot = state[3 + 2 * i]
        s = math.sin(state[2 + 2 * i])
        co = math.cos(state[2 + 2 * i])
        hinge = mu_p * th_dot * c[_PER_POLE + 2 * n + i]  # mu_p th_dot / (m l)
        num += c[_PER_POLE + n + i] * th_dot * th_dot * s + 0.75 * m * co * (hinge + g * s)
        den += m * (1.0 - 0.75 * co * co)
        ws[5, 3 * i] = s
        ws[5, 3 * i + 1] = co
        ws[5, 3 * i + 2] = hinge
    x_acc = num / den
    ws[row, 0] = x_dot
    ws[row, 1] = x_acc
    for i in range(n):
        ws[row, 2 + 2 * i] = state[3 + 2 * i]
        ws[row, 3 + 2 * i] = -c[_PER_POLE + 3 * n + i] * (
            x_acc * ws[5, 3 * i + 1] + g * ws[5, 3 * i] + ws[5, 3 * i + 2]
        )


@numba.njit(inline="always", **KERNEL)
def integration_step(
    c: np.ndarray, tau: float, euler: bool, state: np.ndarray, force: float, ws: np.ndarray
) -> None:
    """Advance ``state`` in place by ``tau`` seconds under constant ``force`` (RK4, or
    explicit Euler when ``euler``); ``c`` from :func:`pack_constants`, ``ws`` from
    :func:`new_workspace`."""
    n = state.shape[0]
    derivatives(c, state, force, ws, 0)
    if euler:
        for j in range(n):
            state[j] += tau * ws[0, j]
        return
    trial = ws[4]
    for j in range(n):
        trial[j] = state[j] + 0.5 * tau * ws[0, j]
    derivatives(c, trial, force, ws, 1)
    for j in range(n):
        trial[j] = state[j] + 0.5 * tau * ws[1, j]
    derivatives(c, trial, force, ws, 2)
    for j in range(n):
        trial[j] = state[j] + tau * ws[2, j]
    derivatives(c, trial, force, ws, 3)
    for j in range(n):
        state[j] += tau / 6.0 * (ws[0, j] + 2.0 * ws[1, j] + 2.0 * ws[2, j] + ws[3, j])


@numba.njit(**KERNEL)
def simulate(phys: Physics, start: np.ndarray, forces: np.ndarray, substeps: int) -> np.ndarray:
    """Integrate from ``start`` under a sequence of forces; return the state trajectory.

    ``forces[k]`` (newtons) is held for ``substeps`` integration steps of ``phys.tau``.
    Row 0 of the result is ``start``; row k+1 is the state after force k. No failure
    limits are applied: the caller decides what counts as failure.
    """
    n = 2 + 2 * phys.masses.shape[0]
    if start.shape[0] != n:
        raise ValueError("start state length does not match the number of poles")
    out = np.empty((forces.shape[0] + 1, n), dtype=np.float64)
    state = start.copy()
    out[0] = state
    c = pack_constants(phys)
    ws = new_workspace(phys.masses.shape[0])
    euler = phys.integrator == 1
    for k in range(forces.shape[0]):
        for _ in range(substeps):
            integration_step(c, phys.tau, euler, state, forces[k], ws)
        out[k + 1] = state
    return out
