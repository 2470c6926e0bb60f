"""One run of one evolver on one task, with harness-owned counting and an exact budget.

The loop: ``ask`` a batch, validate and compile every network, evaluate them (each
network = one counted evaluation; the batch is cut so that no evaluation goes past the
budget), bound every fitness (a non-finite one becomes the task's worst and is counted),
run the task's success test on the batch's fittest network that has not been tested before
in this run (counted apart), ``tell`` the results, read ``stats``, log the generation. The
run ends when the success test passes (solved), the budget is spent (unsolved), or the
evolver misbehaves (failed, with the reason); then the evolver's optional ``stop`` is
called with the outcome.

**Which network is success-tested.** Each generation one network is tested: the fittest
one whose :func:`~.compiled.fingerprint` has not been tested before in the run, usually the
generation's best. Success tests are deterministic, so testing an identical network again
(an elite copied unchanged from generation to generation) can only repeat a failure; the
test goes to the next-fittest network instead. This follows the NEAT authors' double-pole
setup as recalled, which tests the champion of the fittest species not tested since it last
improved (from memory, MEMORY-medium; the published text only says "the best network of
a generation"). A generation in which every network was tested before runs no test.

Timing (``RunRecord.timing``, seconds of wall time): ``evolver`` inside the evolver's calls,
``kernel_load`` loading (or compiling) the task's numba kernels, which happens once per
process and task setting, on the run's task (built once per run) before the run starts; ``harness`` the
rest (validation, compilation, evaluation, success tests, bookkeeping); ``wall`` the sum.
``calibration``: the seconds of one unit of the calibration loop (:mod:`.calibration`) in
the process that ran the run, timed once per process before its first run and not part of
``wall``. A run's *relative speed* is ``evaluations / (wall - kernel_load) * calibration``:
fitness evaluations per calibration unit (the one-off kernel load is left out, it is not
the run's speed), about the same on a machine twice as slow. Records written before the
calibration was recorded have no ``calibration`` and so no relative speed.
"""

from __future__ import annotations

import json
import math
import time
from collections.abc import Mapping, Sequence
from typing import Any, Protocol

from neuroyard.core import jsonsafe
from neuroyard.core.batch import CompiledBatch, compile_batch
from neuroyard.core.compiled import fingerprint
from neuroyard.core.defaults import MAX_BATCH
from neuroyard.core.errors import NetworkError, ProcessEvolverError
from neuroyard.core.evolver import Evaluation, Outcome
from neuroyard.core.network import Network, to_dict
from neuroyard.execution import calibration
from neuroyard.execution.seeds import evolver_seed, task_seed
from neuroyard.records import provenance
from neuroyard.records.runs import (
    FAILED,
    SOLVED,
    UNSOLVED,
    BehaviourSample,
    GenerationLog,
    RunRecord,
    RunSpec,
)
from neuroyard.tasks import Task, make


class RunFault(Exception):
    """The evolver broke the contract, or the task gave a fitness outside its stated bounds;
    the message is the recorded reason of the failed run."""


class Watch(Protocol):
    """Told when a run enters and leaves each evolver call, so that a supervisor in another
    process can bound the call's time (see :mod:`.supervisor`). ``generation`` is None for
    the calls before the first generation (building the evolver, ``start``, ``settings``)."""

    def enter(self, call: str, generation: int | None) -> None: ...

    def leave(self) -> None: ...

    def progress(self, generations: int, evaluations: int) -> None: ...


class _Unwatched:
    def enter(self, call: str, generation: int | None) -> None:
        pass

    def leave(self) -> None:
        pass

    def progress(self, generations: int, evaluations: int) -> None:
        pass


def call_label(call: str, generation: int | None) -> str:
    """``ask() in generation 3``, or the call alone before the first generation."""
    return call if generation is None else f"{call} in generation {generation}"


class _Clock:
    """Makes every evolver call: times it, tells the watch, turns a fault into a RunFault."""

    def __init__(self, watch: Watch, memory_limit_mb: int | None) -> None:
        self.seconds = 0.0
        self.watch = watch
        # named in the reason of a run that ran out of memory under a limit
        self.memory_note = f" (memory limit {memory_limit_mb:,} MB)" if memory_limit_mb else ""

    def call(self, what: str, generation: int | None, fn, *args):
        start = time.perf_counter()
        self.watch.enter(what, generation)
        try:
            return fn(*args)
        except RunFault:
            raise
        except ProcessEvolverError as exc:  # an evolver process's fault, already in words
            raise RunFault(f"{call_label(what, generation)}: {exc}") from None
        except MemoryError:
            raise RunFault(
                f"{call_label(what, generation)} ran out of memory{self.memory_note}"
            ) from None
        except (Exception, SystemExit) as exc:  # a plugin fault ends the run, not the campaign
            raise RunFault(
                f"{call_label(what, generation)} raised {type(exc).__name__}: {exc}"
            ) from exc
        finally:
            self.watch.leave()
            self.seconds += time.perf_counter() - start


def _asked(evolver: Any, generation: int, max_batch: int) -> list[Network]:
    """The evolver's next batch, checked (see :func:`_checked_batch`)."""
    return _checked_batch(evolver.ask(), generation, max_batch)


def _checked_batch(batch: Any, generation: int, max_batch: int) -> list[Network]:
    """The evolver's batch as a list of Network; anything else is a fault that ends the run."""
    if not isinstance(batch, Sequence) or isinstance(batch, str | bytes):
        raise RunFault(
            f"ask() in generation {generation} returned {type(batch).__name__}, "
            "expected a list of Network"
        )
    if len(batch) == 0:
        raise RunFault(f"ask() returned an empty batch in generation {generation}")
    if len(batch) > max_batch:
        raise RunFault(
            f"ask() returned {len(batch):,} networks in generation {generation}, more than "
            f"the batch limit of {max_batch:,}"
        )
    for k, net in enumerate(batch):
        if not isinstance(net, Network):
            raise RunFault(
                f"candidate {k} of generation {generation} is a {type(net).__name__}, not a Network"
            )
    return list(batch)


def bound_fitness(
    results: Sequence[Evaluation], task: str, low: float, high: float | None, generation: int
) -> tuple[list[Evaluation], int]:
    """The task's results with every non-finite fitness replaced by ``low`` (the task's
    worst), and how many were replaced. A finite fitness outside ``[low, high]`` (``high``
    None: no upper bound) is a fault of the task: :class:`RunFault` naming the candidate."""
    out = list(results)
    replaced = 0
    for k, result in enumerate(out):
        f = result.fitness
        if math.isfinite(f):
            if f < low or (high is not None and f > high):
                top = "inf" if high is None else f"{high:g}"
                raise RunFault(
                    f"task {task} gave candidate {k} of generation {generation} the fitness "
                    f"{f!r}, outside its stated bounds [{low:g}, {top}]"
                )
            continue
        out[k] = Evaluation(low, result.behaviour)
        replaced += 1
    return out, replaced


_WARM: set[str] = set()


def load_kernels(task: Task) -> float:
    """Load (or compile) the task's numba kernels before the run starts, once per process
    and task setting, so that it is not charged to the first run's harness time
    (:meth:`~neuroyard.tasks.base.Task.warm_up`). Returns the seconds spent (0.0 when
    already done in this process)."""
    key = json.dumps([task.id, task.settings], sort_keys=True, default=str)
    if key in _WARM:
        return 0.0
    start = time.perf_counter()
    task.warm_up()
    _WARM.add(key)
    return time.perf_counter() - start


def new_record(spec: RunSpec) -> RunRecord:
    """The record of ``spec`` before it runs: seeds, budget, settings, versions, host."""
    return RunRecord(
        evolver=spec.evolver.name,
        config=dict(spec.evolver.config),
        config_hash=spec.evolver.config_hash,
        task=spec.task,
        task_settings=dict(spec.task_settings),
        run_index=spec.run_index,
        campaign_seed=spec.campaign_seed,
        seed=evolver_seed(spec.campaign_seed, spec.evolver.name, spec.task, spec.run_index),
        task_seed=task_seed(spec.campaign_seed, spec.task, spec.run_index),
        budget=spec.budget,
        versions=provenance.versions(),
        host=provenance.host(),
    )


def run_one(
    spec: RunSpec,
    watch: Watch | None = None,
    max_batch: int = MAX_BATCH,
    memory_limit_mb: int | None = None,
) -> RunRecord:
    """Execute one run (see module docstring). Never raises for evolver faults.

    ``watch`` is told of every evolver call (a supervisor bounds their time); ``max_batch``
    is the most networks one ``ask()`` may return; ``memory_limit_mb``, when the process
    runs under a memory limit, is named in the reason of a run that ran out of memory."""
    calibration_seconds = calibration.seconds()  # once per process, before the run's clock
    wall_start = time.perf_counter()
    record = new_record(spec)
    task = make(spec.task, record.task_seed, **spec.task_settings)  # once per run
    kernel_load = load_kernels(task)
    record.task_facts = dict(task.spec.facts)
    budget = record.budget
    seed = record.seed
    clock = _Clock(watch or _Unwatched(), memory_limit_mb)
    evolver = None
    behaviours = BehaviourSample()
    try:
        evolver = clock.call("building the evolver", None, spec.evolver.build)
        clock.call("start()", None, evolver.start, task.problem(budget), seed)
        if hasattr(evolver, "settings"):
            record.evolver_settings = _settings(evolver, clock)
        _generations(evolver, task, budget, record, clock, max_batch, behaviours)
    except RunFault as fault:
        record.status = FAILED
        record.failure = str(fault)
    except MemoryError:  # in the harness's part of a generation (compiling, evaluating)
        record.status = FAILED
        record.failure = (
            "the run ran out of memory while the harness evaluated generation "
            f"{record.generations}{clock.memory_note}"
        )
    record.behaviours = behaviours.points
    if evolver is not None and hasattr(evolver, "stop"):
        _stop(evolver, clock, record)
    wall = time.perf_counter() - wall_start
    record.timing = {
        "wall": wall,
        "evolver": clock.seconds,
        "kernel_load": kernel_load,
        "harness": wall - clock.seconds - kernel_load,
        "calibration": calibration_seconds,
    }
    return record


def _generations(
    evolver: Any,
    task: Any,
    budget: int,
    record: RunRecord,
    clock: _Clock,
    max_batch: int,
    behaviours: BehaviourSample,
) -> None:
    """The generation loop of :func:`run_one`: until solved or the budget is spent."""
    task_spec = task.spec
    best_fitness = -math.inf
    tested: set[bytes] = set()  # fingerprints of the networks success-tested in this run
    while record.evaluations < budget:
        generation = record.generations
        # checked inside the watched call: a batch is the evolver's object, and reading it
        # (its length, its items) runs the evolver's code, which the time limit bounds
        batch = clock.call("ask()", generation, _asked, evolver, generation, max_batch)
        batch = batch[: budget - record.evaluations]  # never evaluate past the budget
        try:
            compiled = compile_batch(
                batch,
                task_spec.inputs,
                task_spec.outputs,
                f"candidate {{}} of generation {generation}".format,
            )
        except NetworkError as exc:
            raise RunFault(f"invalid network: {exc}") from None
        results, non_finite_fitness = bound_fitness(
            task.evaluate_batch(compiled),
            task_spec.id,
            task_spec.min_fitness,
            task_spec.max_fitness,
            generation,
        )
        if task_spec.behaviour_size:  # no call per evaluation for tasks without behaviour
            for result in results:
                behaviours.add(result.behaviour)
        record.evaluations += len(batch)
        record.generations += 1
        clock.watch.progress(record.generations, record.evaluations)
        fitness = [r.fitness for r in results]
        # fittest first, ties in batch order
        ranking = sorted(range(len(fitness)), key=lambda k: -fitness[k])
        top = ranking[0]
        solved, details, pick = False, {}, None
        candidate = _fittest_untested(compiled, ranking, tested)
        if candidate is not None:
            pick, rank = candidate
            check = task.success_test(compiled.network(pick), results[pick])
            record.success_evaluations += check.evaluations
            solved, details = check.solved, {"rank": rank, **check.details}
        if solved or fitness[top] > best_fitness:
            kept = pick if solved else top  # a solution is the network that passed
            best_fitness = fitness[top]
            record.best_fitness = fitness[kept]
            record.best_network = to_dict(batch[kept])
            record.hidden_nodes = batch[kept].hidden_nodes
            record.connections = batch[kept].enabled_connections
            record.success_details = details if pick == kept else {}
        row = GenerationLog(
            generation=generation,
            evaluations=record.evaluations,
            best_fitness=fitness[top],
            mean_fitness=math.fsum(fitness) / len(fitness),
            best_hidden=batch[top].hidden_nodes,
            best_connections=batch[top].enabled_connections,
            champion_test=details,
            non_finite_fitness=non_finite_fitness,
        )
        record.log.append(row)  # the row is complete once tell() and stats() are done
        clock.call("tell()", generation, evolver.tell, tuple(results))
        row.stats = _stats(evolver, clock, generation)
        if solved:
            record.status = SOLVED
            return
    record.status = UNSOLVED


def _stop(evolver: Any, clock: _Clock, record: RunRecord) -> None:
    """Call the optional ``stop(outcome)``; a fault there fails a run not failed already."""
    outcome = Outcome(record.status, record.generations, record.evaluations, record.failure)
    try:
        clock.call("stop()", None, evolver.stop, outcome)
    except RunFault as fault:
        if record.status != FAILED:
            record.status = FAILED
            record.failure = str(fault)


def _fittest_untested(
    batch: CompiledBatch, ranking: list[int], tested: set[bytes]
) -> tuple[int, int] | None:
    """(index, rank) of the first network of ``ranking`` (batch indices, fittest first)
    whose fingerprint is not in ``tested``, and add it there; None when every network of
    the batch was tested before."""
    for rank, i in enumerate(ranking):
        key = fingerprint(batch.network(i))
        if key not in tested:
            tested.add(key)
            return i, rank
    return None


def _settings(evolver: Any, clock: _Clock) -> dict[str, Any]:
    settings = clock.call("settings()", None, evolver.settings)
    if not isinstance(settings, Mapping):
        raise RunFault(f"settings() returned {type(settings).__name__}, expected a mapping")
    try:
        return jsonsafe.loads(jsonsafe.dumps(dict(settings)))
    except (TypeError, ValueError) as exc:
        raise RunFault(f"settings() is not JSON-serialisable: {exc}") from None


def _stats(evolver: Any, clock: _Clock, generation: int) -> dict[str, float]:
    """The evolver's figures after ``tell()`` of ``generation``; non-finite ones are kept
    (and written by the JSON rule of :mod:`.jsonsafe`)."""
    if not hasattr(evolver, "stats"):
        return {}
    stats = clock.call("stats()", generation, evolver.stats)
    if not isinstance(stats, Mapping):
        raise RunFault(
            f"stats() in generation {generation} returned {type(stats).__name__}, "
            "expected a mapping"
        )
    out: dict[str, float] = {}
    for key, value in stats.items():
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise RunFault(
                f"stats() in generation {generation}: value {key!r} is {value!r}, expected a number"
            )
        out[str(key)] = float(value)
    return out
