"""The NEAT both maze studies run (test_study_maze.py, test_study_maze_family.py)."""

from __future__ import annotations

from neuroyard.core.evolver_registry import EvolverSpec

# The paper's compatibility threshold was "variable (dynamic)" (App. A, Table 1) and gives
# no target; neuroyard's NEAT keeps it fixed. At the default 3.0 (with the XOR-tuned weight
# magnitudes) nearly every genome formed its own species (about 250 species of 250
# genomes), which made speciation take ~0.8 s per generation. Probes on the hard maze
# (objective NEAT, 10,000 evaluations, run 0): threshold 6 -> ~249 species, 10 -> ~58,
# 15 -> ~5; 12 gave 20-30 species. Chosen on the species count, the same for every side.
FREE_PARAMETERS = {"compat_threshold": 12.0}


def side(selection: str) -> EvolverSpec:
    """``neat-novelty`` (the maze experiment's NEAT) with the given selection."""
    chosen = {} if selection == "novelty" else {"selection": selection}
    return EvolverSpec("neat-novelty", {**FREE_PARAMETERS, **chosen})
