"""Seed derivation: every random stream of a run comes from the campaign seed and the run's key.

Seeds depend only on (campaign seed, evolver name, task id, run index), never on the order
in which runs execute or on the worker that runs them. The task's own randomness depends
on (campaign seed, task id, run index) alone, so in run i every evolver meets the same
task instance (paired comparisons with common random numbers).
"""

from __future__ import annotations

import hashlib

import numpy as np


def _word(text: str) -> int:
    """A stable 32-bit number for a name (Python's hash() is salted per process)."""
    return int.from_bytes(hashlib.sha256(text.encode()).digest()[:4], "little")


def _draw(campaign_seed: int, key: tuple[int, ...]) -> int:
    state = np.random.SeedSequence(entropy=campaign_seed, spawn_key=key).generate_state(
        2, np.uint32
    )
    return int(state[0]) << 31 ^ int(state[1])  # a non-negative 63-bit integer


def evolver_seed(campaign_seed: int, evolver: str, task: str, run_index: int) -> int:
    """The seed handed to ``evolver.start`` in run ``run_index`` of ``task``."""
    return _draw(campaign_seed, (_word("evolver"), _word(evolver), _word(task), run_index))


def task_seed(campaign_seed: int, task: str, run_index: int) -> int:
    """The seed a task instance is built with in run ``run_index`` (same for every evolver)."""
    return _draw(campaign_seed, (_word("task"), _word(task), run_index))
