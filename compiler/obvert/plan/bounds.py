"""Physical limits of cook time for a node, on the reduced model.

- **Fast-flip limit**: flipping infinitely often with no time in the air, each face sees the
  time average of plate contact and air: ``h = (h_p + h_a)/2`` towards
  ``T = (h_p T_p + h_a T_a)/(h_p + h_a)``. Radiation loss to the air is left out, so the limit
  stays a lower bound of every flip schedule.
- **Two-sided contact limit**: both faces on plates at the plate temperature with the plate
  contact coefficient, from loading to done (a clamshell closed from the start).

Both are minimum-time problems with no events, solved with the same planner as schedules.
"""

from __future__ import annotations

from obvert.plan.collocation import Grid
from obvert.plan.ocp import PlanError, Planner, Requirement
from obvert.plan.schedule import Surroundings
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel

BOUND_NAMES = ("fast_flip_limit", "two_sided_contact")


def averaged_face(plate: FaceBC, air: FaceBC) -> FaceBC:
    """Time-averaged face condition of infinitely fast flipping (radiation left out)."""
    h = 0.5 * (plate.h + air.h)
    t_inf = (plate.h * plate.t_inf_c + air.h * air.t_inf_c) / (plate.h + air.h)
    return FaceBC(h, t_inf)


class BoundPlanners:
    """Planners of the two cook-time limits for one slab thickness.

    Parameters
    ----------
    model : SpectralModel
        Reduced model of the slab.
    env : Surroundings
        The appliance's plate and air.
    requirement : Requirement
        Safety target at removal.
    grid : Grid
        Collocation elements per phase.
    """

    def __init__(
        self, model: SpectralModel, env: Surroundings, requirement: Requirement, grid: Grid
    ) -> None:
        avg = averaged_face(env.plate, env.air)
        self._planners = {
            "fast_flip_limit": Planner(
                model, Surroundings(avg, avg, None, 0.0), requirement, 0.0, grid
            ),
            "two_sided_contact": Planner(
                model, Surroundings(env.plate, env.plate, None, 0.0), requirement, 0.0, grid
            ),
        }

    def solve(self, start_temp_c: float) -> dict[str, float | None]:
        """Each limit's minimum cook time, s (None where the solve failed)."""
        out: dict[str, float | None] = {}
        for name in BOUND_NAMES:
            try:
                out[name] = self._planners[name].solve((), start_temp_c).cook_time_s
            except PlanError:
                out[name] = None
        return out
