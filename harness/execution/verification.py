"""Re-verification of solved claims, in the coordinator, which runs no evolver code.

A worker sends back a run's record; the evolver ran beside it (in the worker or in a child
of it) and a worker is a process the coordinator need not believe. So before a solved
record is stored, the coordinator checks the claim itself (:func:`verified`, called by
:func:`~.campaign.execute` where it saves records), and ``neuroyard verify`` checks the
solved runs of a store the same way (:func:`verify_runs`). A solved claim holds when:

1. the record belongs to its run: in the coordinator, its evolver, configuration hash,
   task, settings, budget, campaign seed and run index give the key of the run the
   coordinator handed out; everywhere, its task seed is the one the harness derives from
   its campaign seed, task and run index (:func:`~.seeds.task_seed`);
2. its ``best_network`` is a valid network of the format that fits the task's inputs and
   outputs (read by :func:`neuroyard.core.network.from_dict`, the harness's own path);
3. that network, compiled, evaluated once on the task rebuilt from the record's task id,
   task seed and settings, and bounded as a run bounds it (:func:`.evaluation.evaluate_on`),
   passes the task's success test (success tests are deterministic, so an honest claim
   always passes again);
4. the recorded size (hidden nodes, enabled connections) is the size of that network.

With the ``in-process`` executor the evolver runs in the coordinator itself, and code that
can reach the runner's objects can reach this check too: there it catches mistakes, not an
evolver that sets out to cheat.

A claim that does not hold fails the run (status ``failed``, the reason says which check
and why). A wrong size fails it too rather than being corrected: the runner measures the
size of the network it stores, so a size that does not match it means the record was
changed after the harness made it, and the harness cannot stand behind such a record.
Only solved records are checked; unsolved and failed ones claim nothing.

**What is checked is what is stored.** The coordinator checks the fields the claim rests
on (:data:`CLAIM_FIELDS`) in the form the store writes them (JSON, read back) and stores
that form, so an object that behaves differently when compared and when written cannot
slip past. An honest record comes out with the same content.

**Cost.** Per solved run the coordinator builds the task, evaluates the network once and
runs its success test, which the worker ran too; once per task and process it loads the
task's numba kernels (0.1 to 0.8 s; 2.5 s for a Gymnasium environment). Measured per run
on the committed studies' solutions: XOR 0.7 ms, the double pole with velocities 0.1 s
(100,000 steps), without velocities 0.46 s (and the 625 starts of the generalization
test), the hard maze 7 ms, ``gym:CartPole-v1`` 2.0 s (its validation episodes step in
Python). The coordinator hands the workers their next runs before it checks the runs that
came back (:func:`~.campaign.execute`), so a worker waits on a check only when the checks
fall behind the runs (many workers on a task whose success test is long beside a run). Runs that did not solve cost nothing. Counts (evaluations, generations) cannot be
re-checked without running the evolver again: they are as honest as the worker that
counted them.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable
from dataclasses import dataclass

from neuroyard.core import jsonsafe
from neuroyard.core.errors import NetworkError, TaskError
from neuroyard.core.network import from_dict
from neuroyard.execution.evaluation import evaluate_on
from neuroyard.execution.seeds import task_seed
from neuroyard.records.runs import FAILED, SOLVED, RunRecord, record_key
from neuroyard.records.store import StoredRun
from neuroyard.tasks import make

CLAIM_FAILED = "the solved claim did not hold on re-verification"
# the fields of a record that :func:`recheck` reads
CLAIM_FIELDS = (
    "evolver",
    "config_hash",
    "task",
    "task_settings",
    "run_index",
    "campaign_seed",
    "budget",
    "task_seed",
    "status",
    "best_network",
    "hidden_nodes",
    "connections",
)
NOT_CHECKED = "the solved claim cannot be re-verified here"


def verified(record: RunRecord, key: str) -> RunRecord:
    """The record to store for run ``key``: ``record`` itself when it is not solved; else
    ``record`` with its :data:`CLAIM_FIELDS` in their stored form (JSON, read back), failed
    with the reason when its claim does not hold (see the module docstring), unchanged in
    content when it holds.

    Raises :class:`~neuroyard.core.errors.TaskError` when the task cannot be built here
    (in a campaign it was built when the plan was resolved, so this is not expected)."""
    if record.status != SOLVED:
        return record
    claim = {name: getattr(record, name) for name in CLAIM_FIELDS}
    stored = dataclasses.replace(record, **jsonsafe.loads(jsonsafe.dumps(claim)))
    reason = recheck(stored, key)
    if reason is None:
        return stored
    return dataclasses.replace(stored, status=FAILED, failure=f"{CLAIM_FAILED}: {reason}")


def recheck(record: RunRecord, key: str | None) -> str | None:
    """Why the solved claim of ``record`` does not hold (checks 1 to 4 of the module
    docstring); None when it holds or ``record`` is not solved.

    ``key`` is the key of the run as the coordinator planned it; None leaves it out of
    check 1 (a stored run's key is computed from the record's own values, and by the scheme
    of the store's schema version: a store written by an earlier neuroyard and read as it
    is holds keys of an earlier scheme).

    Raises :class:`~neuroyard.core.errors.TaskError` when the record's task cannot be
    built here (an unknown or retired task, or settings it no longer takes)."""
    if record.status != SOLVED:
        return None
    if key is not None and record_key(record) != key:
        return (
            f"the record does not belong to run {key}: its evolver, configuration, task, "
            "settings, budget, campaign seed or run index differ from the run's"
        )
    derived = task_seed(record.campaign_seed, record.task, record.run_index)
    if record.task_seed != derived:
        return (
            f"its task seed {record.task_seed} is not the one the harness derives for run "
            f"{record.run_index} of {record.task} ({derived})"
        )
    if record.best_network is None:
        return "the record holds no best network"
    where = "the stored best network"
    task = make(record.task, record.task_seed, **record.task_settings)
    try:
        result = evaluate_on(task, from_dict(record.best_network, where), where)
    except NetworkError as exc:
        return str(exc)
    if not result.solved:
        details = "".join(f"; {name} {value!r}" for name, value in sorted(result.details.items()))
        return (
            f"{where} does not pass the success test of {result.task} "
            f"(fitness {result.fitness!r}{details})"
        )
    if (record.hidden_nodes, record.connections) != (result.hidden_nodes, result.connections):
        return (
            f"the record gives {where} {record.hidden_nodes} hidden nodes and "
            f"{record.connections} enabled connections; it has {result.hidden_nodes} and "
            f"{result.connections}"
        )
    return None


@dataclass(frozen=True)
class Unverified:
    """A stored solved run whose claim does not hold, or cannot be checked here."""

    key: str
    evolver: str
    task: str
    run_index: int
    reason: str

    def line(self) -> str:
        """One line: key, evolver, task, run index and reason."""
        return f"{self.key}: {self.evolver} on {self.task}, run {self.run_index}: {self.reason}"


@dataclass(frozen=True)
class VerifyResult:
    """What re-verifying a store's solved runs found (what :func:`neuroyard.verify`
    returns and ``neuroyard verify`` prints).

    Args:
        store: the store that was read.
        solved: its solved runs, each re-checked.
        unverified: the solved runs whose claim did not hold, or could not be checked here
            (their task cannot be built: unknown, retired or its settings refused), each
            with its key, evolver, task, run index and reason.

    Example:
        >>> import neuroyard
        >>> nothing = neuroyard.VerifyResult("runs.db", solved=3, unverified=())
        >>> nothing.holds, nothing.lines()
        (True, ['3 of 3 solved run(s) in runs.db hold on re-verification'])
    """

    store: str
    solved: int
    unverified: tuple[Unverified, ...]

    @property
    def holds(self) -> bool:
        """Whether every solved run's claim held."""
        return not self.unverified

    def lines(self) -> list[str]:
        """One line per run that does not hold, then a summary line."""
        held = self.solved - len(self.unverified)
        summary = f"{held} of {self.solved} solved run(s) in {self.store} hold on re-verification"
        return [u.line() for u in self.unverified] + [summary]


def verify_runs(runs: Iterable[StoredRun], store: str) -> VerifyResult:
    """Re-check the solved claim of every run of ``runs`` (read from ``store``)."""
    solved = 0
    unverified = []
    for run in runs:
        record = run.record
        if record.status != SOLVED:
            continue
        solved += 1
        try:
            wrong = recheck(record, None)
            reason = None if wrong is None else f"{CLAIM_FAILED}: {wrong}"
        except TaskError as exc:
            reason = f"{NOT_CHECKED}: {exc}"
        if reason is not None:
            unverified.append(
                Unverified(run.key, record.evolver, record.task, record.run_index, reason)
            )
    return VerifyResult(store, solved, tuple(unverified))
