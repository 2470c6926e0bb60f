"""Cart with N hinged poles: Wieland's equations of motion, integrated by numba kernels.

State layout (length 2 + 2N, SI units, angles in radians from vertical)::

    [x, x_dot, theta_1, theta_dot_1, ..., theta_N, theta_dot_N]

A positive force pushes the cart towards +x; a pole with theta > 0 leans towards +x.
For N = 1 and no friction this is the layout and sign convention of the classic
Barto, Sutton & Anderson 1983 cart-pole (and of gymnasium's CartPole internal state).

Equations of motion (Wieland 1991, as restated in LITERATURE.md sec. 2.1; poles are
uniform rods hinged at one end, ``l_i`` is the **half** length, ``g = -gravity``)::

    x_dd      = (F - mu_c sgn(x_d) + sum_i Ft_i) / (M + sum_i mt_i)
    theta_dd_i = -(3 / (4 l_i)) (x_dd cos th_i + g sin th_i + mu_p th_d_i / (m_i l_i))
    Ft_i      = m_i l_i th_d_i^2 sin th_i + (3/4) m_i cos th_i (mu_p th_d_i / (m_i l_i) + g sin th_i)
    mt_i      = m_i (1 - (3/4) cos^2 th_i)

Integration: classical fourth-order Runge-Kutta (the published protocol) or explicit
Euler (the update rule of the classic single-pole simulator; used to check against it).
"""

from __future__ import annotations

from typing import NamedTuple

import numba
import numpy as np

from neuroyard.harness.errors import TaskError

WIELAND_1991 = (
    "Wieland, A. P. (1991). Evolving neural network controllers for unstable systems. "
    "IJCNN-91 Seattle, vol. II, 667-673 (N-pole cart equations; restated in "
    "LITERATURE.md sec. 2.1)"
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
    """Validated :class:`Physics`. Defaults: the double-pole constants of LITERATURE.md
    sec. 2.2 (Wieland 1991 / Gomez & Miikkulainen 1999; from memory, MEMORY-high)."""
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


@numba.njit(cache=True)
def new_workspace(phys: Physics) -> np.ndarray:
    """Scratch for :func:`advance`: rows k1..k4, trial state, per-pole terms (3 per pole)."""
    return np.zeros((6, 2 + 3 * phys.masses.shape[0]), dtype=np.float64)


@numba.njit(cache=True)
def derivatives(
    phys: Physics, state: np.ndarray, force: float, out: np.ndarray, pole_tmp: np.ndarray
) -> None:
    """Write d(state)/dt into ``out``; ``pole_tmp`` is scratch of length >= 3N."""
    g = -phys.gravity  # sign convention of Wieland's equations (LITERATURE.md sec. 2.1)
    n_poles = phys.masses.shape[0]
    x_dot = state[1]
    num = force
    if x_dot > 0.0:
        num -= phys.cart_friction
    elif x_dot < 0.0:
        num += phys.cart_friction
    den = phys.cart_mass
    for i in range(n_poles):
        m = phys.masses[i]
        ml = m * phys.half_lengths[i]
        th = state[2 + 2 * i]
        th_dot = state[3 + 2 * i]
        s = np.sin(th)
        c = np.cos(th)
        hinge = phys.pole_friction * th_dot / ml
        num += ml * th_dot * th_dot * s + 0.75 * m * c * (hinge + g * s)
        den += m * (1.0 - 0.75 * c * c)
        pole_tmp[3 * i] = s
        pole_tmp[3 * i + 1] = c
        pole_tmp[3 * i + 2] = hinge
    x_acc = num / den
    out[0] = x_dot
    out[1] = x_acc
    for i in range(n_poles):
        s = pole_tmp[3 * i]
        c = pole_tmp[3 * i + 1]
        out[2 + 2 * i] = state[3 + 2 * i]
        out[3 + 2 * i] = -0.75 / phys.half_lengths[i] * (x_acc * c + g * s + pole_tmp[3 * i + 2])


@numba.njit(cache=True)
def advance(phys: Physics, state: np.ndarray, force: float, ws: np.ndarray) -> None:
    """Advance ``state`` in place by one step of ``phys.tau`` seconds under constant ``force``."""
    n = 2 + 2 * phys.masses.shape[0]
    tau = phys.tau
    k1 = ws[0]
    pole_tmp = ws[5]
    derivatives(phys, state, force, k1, pole_tmp)
    if phys.integrator == 1:
        for j in range(n):
            state[j] += tau * k1[j]
        return
    k2 = ws[1]
    k3 = ws[2]
    k4 = ws[3]
    trial = ws[4]
    for j in range(n):
        trial[j] = state[j] + 0.5 * tau * k1[j]
    derivatives(phys, trial, force, k2, pole_tmp)
    for j in range(n):
        trial[j] = state[j] + 0.5 * tau * k2[j]
    derivatives(phys, trial, force, k3, pole_tmp)
    for j in range(n):
        trial[j] = state[j] + tau * k3[j]
    derivatives(phys, trial, force, k4, pole_tmp)
    for j in range(n):
        state[j] += tau / 6.0 * (k1[j] + 2.0 * k2[j] + 2.0 * k3[j] + k4[j])


@numba.njit(cache=True)
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
    ws = new_workspace(phys)
    for k in range(forces.shape[0]):
        for _ in range(substeps):
            advance(phys, state, forces[k], ws)
        out[k + 1] = state
    return out
