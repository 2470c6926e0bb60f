"""``neuroyard verify``: do a store's solved claims hold? (:func:`neuroyard.api.judging.verify`)

Prints one line per solved run whose claim does not hold (or cannot be checked here) and a
summary line. Exit status: 0 every solved claim held, 1 some did not, 2 a store that
cannot be read.
"""

from __future__ import annotations

import argparse

from neuroyard.api.judging import verify


def command(args: argparse.Namespace) -> int:
    """Re-check the store's solved runs, print what does not hold and the summary."""
    result = verify(args.store)
    print("\n".join(result.lines()))
    return 0 if result.holds else 1
