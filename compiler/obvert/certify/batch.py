"""Judge many schedules on the reference model, here or over several processes.

Every verdict is :func:`obvert.certify.node.judge` itself, so nodes and cells are certified
by the same code: one reference run (the one compiled kernel) per schedule, the food's whole
history kept for the time-at-temperature rule.
"""

from __future__ import annotations

from collections.abc import Sequence

from obvert.certify.node import Verdict, judge
from obvert.plan.schedule import Schedule
from obvert.problem.model import Case
from obvert.workers import run_tasks


def judge_many(
    cases: Sequence[Case], schedules: Sequence[Schedule], jobs: int = 1
) -> list[Verdict]:
    """Simulate ``schedules[i]`` for ``cases[i]`` on the reference model and judge each.

    With ``jobs > 1`` the runs are split into ``jobs`` interleaved shares simulated in
    separate processes; every run is the same computation either way (each case's result
    does not depend on which cases share its batch), so the verdicts are identical.

    Parameters
    ----------
    cases : sequence of Case
        Food, appliance, target and reference settings of each schedule.
    schedules : sequence of Schedule
        Event times, s; one per case.

    Returns
    -------
    list of Verdict
        In input order, each exactly :func:`obvert.certify.node.judge` of its case.

    Raises
    ------
    ValueError
        If the two sequences differ in length, or on invalid input (naming the case).
    """
    cases, schedules = list(cases), list(schedules)
    if len(cases) != len(schedules):
        raise ValueError(
            f"len(schedules) = {len(schedules)} is invalid: must equal len(cases) = {len(cases)}"
        )
    if jobs > 1 and len(cases) > 1:
        return _parallel(cases, schedules, jobs)
    out = []
    for i, (case, schedule) in enumerate(zip(cases, schedules, strict=True)):
        try:
            out.append(judge(case, schedule))
        except ValueError as err:  # name the caller's case
            raise ValueError(f"cases[{i}] (with schedules[{i}]).{err}") from None
    return out


def _parallel(cases: list[Case], schedules: list[Schedule], jobs: int) -> list[Verdict]:
    """:func:`judge_many` over ``jobs`` local workers (interleaved shares, order kept)."""
    n = min(jobs, len(cases))
    tasks = [(cases[k::n], schedules[k::n]) for k in range(n)]
    out: list[Verdict | None] = [None] * len(cases)
    for k, part in run_tasks(judge_many, tasks, jobs=n):
        out[k::n] = part
    return [v for v in out if v is not None]
