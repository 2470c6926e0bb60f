"""A child process that exchanges lines on its stdin and stdout, every wait with a deadline.

Writes and reads go through the raw pipe descriptors with ``select``, so a child that stops
reading or writing cannot hang the harness past the deadline given. A thread drains the
child's stderr and keeps its last :data:`STDERR_LINES` lines (each cut to
:data:`LINE_CHARS` characters) for the reason of a failure; the rest is dropped, so a child
that writes much to stderr neither blocks nor fills memory. The child stays in the
caller's process group, so ending a supervised worker's group ends it too.
"""

from __future__ import annotations

import contextlib
import os
import select
import signal
import subprocess
import threading
import time
from collections import deque
from collections.abc import Sequence

STDERR_LINES = 5  # last stderr lines kept for a failure reason (ours)
LINE_CHARS = 200  # characters kept of each stderr line (ours)
MAX_LINE_BYTES = 256 * 2**20  # a reply longer than this is refused (ours: 10,000 networks
#                               of 1,000 connections each fit)
CHUNK = 1 << 20  # bytes read at a time
EXIT_WAIT = 1.0  # s to wait for the exit status of a child that closed its stdout (ours)


class ChildGone(Exception):
    """The child closed its stdout or stdin (it exited, most likely); ``partial`` holds
    output it wrote without a line end."""

    def __init__(self, partial: bytes = b"") -> None:
        super().__init__("the child process closed its pipes")
        self.partial = partial


class ChildStalled(Exception):
    """The child did not read or write within the deadline."""


class LineTooLong(Exception):
    """The child wrote more than :data:`MAX_LINE_BYTES` without a line end."""


def exit_words(status: int | None) -> str:
    """How a process ended, from its exit status (negative: the signal that killed it):
    ``exited with status 1``, ``was killed by signal 9 (SIGKILL)``."""
    if status is not None and status < 0:
        try:
            name = signal.Signals(-status).name
        except ValueError:
            name = "an unknown signal"
        return f"was killed by signal {-status} ({name})"
    return f"exited with status {status}"


class LineChild:
    """``argv`` started with pipes on stdin, stdout and stderr (raises ``OSError`` when it
    cannot be started)."""

    def __init__(self, argv: Sequence[str]) -> None:
        self.process = subprocess.Popen(
            list(argv),
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            bufsize=0,
        )
        assert self.process.stdin and self.process.stdout and self.process.stderr
        self._in = self.process.stdin.fileno()
        self._out = self.process.stdout.fileno()
        os.set_blocking(self._in, False)
        self._buffer = bytearray()
        self._scanned = 0  # bytes of the buffer known to hold no line end
        self._tail: deque[str] = deque(maxlen=STDERR_LINES)
        self._drain = threading.Thread(target=self._read_stderr, daemon=True)
        self._drain.start()
        self.ended = False

    def _read_stderr(self) -> None:
        stream = self.process.stderr
        assert stream is not None
        partial = b""
        with contextlib.suppress(OSError, ValueError):
            while chunk := stream.read(CHUNK):
                *lines, partial = (partial + chunk).split(b"\n")
                self._tail.extend(_cut(line) for line in lines)
                partial = partial[: LINE_CHARS * 4]
        if partial:
            self._tail.append(_cut(partial))
        with contextlib.suppress(OSError):
            stream.close()

    def stderr_tail(self) -> list[str]:
        """The last lines the child wrote to stderr (complete once it has ended)."""
        return list(self._tail)

    def send(self, line: str, timeout: float) -> None:
        """Write ``line`` and a line end; :class:`ChildStalled` when the child does not take
        it within ``timeout`` seconds, :class:`ChildGone` when its stdin is closed."""
        data = memoryview((line + "\n").encode())
        deadline = time.monotonic() + timeout
        while data:
            _, writable, _ = select.select([], [self._in], [], _left(deadline))
            if not writable:
                raise ChildStalled
            try:
                data = data[os.write(self._in, data) :]
            except BlockingIOError:
                continue
            except (BrokenPipeError, OSError):
                raise ChildGone from None

    def receive(self, timeout: float) -> bytes:
        """The next line the child writes, without its line end; :class:`ChildStalled`
        when none is complete within ``timeout`` seconds, :class:`ChildGone` at the end of
        its output, :class:`LineTooLong` past :data:`MAX_LINE_BYTES`."""
        deadline = time.monotonic() + timeout
        while (end := self._buffer.find(b"\n", self._scanned)) < 0:
            self._scanned = len(self._buffer)
            if self._scanned > MAX_LINE_BYTES:
                raise LineTooLong
            readable, _, _ = select.select([self._out], [], [], _left(deadline))
            if not readable:
                raise ChildStalled
            chunk = os.read(self._out, CHUNK)
            if not chunk:
                raise ChildGone(bytes(self._buffer))
            self._buffer += chunk
        line = bytes(self._buffer[:end])
        del self._buffer[: end + 1]
        self._scanned = 0
        return line

    def unread(self) -> bytes:
        """Output the child wrote that nobody asked for yet: what is left after the last
        line received and what is waiting on the pipe now (b"" for none)."""
        readable, _, _ = select.select([self._out], [], [], 0)
        if readable:
            with contextlib.suppress(OSError):
                self._buffer += os.read(self._out, CHUNK)
        data = bytes(self._buffer)
        self._buffer.clear()
        self._scanned = 0
        return data

    def finish(self, timeout: float) -> int | None:
        """Close the child's stdin and wait up to ``timeout`` seconds for it to exit; its
        exit status, or None when it is still running."""
        with contextlib.suppress(OSError):
            self.process.stdin.close()  # type: ignore[union-attr]
        try:
            return self.process.wait(timeout)
        except subprocess.TimeoutExpired:
            return None

    def end(self, grace: float = 0.0) -> int | None:
        """Wait up to ``grace`` seconds for the child to exit, then kill it; reap it, close
        the pipes and let the stderr thread finish. Its exit status (idempotent)."""
        if not self.ended:
            self.ended = True
            with contextlib.suppress(subprocess.TimeoutExpired):
                self.process.wait(grace)
            with contextlib.suppress(ProcessLookupError):
                self.process.kill()
            self.process.wait()
            for stream in (self.process.stdin, self.process.stdout):
                with contextlib.suppress(OSError):
                    stream.close()  # type: ignore[union-attr]
            self._drain.join(timeout=EXIT_WAIT)  # a grandchild may still hold stderr open
        return self.process.returncode


def _left(deadline: float) -> float:
    return max(0.0, deadline - time.monotonic())


def _cut(line: bytes) -> str:
    return line.decode("utf-8", "replace").rstrip("\r")[:LINE_CHARS]
