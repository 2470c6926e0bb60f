"""NEAT configuration: defaults, ranges and sources from ``defaults.toml``, checked on entry.

Every key of :class:`NeatConfig` has one table in ``defaults.toml`` giving its default
(``value``), its accepted range (``min``/``max``, inclusive) or ``choices``, the source of
the default, and any ``former_names``. :func:`option_table` turns them into the harness's
option table, which validates (errors name the option, the value and the range), records
and lists them.
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, fields
from functools import cache
from importlib import resources
from typing import Any

from neuroyard.core.options import Option, OptionTable


@dataclass(frozen=True)
class NeatConfig:
    """The full NEAT configuration; see ``defaults.toml`` for meaning and source of each key."""

    population_size: int
    c1: float
    c2: float
    c3: float
    compat_threshold: float
    normalise_below: int
    species_representative: str
    stagnation_generations: int
    champion_copy_above: int
    survival_fraction: float
    mutate_only_fraction: float
    interspecies_mating_rate: float
    disable_inherited_prob: float
    inherited_disabled_rule: str
    mutate_crossover_offspring: bool
    weight_mutation_prob: float
    weight_perturb_prob: float
    weight_perturb_half_width: float
    weight_init_range: float
    weight_replace_range: float
    weight_limit: float
    add_node_prob: float
    add_link_prob: float
    split_bias_links: bool
    structural_excludes_weights: bool
    recurrent: bool
    recurrent_link_choice: str
    recurrent_link_prob: float
    growth: bool
    speciation: bool
    crossover: bool
    initial_topology: str
    initial_hidden: int
    random_max_hidden: int
    random_link_prob: float
    selection: str
    novelty_k: int
    novelty_distance: str
    novelty_threshold: float
    novelty_window: int
    novelty_lower_factor: float
    novelty_raise_factor: float
    novelty_raise_above: int

    def as_dict(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) for f in fields(self)}


def _tables(name: str) -> dict[str, Any]:
    return tomllib.loads((resources.files(__package__) / name).read_text())


@cache
def option_table(owner: str = "evolver neat", variant: str | None = None) -> OptionTable:
    """Every key of ``defaults.toml`` as an option: default, range or choices, source, and
    the former names it is still read under (``former_names``).

    ``variant``: a TOML file beside it (``novelty_defaults.toml``) whose tables replace the
    ``value`` and ``source`` of some keys: a registered variant of NEAT that only changes
    defaults. A key of the variant that ``defaults.toml`` lacks is a ``KeyError``."""
    tables = _tables("defaults.toml")
    for name, changed in (_tables(variant) if variant else {}).items():
        tables[name] = {**tables[name], "value": changed["value"], "source": changed["source"]}
    return OptionTable(
        owner,
        (
            Option(
                name,
                table["value"],
                source=table["source"],
                low=table.get("min"),
                high=table.get("max"),
                choices=tuple(table.get("choices", ())),
                aliases=tuple(table.get("former_names", ())),
            )
            for name, table in tables.items()
        ),
    )


def make_config(settings: Mapping[str, Any] | None = None) -> NeatConfig:
    """Defaults overridden by ``settings``; a :class:`SettingError` (a ``ValueError``)
    names the option on bad input."""
    return NeatConfig(**option_table().resolve(settings))
