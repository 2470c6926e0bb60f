"""The console script's entry point: imports the command line only once Ctrl-C is handled.

Importing the command line loads numpy and numba (about a second); a Ctrl-C in that time
ends the program with the same one line and status 130 as a Ctrl-C later on.
"""

from __future__ import annotations

import sys


def main() -> int:
    try:
        from neuroyard.cli.main import main as run_command_line
    except KeyboardInterrupt:
        print("neuroyard: interrupted", file=sys.stderr)
        return 130
    return run_command_line()
