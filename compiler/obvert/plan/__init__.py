"""Planning on the reduced model: schedules, the minimum-time planner, ticks, limits."""

from obvert.plan.ocp import Member, PlanError, Planner, PlanResult
from obvert.plan.quantize import quantize
from obvert.plan.schedule import Event, Schedule, phases_for

__all__ = [
    "Event",
    "Member",
    "PlanError",
    "PlanResult",
    "Planner",
    "Schedule",
    "phases_for",
    "quantize",
]
