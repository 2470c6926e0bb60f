"""Plain-Python cart-pole: the same equations and episode rules as the numba kernels.

Written separately from :mod:`.physics` and :mod:`.episodes` (plain floats and the
``math`` module, no numpy, no numba) so tests can check the kernels against it and the
benchmarks can measure what numba buys. Equations: Wieland 1991 as restated in our
bibliography (reference/SOURCES.md: wieland1991; equations); see :mod:`.physics`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from neuroyard.core.reference_activation import ReferenceNet

from .episodes import JIGGLE_WINDOW, EpisodeRules
from .physics import Physics


def plain_derivatives(phys: Physics, state: Sequence[float], force: float) -> list[float]:
    """d(state)/dt by Wieland's equations, written term by term."""
    g = -phys.gravity
    n_poles = len(phys.masses)
    effective_forces = []
    effective_masses = []
    hinge_terms = []
    for i in range(n_poles):
        m = float(phys.masses[i])
        half = float(phys.half_lengths[i])
        th, th_dot = state[2 + 2 * i], state[3 + 2 * i]
        hinge = phys.pole_friction * th_dot / (m * half)
        hinge_terms.append(hinge)
        effective_forces.append(
            m * half * th_dot**2 * math.sin(th)
            + 0.75 * m * math.cos(th) * (hinge + g * math.sin(th))
        )
        effective_masses.append(m * (1.0 - 0.75 * math.cos(th) ** 2))
    sign = (float(state[1]) > 0.0) - (float(state[1]) < 0.0)
    x_acc = (force - phys.cart_friction * sign + sum(effective_forces)) / (
        phys.cart_mass + sum(effective_masses)
    )
    out = [state[1], x_acc]
    for i in range(n_poles):
        half = float(phys.half_lengths[i])
        th = state[2 + 2 * i]
        th_acc = -0.75 / half * (x_acc * math.cos(th) + g * math.sin(th) + hinge_terms[i])
        out += [state[3 + 2 * i], th_acc]
    return out


def plain_advance(phys: Physics, state: Sequence[float], force: float) -> list[float]:
    """The state one step of ``phys.tau`` later (RK4 or explicit Euler, as ``phys`` says)."""
    tau = phys.tau
    k1 = plain_derivatives(phys, state, force)
    if phys.integrator == 1:
        return [s + tau * d for s, d in zip(state, k1, strict=True)]
    k2 = plain_derivatives(phys, [s + 0.5 * tau * d for s, d in zip(state, k1, strict=True)], force)
    k3 = plain_derivatives(phys, [s + 0.5 * tau * d for s, d in zip(state, k2, strict=True)], force)
    k4 = plain_derivatives(phys, [s + tau * d for s, d in zip(state, k3, strict=True)], force)
    return [
        s + tau / 6.0 * (a + 2.0 * b + 2.0 * c + d)
        for s, a, b, c, d in zip(state, k1, k2, k3, k4, strict=True)
    ]


def plain_simulate(
    phys: Physics, start: Sequence[float], forces: Sequence[float], substeps: int
) -> list[list[float]]:
    """Same contract as :func:`.physics.simulate`, as nested lists."""
    state = [float(v) for v in start]
    out = [state]
    for force in forces:
        for _ in range(substeps):
            state = plain_advance(phys, state, float(force))
        out.append(state)
    return out


def plain_balance(
    net: ReferenceNet,
    phys: Physics,
    rules: EpisodeRules,
    start: Sequence[float],
    max_steps: int,
) -> tuple[int, float]:
    """Same contract as :func:`.episodes.balance` (without recording)."""
    net.reset()
    state = [float(v) for v in start]
    window: list[float] = []
    steps = 0
    while steps < max_steps:
        inputs = [
            state[int(k)] / float(d) for k, d in zip(rules.obs_index, rules.obs_scale, strict=True)
        ]
        out = net.step(inputs)[0]
        if rules.force_mapping == 1:
            force = rules.max_force if out > 0.5 else -rules.max_force
        else:
            force = rules.max_force * min(1.0, max(-1.0, 2.0 * out - 1.0))
        for _ in range(rules.substeps):
            state = plain_advance(phys, state, force)
        angles_ok = all(
            abs(state[2 + 2 * i]) <= rules.failure_angle for i in range(len(phys.masses))
        )
        if not (abs(state[0]) <= rules.track_limit and angles_ok):
            break
        window.append(abs(state[0]) + abs(state[1]) + abs(state[2]) + abs(state[3]))
        if len(window) > JIGGLE_WINDOW:
            window.pop(0)
        steps += 1
    return steps, (sum(window) if steps >= JIGGLE_WINDOW else 0.0)
