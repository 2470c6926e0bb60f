"""Record the traffic of the evolver protocol: ``python protocol_recorder.py LOG COMMAND...``.

Runs COMMAND with pipes, passes every line the harness writes to it and every line it
writes back, and appends each to LOG as a JSON object ``{"from": "harness" | "evolver",
"line": TEXT}``. Not part of the package: tests/test_process_evolver.py runs the example
evolvers through it and validates what they said against the protocol's schema.
"""

from __future__ import annotations

import json
import subprocess
import sys
import threading


def main() -> int:
    log_path, *command = sys.argv[1:]
    child = subprocess.Popen(command, stdin=subprocess.PIPE, stdout=subprocess.PIPE, text=True)
    lock = threading.Lock()
    with open(log_path, "a", encoding="utf-8") as log:

        def note(side: str, line: str) -> None:
            with lock:
                log.write(json.dumps({"from": side, "line": line.rstrip("\n")}) + "\n")
                log.flush()

        def replies() -> None:
            for line in child.stdout:
                note("evolver", line)
                sys.stdout.write(line)
                sys.stdout.flush()

        reader = threading.Thread(target=replies)
        reader.start()
        for line in sys.stdin:
            note("harness", line)
            try:
                child.stdin.write(line)
                child.stdin.flush()
            except BrokenPipeError:
                break
        child.stdin.close()
        reader.join()
    return child.wait()


if __name__ == "__main__":
    sys.exit(main())
