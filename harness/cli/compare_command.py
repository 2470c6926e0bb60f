"""``neuroyard compare``: two configurations side by side (:mod:`neuroyard.reports.compare`)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from neuroyard.cli.output import check_output, write_output
from neuroyard.core.errors import NeuroyardError
from neuroyard.records.store import DEFAULT_PATH, ResultStore
from neuroyard.reports import compare, renderers


def add_parser(sub: Any, level: Any) -> None:
    """Register ``compare`` on the command line's subparsers; ``level`` parses --alpha."""
    p = sub.add_parser("compare", help="is B better than A? two configurations side by side")
    p.add_argument("--store", type=Path, default=DEFAULT_PATH, help="store of side A (and B)")
    p.add_argument("--store-b", type=Path, help="store of side B (default: --store)")
    p.add_argument("--a", metavar="EVOLVER[@HASH]", help="side A (default: the only one there)")
    p.add_argument("--b", metavar="EVOLVER[@HASH]", help="side B (default: the only one there)")
    p.add_argument("--alpha", type=level, default=compare.ALPHA, help="significance level")
    p.add_argument(
        "--format", default="text", help="text, markdown, json, html or an installed renderer"
    )
    p.add_argument("-o", "--output", type=Path, metavar="FILE", help="write to FILE, not stdout")


def command(args: argparse.Namespace) -> None:
    """Read both sides, compare them, print the comparison."""
    renderers.check_format(args.format, "comparison")
    store_b = args.store_b or args.store
    if store_b == args.store and args.a is None and args.b is None:
        raise NeuroyardError("compare: name the sides with --a and --b, or give --store-b")
    check_output(args.output, [args.store, store_b])
    logs = renderers.needs_logs(args.format, "comparison")
    a_label, a_runs = _side(args.store, args.a, logs)
    b_label, b_runs = _side(store_b, args.b, logs)
    if store_b != args.store:
        a_label, b_label = f"{a_label} from {args.store}", f"{b_label} from {store_b}"
    result = compare.compare(a_label, a_runs, b_label, b_runs, alpha=args.alpha)
    write_output(renderers.render(result, args.format, "comparison"), args.output)


def _side(path: Path, selector: str | None, logs: bool) -> tuple[str, list]:
    with ResultStore(path, write=False) as store:
        records = list(store.records(with_log=logs))
    return compare.select(records, selector, f"results store {path}")
