"""Reference NEAT evolver (Stanley & Miikkulainen 2002), registered as ``--evolver neat``.

Modules: :mod:`.config` (settings, defaults and their sources in ``defaults.toml``),
:mod:`.innovation` (historical markings), :mod:`.genome` (genes, distance, crossover),
:mod:`.mutation`, :mod:`.initial` (first generation), :mod:`.species`,
:mod:`.reproduction`, :mod:`.novelty` (sparseness and archive of novelty search),
:mod:`.decode` (genome -> network), :mod:`.evolver` and :mod:`.novelty_neat`
(``neat-novelty``: other defaults, from ``novelty_defaults.toml``).
"""

from .config import NeatConfig, make_config, option_table
from .evolver import NeatEvolver
from .novelty_neat import NoveltyNeat

__all__ = ["NeatConfig", "NeatEvolver", "NoveltyNeat", "make_config", "option_table"]
