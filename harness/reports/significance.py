"""Tests between two groups of runs, their effect sizes, and the runs a test would need
(the summary figures of one group, quartiles and the ERT interval among them, are in
:mod:`.stats`).

Every test returns a :class:`TestResult`; a test that the samples cannot support is not
run, and its ``reason`` says why (``p_value`` is then None). Conventions:

* **Evaluations to solve** are compared with the Mann-Whitney U test, unsolved runs ranked
  worst: a run that did not solve is censored at the budget, i.e. counted as needing more
  evaluations than any solved run of either group (:func:`censored_evaluations`).
* The effect size of a Mann-Whitney comparison is Vargha and Delaney's A12: the chance that
  a run of group A has a larger value than a run of group B, ties counted half. For
  evaluations to solve (lower is better), A12 above 0.5 means B needs fewer.
* Success counts are compared with Fisher's exact test; the effect is the difference of the
  success rates, B minus A.
* Holm's step-down correction (:func:`holm`) adjusts the p-values of all tests of one
  comparison (tasks x metrics) together, so the chance of any false alarm stays at alpha.
* Runs needed (:func:`runs_needed_mann_whitney`, :func:`runs_needed_proportions`): runs per
  group to detect the observed effect at the given power with a two-sided test at alpha,
  by Noether's formula for the Mann-Whitney test and Cohen's arcsine effect size h for two
  proportions.

Sources: (reference/SOURCES.md: mann1947, vargha2000, fisher1935, holm1979, noether1987)
and (reference/SOURCES.md: cohen1988, efron1993, auger2005).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.stats import mannwhitneyu, norm

from neuroyard.reports.stats import fisher_p_value

MIN_RUNS = 2  # fewer runs in a group than this: no test (ours: a rank test needs spread)


@dataclass(frozen=True)
class TestResult:
    """One test of group A against group B.

    ``test``: its name; ``p_value``: two-sided, None when the test was not run (``reason``
    says why); ``effect`` and ``effect_name``: the effect size (A12, or the difference of
    success rates B - A); ``n_a``/``n_b``: the sample sizes used."""

    test: str
    p_value: float | None
    effect: float | None
    effect_name: str
    n_a: int
    n_b: int
    reason: str = ""

    __test__ = False  # not a pytest test class

    @property
    def ran(self) -> bool:
        return self.p_value is not None


def fisher_test(solved_a: int, runs_a: int, solved_b: int, runs_b: int) -> TestResult:
    """Fisher's exact test (two-sided) that two success rates are equal."""
    effect = (solved_b / runs_b - solved_a / runs_a) if runs_a and runs_b else None
    if runs_a < 1 or runs_b < 1:
        return TestResult("Fisher exact", None, effect, "success-rate difference (B - A)",
                          runs_a, runs_b, "a group has no runs")  # fmt: skip
    p = fisher_p_value(solved_a, runs_a, solved_b, runs_b)
    return TestResult("Fisher exact", p, effect, "success-rate difference (B - A)", runs_a, runs_b)


def a12(a: Sequence[float], b: Sequence[float]) -> float:
    """Vargha-Delaney A12: P(a random value of ``a`` > one of ``b``) + 0.5 P(equal)."""
    x = np.asarray(a, dtype=float)[:, None]
    y = np.asarray(b, dtype=float)[None, :]
    return float(((x > y).sum() + 0.5 * (x == y).sum()) / (x.size * y.size))


def mann_whitney(a: Sequence[float], b: Sequence[float], counted: str = "runs") -> TestResult:
    """Two-sided Mann-Whitney U test (scipy.stats.mannwhitneyu: exact for small samples
    without ties, else the normal approximation with tie correction) with A12 as effect.
    ``counted`` says what each value is the value of ("runs", "solved runs"), for the
    reason of a test not run."""
    n_a, n_b = len(a), len(b)
    name = "Mann-Whitney U"
    if n_a < MIN_RUNS or n_b < MIN_RUNS:
        return TestResult(name, None, None, "A12", n_a, n_b,
                          f"fewer than {MIN_RUNS} {counted} in a group (n = {n_a} and {n_b})")  # fmt: skip
    effect = a12(a, b)
    if len(set(map(float, a)) | set(map(float, b))) == 1:
        return TestResult(name, None, effect, "A12", n_a, n_b, "every run has the same value")
    p = float(mannwhitneyu(a, b, alternative="two-sided").pvalue)
    return TestResult(name, p, effect, "A12", n_a, n_b)


def censored_evaluations(
    evaluations: Sequence[int], solved: Sequence[bool], budget: int
) -> list[float]:
    """Evaluations to solve with every unsolved run censored at the budget, ranked worst:
    it counts as ``budget + 1``, more than any run that solved within the budget."""
    return [float(e) if s else float(budget + 1) for e, s in zip(evaluations, solved, strict=True)]


def holm(p_values: Sequence[float | None]) -> list[float | None]:
    """Holm's step-down adjusted p-values (Holm 1979), in the given order; None (a test not
    run) stays None and does not count among the tests. scipy offers no Holm correction."""
    ran = [(p, i) for i, p in enumerate(p_values) if p is not None]
    m = len(ran)
    out: list[float | None] = [None] * len(p_values)
    running = 0.0
    for rank, (p, i) in enumerate(sorted(ran)):
        running = max(running, min(1.0, (m - rank) * p))
        out[i] = running
    return out


def runs_needed_mann_whitney(effect: float, alpha: float = 0.05, power: float = 0.8) -> int | None:
    """Runs per group for a two-sided Mann-Whitney test at ``alpha`` to detect A12 =
    ``effect`` with ``power``, by Noether's formula (1987) for equal groups:
    N = (z_{1-alpha/2} + z_power)^2 / (3 (A12 - 1/2)^2) runs in all. None for no effect."""
    if effect == 0.5:
        return None
    z = norm.ppf(1 - alpha / 2) + norm.ppf(power)
    total = z**2 / (3 * (effect - 0.5) ** 2)
    return max(MIN_RUNS, math.ceil(total / 2))


def runs_needed_proportions(
    rate_a: float, rate_b: float, alpha: float = 0.05, power: float = 0.8
) -> int | None:
    """Runs per group for a two-sided test of two success rates at ``alpha`` to detect
    ``rate_a`` against ``rate_b`` with ``power``, by Cohen's arcsine effect size
    h = 2 asin(sqrt(p_b)) - 2 asin(sqrt(p_a)): n = ((z_{1-alpha/2} + z_power) / h)^2.
    None for no effect."""
    h = 2 * math.asin(math.sqrt(rate_b)) - 2 * math.asin(math.sqrt(rate_a))
    if h == 0:
        return None
    z = norm.ppf(1 - alpha / 2) + norm.ppf(power)
    return max(MIN_RUNS, math.ceil((z / h) ** 2))
