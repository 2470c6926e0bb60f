"""Pole balancing: cart with one or two poles (Wieland 1991 equations, RK4).

Importing this package registers ``pole1-markov-v1``, ``pole1-nonmarkov-v1``,
``pole2-markov-v1`` (DPV) and ``pole2-nonmarkov-v1`` (DPNV).
"""

from .episodes import EpisodeRules, balance, count_balanced, failed
from .generalization import generalization_starts
from .physics import Physics, make_physics, simulate
from .tasks import (
    DoublePoleMarkov,
    DoublePoleNonMarkov,
    PoleBalancing,
    SinglePoleMarkov,
    SinglePoleNonMarkov,
)

__all__ = [
    "DoublePoleMarkov",
    "DoublePoleNonMarkov",
    "EpisodeRules",
    "Physics",
    "PoleBalancing",
    "SinglePoleMarkov",
    "SinglePoleNonMarkov",
    "balance",
    "count_balanced",
    "failed",
    "generalization_starts",
    "make_physics",
    "simulate",
]
