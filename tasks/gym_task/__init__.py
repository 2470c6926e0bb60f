"""Any Gymnasium environment as a task: ``gym-env-v1``, ``--task gym:ENV_ID`` (:mod:`.task`)."""

from .task import GymEnvTask

__all__ = ["GymEnvTask"]
