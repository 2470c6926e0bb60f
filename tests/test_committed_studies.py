"""The committed study stores under ``results/`` still resume and report the same figures.

Each store is copied (the committed file is never written) and checked three ways:

* read as it is, its runs summarise to the figures committed in the study's JSON, and the
  report tables of the XOR study are the ones committed in its README (the figures were
  produced by the code of their time; the restructured code must give the same ones);
* the first write upgrades it (schema 3 -> 4 re-keys every run from its resolved values),
  after which every stored run has the key that the study's campaign plan gives it today,
  with or without the budget spelled out, so a resumed study runs nothing again;
* after the upgrade the records and the figures are unchanged.
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from neuroyard.core.evolver_registry import EvolverSpec
from neuroyard.execution.campaign import CampaignPlan, TaskChoice
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import SCHEMA_VERSION, ResultStore
from neuroyard.reports import renderers, report

RESULTS = Path(__file__).resolve().parents[1] / "results"
# store -> (summary JSON, the key of its figures there)
STUDIES = {
    "neat_xor/xor.db": ("neat_xor/summary.json", "measured"),
    "pole/spv.sqlite": ("pole/spv.json", "summary"),
    "pole/dpv.sqlite": ("pole/dpv.json", "summary"),
    "pole/dpnv.sqlite": ("pole/dpnv.json", "summary"),
    "pole/dpnv_fittest_only.sqlite": ("pole/dpnv_fittest_only.json", "summary"),
    "pole/dpnv_random_representative.sqlite": ("pole/dpnv_random_representative.json", "summary"),
    "pole/dpnv_xor_weights.sqlite": ("pole/dpnv_xor_weights.json", "summary"),
}
# figures of a summary JSON that are not measured outcomes of the runs
NOT_FIGURES = ("success_ci",)


def _records(path: Path) -> list[RunRecord]:
    with ResultStore(path, write=False) as store:
        return list(store.records(with_log=False))


def _figures(records: list[RunRecord]) -> dict:
    """The summary of the records as the study JSON writes it."""
    return report.summary_of(records).figures()


def _assert_same_figures(measured: dict, committed: dict) -> None:
    for key, value in committed.items():
        if key in NOT_FIGURES:
            continue
        if value is None:  # no such figure (e.g. generalization of a task without it)
            assert measured.get(key) is None, key
        else:
            assert measured[key] == pytest.approx(value, rel=1e-12), key


def _plans(records: list[RunRecord]) -> list[CampaignPlan]:
    """The study's campaign as its test states it (the stored configuration as given, the
    task's default settings), once with the budget left to the task and once spelled out."""
    first = records[0]
    runs = max(r.run_index for r in records) + 1
    evolver = EvolverSpec(first.evolver, first.config)
    task = TaskChoice(first.task)
    return [
        CampaignPlan([evolver], [task], runs, first.campaign_seed, budget)
        for budget in (None, first.budget)
    ]


@pytest.fixture(params=sorted(STUDIES), ids=lambda p: Path(p).stem)
def study(request, tmp_path) -> tuple[Path, dict]:
    store, (summary, key) = request.param, STUDIES[request.param]
    copy = tmp_path / Path(store).name
    shutil.copyfile(RESULTS / store, copy)
    committed = json.loads((RESULTS / summary).read_text())[key]
    return copy, committed


def test_the_committed_figures_come_out_of_the_committed_store(study) -> None:
    path, committed = study
    _assert_same_figures(_figures(_records(path)), committed)


def test_the_upgrade_gives_every_run_the_key_of_todays_plan(study) -> None:
    path, committed = study
    before = _records(path)
    with ResultStore(path) as store:
        store.campaign(0, {"purpose": "trigger the upgrade"}, "upgrade-test")
        assert store.version == SCHEMA_VERSION
        stored = store.finished_keys()
    assert len(stored) == len(before)  # no run lost, none doubled
    for plan in _plans(before):
        planned = {spec.run_index: spec.key for spec in plan.expand()}
        assert {planned[r.run_index] for r in before} == stored
    after = _records(path)
    _assert_same_figures(_figures(after), committed)
    for old, new in zip(before, after, strict=True):  # unchanged but for the identity fields
        changed = {k for k, v in old.to_dict().items() if new.to_dict()[k] != v}
        assert changed <= {"config_hash", "config", "evolver_settings"}, changed


def test_the_xor_study_report_tables_are_the_committed_ones(tmp_path) -> None:
    copy = tmp_path / "xor.db"
    shutil.copyfile(RESULTS / "neat_xor/xor.db", copy)
    text = renderers.render(report.build(_records(copy)), "markdown")
    committed = (RESULTS / "neat_xor/README.md").read_text()
    table_rows = [line for line in text.splitlines() if line.startswith("| ")]
    # the two summary rows and the ten published figures, each table with its header
    assert len(table_rows) >= 2 + 10 + 3
    for line in table_rows:
        assert line in committed, line


def test_the_results_guide_states_the_committed_figures() -> None:
    # results/README.md quotes the studies' own output; these are the figures it states
    readme = (RESULTS / "README.md").read_text()
    xor = json.loads((RESULTS / "neat_xor/summary.json").read_text())["measured"]
    pole = {
        name: json.loads((RESULTS / f"pole/{name}.json").read_text())["summary"]
        for name in ("spv", "dpv", "dpnv")
    }
    stated = [
        f"XOR {xor['solved']}/100 solved, mean {xor['mean_evaluations']:,.0f} evaluations",
        f"{xor['mean_hidden_nodes']:.2f} hidden nodes",
        f"{xor['mean_connections']:.2f} enabled connections",
        f"single pole with velocities {pole['spv']['solved']}/{pole['spv']['runs']}",
        f"double pole with velocities {pole['dpv']['solved']}/{pole['dpv']['runs']}, mean "
        f"{pole['dpv']['mean_evaluations']:,.0f} evaluations",
        f"{pole['dpnv']['solved']}/{pole['dpnv']['runs']} solved, mean "
        f"{pole['dpnv']['mean_evaluations']:,.0f} evaluations",
        f"generalization {pole['dpnv']['mean_generalization']:.1f} of 625",
    ]
    flat = " ".join(readme.split())  # the guide wraps its lines
    for text in stated:
        assert text in flat, text
