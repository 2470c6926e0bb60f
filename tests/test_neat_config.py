"""NEAT configuration: the paper's values as defaults, provenance of each, errors naming the key.

Expected defaults are the parameter settings of Stanley & Miikkulainen (2002), sec. 4.1,
as listed with their provenance in our bibliography
(reference/SOURCES.md: stanley2002; NEAT settings).
"""

from __future__ import annotations

import dataclasses

import pytest

from neuroyard.core.errors import EvolverError
from neuroyard.core.evolver_registry import EvolverSpec, load_factory
from neuroyard.reference.neat import NeatConfig, NeatEvolver, make_config, option_table


def test_every_config_field_is_declared_with_a_source():
    declared = option_table()
    assert set(declared.names) == {f.name for f in dataclasses.fields(NeatConfig)}
    for p in declared:
        # a default either cites the paper with a provenance tag, or says it is not from it
        assert any(
            tag in p.source
            for tag in (
                "VERIFIED-QUOTE",
                "VERIFIED)",
                "SECONDARY-NOTES",
                "MEMORY-",
                "common practice",
                "from memory",
                "neuroyard",
            )
        ), p.name
        if p.low is not None and p.high is not None:
            assert p.low <= p.default <= p.high, p.name


def test_defaults_are_the_papers_settings():
    c = NeatEvolver().config
    # Stanley & Miikkulainen 2002, sec. 4.1 (reference/SOURCES.md: stanley2002; NEAT settings)
    assert (c.population_size, c.c1, c.c2, c.c3, c.compat_threshold) == (150, 1.0, 1.0, 0.4, 3.0)
    assert (c.stagnation_generations, c.champion_copy_above, c.normalise_below) == (15, 5, 20)
    assert (c.weight_mutation_prob, c.weight_perturb_prob) == (0.8, 0.9)
    assert (c.disable_inherited_prob, c.mutate_only_fraction) == (0.75, 0.25)
    assert (c.interspecies_mating_rate, c.add_node_prob, c.add_link_prob) == (0.001, 0.03, 0.05)
    assert (c.initial_topology, c.initial_hidden, c.recurrent) == ("minimal", 0, False)
    assert c.growth and c.speciation and c.crossover
    # not in the paper: must be tagged as such (survival fraction row of
    # reference/SOURCES.md: stanley2002; NEAT settings)
    assert "common practice" in option_table()["survival_fraction"].source


def test_settings_override_defaults_and_text_values_are_parsed():
    c = make_config({"population_size": 50, "c3": "3.0", "recurrent": "true", "growth": False})
    assert (c.population_size, c.c3, c.recurrent, c.growth) == (50, 3.0, True, False)
    assert make_config({"initial_topology": "random"}).initial_topology == "random"
    assert isinstance(make_config({"c1": 2}).c1, float)


@pytest.mark.parametrize(
    ("settings", "named"),
    [
        ({"populaton_size": 150}, "populaton_size"),
        ({"population_size": 1}, "population_size"),
        ({"population_size": 150.5}, "population_size"),
        ({"add_node_prob": 1.5}, "add_node_prob"),
        ({"c3": -0.1}, "c3"),
        ({"c3": float("nan")}, "c3"),
        ({"recurrent": 1}, "recurrent"),
        ({"initial_topology": "dense"}, "initial_topology"),
        ({"survival_fraction": "lots"}, "survival_fraction"),
    ],
)
def test_bad_settings_raise_value_error_naming_the_key(settings, named):
    with pytest.raises(ValueError, match=named):
        NeatEvolver(**settings)


@pytest.mark.parametrize(
    ("settings", "words"),
    [  # the option, the value and what is allowed, in one line
        ({"add_node_prob": 1.5}, "option 'add_node_prob' must be within 0..1, got 1.5"),
        ({"initial_topology": "dense"}, "must be one of minimal, random, got 'dense'"),
        ({"population_size": 150.5}, "option 'population_size' must be a whole number"),
    ],
)
def test_errors_name_the_option_the_value_and_the_range(settings, words):
    with pytest.raises(ValueError) as info:
        NeatEvolver(**settings)
    assert words in str(info.value) and str(info.value).startswith("evolver neat: ")


def test_the_perturbation_half_width_is_still_read_under_its_former_name():
    current = make_config({"weight_perturb_half_width": 1.0})
    assert make_config({"weight_perturb_power": 1.0}) == current  # stored configurations
    with pytest.raises(ValueError, match="given twice"):
        make_config({"weight_perturb_power": 1.0, "weight_perturb_half_width": 2.0})
    spec = EvolverSpec("neat", {"weight_perturb_power": 1.0})
    assert spec.config_hash == EvolverSpec("neat", {"weight_perturb_half_width": 1.0}).config_hash


def test_registered_as_neat_and_config_errors_become_evolver_errors():
    assert load_factory("neat") is NeatEvolver
    with pytest.raises(EvolverError, match="c9"):
        EvolverSpec("neat", {"c9": 1.0}).build()
