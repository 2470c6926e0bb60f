"""One network on one task, outside any run: its fitness and its success test.

The same steps as a generation of a run (:mod:`.runner`) for a single network: check it
against the task's interface, compile it, evaluate it once (a non-finite fitness becomes
the task's worst, as in a run), then run the task's success test on it.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from neuroyard.core.batch import compile_network
from neuroyard.core.network import Network, validate
from neuroyard.execution.contract import RunFault
from neuroyard.execution.runner import bound_fitness
from neuroyard.tasks import Task, make
from neuroyard.tasks.registry import parse_task


@dataclass(frozen=True)
class NetworkEvaluation:
    """What one network did on a task.

    Args:
        task: the task id.
        fitness: the fitness of one evaluation (the task's worst when the network's output
            was not finite).
        fitness_bounds: the task's (worst, best) fitness; best None: no upper bound.
        non_finite_output: whether the output was not finite (and the fitness replaced).
        solved: whether the network passed the task's success test.
        details: the success test's details (for the pole tasks the steps balanced and the
            generalization score).
        hidden_nodes: hidden nodes of the network.
        connections: enabled connections of the network.

    Example:
        >>> import neuroyard
        >>> from neuroyard.core.network import fully_connected
        >>> result = neuroyard.evaluate(fully_connected(2, 1), "xor-v2")
        >>> result.task, result.solved, result.connections
        ('xor-v2', False, 3)
    """

    task: str
    fitness: float
    fitness_bounds: tuple[float, float | None]
    non_finite_output: bool
    solved: bool
    details: dict[str, Any] = field(default_factory=dict)
    hidden_nodes: int = 0
    connections: int = 0

    def to_json(self) -> dict[str, Any]:
        """The evaluation as JSON values (``fitness_bounds`` as a list)."""
        return {
            "task": self.task,
            "fitness": self.fitness,
            "fitness_bounds": list(self.fitness_bounds),
            "non_finite_output": self.non_finite_output,
            "solved": self.solved,
            "details": dict(self.details),
            "hidden_nodes": self.hidden_nodes,
            "connections": self.connections,
        }


def evaluate(
    network: Network | str | os.PathLike[str],
    task: str,
    settings: Mapping[str, Any] | None = None,
) -> NetworkEvaluation:
    """Evaluate ``network`` once on ``task`` and run the task's success test on it.

    Args:
        network: the network to evaluate, or the path of a network JSON file (read once
            the task is built, so a bad task is reported first).
        task: a task id, or ``PREFIX:VALUE`` of a registered form (``maze:PATH``).
        settings: task settings (defaults for the rest).

    Returns:
        The :class:`NetworkEvaluation`.

    Raises:
        TaskError: an unknown task or a bad setting.
        NetworkError: a file that cannot be read, or a network that breaks the format or
            does not fit the task's inputs and outputs (the message names the file).

    Example:
        >>> import neuroyard
        >>> from neuroyard.core.network import fully_connected
        >>> neuroyard.evaluate(fully_connected(3, 1), "parity-v2").fitness_bounds
        (0.0, 64.0)
    """
    task_id, form = parse_task(task)
    built = make(task_id, **form, **dict(settings or {}))
    where = "network"
    if not isinstance(network, Network):
        where = f"network file {network}"
        network = Network.from_file(network)
    return evaluate_on(built, network, where)


def evaluate_on(built: Task, network: Network, where: str = "network") -> NetworkEvaluation:
    """Evaluate ``network`` once on the task ``built`` (built with its seed and settings)
    and run the task's success test on it, as :func:`evaluate` does.

    ``where`` names the network at the start of an error message. Raises
    :class:`~neuroyard.core.errors.NetworkError` when the network breaks the format or
    does not fit the task's inputs and outputs; a fitness outside the task's stated bounds
    is a fault of the task (:class:`RuntimeError`)."""
    spec = built.spec
    validate(network, spec.inputs, spec.outputs, where=where)
    compiled = compile_network(network)
    try:
        (result,), non_finite = bound_fitness(
            [built.evaluate(compiled)], spec.id, spec.min_fitness, spec.max_fitness, generation=0
        )
    except RunFault as fault:
        raise RuntimeError(str(fault)) from None  # the task broke its own bounds: a bug
    check = built.success_test(compiled, result)
    return NetworkEvaluation(
        task=spec.id,
        fitness=result.fitness,
        fitness_bounds=(spec.min_fitness, spec.max_fitness),
        non_finite_output=bool(non_finite),
        solved=check.solved,
        details=dict(check.details),
        hidden_nodes=network.hidden_nodes,
        connections=network.enabled_connections,
    )
