"""The console script's entry point: imports the command line only once Ctrl-C is handled.

Importing the command line loads numpy and numba (about a second); a Ctrl-C in that time
ends the program with the same one line and status 130 as a Ctrl-C later on. Every Ctrl-C
is also recorded (:mod:`neuroyard.core.interrupts`), so that one Python drops inside a
callback still stops a campaign.
"""

from __future__ import annotations

import sys

from neuroyard.core import interrupts


def main() -> int:
    interrupts.install(interrupts.raise_and_record)
    interrupts.quiet_dropped()
    try:
        from neuroyard.cli.main import main as run_command_line
    except KeyboardInterrupt:
        print("neuroyard: interrupted", file=sys.stderr)
        return 130
    return run_command_line()
