"""Screening engine: populations in, encounters (TCA, miss, RIC, speeds) out."""

from .encounter import Encounter
from .engine import (Cancelled, ScreeningRequest, ScreeningResult, Task, TaskResult, gather,
                     plan_tasks, run_task, screen)
from .ric import ric_basis, to_ric
from .volume import DEFAULT_RIC_KM, Volume

__all__ = [
    "Encounter", "ScreeningRequest", "ScreeningResult", "Task", "TaskResult", "Cancelled",
    "plan_tasks", "run_task", "screen", "gather", "ric_basis", "to_ric", "Volume",
    "DEFAULT_RIC_KM",
]
