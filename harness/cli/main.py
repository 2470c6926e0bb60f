"""The ``neuroyard`` command line: parses arguments, calls the library, prints. No logic here.

Each subcommand imports only what it uses: the parsers (:mod:`.parser`) load nothing of
the library, and the module that runs a subcommand is imported once it is chosen.

Exit status: 0 done; 2 an error the user can fix (bad option, file, task, evolver
configuration, a store that cannot be written): one line ``neuroyard: error: ...`` on
stderr; 3 an internal error (a fault of neuroyard itself): one line naming the crash log
that holds the traceback; 130 interrupted by Ctrl-C (finished runs are kept); 1 from
``check`` when it found a regression.
"""

from __future__ import annotations

import importlib
import os
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path

from neuroyard.cli.parser import build_parser
from neuroyard.core import interrupts
from neuroyard.core.errors import NeuroyardError
from neuroyard.execution import crashlog


def _internal(message: str, crash_log: Path | None) -> int:
    """Print the one line of an internal error (the first line of ``message``: the crash
    log holds all of it) and give its exit status."""
    where = f"traceback in {crash_log}" if crash_log else "no crash log could be written"
    first = message.strip().splitlines()[0] if message.strip() else "(no message)"
    print(f"neuroyard: internal error: {first} ({where})", file=sys.stderr)
    return 3


def _interrupted() -> int:
    print("neuroyard: interrupted; finished runs are kept in the store", file=sys.stderr)
    return 130


def main(argv: Sequence[str] | None = None) -> int:
    try:
        args = build_parser().parse_args(argv)
        module, _, function = args.command.partition(":")
        command = getattr(importlib.import_module(f"neuroyard.cli.{module}"), function)
        status = command(args)
    except NeuroyardError as exc:  # one line, whatever line breaks the message holds
        print(f"neuroyard: error: {' '.join(str(exc).splitlines())}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        return _interrupted()
    except BrokenPipeError:
        return 0
    except crashlog.InternalError as exc:
        return _internal(str(exc), exc.crash_log)
    except Exception as exc:  # a bug: one line and a crash log, unless debugging
        if interrupts.PRESSED.is_set():  # what a Ctrl-C turned into (an import's error)
            return _interrupted()
        if os.environ.get("NEUROYARD_DEBUG"):
            raise
        log = crashlog.write(traceback.format_exc())
        return _internal(f"{type(exc).__name__}: {exc}", log)
    return status or 0


if __name__ == "__main__":
    sys.exit(main())
