"""Report: summary statistics (checked against scipy) and published figures beside measurements."""

from __future__ import annotations

import dataclasses
import math
import re

import pytest
from scipy.stats import binomtest, ttest_ind
from scipy.stats import t as student_t

from neuroyard.records.runs import RunRecord
from neuroyard.reference.published import figures_for
from neuroyard.reports import renderers, report
from neuroyard.reports.stats import (
    expected_running_time,
    fisher_p_value,
    summarize,
    welch_p_value,
    wilson_interval,
)


def record(i: int, solved: bool, evaluations: int, population: int = 150, **extra) -> RunRecord:
    """A synthetic run record for exercising the report (not a measurement)."""
    return RunRecord(
        evolver="neat",
        config={},
        config_hash="c0ffee000000",
        task="xor-v2",
        task_settings={"recurrent_steps": 5},
        run_index=i,
        campaign_seed=1,
        seed=i,
        task_seed=i,
        budget=10_000,
        status="solved" if solved else "unsolved",
        generations=evaluations // 150,
        evaluations=evaluations,
        hidden_nodes=2 if solved else None,
        connections=7 if solved else None,
        evolver_settings={"population_size": population},
        **extra,
    )


def test_wilson_interval_matches_the_textbook_formula():
    # Wilson (1927) score interval, z = 1.959964 for 95%: centre (p + z^2/2n) / (1 + z^2/n)
    k, n, z = 7, 20, 1.959963984540054
    p = k / n
    centre = (p + z * z / (2 * n)) / (1 + z * z / n)
    half = z / (1 + z * z / n) * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n))
    low, high = wilson_interval(k, n)
    assert low == pytest.approx(centre - half, abs=1e-9)
    assert high == pytest.approx(centre + half, abs=1e-9)
    ci = binomtest(k, n).proportion_ci(method="wilson")
    assert (low, high) == (ci.low, ci.high)


def test_ert_counts_unsolved_runs():
    # ERT (Auger & Hansen 2005): all evaluations spent / number of successful runs
    assert expected_running_time([100, 300, 1000], [True, True, False]) == 700
    assert math.isinf(expected_running_time([10], [False]))


def test_summary_takes_sizes_and_evaluations_over_solved_runs():
    runs = [record(0, True, 3000), record(1, True, 5000), record(2, False, 10_000)]
    s = summarize(runs)
    assert (s.runs, s.solved, s.success_rate) == (3, 2, pytest.approx(2 / 3))
    assert s.mean_evaluations == 4000 and s.median_evaluations == 4000
    assert s.ert == 9000 and s.mean_hidden_nodes == 2 and s.mean_connections == 7


def test_published_figures_stand_beside_measured_values():
    published = figures_for("xor-v2", "NEAT")[0].values["mean_evaluations"]
    rows = report.build([record(0, True, 3000), record(1, True, 5000)])
    (row,) = rows
    means = [c for c in row.comparisons if c.metric == "mean_evaluations"]
    assert means and means[0].comparable
    assert means[0].ratio == pytest.approx(4000 / published)
    text = renderers.render(rows, "text")
    assert "Published figures beside measured values" in text and "VERIFIED-QUOTE" in text


def test_figure_under_another_protocol_is_not_comparable():
    rows = report.build([record(0, True, 3000, population=300)])
    means = [c for c in rows[0].comparisons if c.metric == "mean_evaluations"]
    assert means and not means[0].comparable and means[0].ratio is not None
    assert "evolver.population_size=300 (published: 150)" in means[0].mismatches
    # the text report prints no ratio for a figure that is not comparable, and its verdict
    # cites the footnote that names the setting that differs
    lines = renderers.render(rows, "text").splitlines()
    line = next(x for x in lines if "mean_evaluations" in x)
    verdict = re.search(r" no (\[\d+\])$", line.rstrip())
    assert verdict and " 1.5" not in line and " 0.6" not in line
    (note,) = [x for x in lines if x.strip().startswith(verdict.group(1))]
    assert "not comparable: measured under evolver.population_size=300 (published: 150)" in note


def test_report_lists_the_options_given_apart_from_the_evolver_defaults():
    given = record(0, True, 3000, population=300)
    given = dataclasses.replace(
        given,
        config={"population_size": 300},
        config_hash="0ddba1100000",
        evolver_settings={"population_size": 300, "c3": 0.4},
    )
    rows = report.build([record(1, True, 3000), given])
    text = renderers.render(rows, "markdown")
    assert (
        "- evolver neat [c0ffee]:\n  - the evolver's defaults:\n    - population_size = 150\n"
    ) in text
    assert (
        "- evolver neat [0ddba1]:\n  - set for these runs:\n    - population_size = 300\n"
        "  - the evolver's defaults:\n    - c3 = 0.4\n"
    ) in text
    assert {r.config_hash: r.evolver_config for r in rows} == {
        "c0ffee000000": {},
        "0ddba1100000": {"population_size": 300},
    }


def test_report_lists_settings_an_evolver_resolved_per_task_for_each_task():
    # one configuration whose effective settings differ between tasks (a population size
    # derived from the task's network size): each set is listed with the tasks it was on
    on_parity = dataclasses.replace(
        record(1, True, 3000, population=200), task="parity-v2", task_settings={"bits": 3}
    )
    rows = report.build([record(0, True, 3000), on_parity])
    text = renderers.render(rows, "markdown")
    assert (
        "- evolver neat [c0ffee] on xor-v2:\n  - the evolver's defaults:\n"
        "    - population_size = 150\n"
    ) in text
    assert (
        "- evolver neat [c0ffee] on parity-v2:\n  - the evolver's defaults:\n"
        "    - population_size = 200\n"
    ) in text


def _sample_with(mean: float, sd: float, n: int) -> list[float]:
    """n numbers with exactly the given mean and sample sd (a stand-in for the runs behind a
    published mean +- sd; not data)."""
    z = [math.sin(1.7 * k + 0.3) for k in range(n)]
    mz = math.fsum(z) / n
    sz = math.sqrt(math.fsum((x - mz) ** 2 for x in z) / (n - 1))
    return [mean + sd * (x - mz) / sz for x in z]


def test_welch_p_value_from_summaries_equals_scipy_on_the_raw_samples():
    # Welch (1947): the unequal-variance t-test; a test from (mean, sd, n) must equal the
    # test on raw samples with those summaries (scipy.stats.ttest_ind, equal_var=False).
    a, b = _sample_with(5721.0, 3288.0, 100), _sample_with(4755.0, 2553.0, 100)
    raw = ttest_ind(a, b, equal_var=False).pvalue
    assert welch_p_value(5721.0, 3288.0, 100, 4755.0, 2553.0, 100) == pytest.approx(raw, rel=1e-9)
    # the textbook formula: t = diff / sqrt(s1^2/n1 + s2^2/n2), Welch-Satterthwaite df
    v1, v2 = 3288.0**2 / 100, 2553.0**2 / 100
    df = (v1 + v2) ** 2 / (v1**2 / 99 + v2**2 / 99)
    t = (5721.0 - 4755.0) / math.sqrt(v1 + v2)
    assert welch_p_value(5721.0, 3288.0, 100, 4755.0, 2553.0, 100) == pytest.approx(
        2 * student_t.sf(t, df), rel=1e-9
    )
    assert welch_p_value(1.0, 0.0, 5, 1.0, 0.0, 5) is None  # no spread: undefined
    assert welch_p_value(1.0, 1.0, 1, 2.0, 1.0, 5) is None  # one run: no sd


def test_fisher_p_value_matches_the_hypergeometric_sum():
    # Fisher's exact test, two-sided: sum of the hypergeometric probabilities of every table
    # with the same margins that is no more likely than the observed one. 90 of 100 solved
    # against 100 of 100: only the tables with 0 or 10 failures in the first row qualify.
    hyper = [math.comb(10, k) * math.comb(190, 100 - k) / math.comb(200, 100) for k in range(11)]
    expected = sum(p for p in hyper if p <= hyper[10] * (1 + 1e-7))
    assert fisher_p_value(90, 100, 100, 100) == pytest.approx(expected, rel=1e-9)
    assert fisher_p_value(100, 100, 100, 100) == pytest.approx(1.0)


def test_report_tests_measured_against_published_where_the_paper_allows():
    fig = figures_for("xor-v2", "NEAT")[0].values  # 100 runs, 0 failures, mean and sd given
    evaluations = [3000, 4500, 6000, 7500]
    rows = report.build([record(i, True, e) for i, e in enumerate(evaluations)])
    by_metric = {c.metric: c for c in rows[0].comparisons}
    mean = by_metric["mean_evaluations"]
    expected = ttest_ind(
        [float(e) for e in evaluations],
        _sample_with(fig["mean_evaluations"], fig["sd_evaluations"], int(fig["runs"])),
        equal_var=False,
    ).pvalue
    assert mean.test == "Welch t" and mean.p_value == pytest.approx(expected, rel=1e-9)
    failures = by_metric["failures"]  # 4 of 4 solved against 100 of 100: no difference
    assert failures.test == "Fisher exact" and failures.p_value == pytest.approx(1.0)
    # no sd published for generations or connections: no test
    assert by_metric["mean_generations"].p_value is None
    assert by_metric["mean_connections"].p_value is None
    assert "(Welch t)" in renderers.render(rows, "text")
    # a figure under another protocol is not tested either
    other = report.build(
        [record(0, True, 3000, population=300), record(1, True, 4000, population=300)]
    )
    assert all(c.p_value is None for c in other[0].comparisons)


def test_a_population_figure_is_comparable_only_at_its_own_population():
    # Stanley & Miikkulainen 2002 sec. 4.1 (reference/figures/logic.toml): population 150
    # on XOR; a run at 50 is not comparable with it, and the row says which setting differs
    rows = report.build([record(0, True, 3000, population=50)])
    population = [c for c in rows[0].comparisons if c.metric == "population"]
    assert population and not any(c.comparable for c in population)
    assert "evolver.population_size=50 (published: 150.0)" in population[0].mismatches
    at_150 = report.build([record(0, True, 3000, population=150)])
    assert all(c.comparable for c in at_150[0].comparisons if c.metric == "population")


def test_a_figure_under_a_stated_budget_needs_that_budget():
    from neuroyard.reference.published import ReferenceFigure

    figure = ReferenceFigure("xor-v2", "NEAT", "neat", "a test figure (not published)",
                             "VERIFIED", {"failures": 0}, {"run.budget": 5000})  # fmt: skip
    assert figure.mismatches({}, {}, {"budget": 5000}) == []
    assert figure.mismatches({}, {}, {"budget": 10_000}) == ["run.budget=10000 (published: 5000)"]
    assert figure.mismatches({}, {}) == ["run.budget not recorded (published: 5000)"]


def test_welch_is_not_run_on_two_runs_without_spread():
    # the case a new user met: 2 runs with equal evaluations gave "p 6.2e-08" against the
    # published mean (Stanley & Miikkulainen 2002 sec. 4.2: 4,755, sd 2,553, 100 runs);
    # with no spread the measured variance cannot be estimated, so no test is run
    rows = report.build([record(0, True, 3000), record(1, True, 3000)])
    mean = next(c for c in rows[0].comparisons if c.metric == "mean_evaluations")
    assert mean.p_value is None and mean.test == "not run: no spread"
    text = renderers.render(rows, "text")
    line = next(x for x in text.splitlines() if "mean_evaluations" in x)
    assert "not run: no spread" in line and "e-0" not in line
    assert welch_p_value(3000, 0.0, 2, 4755, 2553, 100) is None
