"""Certification allows for the reference model's own discretisation error.

The reference is second order in space and time (tests/physics/test_reference_convergence.py),
so halving the cell size cuts its space error about four times, and doubling the step
multiplies its time error about four times: the certified result's error is about 4/3 of its
difference from the run on twice the cells plus 1/3 of its difference from the run at twice
the step (Richardson extrapolation, once per direction: L. F. Richardson, "The deferred
approach to the limit", Phil. Trans. R. Soc. A 226, 1927, 299-361). The certifier's estimate
(Richardson's times a safety factor, because the cold spot is a minimum over cell centres and
converges irregularly) is checked here against a run eight times finer in space and time,
and certification is shown to refuse a schedule whose margin is smaller than the estimated
error plus the stated minimum.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from obvert.certify.node import ErrorBudget, certify, judge, reference_error
from obvert.plan.schedule import Event, Schedule
from obvert.problem import problem_of
from obvert.spec import load_spec

SPEC = Path(__file__).resolve().parents[1] / "cli" / "small_spec.toml"
TICK = 0.001  # a fine tick, so that the shortest passing done has a margin of a few 0.001 log


def _case(start_c: float = 4.0, step_s: float = 0.05):
    """The small test patty, 8 mm, on the reference's 200 cells (default step 50 ms)."""
    problem = problem_of(load_spec(SPEC))
    case = problem.cases_at(0.008, start_c)[0]
    # the log reduction alone binds (no removal-temperature rule)
    req = replace(case.requirement, min_temp_c=None)
    return replace(case, requirement=req, settings=replace(case.settings, dt_max_s=step_s))


def _shortest(case) -> Schedule:
    """One flip at 60 s and the shortest done that passes on the coarse reference alone."""
    flip = Schedule((Event("flip", 60.0), Event("done", 88.0)))
    return certify([case], flip, TICK, max_extension=4.0).schedule


@pytest.mark.parametrize(
    ("start_c", "step_s"),
    [(4.0, 0.05), (-10.0, 0.05), (4.0, 0.5)],
    ids=["chilled", "frozen (thawing front)", "chilled, a coarse step"],
)
def test_richardson_estimate_brackets_a_much_finer_reference(start_c, step_s) -> None:
    case = _case(start_c, step_s)
    sched = _shortest(case)
    est = reference_error(case, sched, 2)
    finest = replace(case, settings=replace(case.settings, n_cells=1600, dt_max_s=step_s / 8))
    coarse, fine = judge(case, sched), judge(finest, sched)
    true_err = abs(coarse.min_log_reduction - fine.min_log_reduction)
    assert true_err > 0.0
    # conservative, and not by more than a factor of three
    assert true_err <= est.log <= 3.0 * true_err, (est.log, true_err)


def test_the_time_error_is_estimated_where_the_step_makes_it_count() -> None:
    # at a step ten times the default the time error is most of the error: the estimate of
    # the space error alone (Richardson on twice the cells, same step) falls short of it
    case = _case(4.0, 0.5)
    sched = _shortest(case)
    est = reference_error(case, sched, 2)
    twice = replace(case, settings=replace(case.settings, n_cells=400))
    gap = abs(judge(case, sched).min_log_reduction - judge(twice, sched).min_log_reduction)
    space_only = 1.5 * 4.0 / 3.0 * gap
    finest = replace(case, settings=replace(case.settings, n_cells=1600, dt_max_s=0.0625))
    true_err = abs(judge(case, sched).min_log_reduction - judge(finest, sched).min_log_reduction)
    assert space_only < true_err <= est.log, (space_only, true_err, est.log)


def test_margin_below_the_reference_error_is_refused_and_extended() -> None:
    case = _case()
    sched = _shortest(case)
    bare = certify([case], sched, TICK)
    err = reference_error(case, sched, 2)
    # the shortest passing schedule is closer to the target than the numerics can tell
    assert bare.margin_log < err.log, (bare.margin_log, err.log)
    budget = ErrorBudget(min_margin_log=0.05, refinement=2)
    cert = certify([case], sched, TICK, budget=budget)
    assert cert.schedule.done_s > sched.done_s  # refused as it was: done extended
    assert cert.error is not None
    assert cert.required_margin_log == pytest.approx(cert.error.log + 0.05)
    assert cert.margin_log >= cert.required_margin_log
    # the margin recorded is that of the emitted schedule on the reference
    again = judge(case, cert.schedule)
    assert again.min_log_reduction - case.requirement.log_reduction == pytest.approx(
        cert.margin_log, abs=1e-12
    )


def test_budget_settings_are_checked() -> None:
    with pytest.raises(ValueError, match="min_margin_log = -0.1"):
        ErrorBudget(min_margin_log=-0.1)
    with pytest.raises(ValueError, match="refinement = 1"):
        ErrorBudget(refinement=1)


def test_the_estimate_reuses_a_verdict_already_run_without_changing_it() -> None:
    case = _case()
    sched = _shortest(case)
    assert reference_error(case, sched, 2, judge(case, sched)) == reference_error(case, sched, 2)
