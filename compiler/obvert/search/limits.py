"""Physical limits of cook time for a node, each read off one run of the search mesh.

- **Fast-flip limit**: flipping infinitely often with no time in the air, each face sees the
  time average of plate contact and air: ``h = (h_p + h_a)/2`` towards
  ``T = (h_p T_p + h_a T_a)/(h_p + h_a)``. Radiation loss to the air is left out, so the limit
  stays below every flip schedule.
- **Two-sided contact limit**: both faces on plates at the plate temperature with the plate
  contact coefficient, from loading to done (a clamshell closed from the start).

Neither has events, so each is the done time read off one run (the search mesh's, like the
plans they are compared with).
"""

from __future__ import annotations

from dataclasses import replace

from obvert.plan.bounds import BOUND_NAMES, averaged_face
from obvert.problem.model import Case
from obvert.search.events import SearchError, search_events
from obvert.search.readoff import Sequence
from obvert.thermal.boundary import Surroundings


def limits(case: Case, hint_s: float = 0.0) -> dict[str, float | None]:
    """Each limit's cook time for the case, s (None where the target is never reached)."""
    env = case.env
    avg = averaged_face(env.plate, env.air)
    envs = {
        "fast_flip_limit": Surroundings(avg, avg, None, 0.0),
        "two_sided_contact": Surroundings(env.plate, env.plate, None, 0.0),
    }
    out: dict[str, float | None] = {}
    for name in BOUND_NAMES:
        c = replace(case, env=envs[name])
        try:
            out[name] = search_events((c,), Sequence((), 0.0, 0.0), (), hint_s).done_s
        except SearchError:
            out[name] = None
    return out
