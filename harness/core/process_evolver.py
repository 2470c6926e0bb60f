"""An evolver in any language: a command run as a child process that speaks the protocol.

``--evolver process:COMMAND`` runs COMMAND (split as a shell would, with :func:`shlex.split`,
but not run by a shell) and talks to it through the JSON-lines protocol of
:mod:`.protocol`; a package may also register a name for a fixed command (a factory in
the entry-point group ``neuroyard.evolvers`` that returns a :class:`ProcessEvolver`).

The child is started by ``start`` and ends after ``stop``. It breaks the contract, and its
run fails with the reason, when it replies with a line that is not JSON, a message of an
unknown type, the wrong reply, a message that fails the schema or an invalid network;
when it reports an error; when it exits or closes its output; when it does not take a
request or sends no reply within ``reply_timeout`` seconds; when it writes to stdout while no reply is due (found
before the next request and after ``stop``); and when it does not exit with status 0
within ``reply_timeout`` seconds of ``stop``. The child is then killed and reaped, and the
reason ends with the last lines it wrote to stderr. Options other than ``reply_timeout``
are the child's own: they go to it in the ``start`` message, and its ``ready`` reply
returns its effective settings, which :meth:`ProcessEvolver.settings` gives the harness.
"""

from __future__ import annotations

import math
import os
import shlex
import shutil
import weakref
from collections.abc import Callable, Sequence
from typing import Any, NoReturn

from neuroyard.core import jsonsafe, protocol
from neuroyard.core.child_process import (
    EXIT_WAIT,
    MAX_LINE_BYTES,
    ChildGone,
    ChildStalled,
    LineChild,
    LineTooLong,
    exit_words,
)
from neuroyard.core.errors import EvolverError, ProcessEvolverError
from neuroyard.core.evolver import Evaluation, Outcome, Problem
from neuroyard.core.network import Network

PREFIX = "process:"
# s to wait for one reply (ours: far above a generation of the examples, a few ms, and well
# under the harness's 60 s limit per evolver call, so that a stall is named as such)
DEFAULT_REPLY_TIMEOUT = 10.0


class ProcessEvolver:
    """The evolver contract for a child process running ``command`` (program and arguments).

    ``reply_timeout``: seconds the child may take for each reply (and to exit after
    ``stop``), > 0. Every other option is sent to the child in ``start``. A command whose
    program cannot be found, a bad ``reply_timeout`` or an option that is not JSON is a
    ``ValueError`` naming it."""

    def __init__(
        self,
        command: Sequence[str],
        reply_timeout: float = DEFAULT_REPLY_TIMEOUT,
        **options: Any,
    ) -> None:
        self.command = list(command)
        if not self.command or not all(isinstance(part, str) for part in self.command):
            raise ValueError(f"command must be a program and its arguments, got {command!r}")
        if _program(self.command[0]) is None:
            raise ValueError(f"command: program {self.command[0]!r} not found or not executable")
        if (
            isinstance(reply_timeout, bool)
            or not isinstance(reply_timeout, int | float)
            or not math.isfinite(reply_timeout)
            or reply_timeout <= 0
        ):
            raise ValueError(
                f"reply_timeout must be a number of seconds > 0, got {reply_timeout!r}"
            )
        for key, value in options.items():
            try:
                jsonsafe.dumps(value)
            except (TypeError, ValueError):
                raise ValueError(f"option {key!r}: {value!r} is not a JSON value") from None
        self.reply_timeout = float(reply_timeout)
        self.options = options
        self.child: LineChild | None = None
        self.asked = 0  # ask requests sent: the generation of the next one
        self._settings: dict[str, Any] = {}

    # --- the evolver contract --------------------------------------------------------

    def start(self, problem: Problem, seed: int) -> None:
        try:
            self.child = LineChild(self.command)
        except OSError as exc:
            raise ProcessEvolverError(
                f"cannot start the evolver process {shlex.join(self.command)!r}: {exc.strerror}"
            ) from None
        weakref.finalize(self, self.child.end)  # never left running by a harness fault
        self.inputs, self.outputs = problem.inputs, problem.outputs
        reply = self._exchange("start", protocol.start_message(problem, seed, self.options))
        self._settings = reply.get("settings", {})

    def settings(self) -> dict[str, Any]:
        """The child's effective settings from its ``ready`` reply (empty when it sent none)."""
        return dict(self._settings)

    def ask(self) -> list[Network]:
        reply = self._exchange("ask", protocol.ask_message(self.asked))
        self.asked += 1
        try:
            return protocol.read_networks(reply, self.inputs, self.outputs)
        except ProcessEvolverError as exc:
            self._fail(str(exc))

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        self._exchange("tell", protocol.tell_message(self.asked - 1, evaluations))

    def stats(self) -> dict[str, Any]:
        return self._exchange("stats", protocol.stats_message(self.asked - 1))["values"]

    def stop(self, outcome: Outcome) -> None:
        """Send ``stop``; the child must exit with status 0 within ``reply_timeout``. Nothing
        to do when the child was already ended (a fault failed the run)."""
        child = self.child
        if child is None or child.ended:
            return
        self._send("stop", protocol.stop_message(outcome))
        status = child.finish(self.reply_timeout)
        stray = child.unread()
        if status is None:
            self._fail(
                f"the evolver process did not exit within {self.reply_timeout:g} s "
                "(reply_timeout) after stop"
            )
        if stray:
            self._fail(
                f"the evolver process wrote to stdout after stop (no reply was due): "
                f"{protocol.quote(stray)}"
            )
        child.end()
        if status != 0:
            self._fail(f"the evolver process {exit_words(status)} after stop")

    # --- one exchange ----------------------------------------------------------------

    def _exchange(self, request: str, line: str) -> dict[str, Any]:
        """Send ``line`` (a ``request``) and return the child's checked reply; any fault
        ends the child and raises :class:`ProcessEvolverError`."""
        self._send(request, line)
        assert self.child is not None
        try:
            reply = self.child.receive(self.reply_timeout)
        except ChildGone as gone:
            self._gone(request, gone.partial)
        except ChildStalled:
            self._fail(
                f"the evolver process sent no reply to {request} within "
                f"{self.reply_timeout:g} s (reply_timeout)"
            )
        except LineTooLong:
            self._fail(
                f"the evolver process replied to {request} with more than "
                f"{MAX_LINE_BYTES // 2**20} MiB without a line end"
            )
        try:
            return protocol.read_reply(reply, request)
        except ProcessEvolverError as exc:
            self._fail(str(exc))

    def _send(self, request: str, line: str) -> None:
        """Write ``line`` (a ``request``) once the child is quiet; any fault ends it."""
        child = self.child
        assert child is not None and not child.ended, "the evolver process is not running"
        self._quiet_before(request)
        try:
            child.send(line, self.reply_timeout)
        except ChildGone:
            self._gone(request, b"")
        except ChildStalled:
            self._fail(
                f"the evolver process did not read {request} within {self.reply_timeout:g} s "
                "(reply_timeout)"
            )

    def _gone(self, request: str, partial: bytes) -> NoReturn:
        """The child closed its pipes: fail with how it ended and what it left unfinished."""
        assert self.child is not None
        status = self.child.end(EXIT_WAIT)
        when = f"replying to {request}" if request in protocol.REPLY_TO else request
        left = f" (its last output, without a line end: {protocol.quote(partial)})"
        self._fail(
            f"the evolver process {exit_words(status)} before {when}" + (left if partial else "")
        )

    def _quiet_before(self, request: str) -> None:
        """Fail when the child wrote to stdout since its last reply (nothing was due)."""
        assert self.child is not None
        stray = self.child.unread()
        if stray:
            self._fail(
                f"the evolver process wrote to stdout out of turn (no reply was due) before "
                f"{request}: {protocol.quote(stray)}"
            )

    def _fail(self, reason: str) -> NoReturn:
        """End the child and raise ``reason`` with the last lines of its stderr."""
        assert self.child is not None
        self.child.end()
        tail = self.child.stderr_tail()
        if tail:
            reason += "; its stderr ended with: " + " | ".join(repr(line) for line in tail)
        raise ProcessEvolverError(reason)


def _program(name: str) -> str | None:
    """The path of program ``name`` (a path, or a name looked up on PATH), or None."""
    if os.sep in name:
        return name if os.path.isfile(name) and os.access(name, os.X_OK) else None
    return shutil.which(name)


def command_factory(command: str) -> Callable[..., ProcessEvolver]:
    """The factory of ``process:COMMAND``: a :class:`ProcessEvolver` of ``command`` split
    with :func:`shlex.split`; a command that cannot be split, or is empty, is an
    :class:`~.errors.EvolverError`."""
    try:
        argv = shlex.split(command)
    except ValueError as exc:
        raise EvolverError(
            f"evolver {PREFIX + command!r}: cannot split the command: {exc}"
        ) from None
    if not argv:
        raise EvolverError(f"evolver {PREFIX!r} needs a command after the colon")

    def factory(**options: Any) -> ProcessEvolver:
        return ProcessEvolver(argv, **options)

    factory.__doc__ = (
        f"The program {shlex.join(argv)!r} run as a child process, speaking the JSON-lines "
        "evolver protocol; its options are its own, and reply_timeout the harness's."
    )
    return factory
