"""The command line's arguments: every subcommand's parser, built without loading the
library (only :mod:`argparse`, the defaults of :mod:`neuroyard.core.defaults` and the small
:mod:`neuroyard.records.shares`), so ``neuroyard --help`` answers at once.

Each subcommand's parser records in ``command`` the function that runs it, as
``"module:function"`` under :mod:`neuroyard.cli`; :mod:`.main` imports that module only
when the subcommand runs.
"""

from __future__ import annotations

import argparse
import json
import textwrap
from pathlib import Path
from typing import Any, NoReturn

from neuroyard.core import jsonsafe
from neuroyard.core.defaults import (
    COMPARE_ALPHA,
    CONNECTIONS_RISE,
    DEFAULT_EVOLVER,
    DEFAULT_MEMORY_LIMIT_MB,
    DEFAULT_PATH,
    DEFAULT_RUN_LIMIT,
    DEFAULT_RUNS,
    DEFAULT_SEED,
    DEFAULT_TIME_LIMIT,
    DEFAULT_WORKERS,
    EVALUATIONS_RISE,
    GATE_ALPHA,
    MAX_BATCH,
    MAX_MEMORY_LIMIT_MB,
    MAX_SEED,
    QUICK_SUITE,
    REPLAY_STEPS,
    REPLAY_TASK,
    SPEED_DROP,
    SUCCESS_DROP,
)
from neuroyard.core.errors import NeuroyardError
from neuroyard.records.shares import WHOLE, Share

FORMATS_HELP = "text, markdown, json, html or an installed renderer's name (default text)"
TASK_FORMS = (
    "a registered task id (see `neuroyard tasks`), gym:ENV_ID (a Gymnasium environment) "
    "or maze:PATH (a maze file)"
)
EVOLVER_FORMS = (
    "an installed evolver's name (see `neuroyard evolvers`), module:attr (a class or factory "
    "in an importable module) or process:COMMAND (a program of any language speaking the "
    "JSON-lines protocol)"
)
# the guides, in the source tree, by what they cover
GUIDES = {
    "README.md": "start here: the quick start, an evolver of your own, a tour of the commands",
    "harness/README.md": "the commands, the results store, clusters and batch jobs, the "
    "regression gate, trusting a baseline",
    "tasks/README.md": "every task: inputs, outputs, criteria, settings and sources",
    "reference/README.md": "the reference evolvers, the published figures, evolvers in other "
    "languages",
    "results/README.md": "the committed studies and where they stand",
}


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> NoReturn:  # one line, no usage dump
        raise NeuroyardError(f"{self.prog}: {message}")


def _number(
    kind: type = int, minimum: float = 0, zero_is_none: bool = False, maximum: int = MAX_SEED
) -> Any:
    """An argparse type: a finite number of ``kind`` (int: a whole number, at most
    ``maximum``, by default 2**63 - 1, what a 64-bit integer holds) of at least ``minimum``;
    with ``zero_is_none``, 0 stands for "no limit" and gives None."""
    noun = "a whole number" if kind is int else "a number"

    def parse(text: str) -> Any:
        try:
            value = kind(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"expected {noun}, got {text!r}") from None
        if not minimum <= value < float("inf"):
            lowest = "0 (no limit)" if zero_is_none else str(minimum)
            raise argparse.ArgumentTypeError(f"must be at least {lowest}, got {text}")
        if kind is int and value > maximum:
            raise argparse.ArgumentTypeError(f"must be at most {maximum}, got {text}")
        return None if zero_is_none and value == 0 else value

    return parse


_positive, _seed, _percent = _number(minimum=1), _number(), _number(float)


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
    """KEY=VALUE with VALUE parsed as JSON when it is valid JSON (numbers, true/false), else a
    string; JSON nested more than 100 levels (:data:`~neuroyard.core.jsonsafe.MAX_DEPTH`) is
    refused."""
    key, sep, raw = text.partition("=")
    if not sep or not key:
        raise argparse.ArgumentTypeError(f"expected KEY=VALUE, got {text!r}")
    try:
        value = jsonsafe.parse(raw)
    except json.JSONDecodeError:
        value = raw
    except jsonsafe.TooDeep as exc:
        raise argparse.ArgumentTypeError(f"{key.strip()}: {exc}") from None
    return key.strip(), value


def _guides(*names: str) -> str:
    """The epilog of a help page: the guides ``names`` (all of them when none is given),
    each with what it covers."""
    chosen = names or tuple(GUIDES)
    width = max(len(name) for name in chosen) + 4
    lines = [
        textwrap.fill(GUIDES[name], 79, initial_indent=f"  {name:<{width - 2}}",
                      subsequent_indent=" " * width)
        for name in chosen
    ]  # fmt: skip
    return "guides (in the neuroyard source tree):\n" + "\n".join(lines)


def build_parser() -> argparse.ArgumentParser:
    """The whole command line."""
    p = _Parser(
        prog="neuroyard",
        description="Benchmark neuroevolution algorithms honestly.",
        epilog=_guides(),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    sub = p.add_subparsers(dest="command_name", required=True, parser_class=_Parser)
    for add in (_tasks, _evolvers, _run, _report, _export, _evaluate, _replay, _merge):
        add(sub)
    for add in (_compare, _baseline, _check, _verify):
        add(sub)
    return p


def _subcommand(sub: Any, name: str, summary: str, *guides: str) -> argparse.ArgumentParser:
    """Subcommand ``name``: ``summary`` in the command list and atop its help page, the
    ``guides`` (all when none is given) below it."""
    return sub.add_parser(
        name,
        help=summary,
        description=summary[0].upper() + summary[1:] + ".",
        epilog=_guides(*guides),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )


def _command(parser: argparse.ArgumentParser, target: str) -> None:
    parser.set_defaults(command=target)


def _format(parser: argparse.ArgumentParser) -> None:
    """The ``--format`` of the listings."""
    parser.add_argument(
        "--format", choices=("text", "json"), default="text", help="text or json (default text)"
    )


def _output(parser: argparse.ArgumentParser, what: str) -> None:
    parser.add_argument(
        "-o", "--output", type=Path, metavar="FILE", help=f"write {what} to FILE (default stdout)"
    )


def _store(parser: argparse.ArgumentParser, what: str = "results store file") -> None:
    parser.add_argument(
        "--store", type=Path, default=DEFAULT_PATH, help=f"{what} (default {DEFAULT_PATH})"
    )


def _tasks(sub: Any) -> None:
    t = _subcommand(
        sub,
        "tasks",
        "list the tasks with interface, criteria, settings, sources",
        "tasks/README.md",
    )
    t.add_argument(
        "task",
        nargs="?",
        metavar="TASK",
        help=f"one task to show with every setting and its source: {TASK_FORMS} (default: "
        "list every task)",
    )
    t.add_argument(
        "--setting", type=_assignment, action="append", default=[], metavar="KEY=VALUE",
        help="a setting of the one task (its spec and facts under that setting); repeatable",
    )  # fmt: skip
    _format(t)
    _command(t, "listing:tasks_command")


def _evolvers(sub: Any) -> None:
    e = _subcommand(
        sub,
        "evolvers",
        "list the installed evolvers, or one with its options",
        "reference/README.md",
    )
    e.add_argument(
        "evolver",
        nargs="?",
        metavar="EVOLVER",
        help="one evolver to show with every option and its source: an installed evolver's "
        "name or module:attr (default: list the installed ones)",
    )
    _format(e)
    _command(e, "listing:evolvers_command")


def _run(sub: Any) -> None:
    r = _subcommand(sub, "run", "run a campaign into a results store")
    r.add_argument(
        "--evolver",
        action="append",
        help=f"{EVOLVER_FORMS}; repeatable (default {DEFAULT_EVOLVER})",
    )
    r.add_argument(
        "--task",
        action="append",
        help=f"{TASK_FORMS}; repeatable (default {', '.join(QUICK_SUITE)})",
    )
    r.add_argument(
        "--runs",
        type=_positive,
        default=DEFAULT_RUNS,
        help=f"runs per evolver and task (default {DEFAULT_RUNS})",
    )
    r.add_argument(
        "--seed",
        type=_seed,
        default=DEFAULT_SEED,
        help=f"campaign seed, 0 to 2**63 - 1 (default {DEFAULT_SEED})",
    )
    r.add_argument("--budget", type=_positive, help="evaluations per run (default: the task's)")
    _store(r)
    r.add_argument("--config", type=Path, help="evolver configuration TOML file (default: none)")
    r.add_argument(
        "--param",
        type=_assignment,
        action="append",
        default=[],
        metavar="[EVOLVER:]KEY=VALUE",
        help="evolver option; with EVOLVER: for that evolver only, else for every evolver "
        "of the campaign that has it; repeatable (default: the evolver's own)",
    )
    r.add_argument(
        "--setting",
        type=_assignment,
        action="append",
        default=[],
        metavar="[TASK:]KEY=VALUE",
        help="task setting; with TASK: for that task only, else for every task of the "
        "campaign that has it; repeatable (default: the task's own)",
    )
    r.add_argument(
        "--workers",
        type=_positive,
        default=DEFAULT_WORKERS,
        help=f"parallel worker processes (default {DEFAULT_WORKERS})",
    )
    r.add_argument(
        "--share",
        type=_share,
        default=WHOLE,
        metavar="K/N",
        help="run only share K of N of the campaign, as batch job K of N (see `neuroyard "
        f"merge`; default {WHOLE}: the whole campaign)",
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
        type=_number(int, zero_is_none=True, maximum=MAX_MEMORY_LIMIT_MB),
        default=DEFAULT_MEMORY_LIMIT_MB,
        metavar="MB",
        help="most megabytes a run may add to its worker process "
        f"(default {DEFAULT_MEMORY_LIMIT_MB}; 0: none; at most {MAX_MEMORY_LIMIT_MB:,})",
    )
    r.add_argument(
        "--run-limit",
        type=_number(float, zero_is_none=True),
        default=DEFAULT_RUN_LIMIT,
        metavar="SECONDS",
        help="most seconds of wall time one run may take, evaluation included "
        f"(default {DEFAULT_RUN_LIMIT:g}; 0: none)",
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
        "the workers need neuroyard installed (default: worker processes on this machine)",
    )
    r.add_argument(
        "--cluster",
        choices=("local",),
        help="local: start a Dask cluster of --workers processes on this machine (loopback "
        "only) and run on it (default: no cluster)",
    )
    r.add_argument("--quiet", action="store_true", help="no progress bar and no report")
    _command(r, "campaign_commands:run_command")


def _report(sub: Any) -> None:
    rp = _subcommand(sub, "report", "summarise the runs in a store", "harness/README.md")
    rp.add_argument(
        "--store",
        type=Path,
        action="append",
        help=f"results store; repeat it to report several together (default {DEFAULT_PATH})",
    )
    rp.add_argument("--format", default="text", help=FORMATS_HELP)
    _output(rp, "the report")
    _command(rp, "campaign_commands:report_command")


def _export(sub: Any) -> None:
    e = _subcommand(
        sub,
        "export",
        "write the runs: JSON lines (every record), or CSV tables (one row per run or "
        "per generation)",
        "harness/README.md",
    )
    _store(e)
    e.add_argument(
        "--format",
        choices=("jsonl", "csv"),
        required=True,
        help="jsonl: one JSON record per run, its log included; csv: the table --table names",
    )
    e.add_argument(
        "--table",
        choices=("runs", "generations"),
        default="runs",
        help="with --format csv: one row per run or per generation (default runs)",
    )
    _output(e, "the runs")
    _command(e, "campaign_commands:export_command")


def _evaluate(sub: Any) -> None:
    ev = _subcommand(
        sub, "evaluate", "evaluate a network file on a task", "harness/README.md", "tasks/README.md"
    )
    ev.add_argument("network", type=Path, help="network JSON file")
    ev.add_argument("--task", required=True, help=TASK_FORMS)
    ev.add_argument(
        "--setting", type=_assignment, action="append", default=[], metavar="KEY=VALUE",
        help="a setting of the task; repeatable (default: the task's own)",
    )  # fmt: skip
    _command(ev, "campaign_commands:evaluate_command")


def _replay(sub: Any) -> None:
    p = _subcommand(
        sub, "replay", "run a network on its task and draw the episode", "harness/README.md"
    )
    source = p.add_mutually_exclusive_group(required=True)
    source.add_argument(
        "--store", type=Path, help="results store; replays the best network of --run"
    )
    source.add_argument("--network", type=Path, help="network JSON file")
    p.add_argument(
        "--task",
        help=f"{TASK_FORMS} (default: with --store, the store's one task; with --network, "
        f"{REPLAY_TASK})",
    )
    p.add_argument("--run", type=int, default=0, help="run index in the store (default 0)")
    p.add_argument(
        "--evolver",
        metavar="EVOLVER[@HASH]",
        help="whose run, where the store holds several evolver configurations on the task "
        "(HASH: the start of the configuration hash the report prints; default: the only one)",
    )
    p.add_argument(
        "--steps",
        type=_positive,
        default=REPLAY_STEPS,
        help=f"most steps to replay (default {REPLAY_STEPS})",
    )
    p.add_argument("--out", type=Path, required=True, help="image file to write (PNG)")
    _command(p, "replay:command")


def _merge(sub: Any) -> None:
    p = _subcommand(
        sub,
        "merge",
        "combine the stores of one campaign's shares (batch jobs) into one",
        "harness/README.md",
    )
    p.add_argument("out", type=Path, metavar="OUT", help="store to merge into (created if missing)")
    p.add_argument("stores", type=Path, nargs="+", metavar="STORE", help="stores to merge")
    _command(p, "merge_command:command")


def _compare(sub: Any) -> None:
    p = _subcommand(
        sub, "compare", "is B better than A? two configurations side by side", "harness/README.md"
    )
    _store(p, "store of side A (and B)")
    p.add_argument(
        "--store-b", type=Path, metavar="STORE", help="store of side B (default: --store)"
    )
    p.add_argument("--a", metavar="EVOLVER[@HASH]", help="side A (default: the only one there)")
    p.add_argument("--b", metavar="EVOLVER[@HASH]", help="side B (default: the only one there)")
    p.add_argument(
        "--alpha",
        type=_level,
        default=COMPARE_ALPHA,
        help=f"significance level, between 0 and 1 (default {COMPARE_ALPHA:g})",
    )
    p.add_argument("--format", default="text", help=FORMATS_HELP)
    _output(p, "the comparison")
    _command(p, "compare_command:command")


def _baseline(sub: Any) -> None:
    b = _subcommand(
        sub, "baseline", "write a store's runs and figures as a baseline file", "harness/README.md"
    )
    _store(b)
    b.add_argument(
        "-o", "--output", type=Path, required=True, metavar="FILE", help="baseline file to write"
    )
    _command(b, "gate:baseline_command")


def _check(sub: Any) -> None:
    c = _subcommand(
        sub,
        "check",
        "compare a fresh campaign with a baseline; exit 1 on a regression",
        "harness/README.md",
    )
    c.add_argument(
        "--baseline",
        type=Path,
        required=True,
        help="baseline file (`neuroyard baseline` writes it)",
    )
    c.add_argument(
        "--store",
        type=Path,
        help="read the fresh runs from this store instead of making them (default: run the "
        "baseline's campaign afresh)",
    )
    c.add_argument(
        "--workers",
        type=_positive,
        default=DEFAULT_WORKERS,
        help=f"parallel worker processes (default {DEFAULT_WORKERS})",
    )
    c.add_argument(
        "--alpha",
        type=_level,
        default=GATE_ALPHA,
        help=f"significance level after Holm's correction (default {GATE_ALPHA:g})",
    )
    c.add_argument(
        "--success-drop",
        type=_percent,
        default=100 * SUCCESS_DROP,
        metavar="POINTS",
        help="smallest drop of the success rate that matters, in percentage points (default %(default)g)",
    )
    c.add_argument(
        "--evaluations-rise",
        type=_percent,
        default=100 * EVALUATIONS_RISE,
        metavar="PERCENT",
        help="smallest rise of the median evaluations to solve that matters (default %(default)g%%)",
    )
    c.add_argument(
        "--connections-rise",
        type=_percent,
        default=100 * CONNECTIONS_RISE,
        metavar="PERCENT",
        help="smallest rise of the median connections of solutions that matters (default %(default)g%%)",
    )
    c.add_argument(
        "--speed-drop",
        type=_percent,
        default=100 * SPEED_DROP,
        metavar="PERCENT",
        help="smallest drop of the median relative speed that matters (default %(default)g%%)",
    )
    c.add_argument(
        "--trust-evolvers",
        action="store_true",
        help="run the evolvers the baseline names even when they are not installed ones "
        "(module:attr imports and calls a module, process:COMMAND runs a command): only for "
        "a file you have read and trust",
    )
    _command(c, "gate:check_command")


def _verify(sub: Any) -> None:
    v = _subcommand(
        sub,
        "verify",
        "re-check every solved run of a store; exit 1 when a claim does not hold",
        "harness/README.md",
    )
    _store(v)
    _command(v, "verify_command:command")
