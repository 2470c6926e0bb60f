"""NEAT configuration: defaults, ranges and sources from ``defaults.toml``, checked on entry.

Every key of :class:`NeatConfig` has one table in ``defaults.toml`` giving its default
(``value``), its accepted range (``min``/``max``, inclusive) or ``choices``, and the
source of the default. :func:`make_config` merges user settings over the defaults and
raises ``ValueError`` naming the key for an unknown key, a wrong type or a value out of
range. Values given as text (``key=value`` on a command line) are parsed as TOML values.
"""

from __future__ import annotations

import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, fields
from functools import cache
from importlib import resources
from typing import Any

from neuroyard.harness.core.options import matches_default


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
    weight_perturb_power: float
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

    def as_dict(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True)
class Parameter:
    """One configuration key as declared in ``defaults.toml``."""

    name: str
    default: Any
    source: str
    low: float | None = None
    high: float | None = None
    choices: tuple[str, ...] = ()


@cache
def parameters() -> dict[str, Parameter]:
    """Every key of ``defaults.toml`` with its default, range and source."""
    text = (resources.files(__package__) / "defaults.toml").read_text()
    return {
        name: Parameter(
            name=name,
            default=table["value"],
            source=table["source"],
            low=table.get("min"),
            high=table.get("max"),
            choices=tuple(table.get("choices", ())),
        )
        for name, table in tomllib.loads(text).items()
    }


def make_config(settings: Mapping[str, Any] | None = None) -> NeatConfig:
    """Defaults overridden by ``settings``; ``ValueError`` naming the key on bad input."""
    params = parameters()
    given = dict(settings or {})
    unknown = sorted(set(given) - set(params))
    if unknown:
        raise ValueError(
            f"unknown NEAT setting {unknown[0]!r} (known: {', '.join(sorted(params))})"
        )
    values = {name: p.default for name, p in params.items()}
    for name, raw in given.items():
        values[name] = _checked(params[name], raw)
    return NeatConfig(**values)


def _checked(param: Parameter, raw: Any) -> Any:
    value = _parse_text(raw) if isinstance(raw, str) and param.choices == () else raw
    default = param.default
    name = param.name
    if not matches_default(default, value):
        raise ValueError(f"NEAT setting {name!r} must be {type(default).__name__}, got {raw!r}")
    if isinstance(default, float):
        value = float(value)
    if param.choices and value not in param.choices:
        raise ValueError(
            f"NEAT setting {name!r} must be one of {', '.join(param.choices)}, got {value!r}"
        )
    if param.low is not None and not param.low <= value <= param.high:
        raise ValueError(
            f"NEAT setting {name!r} must be within {param.low}..{param.high}, got {value!r}"
        )
    return value


def _parse_text(text: str) -> Any:
    """A value given as text, read as a TOML value (``"3"`` -> 3, ``"true"`` -> True)."""
    try:
        return tomllib.loads(f"v = {text}")["v"]
    except tomllib.TOMLDecodeError:
        return text
