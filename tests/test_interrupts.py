"""A Ctrl-C that Python drops inside a callback is recorded and not printed as "ignored";
other exceptions Python drops are reported as before (Python's documented behaviour of
``sys.unraisablehook``: an exception raised in ``__del__`` or a garbage-collector callback
is passed to the hook, whose default prints "Exception ignored in")."""

from __future__ import annotations

import subprocess
import sys

SCRIPT = """
import gc
from neuroyard.core import interrupts
interrupts.quiet_dropped()

class Raises:
    def __init__(self, exc):
        self.exc = exc
    def __del__(self):
        raise self.exc

interrupts.PRESSED.set()  # as raise_and_record does
Raises(KeyboardInterrupt())
Raises(ValueError("a real fault"))
gc.collect()
print("went on")
"""


def test_a_recorded_ctrl_c_dropped_in_a_callback_is_not_printed_and_other_faults_are():
    done = subprocess.run([sys.executable, "-c", SCRIPT], capture_output=True, text=True)
    assert done.returncode == 0 and done.stdout == "went on\n"
    assert "KeyboardInterrupt" not in done.stderr
    assert "Exception ignored in" in done.stderr and "ValueError: a real fault" in done.stderr
