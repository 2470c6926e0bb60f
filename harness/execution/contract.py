"""What an evolver's replies must be, checked, with the reason a run fails when they are not.

One place for the rules of the evolver contract's replies, used wherever the evolver runs:
the runner (:mod:`.runner`) for an evolver in the worker's own process (``--in-process``),
and the evolver's own process (:mod:`.evolver_host`), which checks its evolver's replies
with these same functions before it sends them, so that a reason reads the same either way.
The harness checks again what crosses from an evolver's process (:mod:`.isolation`): that
process runs evolver code and is not trusted.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from neuroyard.core import jsonsafe
from neuroyard.core.batch import first_bad
from neuroyard.core.errors import NetworkError
from neuroyard.core.flat import FlatBatch
from neuroyard.core.network import Network


class RunFault(Exception):
    """The evolver broke the contract, or the task gave a fitness outside its stated bounds;
    the message is the recorded reason of the failed run."""


def call_label(call: str, generation: int | None) -> str:
    """``ask() in generation 3``, or the call alone before the first generation."""
    return call if generation is None else f"{call} in generation {generation}"


def checked_batch(batch: Any, generation: int, max_batch: int) -> list[Network]:
    """The evolver's batch as a list of Network; anything else is a :class:`RunFault`."""
    if not isinstance(batch, Sequence) or isinstance(batch, str | bytes):
        raise RunFault(
            f"ask() in generation {generation} returned {type(batch).__name__}, "
            "expected a list of Network"
        )
    if len(batch) == 0:
        raise RunFault(f"ask() returned an empty batch in generation {generation}")
    if len(batch) > max_batch:
        raise RunFault(
            f"ask() returned {len(batch):,} networks in generation {generation}, more than "
            f"the batch limit of {max_batch:,}"
        )
    for k, net in enumerate(batch):
        if not isinstance(net, Network):
            raise RunFault(
                f"candidate {k} of generation {generation} is a {type(net).__name__}, not a Network"
            )
    return list(batch)


def candidate_label(generation: int) -> Any:
    """How a check names network k of ``generation``: ``candidate k of generation g``."""
    return f"candidate {{}} of generation {generation}".format


def flat_batch(
    networks: Sequence[Network], inputs: int, outputs: int, generation: int
) -> FlatBatch:
    """``networks`` (a checked batch) as a :class:`FlatBatch`; a value the arrays cannot
    take, or a name the format does not know, is a :class:`RunFault` ``invalid network:``
    naming the first broken network (the rules the arrays can hold are the compiler's)."""
    flat = FlatBatch.of_networks(networks)
    if flat is None or flat.has_unknown_names:
        try:
            first_bad(networks, inputs, outputs, candidate_label(generation))
        except NetworkError as exc:
            raise RunFault(f"invalid network: {exc}") from None
    assert flat is not None, "check() passed a batch the arrays cannot take"
    return flat


def checked_settings(settings: Any) -> dict[str, Any]:
    """The evolver's ``settings()`` as JSON values; a :class:`RunFault` when it is not a
    mapping or not JSON."""
    if not isinstance(settings, Mapping):
        raise RunFault(f"settings() returned {type(settings).__name__}, expected a mapping")
    try:
        return jsonsafe.loads(jsonsafe.dumps(dict(settings)))
    except (TypeError, ValueError) as exc:
        raise RunFault(f"settings() is not JSON-serialisable: {exc}") from None


def checked_stats(stats: Any, generation: int) -> dict[str, float]:
    """The evolver's ``stats()`` after ``tell()`` of ``generation`` as floats (non-finite
    ones are kept, and written by the JSON rule of :mod:`~neuroyard.core.jsonsafe`); a
    :class:`RunFault` when it is not a mapping of numbers."""
    if not isinstance(stats, Mapping):
        raise RunFault(
            f"stats() in generation {generation} returned {type(stats).__name__}, "
            "expected a mapping"
        )
    out: dict[str, float] = {}
    for key, value in stats.items():
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise RunFault(
                f"stats() in generation {generation}: value {key!r} is {value!r}, expected a number"
            )
        out[str(key)] = float(value)
    return out
