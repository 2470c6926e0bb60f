"""Summary statistics of a group of runs (scipy where a library does it).

Conventions: success rate over all runs (failed and unsolved runs count as not solved)
with a 95% Wilson score interval; evaluations, generations and network size to solve are
taken over solved runs only; ERT (expected running time) = all evaluations spent, solved
or not, divided by the number of solved runs (infinite when none solved), with a 95%
percentile bootstrap interval over whole runs (reference/SOURCES.md: efron1993); medians and
quartiles by linear interpolation between order statistics. Standard deviations use the
n - 1 divisor. Two groups (a measurement and a published figure, or two
variants) are compared with two-sided tests: Welch's t-test for means, Fisher's exact test
for success counts.
"""

from __future__ import annotations

import math
import statistics
import warnings
from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
from scipy.stats import binomtest, bootstrap, fisher_exact, ttest_ind_from_stats

from neuroyard.records.runs import RunRecord


def wilson_interval(successes: int, trials: int, confidence: float = 0.95) -> tuple[float, float]:
    """Wilson score interval of a success proportion (scipy.stats.binomtest)."""
    if trials == 0:
        return (0.0, 1.0)
    ci = binomtest(successes, trials).proportion_ci(confidence_level=confidence, method="wilson")
    return (float(ci.low), float(ci.high))


def welch_p_value(
    mean_a: float, sd_a: float, n_a: int, mean_b: float, sd_b: float, n_b: int
) -> float | None:
    """Two-sided p-value of Welch's t-test that two samples, each given by its mean, standard
    deviation (n - 1 divisor) and size, come from populations with the same mean
    (scipy.stats.ttest_ind_from_stats with unequal variances). ``None`` when a sample has
    fewer than two members or no spread: its variance cannot then be estimated, and the test
    would rest on the other sample alone (:func:`welch_not_run` says which)."""
    if welch_not_run(sd_a, n_a, sd_b, n_b):
        return None
    result = ttest_ind_from_stats(mean_a, sd_a, n_a, mean_b, sd_b, n_b, equal_var=False)
    return float(result.pvalue)


def welch_not_run(sd_a: float, n_a: int, sd_b: float, n_b: int, counted: str = "runs") -> str:
    """Why Welch's test cannot be run on these samples (empty: it can): a sample of fewer
    than 2 members, or one with no spread. ``counted`` says what the members are ("runs",
    "solved runs")."""
    if n_a < 2 or n_b < 2:
        return f"not run: fewer than 2 {counted} (n = {n_a} and {n_b})"
    if sd_a == 0.0 or sd_b == 0.0:
        return "not run: no spread"
    return ""


def fisher_p_value(successes_a: int, trials_a: int, successes_b: int, trials_b: int) -> float:
    """Two-sided p-value of Fisher's exact test that two success proportions are equal
    (scipy.stats.fisher_exact on the 2 x 2 table of successes and failures)."""
    table = [[successes_a, trials_a - successes_a], [successes_b, trials_b - successes_b]]
    return float(fisher_exact(table).pvalue)


def expected_running_time(evaluations: Sequence[int], solved: Sequence[bool]) -> float:
    """ERT: total evaluations of all runs / number of solved runs (inf if none solved)."""
    wins = sum(solved)
    return math.fsum(evaluations) / wins if wins else math.inf


def quartiles(values: Sequence[float]) -> tuple[float, float, float] | None:
    """(first quartile, median, third quartile) by linear interpolation between order
    statistics (numpy's default percentile rule); None for an empty sample."""
    if len(values) == 0:
        return None
    q1, q2, q3 = np.percentile(np.asarray(values, dtype=float), [25, 50, 75])
    return float(q1), float(q2), float(q3)


def ert_interval(
    evaluations: Sequence[float],
    solved: Sequence[bool],
    confidence: float = 0.95,
    resamples: int = 2000,
    seed: int = 0,
) -> tuple[float, float] | None:
    """Percentile bootstrap interval of the ERT, resampling whole runs (scipy.stats.bootstrap,
    paired) of :func:`expected_running_time`; the upper end is infinite when too many resamples hold no solved run. None when
    no run solved (the ERT itself is infinite) or there are fewer than 2 runs."""
    e = np.asarray(evaluations, dtype=float)
    s = np.asarray(solved, dtype=float)
    if len(e) < 2 or s.sum() == 0:
        return None

    def statistic(ev: np.ndarray, so: np.ndarray, axis: int = -1) -> np.ndarray:
        wins = so.sum(axis=axis)
        total = ev.sum(axis=axis)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(wins > 0, total / np.where(wins > 0, wins, 1), np.inf)

    # a resample without a solved run has an infinite ERT: scipy's spread of the
    # resamples is then undefined, which the percentile interval does not use
    with warnings.catch_warnings(), np.errstate(invalid="ignore"):
        warnings.simplefilter("ignore", RuntimeWarning)
        result = bootstrap(
            (e, s),
            statistic,
            paired=True,
            vectorized=True,
            confidence_level=confidence,
            n_resamples=resamples,
            method="percentile",
            random_state=np.random.default_rng(seed),
        )
    return float(result.confidence_interval.low), float(result.confidence_interval.high)


def _mean(xs: Sequence[float]) -> float | None:
    return statistics.fmean(xs) if xs else None


def _median(xs: Sequence[float]) -> float | None:
    return float(statistics.median(xs)) if xs else None


def _sd(xs: Sequence[float]) -> float | None:
    return statistics.stdev(xs) if len(xs) > 1 else None


@dataclass(frozen=True)
class GroupSummary:
    """Figures of one (evolver, task) group; ``None`` where no solved run gives a value.

    ``metrics``: the mean over solved runs of each metric the task declares (the detail of
    that name in each run's success test), None where no solved run reports it."""

    runs: int
    solved: int
    failed: int
    success_rate: float
    success_ci: tuple[float, float]
    ert: float
    ert_ci: tuple[float, float] | None
    mean_evaluations: float | None
    sd_evaluations: float | None
    median_evaluations: float | None
    quartiles_evaluations: tuple[float, float, float] | None
    worst_evaluations: float | None
    mean_generations: float | None
    quartiles_generations: tuple[float, float, float] | None
    mean_hidden_nodes: float | None
    sd_hidden_nodes: float | None
    mean_connections: float | None
    sd_connections: float | None
    mean_success_evaluations: float | None
    metrics: dict[str, float | None] = field(default_factory=dict)

    def figures(self) -> dict[str, Any]:
        """Every figure in one flat mapping (JSON values): the fields, with each task
        metric as ``mean_<name>``, the name published figures use."""
        flat = {k: v for k, v in asdict(self).items() if k != "metrics"}
        flat.update({f"mean_{name}": value for name, value in self.metrics.items()})
        return flat


def summarize(records: Sequence[RunRecord], metrics: Sequence[str] = ()) -> GroupSummary:
    """Summary of ``records`` (see the module docstring), with the means of the task's
    declared ``metrics`` (names)."""
    wins = [r for r in records if r.solved]
    evals = [float(r.evaluations) for r in wins]
    hidden = [float(r.hidden_nodes) for r in wins if r.hidden_nodes is not None]
    conns = [float(r.connections) for r in wins if r.connections is not None]
    return GroupSummary(
        runs=len(records),
        solved=len(wins),
        failed=sum(1 for r in records if r.status == "failed"),
        success_rate=len(wins) / len(records) if records else 0.0,
        success_ci=wilson_interval(len(wins), len(records)),
        ert=expected_running_time([r.evaluations for r in records], [r.solved for r in records]),
        ert_ci=ert_interval([r.evaluations for r in records], [r.solved for r in records]),
        mean_evaluations=_mean(evals),
        sd_evaluations=_sd(evals),
        median_evaluations=_median(evals),
        quartiles_evaluations=quartiles(evals),
        worst_evaluations=max(evals) if evals else None,
        mean_generations=_mean([float(r.generations) for r in wins]),
        quartiles_generations=quartiles([float(r.generations) for r in wins]),
        mean_hidden_nodes=_mean(hidden),
        sd_hidden_nodes=_sd(hidden),
        mean_connections=_mean(conns),
        sd_connections=_sd(conns),
        mean_success_evaluations=_mean([float(r.success_evaluations) for r in records]),
        metrics={name: _metric_mean(wins, name) for name in metrics},
    )


def _metric_mean(wins: Sequence[RunRecord], name: str) -> float | None:
    values = [r.success_details[name] for r in wins if name in r.success_details]
    return _mean([float(v) for v in values if isinstance(v, int | float)])
