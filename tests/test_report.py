"""Report: summary statistics (checked against scipy) and published figures beside measurements."""

from __future__ import annotations

import math

import pytest
from scipy.stats import binomtest

from neuroyard.harness import report
from neuroyard.harness.runner import RunRecord
from neuroyard.harness.stats import expected_running_time, summarize, wilson_interval
from neuroyard.reference.published import figures_for


def record(i: int, solved: bool, evaluations: int, population: int = 150, **extra) -> RunRecord:
    """A synthetic run record for exercising the report (not a measurement)."""
    return RunRecord(
        evolver="neat",
        config={},
        config_hash="c0ffee000000",
        task="xor-v1",
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
    published = figures_for("xor-v1", "NEAT")[0].values["mean_evaluations"]
    rows = report.build([record(0, True, 3000), record(1, True, 5000)])
    (row,) = rows
    means = [c for c in row.comparisons if c.metric == "mean_evaluations"]
    assert means and means[0].comparable
    assert means[0].ratio == pytest.approx(4000 / published)
    text = report.render(rows, "text")
    assert "Published figures beside measured values" in text and "VERIFIED-QUOTE" in text


def test_figure_under_another_protocol_is_not_comparable():
    rows = report.build([record(0, True, 3000, population=300)])
    means = [c for c in rows[0].comparisons if c.metric == "mean_evaluations"]
    assert means and not means[0].comparable and means[0].ratio is not None
    assert "evolver.population_size=300 (published: 150)" in means[0].mismatches
    # the text report prints no ratio for a figure that is not comparable
    line = next(x for x in report.render(rows, "text").splitlines() if "mean_evaluations" in x)
    assert "no: evolver.population_size=300" in line
