"""NEAT genomes: connection genes with historical markings, compatibility distance, crossover.

A genome lists its hidden node ids and its connection genes keyed by innovation number.
Input, bias and output nodes are the same in every genome of a run (:class:`Layout`), so
they are not stored per genome. In a feedforward run all genes of a genome, enabled or
not, form an acyclic graph; every operation here keeps that true.
"""

from __future__ import annotations

import math
import random
from dataclasses import dataclass, field


@dataclass(frozen=True)
class Layout:
    """Node ids shared by every genome of a run: inputs ``0..n-1``, bias ``n``, then outputs."""

    inputs: tuple[int, ...]
    bias: int
    outputs: tuple[int, ...]

    @classmethod
    def for_problem(cls, inputs: int, outputs: int) -> Layout:
        return cls(tuple(range(inputs)), inputs, tuple(range(inputs + 1, inputs + 1 + outputs)))

    @property
    def sources(self) -> tuple[int, ...]:
        """Nodes that only send: the inputs and the bias."""
        return (*self.inputs, self.bias)

    @property
    def first_free_id(self) -> int:
        return self.outputs[-1] + 1 if self.outputs else self.bias + 1


@dataclass(slots=True)
class ConnectionGene:
    """A link ``source -> target`` with its weight, enabled flag and innovation number."""

    innovation: int
    source: int
    target: int
    weight: float
    enabled: bool = True

    def copy(self) -> ConnectionGene:
        return ConnectionGene(self.innovation, self.source, self.target, self.weight, self.enabled)


@dataclass(slots=True)
class Genome:
    """Hidden node ids and connection genes by innovation number; ``fitness`` once evaluated."""

    hidden: list[int] = field(default_factory=list)
    genes: dict[int, ConnectionGene] = field(default_factory=dict)
    fitness: float = 0.0

    def copy(self) -> Genome:
        """An independent copy (fitness included)."""
        return Genome(list(self.hidden), {k: g.copy() for k, g in self.genes.items()}, self.fitness)

    def add(self, gene: ConnectionGene) -> None:
        self.genes[gene.innovation] = gene

    @property
    def enabled_connections(self) -> int:
        return sum(1 for g in self.genes.values() if g.enabled)


def distance(
    a: Genome,
    b: Genome,
    c1: float,
    c2: float,
    c3: float,
    normalise_below: int,
    stop_at: float = math.inf,
) -> float:
    """Compatibility distance delta = c1*E/N + c2*D/N + c3*W (the paper's eq. 1).

    The paper's rules (reference/SOURCES.md: stanley2002; NEAT settings).

    E: excess genes (innovation beyond the other genome's highest), D: disjoint genes (the
    other non-matching ones), W: mean absolute weight difference of matching genes,
    disabled genes included. N is the gene count of the larger genome, or 1 when it has
    fewer than ``normalise_below`` genes. When the gene-count part alone reaches
    ``stop_at``, that part is returned (a lower bound >= ``stop_at``, enough to tell that
    the genomes are incompatible) without computing W.
    """
    ga, gb = a.genes, b.genes
    n = max(len(ga), len(gb))
    if n < normalise_below or n == 0:
        n = 1
    if c1 == c2:  # E and D weigh the same: count them together
        structural = c1 * len(ga.keys() ^ gb.keys()) / n
    else:
        max_a = max(ga, default=-1)
        max_b = max(gb, default=-1)
        # only the genome with the higher top innovation has excess genes
        if max_a > max_b:
            excess = sum(map(max_b.__lt__, ga))
        else:
            excess = sum(map(max_a.__lt__, gb))
        disjoint = len(ga.keys() ^ gb.keys()) - excess
        structural = (c1 * excess + c2 * disjoint) / n
    if structural >= stop_at:
        return structural
    shared = ga.keys() & gb.keys()
    if shared:
        mean_diff = math.fsum(abs(ga[k].weight - gb[k].weight) for k in shared) / len(shared)
    else:
        mean_diff = 0.0
    return structural + c3 * mean_diff


def fitter_first(a: Genome, b: Genome, rng: random.Random) -> tuple[Genome, Genome]:
    """(fitter, other). Equal fitness: the smaller genome counts as fitter, then a coin flip.

    The tie rule is neuroyard's choice (common practice favours the smaller genome).
    """
    if a.fitness != b.fitness:
        return (a, b) if a.fitness > b.fitness else (b, a)
    if len(a.genes) != len(b.genes):
        return (a, b) if len(a.genes) < len(b.genes) else (b, a)
    return (a, b) if rng.random() < 0.5 else (b, a)


def crossover(
    fitter: Genome,
    other: Genome,
    rng: random.Random,
    disable_inherited_prob: float,
    keep_disabled: bool = False,
) -> Genome:
    """Offspring of two parents aligned by innovation number.

    The paper's rules (reference/SOURCES.md: stanley2002; NEAT settings).

    Matching genes are inherited from either parent at random; disjoint and excess genes
    from the fitter parent only, so the child has the fitter parent's structure. A gene
    disabled in either parent is disabled in the child with ``disable_inherited_prob``
    and enabled otherwise. With ``keep_disabled`` a gene taken from a parent in which it
    is disabled stays disabled, and the probability applies only to a gene taken enabled
    from one parent while the other parent has it disabled.
    """
    child: dict[int, ConnectionGene] = {}
    others = other.genes
    for k, gene in fitter.genes.items():
        match = others.get(k)
        if match is None:
            new = gene.copy()
            disabled = not gene.enabled
        else:
            new = (gene if rng.random() < 0.5 else match).copy()
            disabled = not (gene.enabled and match.enabled)
        if disabled and not (keep_disabled and not new.enabled):
            new.enabled = rng.random() >= disable_inherited_prob
        child[k] = new
    return Genome(list(fitter.hidden), child)
