"""Where a command's document goes: standard output, or a file given with ``-o``."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from neuroyard.core.errors import NeuroyardError


def check_output(output: Path | None, stores: Sequence[Path]) -> None:
    """Refuse an output file that is one of the results stores read (it would be lost)."""
    if output is None:
        return
    for store in stores:
        if output.resolve() == store.resolve():
            raise NeuroyardError(f"report output {output}: is the results store, not overwritten")


def write_output(text: str, output: Path | None) -> None:
    """Print ``text``, or write it to ``output``; a file that cannot be written is a
    one-line error."""
    if output is None:
        print(text)
        return
    try:
        output.write_text(text + "\n", encoding="utf-8")
    except OSError as exc:
        raise NeuroyardError(
            f"report output {output}: cannot write it ({exc.strerror or exc})"
        ) from None
