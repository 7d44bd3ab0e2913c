"""Certification of a tick-quantised schedule on the reference model.

The schedule exactly as the firmware runs it (event times in whole ticks) is simulated on the
high-fidelity finite-volume model. Its smallest log reduction over every cell at removal (or
after the credited carry-over) gives the margin. A schedule that falls short is repaired by
extending the done time, tick by tick (doubling, then bisection), and the repaired schedule
is simulated again in full; the recorded margin always comes from a simulation of the exact
schedule that is emitted.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from obvert.plan.schedule import Schedule, phases_for
from obvert.problem.model import Case
from obvert.thermal.reference import simulate


class CertificationError(RuntimeError):
    """A schedule could not be made to pass on the reference model."""


@dataclass(frozen=True)
class Verdict:
    """Reference-model outcome of one schedule.

    Attributes
    ----------
    min_log_reduction : float
        Smallest log reduction over the slab when it counts, log10.
    min_temp_at_removal_c : float
        Coldest point of the slab at removal, degC.
    passed : bool
        Both the log-reduction target and the temperature rule (if any) are met.
    """

    min_log_reduction: float
    min_temp_at_removal_c: float
    passed: bool


@dataclass(frozen=True)
class Certificate:
    """A certified schedule.

    Attributes
    ----------
    schedule : Schedule
        The schedule to emit (event times are whole ticks), s.
    verdict : Verdict
        Its reference-model outcome.
    extension_s : float
        How much the done time was extended beyond the planned one, s.
    margin_log : float
        ``verdict.min_log_reduction`` minus the target, log10.
    """

    schedule: Schedule
    verdict: Verdict
    extension_s: float
    margin_log: float


def judge(case: Case, schedule: Schedule) -> Verdict:
    """Simulate ``schedule`` on the reference model and check the requirement."""
    req = case.requirement
    phases = phases_for(schedule, case.env, rest_s=req.rest_s)
    res = simulate(
        case.table, case.thickness_m, case.start_temp_c, phases, case.lethality, case.settings
    )
    lr = float(np.min(res.log_reduction[-1]))
    if req.rest_s > 0.0:
        removal_row = int(np.nonzero(res.phase_index == len(phases) - 2)[0][-1])
    else:
        removal_row = len(res.t_s) - 1
    t_min = float(np.min(res.temp_c[removal_row]))
    ok = lr >= req.log_reduction and (req.min_temp_c is None or t_min >= req.min_temp_c)
    return Verdict(lr, t_min, bool(ok))


def judge_all(cases: Sequence[Case], schedule: Schedule) -> Verdict:
    """The worst verdict of ``schedule`` over several scenarios (all must pass)."""
    verdicts = [judge(c, schedule) for c in cases]
    return Verdict(
        min(v.min_log_reduction for v in verdicts),
        min(v.min_temp_at_removal_c for v in verdicts),
        all(v.passed for v in verdicts),
    )


def certify(
    case: Case | Sequence[Case], schedule: Schedule, tick_s: float, max_extension: float = 1.0
) -> Certificate:
    """Certify ``schedule`` (ticks) on the reference model, extending done if needed.

    Parameters
    ----------
    case : Case or sequence of Case
        Food, appliance, target and reference settings; with several (the tolerance
        scenarios of one node) the schedule must pass in every one.
    schedule : Schedule
        Event times that are whole multiples of ``tick_s``, s.
    tick_s : float
        Firmware tick, s.
    max_extension : float
        Largest extension tried, as a fraction of the planned cook time, -.

    Raises
    ------
    CertificationError
        No extension up to ``max_extension`` passes.
    """
    cases = (case,) if isinstance(case, Case) else tuple(case)
    first = cases[0]
    planned = schedule.done_s
    done_ticks = round(planned / tick_s)
    verdict = judge_all(cases, schedule)
    if verdict.passed:
        return Certificate(
            schedule, verdict, 0.0, verdict.min_log_reduction - first.requirement.log_reduction
        )
    limit = done_ticks + max(1, math.ceil(max_extension * done_ticks))
    lo, step, hi = done_ticks, 1, None
    while hi is None:
        trial = min(done_ticks + step, limit)
        v = judge_all(cases, schedule.with_done(trial * tick_s))
        if v.passed:
            hi, verdict = trial, v
        elif trial >= limit:
            raise CertificationError(
                f"thickness {first.thickness_m * 1e3:g} mm, start {first.start_temp_c:g} degC: "
                f"the schedule still misses the target after extending done from {planned:.1f} s "
                f"to {trial * tick_s:.1f} s (smallest log reduction {v.min_log_reduction:.3g}, "
                f"coldest point at removal {v.min_temp_at_removal_c:.1f} degC)"
            )
        else:
            lo, step = trial, step * 2
    while hi - lo > 1:
        mid = (lo + hi) // 2
        v = judge_all(cases, schedule.with_done(mid * tick_s))
        if v.passed:
            hi, verdict = mid, v
        else:
            lo = mid
    fixed = schedule.with_done(hi * tick_s)
    return Certificate(
        fixed,
        verdict,
        fixed.done_s - planned,
        verdict.min_log_reduction - first.requirement.log_reduction,
    )
