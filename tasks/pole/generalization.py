"""The 625-start generalization test of the double pole without velocities.

Gruau, Whitley & Pyeatt 1996, used unchanged by Gomez & Miikkulainen 1999 and
Stanley & Miikkulainen 2002
(reference/SOURCES.md: gruau1996, gomez1999, stanley2002; generalization test). The
published constants (grid fractions, ranges, episode length, pass count) are read from
the ``[generalization]`` table of ``reference/figures/pole.toml``.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from functools import cache

import numpy as np

from neuroyard.reference import published


@dataclass(frozen=True)
class GeneralizationProtocol:
    """Published constants of the test; ranges in SI units (m, m/s, rad, rad/s)."""

    fractions: tuple[float, ...]
    half_ranges: tuple[float, float, float, float]  # x, x_dot, theta_1, theta_dot_1
    episode_steps: int
    pass_count: int
    source: str
    provenance: str


@cache
def protocol() -> GeneralizationProtocol:
    """The test's constants as published (read from reference/figures/pole.toml)."""
    table = published.protocol("pole", "generalization")
    return GeneralizationProtocol(
        fractions=tuple(float(f) for f in table["fractions"]),
        half_ranges=(
            float(table["x_range_m"]),
            float(table["x_dot_range_m_per_s"]),
            math.radians(table["theta_1_range_degrees"]),
            math.radians(table["theta_dot_1_range_degrees_per_s"]),
        ),
        episode_steps=int(table["episode_steps"]),
        pass_count=int(table["pass_count"]),
        source=str(table["source"]),
        provenance=str(table["provenance"]),
    )


def generalization_starts(n_poles: int = 2) -> np.ndarray:
    """Start states (625 x (2 + 2 n_poles)): every combination of the grid values of
    x, x_dot, theta_1, theta_dot_1 (value = -r + fraction * 2r); other poles upright at rest.
    """
    proto = protocol()
    axes = [[-r + f * 2.0 * r for f in proto.fractions] for r in proto.half_ranges]
    grid = np.array(list(itertools.product(*axes)), dtype=np.float64)
    starts = np.zeros((grid.shape[0], 2 + 2 * n_poles), dtype=np.float64)
    starts[:, :4] = grid
    return starts
