"""``neuroyard baseline`` and ``neuroyard check``: a regression gate for CI.

``baseline --store PATH -o FILE`` writes what the store's runs were and what they gave
(:mod:`neuroyard.reports.baseline`: the file's format); ``check --baseline FILE`` makes the
same runs again, or reads them from ``--store PATH``, and compares them with the baseline
(:func:`neuroyard.api.judging.check`). Before making runs, ``check`` prints what it will
run (:func:`neuroyard.api.judging.check_plan`), and it refuses a file naming evolvers other
than installed ones unless given ``--trust-evolvers``. Exit status of ``check``: 0 nothing
regressed, 1 a regression (one line each), 2 bad input (one line naming the file and what
is wrong, an untrusted file included).
"""

from __future__ import annotations

import argparse

from neuroyard.api.judging import baseline, check, check_plan
from neuroyard.reports.gate import Thresholds


def baseline_command(args: argparse.Namespace) -> None:
    made = baseline(args.store, args.output)
    print(
        f"baseline of {len(made.groups)} group(s), {made.runs} runs, from {args.store} "
        f"written to {args.output}"
    )


def check_command(args: argparse.Namespace) -> int:
    thresholds = Thresholds(
        args.success_drop / 100,
        args.evaluations_rise / 100,
        args.connections_rise / 100,
        args.speed_drop / 100,
    )
    if args.store is None:
        for evolver in check_plan(args.baseline, args.trust_evolvers):
            print(evolver.line(), flush=True)
    result = check(
        args.baseline,
        args.store,
        args.workers,
        args.alpha,
        thresholds,
        trust_evolvers=args.trust_evolvers,
    )
    print("\n".join(result.lines()))
    return 1 if result.regressions else 0
