"""Reference NEAT evolver (Stanley & Miikkulainen 2002), registered as ``--evolver neat``.

Modules: :mod:`.config` (settings, defaults and their sources in ``defaults.toml``),
:mod:`.innovation` (historical markings), :mod:`.genome` (genes, distance, crossover),
:mod:`.mutation`, :mod:`.initial` (first generation), :mod:`.species`,
:mod:`.reproduction`, :mod:`.decode` (genome -> network) and :mod:`.evolver`.
"""

from .config import NeatConfig, make_config, option_table
from .evolver import NeatEvolver

__all__ = ["NeatConfig", "NeatEvolver", "make_config", "option_table"]
