"""The regression gate's comparison: a fresh campaign against a baseline, group by group.

A group is one evolver on one task under one set of settings, budget and campaign seed;
the two sides are compared on the run indices both have (so each side made the same runs,
with the same seeds). Four metrics, each with its test from :mod:`.significance` and a
threshold of ours below which a change does not matter:

=====================  ==========================================  =========================
metric                 test                                        material (ours, default)
=====================  ==========================================  =========================
success rate           Fisher exact, solved against not solved     down by 10 points or more
evaluations to solve   Mann-Whitney U on censored evaluations      median up by 20% or more
                       (an unsolved run counts as budget + 1,
                       worse than any solved run)
connections            Mann-Whitney U, enabled connections of the  median up by 20% or more
                       solutions (solved runs only)
relative speed         Mann-Whitney U, evaluations per             median down by 20% or more
                       calibration unit (runs not failed)
=====================  ==========================================  =========================

Success counts every run (failed and unsolved runs are not solved). A figure shown is the
success rate, or the median of the values the test ranks (a censored median of
evaluations is shown as more than the budget).

**Regression** = significant and material, in the worse direction. Significant: the
p-value after Holm's correction across every test of the check (every group and metric
whose test ran) is below ``alpha`` (0.05), and the test's own effect points the same way as
the change of the figure. The tests are **two-sided**, the ones of :mod:`.significance`:
for a regression the worse direction is then tested at alpha / 2, which is conservative
(a CI gate that cries wolf is soon ignored), and one test serves regressions and
improvements alike. **Improvement**: the same in the better direction (same thresholds).
A significant change below its threshold is a *small change*; anything else is *no
detectable change*; a test the samples cannot support is *not tested*, with its reason.

**Relative speed** (:func:`relative_speed`): fitness evaluations per second of the run's
own time (wall time without the one-off kernel load) times the seconds of the calibration
loop in the process that made the run, recorded by the runner as ``timing["calibration"]``.
A record without that figure (written before it was recorded) has no relative speed.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace

from neuroyard.core.defaults import (
    CONNECTIONS_RISE,
    EVALUATIONS_RISE,
    GATE_ALPHA,
    SPEED_DROP,
    SUCCESS_DROP,
)
from neuroyard.core.numbers import number
from neuroyard.records.runs import FAILED, SOLVED, RunRecord
from neuroyard.reports.significance import (
    TestResult,
    censored_evaluations,
    fisher_test,
    holm,
    mann_whitney,
)
from neuroyard.reports.stats import quartiles

ALPHA = GATE_ALPHA
_TOLERANCE = 1e-9  # a change equal to its threshold counts (18/20 - 1 is -0.0999...)

REGRESSION, IMPROVEMENT, SMALL, NO_CHANGE, NOT_TESTED = (
    "regression",
    "improvement",
    "small change",
    "no detectable change",
    "not tested",
)


def relative_speed(record: RunRecord) -> float | None:
    """Fitness evaluations per calibration unit: ``evaluations / (wall - kernel_load) *
    calibration`` from ``record.timing`` (seconds). None when the record has no calibration
    (an older record), no evaluations or no measured time: never an invented figure."""
    timing = record.timing
    calibration = timing.get("calibration")
    own_time = timing.get("wall", 0.0) - timing.get("kernel_load", 0.0)
    if calibration is None or own_time <= 0.0 or record.evaluations == 0:
        return None
    return record.evaluations / own_time * calibration


@dataclass(frozen=True)
class RunFigures:
    """What the gate keeps of one run: its index, status (``solved``, ``unsolved``,
    ``failed``), evaluations and generations (counted by the harness), the size of its best
    network (hidden nodes, enabled connections; None when it has none) and its relative
    speed (evaluations per calibration unit; None when not recorded)."""

    run_index: int
    status: str
    evaluations: int
    generations: int
    hidden_nodes: int | None
    connections: int | None
    relative_speed: float | None

    @property
    def solved(self) -> bool:
        return self.status == SOLVED

    @classmethod
    def of(cls, record: RunRecord) -> RunFigures:
        return cls(
            record.run_index,
            record.status,
            record.evaluations,
            record.generations,
            record.hidden_nodes,
            record.connections,
            relative_speed(record),
        )


@dataclass(frozen=True)
class Thresholds:
    """The smallest change that matters to the regression gate (ours); a significant change
    below its threshold is only a *small change*.

    Args:
        success_drop: in success rate, a fraction (0.10 is 10 percentage points).
        evaluations_rise: of the median evaluations to solve, a fraction of the baseline's
            (0.20 is 20%).
        connections_rise: of the median enabled connections of the solutions, a fraction.
        speed_drop: of the median relative speed (evaluations per calibration unit), a
            fraction.

    Example:
        >>> import neuroyard
        >>> strict = neuroyard.Thresholds(success_drop=0.05)
        >>> strict.success_drop, strict.speed_drop
        (0.05, 0.2)
    """

    success_drop: float = SUCCESS_DROP
    evaluations_rise: float = EVALUATIONS_RISE
    connections_rise: float = CONNECTIONS_RISE
    speed_drop: float = SPEED_DROP


DEFAULT_THRESHOLDS = Thresholds()


@dataclass(frozen=True)
class GroupRuns:
    """One group of both sides: its ``label`` (as printed), its ``budget`` (evaluations;
    censors unsolved runs) and the runs of the baseline and of the fresh campaign."""

    label: str
    budget: int
    baseline: Sequence[RunFigures]
    fresh: Sequence[RunFigures]


@dataclass(frozen=True)
class Finding:
    """One metric of one group. ``baseline``/``fresh``: the figures compared (a success
    rate, or a median; None where a side has no value); ``change``: fresh minus baseline for
    the success rate, fresh / baseline - 1 for the medians; ``censored``: which of the two
    evaluations medians is only a lower bound (``"baseline"``, ``"fresh"``, ``"both"`` or
    ``""``); ``p_holm``: the p-value after Holm's correction (None when not tested)."""

    metric: str
    group: str
    baseline: float | None
    fresh: float | None
    change: float | None
    test: TestResult
    verdict: str = NO_CHANGE
    p_holm: float | None = None
    censored: str = ""
    budget: int = 0


@dataclass(frozen=True)
class _Metric:
    higher_is_better: bool
    threshold: float  # the smallest change that matters, as in Thresholds


def compare(
    groups: Sequence[GroupRuns], alpha: float = ALPHA, thresholds: Thresholds = DEFAULT_THRESHOLDS
) -> list[Finding]:
    """Every metric of every group (see the module docstring), Holm-corrected together,
    each with its verdict; in group order, metrics in the order of the table."""
    raw = [f for group in groups for f in _findings(group)]
    adjusted = holm([f.test.p_value for f in raw])
    metrics = _metrics(thresholds)
    return [_judged(f, p, alpha, metrics[f.metric]) for f, p in zip(raw, adjusted, strict=True)]


def _metrics(t: Thresholds) -> dict[str, _Metric]:
    return {
        "success rate": _Metric(True, t.success_drop),
        "evaluations to solve": _Metric(False, t.evaluations_rise),
        "connections": _Metric(False, t.connections_rise),
        "relative speed": _Metric(True, t.speed_drop),
    }


def _shared(group: GroupRuns) -> tuple[list[RunFigures], list[RunFigures]]:
    """Both sides' runs on the run indices both have, in index order."""
    fresh = {r.run_index: r for r in group.fresh}
    indices = sorted(fresh.keys() & {r.run_index for r in group.baseline})
    base = {r.run_index: r for r in group.baseline}
    return [base[i] for i in indices], [fresh[i] for i in indices]


def _median(values: Sequence[float]) -> float | None:
    q = quartiles(values)
    return None if q is None else q[1]


def _ratio(baseline: float | None, fresh: float | None) -> float | None:
    if baseline is None or fresh is None or baseline == 0:
        return None
    return fresh / baseline - 1.0


def _findings(group: GroupRuns) -> list[Finding]:
    base, fresh = _shared(group)
    label, budget = group.label, group.budget
    n = len(base)
    solved_b, solved_f = sum(r.solved for r in base), sum(r.solved for r in fresh)
    success = fisher_test(solved_b, n, solved_f, n)
    rate_b, rate_f = (solved_b / n, solved_f / n) if n else (None, None)
    out = [Finding("success rate", label, rate_b, rate_f, success.effect, success)]

    def censored(runs: list[RunFigures]) -> list[float]:
        return censored_evaluations([r.evaluations for r in runs], [r.solved for r in runs], budget)

    ev_b, ev_f = censored(base), censored(fresh)
    med_b, med_f = _median(ev_b), _median(ev_f)
    marks = [side for side, m in (("baseline", med_b), ("fresh", med_f)) if m == budget + 1]
    out.append(
        Finding(
            "evaluations to solve",
            label,
            med_b,
            med_f,
            _ratio(med_b, med_f),
            mann_whitney(ev_b, ev_f),
            censored="both" if len(marks) == 2 else "".join(marks),
            budget=budget,
        )
    )

    def sizes(runs: list[RunFigures]) -> list[float]:
        return [float(r.connections) for r in runs if r.solved and r.connections is not None]

    co_b, co_f = sizes(base), sizes(fresh)
    med_b, med_f = _median(co_b), _median(co_f)
    out.append(
        Finding(
            "connections",
            label,
            med_b,
            med_f,
            _ratio(med_b, med_f),
            mann_whitney(co_b, co_f, "solved runs"),
        )
    )

    def speeds(runs: list[RunFigures]) -> list[float]:
        return [
            r.relative_speed for r in runs if r.status != FAILED and r.relative_speed is not None
        ]

    sp_b, sp_f = speeds(base), speeds(fresh)
    med_b, med_f = _median(sp_b), _median(sp_f)
    test = mann_whitney(sp_b, sp_f, "runs with a relative speed")
    missing = [side for side, values in (("baseline's", sp_b), ("fresh", sp_f)) if not values]
    if missing:
        test = TestResult(
            test.test,
            None,
            None,
            test.effect_name,
            len(sp_b),
            len(sp_f),
            f"the {' and the '.join(missing)} runs have no relative speed (recorded "
            "without a calibration, or every run failed)",
        )
    out.append(Finding("relative speed", label, med_b, med_f, _ratio(med_b, med_f), test))
    return out


def _worse(finding: Finding, metric: _Metric) -> bool | None:
    """True when the figure moved in the worse direction, False the better, None: no move."""
    if finding.change is None or finding.change == 0:
        return None
    return (finding.change < 0) == metric.higher_is_better


def _effect_agrees(test: TestResult, worse: bool, metric: _Metric) -> bool:
    """Whether the test's effect points the way the figure moved. Fisher's effect is the
    success-rate difference fresh - baseline; Mann-Whitney's is A12 = P(baseline > fresh)."""
    if test.effect is None:
        return False
    fresh_higher = test.effect < 0.5 if test.effect_name == "A12" else test.effect > 0
    return fresh_higher == (worse != metric.higher_is_better)


def _judged(finding: Finding, p: float | None, alpha: float, metric: _Metric) -> Finding:
    if p is None:
        return replace(finding, verdict=NOT_TESTED)
    worse = _worse(finding, metric)
    if p >= alpha or worse is None or not _effect_agrees(finding.test, worse, metric):
        verdict = NO_CHANGE
    elif abs(finding.change or 0.0) < metric.threshold - _TOLERANCE:
        verdict = SMALL
    else:
        verdict = REGRESSION if worse else IMPROVEMENT
    return replace(finding, verdict=verdict, p_holm=p)


def line(finding: Finding) -> str:
    """One line of a finding: verdict, metric, group, the two figures, the change and the
    p-value after Holm (with the test); for a test not run, its reason."""
    head = f"{finding.verdict}: {finding.metric}, {finding.group}"
    if finding.verdict == NOT_TESTED:
        return f"{head}: {finding.test.reason}"
    base = _figure(finding, finding.baseline, "baseline")
    fresh = _figure(finding, finding.fresh, "fresh")
    p = number(finding.p_holm, ".2g")
    if finding.verdict in (NO_CHANGE, SMALL):  # briefly
        return f"{head}: {base} -> {fresh} ({_change(finding)}, p {p})"
    return (
        f"{head}: baseline {base}, fresh {fresh}, change {_change(finding)}, "
        f"p after Holm {p} ({finding.test.test})"
    )


def _figure(finding: Finding, value: float | None, side: str) -> str:
    if value is None:
        return "-"
    if finding.metric == "success rate":
        return number(100 * value, ".1f") + "%"
    if finding.metric == "evaluations to solve" and finding.censored in (side, "both"):
        return f"more than {finding.budget:,} (unsolved)"
    if finding.metric == "relative speed":
        return f"{number(value, ',.1f')} evaluations per calibration unit"
    return number(value, ",.1f") if value != int(value) else number(int(value), ",d")


def _change(finding: Finding) -> str:
    if finding.change is None:
        return "-"
    if finding.metric == "success rate":
        return f"{number(100 * finding.change, '+.1f')} points"
    text = number(100 * finding.change, "+.1f") + "%"
    bound = {"fresh": " or more", "baseline": " or less"}.get(finding.censored, "")
    return "-" if finding.censored == "both" else text + bound
