"""``neuroyard compare``: two configurations side by side (:mod:`neuroyard.harness.reports.compare`)."""

from __future__ import annotations

import argparse
from pathlib import Path
from typing import Any

from neuroyard.harness.core.errors import NeuroyardError
from neuroyard.harness.records.store import DEFAULT_PATH, ResultStore
from neuroyard.harness.reports import compare, comparison_renderers

FORMATS = ("text", "markdown", "json")


def add_parser(sub: Any, level: Any) -> None:
    """Register ``compare`` on the command line's subparsers; ``level`` parses --alpha."""
    p = sub.add_parser("compare", help="is B better than A? two configurations side by side")
    p.add_argument("--store", type=Path, default=DEFAULT_PATH, help="store of side A (and B)")
    p.add_argument("--store-b", type=Path, help="store of side B (default: --store)")
    p.add_argument("--a", metavar="EVOLVER[@HASH]", help="side A (default: the only one there)")
    p.add_argument("--b", metavar="EVOLVER[@HASH]", help="side B (default: the only one there)")
    p.add_argument("--alpha", type=level, default=compare.ALPHA, help="significance level")
    p.add_argument("--format", choices=FORMATS, default="text")


def command(args: argparse.Namespace) -> None:
    """Read both sides, compare them, print the comparison."""
    store_b = args.store_b or args.store
    if store_b == args.store and args.a is None and args.b is None:
        raise NeuroyardError("compare: name the sides with --a and --b, or give --store-b")
    a_label, a_runs = _side(args.store, args.a)
    b_label, b_runs = _side(store_b, args.b)
    if store_b != args.store:
        a_label, b_label = f"{a_label} from {args.store}", f"{b_label} from {store_b}"
    result = compare.compare(a_label, a_runs, b_label, b_runs, alpha=args.alpha)
    if args.format == "json":
        print(comparison_renderers.comparison_json(result))
    else:
        print(comparison_renderers.comparison_text(result, args.format))


def _side(path: Path, selector: str | None) -> tuple[str, list]:
    with ResultStore(path, write=False) as store:
        records = list(store.records(with_log=False))
    return compare.select(records, selector, f"results store {path}")
