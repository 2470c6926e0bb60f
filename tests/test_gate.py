"""The regression gate: ``neuroyard baseline``, ``neuroyard check``, the relative speed and
the pytest plugin.

The campaigns are NEAT on XOR (campaign seed 1, budget 20,000 evaluations, 2 workers),
through the subclass of the reference NEAT in plugins_for_tests.py that can pause in ask()
(without a pause it is the reference NEAT). The same evolver, configuration, seed and run
index give the same run, so an unchanged evolver reproduces success, evaluations and sizes
exactly and only its speed varies.
Outside references: XOR needs a hidden node, which a network without one cannot compute
(reference/SOURCES.md: minsky1969), so NEAT that cannot add a node never solves it; the
tests themselves are scipy's (through neuroyard.reports.significance).
"""

from __future__ import annotations

import json
import multiprocessing
import os
import subprocess
import sys
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution import calibration
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports import gate
from neuroyard.reports.gate import GroupRuns, RunFigures, Thresholds

HERE = Path(__file__).parent
COMMITTED_OLD = HERE.parent / "results" / "pole" / "spv.sqlite"  # written before calibration
SLOWED = "plugins_for_tests:SlowedNeat"  # the reference NEAT with a pause in ask()
CAMPAIGN = ["--task", "xor-v2", "--seed", "1", "--budget", "20000", "--workers", "2"]
BASELINE_RUNS = 12
FRESH_RUNS = 8  # the changed evolvers: compared on the baseline's first 8 run indices
ASK_DELAY = 0.03  # s per ask() of the slowed evolver: NEAT on XOR asks about 40 times a run
# Two CPU hogs beside a run on its one CPU leave it about a third: > 2x slower. The run is
# made in one process (--in-process), as a slower machine slows all of a run alike: a
# supervised run's worker and its evolver's process take turns, and the scheduler gives a
# process that waits often more than its share beside busy hogs, so contention slows such
# a run less than the calibration loop (measured: raw speed 2x slower, calibration 4x; the
# harness/README.md says so) and is no stand-in for a slower machine there.
HOGS = 2
SLOWER = 2.0
STEADY = 1.5  # the relative speed of the same run on the calm and the slowed CPU: within this

pytest_plugins = ["pytester"]


@pytest.fixture(autouse=True)
def _plugins_importable(monkeypatch):
    monkeypatch.syspath_prepend(str(HERE))


def run_cli(capsys, *argv: str) -> tuple[int, str, str]:
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def campaign(store: Path, runs: int, *params: str) -> None:
    """Runs of the slowed evolver's class on XOR into ``store`` (``params``: KEY=VALUE)."""
    argv = ["run", "--evolver", SLOWED, *CAMPAIGN, "--runs", str(runs), "--store", str(store)]
    for param in params:
        argv += ["--param", param]
    assert main([*argv, "--quiet"]) == 0


@pytest.fixture(scope="module")
def baseline(tmp_path_factory) -> Path:
    """The baseline of the unchanged evolver (no pause): 12 runs. Its store is beside it."""
    folder = tmp_path_factory.mktemp("gate")
    with pytest.MonkeyPatch.context() as mp:
        mp.syspath_prepend(str(HERE))
        campaign(folder / "baseline.db", BASELINE_RUNS)
    path = folder / "baseline.json"
    assert main(["baseline", "--store", str(folder / "baseline.db"), "-o", str(path)]) == 0
    return path


@pytest.fixture(scope="module")
def weakened(tmp_path_factory) -> Path:
    """A store of the evolver that cannot add a node: its first 8 runs."""
    store = tmp_path_factory.mktemp("weak") / "weak.db"
    with pytest.MonkeyPatch.context() as mp:
        mp.syspath_prepend(str(HERE))
        campaign(store, FRESH_RUNS, "add_node_prob=0")
    return store


@pytest.fixture(scope="module")
def slowed(tmp_path_factory) -> Path:
    """A store of the evolver slowed by a pause in every ask(): its first 8 runs."""
    store = tmp_path_factory.mktemp("slow") / "slow.db"
    with pytest.MonkeyPatch.context() as mp:
        mp.syspath_prepend(str(HERE))
        campaign(store, FRESH_RUNS, f"ask_delay={ASK_DELAY}")
    return store


def lines_with(text: str, start: str) -> list[str]:
    return [line for line in text.splitlines() if line.startswith(start)]


# --- the baseline file -----------------------------------------------------------------


def test_baseline_holds_the_campaign_the_runs_and_the_environment(baseline):
    text = baseline.read_text()
    doc = json.loads(text)
    # readable in a diff: sorted keys, indented, strict JSON (json.dumps is the reference)
    assert text == json.dumps(doc, sort_keys=True, indent=2, allow_nan=False) + "\n"
    assert doc["format"] == "neuroyard regression baseline" and doc["format_version"] == 1
    env = doc["environment"]
    assert {"date", "host", "cpu", "python", "neuroyard", "git_commit", "libraries"} <= set(env)
    assert set(env["libraries"]) == {"numpy", "numba", "scipy"}
    (group,) = doc["groups"]
    spec = EvolverSpec(SLOWED, {})
    assert group["evolver"] == SLOWED and group["config"] == {}
    assert group["config_hash"] == spec.config_hash
    assert group["task"] == "xor-v2" and group["task_settings"] == {"recurrent_steps": 5}
    assert (group["budget"], group["campaign_seed"], group["runs"]) == (20000, 1, BASELINE_RUNS)
    with ResultStore(baseline.with_suffix(".db"), write=False) as store:
        records = {r.run_index: r for r in store.records(with_log=False)}
    assert [r["run_index"] for r in group["run_figures"]] == list(range(BASELINE_RUNS))
    for figures in group["run_figures"]:
        record = records[figures["run_index"]]
        assert figures == {
            "run_index": record.run_index,
            "status": record.status,
            "evaluations": record.evaluations,
            "generations": record.generations,
            "hidden_nodes": record.hidden_nodes,
            "connections": record.connections,
            "relative_speed": pytest.approx(gate.relative_speed(record)),
        }
        assert figures["relative_speed"] > 0


def test_relative_speed_is_the_formula_on_the_recorded_figures(baseline):
    with ResultStore(baseline.with_suffix(".db"), write=False) as store:
        records = list(store.records(with_log=False))
    for r in records:
        t = r.timing
        assert 0 < t["calibration"] < 5  # seconds of one unit, measured in the worker
        own = t["wall"] - t["kernel_load"]
        assert gate.relative_speed(r) == pytest.approx(r.evaluations / own * t["calibration"])
    # one calibration per worker process: 2 workers, at most 2 figures (a replaced worker
    # would add one)
    assert 1 <= len({r.timing["calibration"] for r in records}) <= 2


def test_a_record_without_calibration_has_no_relative_speed(capsys, tmp_path):
    with ResultStore(COMMITTED_OLD, write=False) as store:
        old = next(store.records(with_log=False))
    assert "calibration" not in old.timing and gate.relative_speed(old) is None
    path = tmp_path / "old.json"
    assert run_cli(capsys, "baseline", "--store", str(COMMITTED_OLD), "-o", str(path))[0] == 0
    figures = json.loads(path.read_text())["groups"][0]["run_figures"]
    assert figures and all(f["relative_speed"] is None for f in figures)
    code, out, _ = run_cli(capsys, "check", "--baseline", str(path), "--store", str(COMMITTED_OLD))
    assert code == 0, out
    (note,) = lines_with(out, "not tested: relative speed")
    assert "the baseline's and the fresh runs have no relative speed" in note


def test_relative_speed_by_hand_and_the_calibration_is_cached():
    record = RunRecord.from_dict(
        {"evolver": "x", "config": {}, "config_hash": "", "task": "xor-v2",
         "task_settings": {}, "run_index": 0, "campaign_seed": 1, "seed": 0, "task_seed": 0,
         "budget": 10, "evaluations": 300,
         "timing": {"wall": 2.5, "kernel_load": 0.5, "calibration": 0.05}}
    )  # fmt: skip
    # 300 evaluations in 2.5 - 0.5 = 2 s of the run's own time, times 0.05 s: 7.5
    assert gate.relative_speed(record) == pytest.approx(7.5)
    assert calibration.seconds() == calibration.seconds() > 0  # measured once, then cached


def _spin() -> None:
    while True:
        pass


def _one_run(store: Path) -> RunRecord:
    """One run in a fresh process (which calibrates itself), in that process: NEAT that
    cannot add a node on XOR, so it never solves and makes the same 15,000 evaluations
    every time."""
    argv = [str(Path(sys.executable).with_name("neuroyard")), "run", "--in-process", "--quiet",
            "--evolver", "neat", "--param", "add_node_prob=0.0", "--task", "xor-v2",
            "--runs", "1", "--seed", "1", "--budget", "15000", "--store", str(store)]  # fmt: skip
    subprocess.run(argv, check=True, capture_output=True, timeout=600)
    with ResultStore(store, write=False) as s:
        (record,) = s.records(with_log=False)
    return record


@pytest.mark.skipif(not hasattr(os, "sched_setaffinity"), reason="needs CPU affinity (Linux)")
def test_relative_speed_holds_on_a_machine_made_slower(tmp_path):
    before = os.sched_getaffinity(0)
    cpu = min(before)
    hogs: list = []
    os.sched_setaffinity(0, {cpu})  # this process, its worker and the hogs share one CPU
    try:
        calm = _one_run(tmp_path / "calm.db")
        hogs = [multiprocessing.get_context("fork").Process(target=_spin) for _ in range(HOGS)]
        for hog in hogs:
            hog.start()
        loaded = _one_run(tmp_path / "loaded.db")
    finally:
        for hog in hogs:
            hog.terminate()
            hog.join()
        os.sched_setaffinity(0, before)

    def raw(r: RunRecord) -> float:  # evaluations per second of the run's own time
        return r.evaluations / (r.timing["wall"] - r.timing["kernel_load"])

    assert calm.evaluations == loaded.evaluations == 15000  # the same run
    assert raw(calm) / raw(loaded) > SLOWER  # the machine was made slower ...
    ratio = gate.relative_speed(calm) / gate.relative_speed(loaded)
    assert 1 / STEADY < ratio < STEADY, (raw(calm), raw(loaded), ratio)  # ... the figure holds


# --- check -----------------------------------------------------------------------------


def test_check_passes_on_the_unchanged_evolver(baseline, capsys):
    # the baseline names a module:attr evolver, which runs only for a trusted file
    argv = ["check", "--baseline", str(baseline), "--workers", "2", "--trust-evolvers"]
    code, out, err = run_cli(capsys, *argv)
    assert code == 0, out + err
    (planned,) = lines_with(out, "will run ")
    assert f"{SLOWED!r}, which imports module 'plugins_for_tests'" in planned, planned
    assert not lines_with(out, "regression:")
    # the same runs again: success, evaluations and connections are the same figures
    for metric in ("success rate", "evaluations to solve", "connections"):
        (line,) = [x for x in out.splitlines() if f": {metric}, " in x]
        assert line.startswith("no detectable change:") and "(+0.0" in line, line
    assert out.splitlines()[-1].startswith("0 regression(s)")


def test_check_fails_on_an_evolver_that_cannot_add_a_node(baseline, weakened, capsys):
    # Minsky & Papert (reference/SOURCES.md: minsky1969): no hidden node, no XOR
    code, out, _ = run_cli(capsys, "check", "--baseline", str(baseline), "--store", str(weakened))
    assert code == 1, out
    regressions = lines_with(out, "regression:")
    (success,) = [x for x in regressions if x.startswith("regression: success rate,")]
    assert "baseline 100.0%, fresh 0.0%, change -100.0 points, p after Holm" in success
    assert any(x.startswith("regression: evaluations to solve,") for x in regressions)
    assert any("compared on 8 of the baseline's 12 runs" in x for x in lines_with(out, "note:"))
    assert any('"add_node_prob": 0' in x for x in lines_with(out, "note:"))


def test_check_fails_on_speed_alone_for_a_slowed_evolver(baseline, slowed, capsys):
    code, out, _ = run_cli(capsys, "check", "--baseline", str(baseline), "--store", str(slowed))
    assert code == 1, out
    (regression,) = lines_with(out, "regression:")
    assert regression.startswith("regression: relative speed,"), out
    for metric in ("success rate", "evaluations to solve", "connections"):
        (line,) = [x for x in out.splitlines() if f": {metric}, " in x]
        assert line.startswith("no detectable change:") and "(+0.0" in line, line


def test_a_speed_threshold_above_the_drop_passes_the_slowed_evolver(baseline, slowed, capsys):
    argv = ["check", "--baseline", str(baseline), "--store", str(slowed), "--speed-drop", "99"]
    code, out, _ = run_cli(capsys, *argv)
    assert code == 0, out
    (line,) = lines_with(out, "small change: relative speed,")
    assert "p " in line


def _figures(factor: float) -> list[RunFigures]:
    """12 solved runs alike but for their relative speeds, ``factor`` times 100 to 101.1."""
    return [RunFigures(i, "solved", 1000, 10, 1, 9, factor * (100 + 0.1 * i)) for i in range(12)]


def test_verdicts_and_holm_on_figures_given_by_hand():
    base = _figures(1.0)
    groups = [
        GroupRuns(name, 20000, base, _figures(factor))
        for name, factor in (("30% slower", 0.7), ("5% slower", 0.95), ("30% faster", 1.3))
    ]
    findings = gate.compare(groups, thresholds=Thresholds(speed_drop=0.2))
    speed = {f.group: f for f in findings if f.metric == "relative speed"}
    assert speed["30% slower"].verdict == gate.REGRESSION
    assert speed["30% slower"].change == pytest.approx(-0.3)
    assert speed["5% slower"].verdict == gate.SMALL  # significant, below the threshold
    assert speed["30% faster"].verdict == gate.IMPROVEMENT
    # identical success, evaluations and sizes everywhere: no test reports a change
    others = [f for f in findings if f.metric != "relative speed"]
    assert {f.verdict for f in others} <= {gate.NOT_TESTED, gate.NO_CHANGE}
    # Holm (reference/SOURCES.md: holm1979): the smallest of m p-values is multiplied by m
    ran = [f for f in findings if f.test.p_value is not None]
    smallest = min(ran, key=lambda f: f.test.p_value)
    assert smallest.p_holm == pytest.approx(min(1.0, len(ran) * smallest.test.p_value))


# --- bad input -------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("content", "says"),
    [
        ("not json at all", "not a JSON file"),
        ('{"evolver": "neat"}', "not a neuroyard baseline"),
        ('[1, 2]', "not a neuroyard baseline"),
        ('{"format": "neuroyard regression baseline", "format_version": 2}', "format version 2"),
        ('{"format": "neuroyard regression baseline", "format_version": 1, "environment": {},'
         ' "groups": [{"evolver": "neat"}]}', "groups.0"),
    ],
)  # fmt: skip
def test_a_bad_baseline_file_is_one_line_and_exit_2(capsys, tmp_path, content, says):
    path = tmp_path / "bad.json"
    path.write_text(content)
    code, out, err = run_cli(
        capsys, "check", "--baseline", str(path), "--store", str(COMMITTED_OLD)
    )
    assert code == 2 and out == ""
    (line,) = err.splitlines()
    assert line.startswith(f"neuroyard: error: baseline {path}: ") and says in line, line


def test_a_missing_baseline_file_is_one_line_and_exit_2(capsys, tmp_path):
    path = tmp_path / "missing.json"
    code, _, err = run_cli(capsys, "check", "--baseline", str(path))
    assert code == 2
    (line,) = err.splitlines()
    assert str(path) in line and "cannot read it" in line


def test_a_store_without_the_baselines_groups_is_exit_2(baseline, capsys):
    code, _, err = run_cli(
        capsys, "check", "--baseline", str(baseline), "--store", str(COMMITTED_OLD)
    )
    assert code == 2
    (line,) = err.splitlines()
    assert str(COMMITTED_OLD) in line and str(baseline) in line and SLOWED in line, line


def _rwg(store: Path, *params: str) -> None:
    argv = ["run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "2", "--budget", "200"]
    for param in params:
        argv += ["--param", param]
    assert main([*argv, "--store", str(store), "--in-process", "--quiet"]) == 0


def test_a_store_with_the_group_under_two_other_configurations_is_exit_2(capsys, tmp_path):
    _rwg(tmp_path / "base.db")
    _rwg(tmp_path / "fresh.db", "hidden=3")
    _rwg(tmp_path / "fresh.db", "hidden=4")
    path = tmp_path / "b.json"
    assert (
        run_cli(capsys, "baseline", "--store", str(tmp_path / "base.db"), "-o", str(path))[0] == 0
    )
    store = tmp_path / "fresh.db"
    code, out, err = run_cli(capsys, "check", "--baseline", str(path), "--store", str(store))
    assert code == 2 and out == ""
    (line,) = err.splitlines()
    assert f"results store {store}: holds 2 configurations of rwg" in line and str(path) in line
    _rwg(store)  # with the baseline's own configuration beside them, that one is compared
    code, out, _ = run_cli(capsys, "check", "--baseline", str(path), "--store", str(store))
    assert code == 0, out


def test_a_baseline_whose_evolver_cannot_be_loaded_is_exit_2_before_any_run(
    baseline, capsys, tmp_path
):
    doc = json.loads(baseline.read_text())
    doc["groups"][0]["evolver"] = "no_such_module:Evolver"
    path = tmp_path / "moved.json"
    path.write_text(json.dumps(doc))
    code, out, err = run_cli(capsys, "check", "--baseline", str(path))
    assert code == 2 and out == ""
    (line,) = err.splitlines()
    assert f"baseline {path}: groups.0" in line and "no_such_module" in line, line


def test_a_baseline_of_an_empty_store_is_refused(capsys, tmp_path):
    ResultStore(tmp_path / "empty.db").close()
    out = tmp_path / "b.json"
    code, _, err = run_cli(
        capsys, "baseline", "--store", str(tmp_path / "empty.db"), "-o", str(out)
    )
    assert code == 2 and "holds no runs" in err and len(err.splitlines()) == 1
    assert not out.exists()


# --- the pytest plugin -----------------------------------------------------------------

CANDIDATE = "from neuroyard.reference.neat import NeatEvolver as Candidate\n"
WEAKENED = '''
from neuroyard.reference.neat import NeatEvolver


class Candidate(NeatEvolver):
    """NEAT after a change that stops it adding nodes."""

    def __init__(self, **settings):
        super().__init__(**{**settings, "add_node_prob": 0.0})
'''
GATED_TEST = """
def test_the_candidate_did_not_regress(assert_no_regression):
    assert_no_regression(baseline="baseline.json", workers=2, trust_evolvers=True)
"""


def test_the_plugin_passes_then_fails_after_a_weakening_change(pytester, monkeypatch):
    # an evolver author's project: the evolver, its baseline, the one-line test; the inner
    # test sessions run in this process and import the evolver's module afresh each time
    pytester.makepyfile(candidate=CANDIDATE, test_candidate=GATED_TEST)
    monkeypatch.syspath_prepend(str(pytester.path))
    store = str(pytester.path / "base.db")
    argv = ["run", "--evolver", "candidate:Candidate", "--task", "xor-v2", "--runs", "8"]
    argv += ["--seed", "1", "--budget", "10000", "--workers", "2", "--store", store, "--quiet"]
    assert main(argv) == 0
    assert main(["baseline", "--store", store, "-o", str(pytester.path / "baseline.json")]) == 0

    # (this process does not import an evolver's module: each run's own process does)
    monkeypatch.delitem(sys.modules, "candidate", raising=False)
    unchanged = pytester.runpytest()
    unchanged.assert_outcomes(passed=1)

    pytester.makepyfile(candidate=WEAKENED)  # the author's change
    monkeypatch.delitem(sys.modules, "candidate", raising=False)
    weakened = pytester.runpytest()
    weakened.assert_outcomes(failed=1)
    weakened.stdout.fnmatch_lines(["*regression: success rate, candidate:Candidate *"])


def test_the_plugin_fails_on_a_bad_baseline_with_one_line(pytester):
    pytester.makepyfile(
        "def test_gate(assert_no_regression):\n    assert_no_regression(baseline='missing.json')\n"
    )
    result = pytester.runpytest()
    result.assert_outcomes(failed=1)
    result.stdout.fnmatch_lines(["*neuroyard: error: baseline *missing.json: cannot read it*"])


def test_the_plugin_loads_nothing_heavy():
    code = (
        "import sys, neuroyard.pytest_plugin\n"
        "print([m for m in ('numpy', 'numba', 'scipy', 'neuroyard.api.judging') "
        "if m in sys.modules])"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
