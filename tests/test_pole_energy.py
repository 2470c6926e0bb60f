"""Energy conservation of the double pole: a check of the equations and of RK4's order.

Outside reference: classical mechanics. With friction and force off, the total
mechanical energy of cart and two uniform rods is a constant of motion, so any drift is
integration error; classical Runge-Kutta is fourth order, so the drift over a fixed time
falls by about 2^4 = 16 each time the step is halved (issue 4 item 4).
"""

from __future__ import annotations

import numpy as np

from neuroyard.tasks.pole import Physics, make_physics, simulate

DURATION = 5.0  # s
TAUS = (0.01, 0.005, 0.0025, 0.00125)


def mechanical_energy(phys: Physics, states: np.ndarray) -> np.ndarray:
    """Kinetic + potential energy (J) of each state row; hinge height is zero potential.

    Rod i: centre at (x + l sin th, l cos th), moment of inertia m (2l)^2 / 12 about it.
    """
    x_dot = states[:, 1]
    energy = 0.5 * phys.cart_mass * x_dot**2
    for i, (m, half) in enumerate(zip(phys.masses, phys.half_lengths, strict=True)):
        th, th_dot = states[:, 2 + 2 * i], states[:, 3 + 2 * i]
        vx = x_dot + half * th_dot * np.cos(th)
        vy = -half * th_dot * np.sin(th)
        inertia = m * (2.0 * half) ** 2 / 12.0
        energy += 0.5 * m * (vx**2 + vy**2) + 0.5 * inertia * th_dot**2
        energy += m * phys.gravity * half * np.cos(th)
    return energy


def relative_drift(tau: float, start: np.ndarray) -> float:
    """Largest |E(t) - E(0)| / E(0) over DURATION, no force, no friction, no limits."""
    phys = make_physics(cart_friction=0.0, pole_friction=0.0, tau=tau)
    states = simulate(phys, start, np.zeros(round(DURATION / tau)), 1)
    energy = mechanical_energy(phys, states)
    return float(np.abs(energy - energy[0]).max() / abs(energy[0]))


def test_energy_drift_falls_16x_per_halving() -> None:
    # both poles swing over and spin (limits lifted): a demanding motion
    start = np.array([0.0, 0.3, 0.4, -0.5, -0.3, 1.0])
    drifts = [relative_drift(tau, start) for tau in TAUS]
    factors = [a / b for a, b in zip(drifts, drifts[1:], strict=False)]
    assert all(12.0 < f < 24.0 for f in factors), (drifts, factors)
    assert drifts[-1] < 1e-6, drifts


def test_friction_dissipates_energy() -> None:
    """With friction on (100-1000x the published values, so the loss shows within 5 s),
    the energy never rises, up to integration error."""
    phys = make_physics(cart_friction=0.05, pole_friction=2e-3, tau=0.00125)
    start = np.array([0.0, 0.3, 0.4, -0.5, -0.3, 1.0])
    states = simulate(phys, start, np.zeros(round(DURATION / phys.tau)), 1)
    energy = mechanical_energy(phys, states)
    assert np.all(np.diff(energy) < 1e-9)
    assert energy[-1] < energy[0] * (1.0 - 1e-3)
