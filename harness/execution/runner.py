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

import math
import time
from collections.abc import Sequence
from functools import partial
from typing import Any, Protocol

from neuroyard.core.batch import CompiledBatch, compile_flat
from neuroyard.core.compiled import fingerprint
from neuroyard.core.defaults import MAX_BATCH
from neuroyard.core.errors import NetworkError, ProcessEvolverError
from neuroyard.core.evolver import Evaluation, Outcome
from neuroyard.core.flat import FlatBatch
from neuroyard.core.network import to_dict
from neuroyard.core.process_evolver import PREFIX as PROCESS_PREFIX
from neuroyard.execution import calibration
from neuroyard.execution.contract import (
    RunFault,
    call_label,
    candidate_label,
    checked_batch,
    checked_settings,
    checked_stats,
    flat_batch,
)
from neuroyard.execution.evolver_host import OPTIONAL
from neuroyard.execution.isolation import IsolatedEvolver, IsolatedFault
from neuroyard.execution.kernels import load_kernels
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
from neuroyard.tasks import make


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
        except IsolatedFault as fault:  # the evolver's own process failed the call
            raise RunFault(fault.reason(call_label(what, generation), self.memory_note)) from None
        except ProcessEvolverError as exc:  # an evolver process's fault, already in words
            raise RunFault(f"{call_label(what, generation)}: {exc}") from None
        except MemoryError:
            raise RunFault(
                f"{call_label(what, generation)} ran out of memory{self.memory_note}"
            ) from None
        except (Exception, SystemExit, KeyboardInterrupt) as exc:  # a plugin fault ends its run
            raise RunFault(
                f"{call_label(what, generation)} raised {type(exc).__name__}: {exc}"
            ) from exc
        finally:
            self.watch.leave()
            self.seconds += time.perf_counter() - start


def _asked(evolver: Any, generation: int, max_batch: int, inputs: int, outputs: int) -> FlatBatch:
    """The next batch of an evolver in this process, checked and read into flat arrays
    (:mod:`.contract`); reading it runs the evolver's code (its sequence, its networks),
    so this runs inside the watched call."""
    if isinstance(evolver, IsolatedEvolver):
        return evolver.ask_flat(generation)
    batch = checked_batch(evolver.ask(), generation, max_batch)
    return flat_batch(batch, inputs, outputs, generation)


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
    time_limit: float | None = None,
    isolate: bool = False,
) -> RunRecord:
    """Execute one run (see module docstring). Never raises for evolver faults.

    ``watch`` is told of every evolver call (a supervisor bounds their time); ``max_batch``
    is the most networks one ``ask()`` may return; ``memory_limit_mb``, when the process
    runs under a memory limit, is named in the reason of a run that ran out of memory.
    ``isolate``: run a Python evolver in a process of its own (:mod:`.isolation`), each of
    its replies within ``time_limit`` seconds (None: no limit) and its process within
    ``memory_limit_mb``; a ``process:`` evolver is a process of its own already. Without
    it the evolver runs in this process, and the record says it was not isolated."""
    calibration_seconds = calibration.seconds()  # once per process, before the run's clock
    wall_start = time.perf_counter()
    record = new_record(spec)
    task = make(spec.task, record.task_seed, **spec.task_settings)  # once per run
    kernel_load = load_kernels(task)
    record.task_facts = dict(task.spec.facts)
    isolated = isolate and not spec.evolver.name.startswith(PROCESS_PREFIX)
    record.isolated = isolate
    budget = record.budget
    seed = record.seed
    clock = _Clock(watch or _Unwatched(), memory_limit_mb)
    evolver = None
    behaviours = BehaviourSample()
    try:
        if isolated:
            build = partial(IsolatedEvolver, spec.evolver, time_limit, memory_limit_mb, max_batch)
        else:
            build = spec.evolver.build
        evolver = clock.call("building the evolver", None, build)
        offers = _offers(evolver)
        problem = task.problem(budget)
        if isolated:
            clock.call("start()", None, evolver.start, problem, seed, max_batch)
        else:
            clock.call("start()", None, evolver.start, problem, seed)
        if "settings" in offers:
            settings = clock.call("settings()", None, evolver.settings)
            record.evolver_settings = checked_settings(settings)
        _generations(evolver, offers, task, budget, record, clock, max_batch, behaviours)
    except RunFault as fault:
        record.status = FAILED
        record.failure = str(fault)
    except MemoryError:  # in the harness's part of a generation (compiling, evaluating)
        record.status = FAILED
        record.failure = (
            "the run ran out of memory while the harness evaluated generation "
            f"{record.generations}{clock.memory_note}"
        )
    finally:
        record.behaviours = behaviours.points
        if evolver is not None:
            if "stop" in _offers(evolver):
                _stop(evolver, clock, record)
            if isinstance(evolver, IsolatedEvolver):
                evolver.end()
    wall = time.perf_counter() - wall_start
    record.timing = {
        "wall": wall,
        "evolver": clock.seconds,
        "kernel_load": kernel_load,
        "harness": wall - clock.seconds - kernel_load,
        "calibration": calibration_seconds,
    }
    return record


def _offers(evolver: Any) -> set[str]:
    """The optional methods of the contract the evolver has."""
    if isinstance(evolver, IsolatedEvolver):
        return evolver.optional
    return {name for name in OPTIONAL if hasattr(evolver, name)}


def _generations(
    evolver: Any,
    offers: set[str],
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
        batch = clock.call(
            "ask()", generation, _asked, evolver, generation, max_batch,
            task_spec.inputs, task_spec.outputs,
        )  # fmt: skip
        batch = batch.head(budget - record.evaluations)  # never evaluate past the budget
        try:
            compiled = compile_flat(
                batch, task_spec.inputs, task_spec.outputs, candidate_label(generation)
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
        record.evaluations += batch.size
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
            record.best_network = to_dict(batch.network(kept))
            record.hidden_nodes = batch.hidden_nodes(kept)
            record.connections = batch.enabled_connections(kept)
            record.success_details = details if pick == kept else {}
        row = GenerationLog(
            generation=generation,
            evaluations=record.evaluations,
            best_fitness=fitness[top],
            mean_fitness=math.fsum(fitness) / len(fitness),
            best_hidden=batch.hidden_nodes(top),
            best_connections=batch.enabled_connections(top),
            champion_test=details,
            non_finite_fitness=non_finite_fitness,
        )
        record.log.append(row)  # the row is complete once tell() and stats() are done
        if isinstance(evolver, IsolatedEvolver):  # it asks the next batch at once if any
            more = not solved and record.evaluations < budget
            clock.call("tell()", generation, evolver.tell, tuple(results), generation, more)
        else:
            clock.call("tell()", generation, evolver.tell, tuple(results))
        if "stats" in offers:
            row.stats = checked_stats(clock.call("stats()", generation, evolver.stats), generation)
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
