"""The neuroyard task suite. Importing this package registers the built-in tasks."""

from . import (
    gym_task,  # noqa: F401  (registers gym-env-v1, the form gym:ENV_ID)
    logic,  # noqa: F401  (registers xor-v2, parity-v2)
    maze,  # noqa: F401  (registers maze-open-v1, maze-medium-v1, maze-hard-v3)
    pole,  # noqa: F401
)
from .base import Metric, SuccessCheck, Task, TaskSpec
from .registry import declared_metrics, make, register, retired, specs, task_ids

__all__ = [
    "Metric",
    "SuccessCheck",
    "Task",
    "TaskSpec",
    "declared_metrics",
    "make",
    "register",
    "retired",
    "specs",
    "task_ids",
]
