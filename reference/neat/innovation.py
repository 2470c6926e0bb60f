"""Historical markings: innovation numbers for connection genes and ids for new nodes.

Every new connection gene gets a global innovation number, every new hidden node a new
node id, both counted up from where the run started. Within one generation the same
structural innovation gets the same numbers (Stanley & Miikkulainen 2002, section on
historical markings): a link between the same two nodes gets the same innovation number,
and splitting the same connection gene gets the same node id and the same two innovation
numbers. The tables are cleared at each new generation, as the paper describes.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class Split:
    """The markings of an add-node mutation: new node, its incoming and outgoing gene."""

    node: int
    in_innovation: int
    out_innovation: int


@dataclass
class InnovationTracker:
    """Hands out node ids and innovation numbers; one tracker per run."""

    next_node: int
    next_innovation: int = 0
    _links: dict[tuple[int, int], int] = field(default_factory=dict)
    _splits: dict[int, Split] = field(default_factory=dict)

    def new_generation(self) -> None:
        """Forget this generation's innovations; later repeats get new numbers."""
        self._links.clear()
        self._splits.clear()

    def link(self, source: int, target: int) -> int:
        """Innovation number of a new link ``source -> target`` (shared within a generation)."""
        key = (source, target)
        number = self._links.get(key)
        if number is None:
            number = self._links[key] = self._innovation()
        return number

    def split(self, innovation: int, taken: set[int] | frozenset[int] = frozenset()) -> Split:
        """Markings for splitting connection gene ``innovation`` (shared within a generation).

        ``taken`` are the hidden node ids the genome already has: if the shared node id is
        among them (the genome split the same gene before, and crossover re-enabled it),
        the genome gets markings of its own so that it never holds a node twice.
        """
        shared = self._splits.get(innovation)
        if shared is None:
            shared = self._splits[innovation] = self._fresh_split()
        return self._fresh_split() if shared.node in taken else shared

    def node(self) -> int:
        """A new node id (used when building random initial topologies)."""
        number = self.next_node
        self.next_node += 1
        return number

    def _fresh_split(self) -> Split:
        return Split(self.node(), self._innovation(), self._innovation())

    def _innovation(self) -> int:
        number = self.next_innovation
        self.next_innovation += 1
        return number
