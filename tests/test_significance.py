"""The comparison statistics against worked examples and hand calculations (named beside
each check)."""

from __future__ import annotations

import math

import pytest

from neuroyard.reports.significance import (
    a12,
    censored_evaluations,
    fisher_test,
    holm,
    mann_whitney,
    runs_needed_mann_whitney,
    runs_needed_proportions,
)
from neuroyard.reports.stats import ert_interval, expected_running_time, quartiles


def test_quartiles_by_hand() -> None:
    # hand calculation: 1..5 -> first quartile 2, median 3, third quartile 4; 1..4 -> 1.75,
    # 2.5, 3.25 (linear interpolation between order statistics)
    assert quartiles([5, 1, 4, 2, 3]) == (2.0, 3.0, 4.0)
    assert quartiles([1, 2, 3, 4]) == (1.75, 2.5, 3.25)
    assert quartiles([]) is None


def test_fisher_lady_tasting_tea() -> None:
    # Fisher 1935 (reference/SOURCES.md: fisher1935): 8 cups, 4 with milk first; 3 of the 4
    # picked right. The one-sided chance is 17/70; the two-sided p doubles it, 34/70
    result = fisher_test(3, 4, 1, 4)
    assert result.p_value == pytest.approx(34 / 70)
    assert result.effect == pytest.approx(0.25 - 0.75)
    assert fisher_test(0, 0, 1, 2).reason == "a group has no runs"


def test_a12_by_hand_with_ties() -> None:
    # hand calculation: a = (1, 2, 2), b = (2, 3): of the 6 pairs none has a > b and two
    # tie (2, 2), so A12 = (0 + 0.5 * 2) / 6 = 1/6
    assert a12([1, 2, 2], [2, 3]) == pytest.approx(1 / 6)
    assert a12([4, 5], [1, 2]) == 1.0 and a12([1], [1]) == 0.5


def test_mann_whitney_exact_small_sample_by_hand() -> None:
    # hand calculation: a = (1, 2, 3) below b = (4, 5, 6): U = 0, and of the C(6, 3) = 20
    # equally likely splits 2 are as extreme (all lowest or all highest): p = 2/20 = 0.1
    result = mann_whitney([1, 2, 3], [4, 5, 6])
    assert result.p_value == pytest.approx(0.1)
    assert result.effect == 0.0 and result.n_a == result.n_b == 3


def test_a_test_the_sample_cannot_support_is_not_run_and_says_why() -> None:
    two = mann_whitney([5.0, 5.0], [5.0, 5.0])  # the case the old report gave p = 6.2e-08
    assert two.p_value is None and two.reason == "every run has the same value"
    one = mann_whitney([1.0], [2.0, 3.0])
    assert one.p_value is None and one.reason == "fewer than 2 runs in a group (n = 1 and 2)"


def test_unsolved_runs_rank_worst() -> None:
    values = censored_evaluations([300, 100_000, 900], [True, False, True], budget=100_000)
    assert values == [300.0, 100_001.0, 900.0]
    # a group whose runs all fail is worse than one that solves at the very budget
    result = mann_whitney(censored_evaluations([100_000] * 3, [True] * 3, 100_000),
                          censored_evaluations([500] * 3, [False] * 3, 100_000))  # fmt: skip
    assert result.effect == 0.0


def test_holm_by_hand() -> None:
    # Holm 1979 (reference/SOURCES.md: holm1979), by hand: p = (0.01, 0.04, 0.03, 0.005),
    # m = 4; sorted 0.005 x 4 = 0.02, 0.01 x 3 = 0.03, 0.03 x 2 = 0.06, 0.04 x 1 = 0.04
    # -> made monotone 0.02, 0.03, 0.06, 0.06; a test not run stays out of the count
    assert holm([0.01, 0.04, 0.03, 0.005]) == pytest.approx([0.03, 0.06, 0.06, 0.02])
    adjusted = holm([0.01, None, 0.04])
    assert adjusted[1] is None and adjusted[0] == pytest.approx(0.02)
    assert adjusted[2] == pytest.approx(0.04)


def test_runs_needed_by_hand() -> None:
    # Noether 1987 by hand: A12 = 0.75, alpha 0.05, power 0.8: (1.95996 + 0.84162)^2 =
    # 7.8489; / (3 x 0.25^2) = 41.86 runs in all -> 21 per group
    assert runs_needed_mann_whitney(0.75) == 21
    assert runs_needed_mann_whitney(0.25) == 21 and runs_needed_mann_whitney(0.5) is None
    # Cohen 1988 by hand: p = 0.5 against 0.9: h = 2 asin(sqrt .9) - 2 asin(sqrt .5) =
    # 0.92730; (2.80158 / 0.92730)^2 = 9.13 -> 10 per group
    assert runs_needed_proportions(0.5, 0.9) == 10
    assert runs_needed_proportions(0.7, 0.7) is None


def test_ert_interval_resamples_whole_runs() -> None:
    evaluations = [1000, 2000, 3000, 100_000, 1500, 2500]
    solved = [True, True, True, False, True, True]
    point = expected_running_time(evaluations, solved)
    assert point == pytest.approx(110_000 / 5)  # Auger & Hansen 2005 by hand
    low, high = ert_interval(evaluations, solved)
    assert low <= point <= high
    assert ert_interval(evaluations, solved) == (low, high)  # seeded: the same every time
    # the cheapest resample (only solved runs) and the dearest bound the interval
    assert low >= 1000 and high <= math.inf
    assert ert_interval([5, 6], [False, False]) is None
