"""``neuroyard compare``: two configurations side by side (:func:`neuroyard.api.judging.compare`)."""

from __future__ import annotations

import argparse

from neuroyard.api.judging import compare
from neuroyard.cli.output import check_output, write_output
from neuroyard.core.errors import NeuroyardError
from neuroyard.reports import renderers


def command(args: argparse.Namespace) -> None:
    """Read both sides, compare them, print the comparison."""
    renderers.check_format(args.format, "comparison")
    if args.store_b is None and args.a is None and args.b is None:
        raise NeuroyardError("compare: name the sides with --a and --b, or give --store-b")
    check_output(args.output, [args.store, args.store_b or args.store])
    result = compare(
        args.a,
        args.b,
        store=args.store,
        store_b=args.store_b,
        alpha=args.alpha,
        with_logs=renderers.needs_logs(args.format, "comparison"),
    )
    write_output(renderers.render(result, args.format, "comparison"), args.output)
