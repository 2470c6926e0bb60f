"""``neuroyard merge``: the stores of a campaign's shares (batch jobs) into one store
(:mod:`neuroyard.records.merge`)."""

from __future__ import annotations

import argparse

from neuroyard.records.merge import merge


def command(args: argparse.Namespace) -> None:
    """Merge, then say what the output store holds."""
    result = merge(args.out, args.stores)
    shares = ", ".join(str(s) for s in result.shares)
    held = f"{result.held} runs"
    if result.planned is not None:
        held = f"{result.held} of the plan's {result.planned} runs"
    print(
        f"{args.out}: {result.added} runs added, {result.present} already there; it holds "
        f"{held} (plan {result.plan_hash}, shares {shares})"
    )
