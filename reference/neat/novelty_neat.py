"""``neat-novelty``: the reference NEAT with novelty selection and the maze-experiment
parameters of Lehman & Stanley 2011 (reference/SOURCES.md: lehman2011).

Only the defaults differ from ``neat`` (``novelty_defaults.toml``); every option of
``neat`` is accepted and listed, with the changed defaults and their sources.
"""

from __future__ import annotations

from typing import Any

from .config import option_table
from .evolver import NeatEvolver


class NoveltyNeat(NeatEvolver):
    """NEAT selecting by novelty, with population 250, c3 = 3.0, add-link 0.1 and
    add-node 0.005 (the paper's App. A, Table 1) and its squared Euclidean distance."""

    options = option_table("evolver neat-novelty", "novelty_defaults.toml")

    def __init__(self, **settings: Any) -> None:
        super().__init__(**self.options.resolve(settings))
