"""Novelty search (reference/SOURCES.md: lehman2011): sparseness and the archive.

A behaviour's sparseness is the mean distance to its k nearest neighbours among the other
behaviours of the current generation and the archive (the paper's eq. 1), found with a
k-d tree. A behaviour
whose sparseness is above the archive threshold enters the archive for good; the threshold
adapts per window of evaluations (rule from memory, see ``defaults.toml``).
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree


def sparseness(points: np.ndarray, archive: np.ndarray, k: int, squared: bool) -> np.ndarray:
    """Mean distance from each row of ``points`` (n x d) to its ``k`` nearest neighbours.

    Neighbours are the other rows of ``points`` (a row is never its own neighbour; an
    equal behaviour of another row is, at distance 0) and every row of ``archive``
    (m x d). Distance is Euclidean, or its square with ``squared``. With fewer than ``k``
    neighbours the mean is over all of them; with none, 0. Returns n floats.
    """
    n = points.shape[0]
    count = min(k, n - 1 + archive.shape[0])
    if count == 0:
        return np.zeros(n)
    tree = cKDTree(np.vstack([points, archive]))
    # the nearest of each point is itself (or an equal one) at distance 0: dropped
    distances = tree.query(points, k=count + 1)[0][:, 1:]
    return (distances**2 if squared else distances).mean(axis=1)


class NoveltyArchive:
    """The archive of novel behaviours and its adaptive threshold.

    Per generation, :meth:`score` returns the sparseness of each behaviour against the
    generation and the archive as it was, then adds the behaviours above the threshold.
    Evaluations and additions are counted per window; once ``window`` evaluations have been
    counted, a window without additions multiplies the threshold by ``lower_factor``, one
    with more than ``raise_above`` additions by ``raise_factor``, and the counts restart.
    """

    def __init__(
        self,
        dimensions: int,
        threshold: float,
        window: int,
        lower_factor: float,
        raise_factor: float,
        raise_above: int,
    ) -> None:
        self.points = np.empty((0, dimensions))
        self.threshold = threshold
        self.window = window
        self.lower_factor = lower_factor
        self.raise_factor = raise_factor
        self.raise_above = raise_above
        self._window_evaluations = 0
        self._window_additions = 0

    def __len__(self) -> int:
        return self.points.shape[0]

    def score(self, behaviours: np.ndarray, k: int, squared: bool) -> np.ndarray:
        """Sparseness of each row of ``behaviours`` (n x d); archives the novel ones."""
        scores = sparseness(behaviours, self.points, k, squared)
        novel = behaviours[scores > self.threshold]
        self.points = np.vstack([self.points, novel])
        self._adapt(behaviours.shape[0], novel.shape[0])
        return scores

    def _adapt(self, evaluations: int, additions: int) -> None:
        self._window_evaluations += evaluations
        self._window_additions += additions
        if self._window_evaluations < self.window:
            return
        if self._window_additions == 0:
            self.threshold *= self.lower_factor
        elif self._window_additions > self.raise_above:
            self.threshold *= self.raise_factor
        self._window_evaluations = 0
        self._window_additions = 0
