"""A share of a campaign: the runs one of several batch jobs makes, each into its own store.

Share K of N (1-based) holds the runs at positions K-1, K-1+N, K-1+2N, ... of the plan's
run list (:meth:`~neuroyard.execution.campaign.CampaignPlan.expand`: evolver, task,
run index), so the N shares together hold every run once, and each share takes about as
many runs of every evolver and task as the others (ours). ``neuroyard merge`` combines the
shares' stores afterwards.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TypeVar

T = TypeVar("T")


@dataclass(frozen=True, order=True)
class Share:
    """Share ``index`` of ``count`` (1 <= index <= count); ``Share(1, 1)`` is the whole plan."""

    index: int
    count: int

    def __post_init__(self) -> None:
        if not 1 <= self.index <= self.count:
            raise ValueError(f"share {self}: K must lie between 1 and N")

    @classmethod
    def parse(cls, text: str) -> Share:
        """``K/N`` as typed (job K of N); a ``ValueError`` that says what is allowed."""
        index, sep, count = text.partition("/")
        if not (sep and index.strip().isdigit() and count.strip().isdigit()):
            raise ValueError(f"expected K/N (job K of N jobs, 1 <= K <= N), got {text!r}")
        return cls(int(index), int(count))

    def select(self, items: Sequence[T]) -> list[T]:
        """The items of this share: those at positions ``index - 1`` modulo ``count``."""
        return list(items[self.index - 1 :: self.count])

    def __str__(self) -> str:
        return f"{self.index}/{self.count}"


WHOLE = Share(1, 1)
