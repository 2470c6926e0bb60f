"""A campaign: evolvers x tasks x run indices, executed run by run into a results store.

Runs whose key is already in the store are skipped, so an interrupted campaign resumes
where it stopped. Runs execute in this process (``workers=1``) or in a local process pool;
either way only this process writes to the store, one transaction per finished run.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable, Sequence
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from typing import Any

from tqdm import tqdm

from .evolver import EvolverSpec
from .runner import RunRecord, RunSpec, run_one
from .store import ResultStore


@dataclass(frozen=True)
class TaskChoice:
    """A task id with the settings it runs under (defaults for settings not given)."""

    id: str
    settings: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class CampaignPlan:
    """What to run: every evolver on every task, ``runs`` times, from one campaign ``seed``."""

    evolvers: Sequence[EvolverSpec]
    tasks: Sequence[TaskChoice]
    runs: int
    seed: int
    budget: int | None = None

    def expand(self) -> list[RunSpec]:
        return [
            RunSpec(evolver, task.id, index, self.seed, self.budget, dict(task.settings))
            for evolver in self.evolvers
            for task in self.tasks
            for index in range(self.runs)
        ]

    def describe(self) -> dict[str, Any]:
        return {
            "evolvers": [{"name": e.name, "config": dict(e.config)} for e in self.evolvers],
            "tasks": [{"id": t.id, "settings": t.settings} for t in self.tasks],
            "runs": self.runs,
            "seed": self.seed,
            "budget": self.budget,
        }

    @property
    def plan_hash(self) -> str:
        text = json.dumps(self.describe(), sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:16]


def execute(
    plan: CampaignPlan,
    store: ResultStore,
    workers: int = 1,
    progress: bool = True,
    on_record: Callable[[RunRecord], None] | None = None,
) -> tuple[int, int]:
    """Run every run of ``plan`` not yet in ``store``; return (runs done now, runs skipped)."""
    campaign_id = store.campaign(plan.seed, plan.describe(), plan.plan_hash)
    done = store.finished_keys()
    pending = [spec for spec in plan.expand() if spec.key not in done]
    skipped = len(plan.expand()) - len(pending)
    bar = tqdm(total=len(pending), unit="run", delay=3.0, disable=not progress or not pending)

    def finish(spec: RunSpec, record: RunRecord) -> None:
        store.save(spec.key, campaign_id, record)
        bar.update(1)
        if on_record is not None:
            on_record(record)

    try:
        if workers <= 1 or len(pending) <= 1:
            for spec in pending:
                finish(spec, run_one(spec))
        else:
            with ProcessPoolExecutor(max_workers=workers) as pool:
                futures = {pool.submit(run_one, spec): spec for spec in pending}
                for future in as_completed(futures):
                    finish(futures[future], future.result())
    finally:
        bar.close()
    return len(pending), skipped
