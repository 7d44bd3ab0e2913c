"""Whether a cook would pass if it ended at each time step of one run.

One reference run of a schedule with the food left on the plate answers, row by row, what
removing it at that row would give: the log reduction and the coldest point are read there,
and the time at temperature accumulated so far. Certification reads the earliest passing done
time off such a run; the event-time search (:mod:`obvert.search`) reads a continuous done time
off the same rows. Both read the criteria from here, so they cannot drift apart.
"""

from __future__ import annotations

import math

import numpy as np

from obvert.food.criteria import HoldRule, time_above_by_step
from obvert.plan.schedule import Schedule, phases_for
from obvert.problem.model import Case
from obvert.thermal.reference import EarlyEnd, food_frame, simulate, simulate_minima

#: Slack of a row whose time-at-temperature rule is not yet met (a pass/fail rule, no degree).
HOLD_UNMET_SLACK = -1.0

#: Kelvin of removal temperature counted as one unit of slack (one log10 of reduction).
TEMP_SLACK_SCALE_K = 10.0


def slack_rows(
    case: Case, long: Schedule, end_at_pass_after_s: float | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Times and slack of every row of one run of ``long`` on ``case``'s mesh.

    Parameters
    ----------
    case : Case
        Food, appliance, requirement and mesh (the reference's, or a coarser one).
    long : Schedule
        The schedule run; its done time is the end of the run, s.
    end_at_pass_after_s : float, optional
        End the run at the first row at or after this time whose slack is >= 0, s (the
        rows before it are unchanged; ignored under a time-at-temperature rule, which the
        kernel does not track). None: run to the end of ``long``.

    Returns
    -------
    t_s : ndarray
        Time of each row, s.
    slack : ndarray
        Per row, the smallest of: log10 of the smallest log reduction over the target,
        the coldest point less the removal floor in units of
        :data:`TEMP_SLACK_SCALE_K`, and :data:`HOLD_UNMET_SLACK` where the
        time-at-temperature rule is not met yet. The cook passes if it ends at a row with
        slack >= 0.
    """
    req = case.requirement
    run = (case.table, case.thickness_m, case.start_temp_c, phases_for(long, case.env))
    if req.holds:  # the rule needs every cell's history
        res = simulate(*run, case.lethality, case.settings)
        t_s, lr, cold = res.t_s, res.log_reduction.min(axis=1), res.temp_c.min(axis=1)
    else:  # the row minima are all the criteria read
        end = None
        if end_at_pass_after_s is not None:
            floor = -math.inf if req.min_temp_c is None else req.min_temp_c
            end = EarlyEnd(end_at_pass_after_s, req.log_reduction, floor)
        rows = simulate_minima(*run, case.lethality, case.settings, end)
        t_s, lr, cold = rows.t_s, rows.min_log_reduction, rows.min_temp_c
    target = req.log_reduction
    with np.errstate(divide="ignore"):
        ratio = np.log10(np.maximum(lr, 1e-300) / target)
    # the sign follows the comparison itself, never a rounded ratio of two close numbers
    slack = np.where(lr >= target, np.maximum(ratio, 0.0), np.minimum(ratio, -1e-12))
    if req.min_temp_c is not None:
        slack = np.minimum(slack, (cold - req.min_temp_c) / TEMP_SLACK_SCALE_K)
    if req.holds:
        temps, _ = food_frame(res)
        met = hold_met_by_row(res.t_s, temps, req.holds)
        slack = np.where(met, slack, np.minimum(slack, HOLD_UNMET_SLACK))
    return t_s, slack


def hold_met_by_row(t_s: np.ndarray, temps: np.ndarray, holds: tuple[HoldRule, ...]) -> np.ndarray:
    """Whether the time-at-temperature rule is met if the cook ended at each row.

    Parameters
    ----------
    t_s : ndarray, shape (n_rows,)
        Row times, s.
    temps : ndarray, shape (n_rows, n_cells)
        Cell temperatures in the food's frame, degC.
    holds : tuple of HoldRule
        Rows of the rule; one of them met at every cell suffices.

    Returns
    -------
    ndarray of bool, shape (n_rows,)
    """
    met = np.zeros(t_s.size, dtype=bool)
    for rule in holds:
        steps = time_above_by_step(t_s, temps, rule.temp_c)
        above = np.vstack([np.zeros((1, temps.shape[1])), np.cumsum(steps, axis=0)])
        reached = np.maximum.accumulate(temps, axis=0) >= rule.temp_c
        met |= np.all(reached & (above >= rule.hold_s), axis=1)
    return met
