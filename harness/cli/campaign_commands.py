"""``neuroyard run``, ``report``, ``export`` and ``evaluate``: parse, call the library, print."""

from __future__ import annotations

import argparse
import sys
from contextlib import nullcontext
from pathlib import Path
from typing import IO, Any

from neuroyard.api import campaigns
from neuroyard.api.results import open_store
from neuroyard.cli.output import check_output, write_output
from neuroyard.core import jsonsafe
from neuroyard.core.defaults import DEFAULT_EVOLVER, DEFAULT_PATH, QUICK_SUITE
from neuroyard.core.errors import NeuroyardError
from neuroyard.execution.evaluation import evaluate
from neuroyard.reports import renderers, report, tables


def _executor(args: argparse.Namespace) -> tuple[str, str | None]:
    """(executor, scheduler) that ``run``'s options ask for."""
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
        return "in-process", None
    if args.scheduler or args.cluster:
        return "dask", args.scheduler
    return "pool", None


def run_command(args: argparse.Namespace) -> None:
    executor, scheduler = _executor(args)
    results = campaigns.run(
        args.evolver or DEFAULT_EVOLVER,
        args.task or QUICK_SUITE,
        args.runs,
        args.seed,
        store=args.store,
        budget=args.budget,
        workers=args.workers,
        settings=dict(args.setting),
        params=dict(args.param),
        config=args.config,
        executor=executor,
        scheduler=scheduler,
        time_limit=args.time_limit,
        memory_limit=args.memory_limit,
        max_batch=args.max_batch,
        run_limit=args.run_limit,
        share=args.share,
        progress=not args.quiet,
    )
    if args.quiet:
        return
    print(f"{results.done} runs done, {results.skipped} already in {args.store}")
    print(results.report("text"))


def report_command(args: argparse.Namespace) -> None:
    renderers.check_format(args.format)  # before the store is opened
    stores = args.store or [DEFAULT_PATH]
    check_output(args.output, stores)
    write_output(open_store(*stores).report(args.format), args.output)


def export_command(args: argparse.Namespace) -> None:
    if args.format == "jsonl" and args.table != "runs":
        raise NeuroyardError("export --table: only with --format csv (JSON lines hold whole runs)")
    check_output(args.output, [args.store])
    results = open_store(args.store)
    with _opened(args.output) as out:
        if args.format == "jsonl":
            for record in results.records(with_log=True):
                out.write(jsonsafe.dumps(report.export_record(record), sort_keys=True) + "\n")
        elif args.table == "runs":
            tables.write_csv(tables.runs_rows(results.records()), "runs", out)
        else:
            records = results.records(with_log=True)
            tables.write_csv(tables.generations_rows(records), "generations", out)


def _opened(output: Path | None) -> Any:
    """Standard output, or ``output`` opened for writing (a one-line error when it cannot
    be)."""
    if output is None:
        return nullcontext(sys.stdout)
    try:
        handle: IO[str] = output.open("w", encoding="utf-8", newline="")
    except OSError as exc:
        raise NeuroyardError(f"export output {output}: cannot write it ({exc.strerror})") from None
    return handle


def evaluate_command(args: argparse.Namespace) -> None:
    result = evaluate(args.network, args.task, dict(args.setting))
    print(jsonsafe.dumps(result.to_json()))
