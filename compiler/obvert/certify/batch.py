"""Judge many schedules at once on the reference model (batched :func:`certify.judge`).

Each schedule is turned into phases exactly as :func:`obvert.certify.node.judge` does
(``phases_for`` with the credited carry-over as a last rest phase), and all of them are simulated
by :func:`obvert.thermal.batch.simulate_many`, grouped by food, kinetics and discretisation.
The verdict follows the same rule: the smallest log reduction at the end (after the rest, if
any) must reach the target, and the coldest point at removal (the end of the phase before the
rest phase, or the last phase without a rest) must reach ``min_temp_c`` if that rule is set.
"""

from __future__ import annotations

import multiprocessing
import re
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor

from obvert.certify.node import Verdict
from obvert.plan.schedule import Schedule, phases_for
from obvert.problem.model import Case
from obvert.thermal.batch import CookCase, ReferenceSummary, simulate_many


def _cook(case: Case, schedule: Schedule) -> CookCase:
    """The reference run that :func:`certify.judge` makes for ``schedule``."""
    rest = case.requirement.rest_s
    phases = phases_for(schedule, case.env, rest_s=rest)
    removal = len(phases) - 2 if rest > 0.0 else len(phases) - 1
    return CookCase(case.thickness_m, case.start_temp_c, phases, max(removal, 0))


def _verdict(case: Case, summary: ReferenceSummary) -> Verdict:
    req = case.requirement
    lr, t_min = summary.min_log_reduction, summary.min_temp_at_removal_c
    ok = lr >= req.log_reduction and (req.min_temp_c is None or t_min >= req.min_temp_c)
    return Verdict(lr, t_min, bool(ok))


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
        In input order; the figures agree with :func:`certify.judge` to within the Newton
        tolerance of the reference solver.

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
    groups: dict[tuple[int, object, object], list[int]] = {}
    for i, case in enumerate(cases):
        groups.setdefault((id(case.table), case.lethality, case.settings), []).append(i)
    verdicts: list[Verdict | None] = [None] * len(cases)
    for members in groups.values():
        first = cases[members[0]]
        cooks = [_cook(cases[i], schedules[i]) for i in members]
        try:
            summaries = simulate_many(first.table, cooks, first.lethality, first.settings)
        except ValueError as err:  # name the caller's index, not the one within the group
            at = re.match(r"cases\[(\d+)\]", str(err))
            if at is None:
                raise
            j = members[int(at.group(1))]
            raise ValueError(f"cases[{j}] (with schedules[{j}]){str(err)[at.end() :]}") from None
        for i, summary in zip(members, summaries, strict=True):
            verdicts[i] = _verdict(cases[i], summary)
    return [v for v in verdicts if v is not None]


def _parallel(cases: list[Case], schedules: list[Schedule], jobs: int) -> list[Verdict]:
    """:func:`judge_many` over ``jobs`` processes (interleaved shares, order kept)."""
    n = min(jobs, len(cases))
    ctx = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=n, mp_context=ctx) as pool:
        parts = list(
            pool.map(
                judge_many, [cases[k::n] for k in range(n)], [schedules[k::n] for k in range(n)]
            )
        )
    out: list[Verdict] = [parts[0][0]] * len(cases)
    for k, part in enumerate(parts):
        out[k::n] = part
    return out
