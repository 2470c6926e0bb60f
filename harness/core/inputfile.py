"""Reading a file the user gives (a network, a baseline, a configuration, a maze): one
reader, one set of limits, one-line errors.

Every reader of such a file goes through :func:`read_bytes` (and :func:`read_text` for
text, :func:`parse_toml` for TOML), so each refuses the same inputs with the same words:
a file that cannot be read, one larger than :data:`MAX_INPUT_BYTES`, text that is not
UTF-8, and TOML that is not TOML or nests more than :data:`~.jsonsafe.MAX_DEPTH` levels.
The error is the caller's class (a :class:`~.errors.NeuroyardError` subclass of its layer)
and its message starts with ``where`` (``network file PATH``, ``config file PATH``).

The size is checked before reading (``os.stat``) and again by reading at most one byte
more than the cap, since a device such as ``/dev/zero`` or a pipe reports size 0 and never
ends.
"""

from __future__ import annotations

import os
import tomllib
from typing import Any

from neuroyard.core import jsonsafe

MAX_INPUT_BYTES = 64 * 1024 * 1024  # most bytes of one input file (ours: 64 MiB)


def read_bytes(path: str | os.PathLike[str], where: str, error: type[Exception]) -> bytes:
    """The bytes of the file at ``path``, at most :data:`MAX_INPUT_BYTES` of them.

    Raises:
        error: ``{where}: cannot read it (REASON)`` when the file cannot be opened or read
            (missing, a folder, no permission), ``{where}: larger than 64 MiB ...`` when
            it holds more bytes than the cap."""
    try:
        size = os.stat(path).st_size
        data = b""
        if size <= MAX_INPUT_BYTES:  # a device or a pipe says 0: at most the cap + 1 bytes
            with open(path, "rb") as file:
                data = file.read(MAX_INPUT_BYTES + 1)
    except OSError as exc:
        raise error(f"{where}: cannot read it ({exc.strerror or exc})") from None
    if max(size, len(data)) > MAX_INPUT_BYTES:
        raise error(
            f"{where}: larger than {MAX_INPUT_BYTES // 2**20} MiB, the most neuroyard reads "
            "from an input file"
        )
    return data


def read_text(path: str | os.PathLike[str], where: str, error: type[Exception]) -> str:
    """The file at ``path`` as UTF-8 text (see :func:`read_bytes` for the limits).

    Raises:
        error: as :func:`read_bytes`, and ``{where}: not UTF-8 text (byte N: REASON)``."""
    return decode_utf8(read_bytes(path, where, error), where, error)


def decode_utf8(data: bytes, where: str, error: type[Exception]) -> str:
    """``data`` decoded as UTF-8; ``{where}: not UTF-8 text (byte N: REASON)`` as ``error``
    when it is not (N counts from 0)."""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise error(f"{where}: not UTF-8 text (byte {exc.start}: {exc.reason})") from None


def parse_toml(text: str, where: str, error: type[Exception]) -> dict[str, Any]:
    """The TOML document ``text`` (Python's :mod:`tomllib`), nested at most
    :data:`~.jsonsafe.MAX_DEPTH` levels (tomllib reads nesting recursively and raises
    ``RecursionError`` on a deep enough one).

    Raises:
        error: ``{where}: not valid TOML (REASON)``."""
    try:
        document = tomllib.loads(text)
        jsonsafe.check_depth(document)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"{where}: not valid TOML ({exc})") from None
    except RecursionError:
        raise error(f"{where}: not valid TOML ({jsonsafe.TooDeep()})") from None
    except jsonsafe.TooDeep as exc:
        raise error(f"{where}: not valid TOML ({exc})") from None
    return document


def read_toml(path: str | os.PathLike[str], where: str, error: type[Exception]) -> dict[str, Any]:
    """The TOML file at ``path``: :func:`read_text`, then :func:`parse_toml`."""
    return parse_toml(read_text(path, where, error), where, error)
