"""The ``neuroyard`` command line. It parses arguments and calls the library; no logic here.

Exit status: 0 done; 2 an error the user can fix (bad option, file, task, evolver
configuration, a store that cannot be written): one line ``neuroyard: error: ...`` on
stderr; 3 an internal error (a fault of neuroyard itself): one line naming the crash log
that holds the traceback; 130 interrupted by Ctrl-C (finished runs are kept); 1 from
``check`` when it found a regression (:mod:`.gate`).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path
from typing import Any, NoReturn

from neuroyard.cli import compare_command, gate, listing, merge_command, replay
from neuroyard.cli.output import check_output, write_output
from neuroyard.core import jsonsafe
from neuroyard.core.batch import compile_network
from neuroyard.core.errors import NeuroyardError
from neuroyard.core.evolver import MAX_BATCH
from neuroyard.core.evolver_registry import (
    EvolverSpec,
    load_factory,
    option_table,
    read_config,
)
from neuroyard.core.network import validate
from neuroyard.core.options import distribute
from neuroyard.execution import crashlog
from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
from neuroyard.execution.executors import Executor, make_executor
from neuroyard.execution.runner import RunFault, bound_fitness
from neuroyard.execution.supervisor import (
    DEFAULT_MEMORY_LIMIT_MB,
    DEFAULT_TIME_LIMIT,
    Limits,
)
from neuroyard.records.runs import record_key
from neuroyard.records.shares import WHOLE, Share
from neuroyard.records.store import DEFAULT_PATH, ResultStore
from neuroyard.reports import renderers, report
from neuroyard.tasks import make
from neuroyard.tasks.registry import parse_task, task_class

DEFAULT_EVOLVER = "neat"  # the best reference evolver on the quick suite
QUICK_SUITE = ("xor-v2",)
DEFAULT_RUNS = 10


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # one line, no usage dump
        raise NeuroyardError(f"{self.prog}: {message}")


def _number(kind: type = int, minimum: float = 0, zero_is_none: bool = False):
    """An argparse type: a finite number of ``kind`` (int: a whole number) of at least
    ``minimum``; with ``zero_is_none``, 0 stands for "no limit" and gives None."""
    noun = "a whole number" if kind is int else "a number"

    def parse(text: str) -> Any:
        try:
            value = kind(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected {noun}, got {text!r}") from None
        if not minimum <= value < float("inf"):
            lowest = "0 (no limit)" if zero_is_none else str(minimum)
            raise argparse.ArgumentTypeError(f"must be at least {lowest}, got {text}")
        return None if zero_is_none and value == 0 else value

    return parse


_positive, _seed = _number(minimum=1), _number()


def _level(text: str) -> float:
    """An argparse type: a significance level, a number strictly between 0 and 1."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None
    if not 0 < value < 1:
        raise argparse.ArgumentTypeError(f"must lie strictly between 0 and 1, got {text}")
    return value


def _share(text: str) -> Share:
    """An argparse type: K/N, job K of N."""
    try:
        return Share.parse(text)
    except ValueError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


def _assignment(text: str) -> tuple[str, Any]:
    """KEY=VALUE with VALUE parsed as JSON when it is valid JSON (numbers, true/false), else a string."""
    key, sep, raw = text.partition("=")
    if not sep or not key:
        raise argparse.ArgumentTypeError(f"expected KEY=VALUE, got {text!r}")
    try:
        value = json.loads(raw)
    except json.JSONDecodeError:
        value = raw
    return key.strip(), value


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="neuroyard", description="Benchmark neuroevolution algorithms honestly.")
    sub = p.add_subparsers(dest="command", required=True, parser_class=_Parser)

    listing.add_parsers(sub, _assignment)

    r = sub.add_parser("run", help="run a campaign into a results store")
    r.add_argument(
        "--evolver",
        action="append",
        help=f"evolver name or module:attr (default {DEFAULT_EVOLVER})",
    )
    r.add_argument(
        "--task", action="append", help=f"task id, repeatable (default {', '.join(QUICK_SUITE)})"
    )
    r.add_argument("--runs", type=_positive, default=DEFAULT_RUNS, help="runs per evolver and task")
    r.add_argument("--seed", type=_seed, default=1, help="campaign seed")
    r.add_argument("--budget", type=_positive, help="evaluations per run (default: the task's)")
    r.add_argument("--store", type=Path, default=DEFAULT_PATH, help="results store file")
    r.add_argument("--config", type=Path, help="evolver configuration TOML file")
    r.add_argument(
        "--param",
        type=_assignment,
        action="append",
        default=[],
        metavar="[EVOLVER:]KEY=VALUE",
        help="evolver option; with EVOLVER: for that evolver only, else for every evolver "
        "of the campaign that has it",
    )
    r.add_argument(
        "--setting",
        type=_assignment,
        action="append",
        default=[],
        metavar="[TASK:]KEY=VALUE",
        help="task setting; with TASK: for that task only, else for every task of the "
        "campaign that has it",
    )
    r.add_argument("--workers", type=_positive, default=1, help="parallel worker processes")
    r.add_argument(
        "--share",
        type=_share,
        default=WHOLE,
        metavar="K/N",
        help="run only share K of N of the campaign (batch job K of N; see `neuroyard merge`)",
    )
    r.add_argument(
        "--time-limit",
        type=_number(float, zero_is_none=True),
        default=DEFAULT_TIME_LIMIT,
        metavar="SECONDS",
        help=f"most seconds one evolver call may take (default {DEFAULT_TIME_LIMIT:g}; 0: none)",
    )
    r.add_argument(
        "--memory-limit",
        type=_number(int, zero_is_none=True),
        default=DEFAULT_MEMORY_LIMIT_MB,
        metavar="MB",
        help="most megabytes a run may add to its worker process "
        f"(default {DEFAULT_MEMORY_LIMIT_MB}; 0: none)",
    )
    r.add_argument(
        "--max-batch",
        type=_positive,
        default=MAX_BATCH,
        metavar="N",
        help=f"most networks one ask() may return (default {MAX_BATCH:,})",
    )
    r.add_argument(
        "--in-process",
        action="store_true",
        help="run in this process, one run at a time, with no time or memory limit (debugging)",
    )
    r.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        help="run on the Dask cluster whose scheduler is at ADDRESS (tcp://HOST:PORT); "
        "the workers need neuroyard installed",
    )
    r.add_argument(
        "--cluster",
        choices=("local",),
        help="local: start a Dask cluster of --workers processes on this machine (loopback "
        "only) and run on it",
    )
    r.add_argument("--quiet", action="store_true", help="no progress bar and no report")

    rp = sub.add_parser("report", help="summarise the runs in a store")
    rp.add_argument(
        "--store",
        type=Path,
        action="append",
        help=f"results store; repeat it to report several together (default {DEFAULT_PATH})",
    )
    rp.add_argument(
        "--format", default="text", help="text, markdown, json, html or an installed renderer"
    )
    rp.add_argument(
        "-o", "--output", type=Path, metavar="FILE", help="write the report to FILE, not stdout"
    )

    e = sub.add_parser("export", help="write every run record, one JSON object per line")
    e.add_argument("--store", type=Path, default=DEFAULT_PATH)
    e.add_argument("--format", choices=("jsonl",), required=True)

    ev = sub.add_parser("evaluate", help="evaluate a network file on a task")
    ev.add_argument("network", type=Path, help="network JSON file")
    ev.add_argument("--task", required=True)
    ev.add_argument("--setting", type=_assignment, action="append", default=[], metavar="KEY=VALUE")

    replay.add_parser(sub, _positive)
    merge_command.add_parser(sub)
    compare_command.add_parser(sub, _level)
    gate.add_parsers(sub, _positive, _number, _level)
    return p


def _plan(args: argparse.Namespace) -> CampaignPlan:
    config: dict[str, Any] = read_config(args.config) if args.config else {}
    names = args.evolver or [DEFAULT_EVOLVER]
    tables = {name: option_table(load_factory(name)) for name in names}
    params = distribute(args.param, tables, "--param")
    evolvers = [EvolverSpec(name, {**config, **params[name]}) for name in names]
    for spec in evolvers:  # fail before any run: bad configuration
        spec.build()
    given = {text: parse_task(text) for text in args.task or QUICK_SUITE}  # id or FORM:VALUE
    task_tables = {text: task_class(task_id).option_table() for text, (task_id, _) in given.items()}
    settings = distribute(args.setting, task_tables, "--setting")
    tasks = [
        TaskChoice(task_id, {**form, **settings[text]}) for text, (task_id, form) in given.items()
    ]
    for task in tasks:
        make(task.id, **task.settings)
    return CampaignPlan(evolvers, tasks, args.runs, args.seed, args.budget)


def _executor(args: argparse.Namespace, limits: Limits) -> Executor:
    """The executor ``run``'s options ask for: in this process, on a Dask cluster (an
    existing scheduler's or a local one), or the pool of supervised worker processes."""
    chosen = [
        name
        for name, given in (
            ("--in-process", args.in_process),
            ("--scheduler", args.scheduler),
            ("--cluster", args.cluster),
        )
        if given
    ]
    if len(chosen) > 1:
        raise NeuroyardError(f"run: {' and '.join(chosen)} exclude each other; give one")
    if args.in_process:
        return make_executor("in-process", args.workers, limits)
    if args.scheduler:
        return make_executor("dask", args.workers, limits, scheduler=args.scheduler)
    if args.cluster:
        return make_executor("dask", args.workers, limits)
    return make_executor("pool", args.workers, limits)


def _cmd_run(args: argparse.Namespace) -> None:
    plan = _plan(args)
    limits = Limits(args.time_limit, args.memory_limit, args.max_batch)
    executor = _executor(args, limits)  # before the store: a cluster that fails writes nothing
    try:
        opened = ResultStore(args.store)
    except BaseException:
        executor.close()
        raise
    with opened as store:
        outcome = execute(plan, store, executor, progress=not args.quiet, share=args.share)
        if outcome.internal_errors:
            raise InternalError(
                f"{outcome.internal_errors} run(s) stopped on an internal error and were not "
                "stored (they run again when the campaign resumes)",
                outcome.crash_log,
            )
        if args.quiet:
            return
        wanted = {(e.name, e.config_hash) for e in plan.evolvers}
        tasks = {t.id for t in plan.tasks}
        records = [
            r
            for r in store.records(with_log=False)
            if (r.evolver, r.config_hash) in wanted and r.task in tasks
        ]
    print(f"{outcome.done} runs done, {outcome.skipped} already in {args.store}")
    print(renderers.render(report.build(records), "text"))


def _cmd_report(args: argparse.Namespace) -> None:
    renderers.check_format(args.format)  # before the store is opened
    stores = args.store or [DEFAULT_PATH]
    check_output(args.output, stores)
    records = {}  # by run key: a run stored in several of the stores counts once
    for path in stores:
        with ResultStore(path, write=False) as store:
            for record in store.records(with_log=renderers.needs_logs(args.format)):
                records.setdefault(record_key(record), record)
    rows = report.build(records.values())
    write_output(renderers.render(rows, args.format), args.output)


def _cmd_export(args: argparse.Namespace) -> None:
    with ResultStore(args.store, write=False) as store:
        for record in store.records():
            sys.stdout.write(jsonsafe.dumps(report.export_record(record), sort_keys=True) + "\n")


def _cmd_evaluate(args: argparse.Namespace) -> None:
    task_id, form = parse_task(args.task)
    task = make(task_id, **form, **dict(args.setting))
    network = replay.network_from_file(args.network)
    validate(network, task.spec.inputs, task.spec.outputs, where=f"network file {args.network}")
    compiled = compile_network(network)
    spec = task.spec
    raw = task.evaluate(compiled)
    try:
        (result,), non_finite_fitness = bound_fitness(
            [raw], spec.id, spec.min_fitness, spec.max_fitness, generation=0
        )
    except RunFault as fault:
        raise RuntimeError(str(fault)) from None  # the task broke its own bounds: a bug
    check = task.success_test(compiled, result)
    print(
        jsonsafe.dumps(
            {
                "task": spec.id,
                "fitness": result.fitness,
                "fitness_bounds": [spec.min_fitness, spec.max_fitness],
                "non_finite_output": bool(non_finite_fitness),
                "solved": check.solved,
                "details": dict(check.details),
                "hidden_nodes": network.hidden_nodes,
                "connections": network.enabled_connections,
            }
        )
    )


COMMANDS = {
    "tasks": listing.tasks_command,
    "evolvers": listing.evolvers_command,
    "run": _cmd_run,
    "report": _cmd_report,
    "export": _cmd_export,
    "evaluate": _cmd_evaluate,
    "replay": replay.command,
    "compare": compare_command.command,
    "merge": merge_command.command,
    **gate.COMMANDS,
}


class InternalError(Exception):
    """A fault of neuroyard itself, reported with the crash log that holds its traceback."""

    def __init__(self, message: str, crash_log: Path | None) -> None:
        super().__init__(message)
        self.crash_log = crash_log


def _internal(message: str, crash_log: Path | None) -> int:
    where = f"traceback in {crash_log}" if crash_log else "no crash log could be written"
    print(f"neuroyard: internal error: {message} ({where})", file=sys.stderr)
    return 3


def main(argv: Sequence[str] | None = None) -> int:
    try:
        args = build_parser().parse_args(argv)
        status = COMMANDS[args.command](args)
    except NeuroyardError as exc:
        print(f"neuroyard: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("neuroyard: interrupted; finished runs are kept in the store", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
    except InternalError as exc:
        return _internal(str(exc), exc.crash_log)
    except Exception as exc:  # a bug: one line and a crash log, unless debugging
        if os.environ.get("NEUROYARD_DEBUG"):
            raise
        log = crashlog.write(traceback.format_exc())
        return _internal(f"{type(exc).__name__}: {exc}", log)
    return status or 0


if __name__ == "__main__":
    sys.exit(main())
