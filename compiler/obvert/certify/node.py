"""Certification of a tick-quantised schedule on the reference model.

The schedule exactly as the firmware runs it (event times in whole ticks) is simulated on the
high-fidelity finite-volume model. Its smallest log reduction over every cell at removal (or
after the credited carry-over) gives the margin. A schedule that falls short is repaired by
extending the done time, tick by tick (doubling, then bisection), and the repaired schedule
is simulated again in full; the recorded margin always comes from a simulation of the exact
schedule that is emitted.

The reference model is itself a discretisation. With an :class:`ErrorBudget` the binding
scenario of the certified schedule is run again twice: on ``refinement`` times the cells at
the same step, and on the same cells at ``refinement`` times the step. For a second-order
scheme the space error of the certified result is about ``r**2 / (r**2 - 1)`` times its
difference from the first run, and its time error about ``1 / (r**2 - 1)`` times its
difference from the second (Richardson's estimate, once per direction: L. F. Richardson,
"The deferred approach to the limit", Phil. Trans. R. Soc. A 226, 1927, 299-361); their sum
bounds the error of both together, for 2.5 runs' worth at ``r = 2`` instead of the 4 of one
run refined in space and time (the time error is a hundredth of the space error at the
default step, and estimated all the same). The smallest log reduction is a minimum over cell
centres, and the cold spot moves between them as the mesh is refined, so the convergence is
second order only on average: the estimate used is 1.5 times Richardson's, which covered the
error against a run eight times finer at the default mesh in
tests/physics/test_error_budget.py, where Richardson's alone fell short by a tenth. The
schedule passes only when its log-reduction margin exceeds that error plus the stated minimum
margin, and its coldest point at removal clears the floor by the temperature error;
otherwise done is extended further.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, replace

import numpy as np

from obvert.certify.history import slack_rows
from obvert.food.criteria import hold_margin_s
from obvert.plan.schedule import Schedule, phases_for
from obvert.problem.model import Case
from obvert.thermal.batch import CookCase, simulate_one
from obvert.thermal.reference import food_frame, simulate


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
        The log-reduction target, the removal-temperature rule and the time-at-temperature
        rule (each if asked for) are all met.
    hold_margin_s : float or None
        Time-at-temperature rule: for its best row, the smallest spare time over every point
        of the food, s (negative: not met; None: no such rule).
    """

    min_log_reduction: float
    min_temp_at_removal_c: float
    passed: bool
    hold_margin_s: float | None = None


@dataclass(frozen=True)
class ErrorBudget:
    """How certification allows for the reference model's own discretisation error.

    Attributes
    ----------
    min_margin_log : float
        Margin required on top of the estimated reference error, log10 reductions (>= 0).
    refinement : int
        The check runs have this many times the cells (same step) and this many times the
        time step (same cells), -: 2, 3 or 4.
    """

    min_margin_log: float = 0.1
    refinement: int = 2

    def __post_init__(self) -> None:
        if not (math.isfinite(self.min_margin_log) and self.min_margin_log >= 0.0):
            raise ValueError(
                f"ErrorBudget.min_margin_log = {self.min_margin_log!r}: expected a number >= 0"
            )
        if isinstance(self.refinement, bool) or self.refinement not in (2, 3, 4):
            raise ValueError(f"ErrorBudget.refinement = {self.refinement!r}: expected 2, 3 or 4")


@dataclass(frozen=True)
class ReferenceError:
    """Estimated discretisation error of the reference at a certified schedule.

    Attributes
    ----------
    log : float
        Error of the smallest log reduction, log10 reductions (>= 0).
    temp_k : float
        Error of the coldest temperature at removal, K (>= 0).
    """

    log: float
    temp_k: float


#: Factor on Richardson's estimate (the cold spot converges irregularly between cell centres).
SAFETY_FACTOR = 1.5


def reference_error(
    case: Case, schedule: Schedule, refinement: int, coarse: Verdict | None = None
) -> ReferenceError:
    """Richardson estimate of the reference's error for ``schedule`` in ``case``.

    Parameters
    ----------
    case : Case
        The scenario (its reference settings are the discretisation certified on).
    schedule : Schedule
        Event times, s.
    refinement : int
        Factor on the cells of the space check run and on the time step of the time check
        run, -.
    coarse : Verdict, optional
        :func:`judge` of ``schedule`` in ``case``, when already run (the same numbers; it
        is run here otherwise).

    Returns
    -------
    ReferenceError
        :data:`SAFETY_FACTOR` times the sum of the space estimate, ``r**2 / (r**2 - 1)``
        times the difference from the run on ``r`` times the cells, and the time estimate,
        ``1 / (r**2 - 1)`` times the difference from the run at ``r`` times the step.
    """
    st = case.settings
    finer = replace(case, settings=replace(st, n_cells=st.n_cells * refinement))
    longer = replace(case, settings=replace(st, dt_max_s=st.dt_max_s * refinement))
    a = coarse if coarse is not None else judge(case, schedule)
    b_x, b_t = judge(finer, schedule), judge(longer, schedule)
    r2 = refinement**2 - 1.0
    f_x, f_t = SAFETY_FACTOR * (r2 + 1.0) / r2, SAFETY_FACTOR / r2
    return ReferenceError(
        f_x * abs(a.min_log_reduction - b_x.min_log_reduction)
        + f_t * abs(a.min_log_reduction - b_t.min_log_reduction),
        f_x * abs(a.min_temp_at_removal_c - b_x.min_temp_at_removal_c)
        + f_t * abs(a.min_temp_at_removal_c - b_t.min_temp_at_removal_c),
    )


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
    error : ReferenceError or None
        Estimated reference error at the schedule (None: no budget was asked for).
    required_margin_log : float
        Margin the schedule had to reach: the error plus the stated minimum, log10 (0
        without a budget).
    """

    schedule: Schedule
    verdict: Verdict
    extension_s: float
    margin_log: float
    error: ReferenceError | None = None
    required_margin_log: float = 0.0


def judge(case: Case, schedule: Schedule) -> Verdict:
    """Simulate ``schedule`` on the reference model and check the requirement.

    The log reduction is the smallest over the cells at the end (after the credited rest);
    the removal temperature is the coldest cell when the food leaves the plate; the
    time-at-temperature rule is checked exactly on each cell's own history (every cell of
    the food, flips followed, the rest included), taken linear between time steps. Without
    that rule no history is kept (:func:`obvert.thermal.batch.simulate_one`: the same
    numbers, bit for bit).
    """
    req = case.requirement
    phases = phases_for(schedule, case.env, rest_s=req.rest_s)
    if not req.holds:  # the last row and the removal row are all it reads: no history kept
        removal = len(phases) - 2 if req.rest_s > 0.0 else None
        cook = CookCase(case.thickness_m, case.start_temp_c, phases, removal)
        s = simulate_one(case.table, cook, case.lethality, case.settings)
        lr, t_min, hold = s.min_log_reduction, s.min_temp_at_removal_c, None
    else:  # the time-at-temperature rule reads every cell's history
        res = simulate(
            case.table, case.thickness_m, case.start_temp_c, phases, case.lethality, case.settings
        )
        lr = float(np.min(res.log_reduction[-1]))
        if req.rest_s > 0.0:
            removal_row = int(np.nonzero(res.phase_index == len(phases) - 2)[0][-1])
        else:
            removal_row = len(res.t_s) - 1
        t_min = float(np.min(res.temp_c[removal_row]))
        temps, _ = food_frame(res)
        hold = hold_margin_s(res.t_s, temps, req.holds)[0]
    ok = (
        lr >= req.log_reduction
        and (req.min_temp_c is None or t_min >= req.min_temp_c)
        and (hold is None or hold >= 0.0)
    )
    return Verdict(lr, t_min, bool(ok), hold)


def judge_all(cases: Sequence[Case], schedule: Schedule) -> Verdict:
    """The worst verdict of ``schedule`` over several scenarios (all must pass)."""
    verdicts = [judge(c, schedule) for c in cases]
    holds = [v.hold_margin_s for v in verdicts if v.hold_margin_s is not None]
    return Verdict(
        min(v.min_log_reduction for v in verdicts),
        min(v.min_temp_at_removal_c for v in verdicts),
        all(v.passed for v in verdicts),
        min(holds) if holds else None,
    )


def certify(
    case: Case | Sequence[Case],
    schedule: Schedule,
    tick_s: float,
    max_extension: float = 1.0,
    budget: ErrorBudget | None = None,
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
    budget : ErrorBudget, optional
        Require the margin to exceed the reference's estimated error plus a minimum.

    Raises
    ------
    CertificationError
        No extension up to ``max_extension`` passes.
    """
    cases = (case,) if isinstance(case, Case) else tuple(case)
    target = cases[0].requirement.log_reduction
    cert = _extend(cases, schedule, tick_s, max_extension, schedule.done_s)
    if budget is None:
        return cert
    for _ in range(4):  # the error hardly moves with done: one more round is the rule
        err = _binding_error(cases, cert.schedule, budget.refinement, cert.verdict)
        need = err.log + budget.min_margin_log
        floor = cases[0].requirement.min_temp_c
        temp_ok = floor is None or cert.verdict.min_temp_at_removal_c >= floor + err.temp_k
        if cert.margin_log >= need and temp_ok:
            return replace(cert, error=err, required_margin_log=need)
        stricter = tuple(raised(c, need, err.temp_k) for c in cases)
        cert = _extend(stricter, cert.schedule, tick_s, max_extension, schedule.done_s)
        cert = replace(cert, margin_log=cert.verdict.min_log_reduction - target)
    first = cases[0]
    raise CertificationError(
        f"thickness {first.thickness_m * 1e3:g} mm, start {first.start_temp_c:g} degC: the "
        f"margin {cert.margin_log:.4f} log does not settle above the reference error plus "
        f"the minimum margin ({need:.4f} log)"
    )


def raised(case: Case, extra_log: float, extra_k: float) -> Case:
    """``case`` with a target higher by ``extra_log`` and a floor higher by ``extra_k``."""
    req = case.requirement
    floor = None if req.min_temp_c is None else req.min_temp_c + extra_k
    return replace(
        case,
        requirement=replace(req, log_reduction=req.log_reduction + extra_log, min_temp_c=floor),
    )


def _binding_error(
    cases: Sequence[Case], schedule: Schedule, refinement: int, verdict: Verdict
) -> ReferenceError:
    """Reference error of the scenario(s) that bind: smallest log reduction, coldest point.

    ``verdict`` is :func:`judge_all` of ``schedule`` in ``cases`` (with one scenario, that
    scenario's own verdict: its run is not repeated).
    """
    if len(cases) == 1:  # one scenario binds both; no run needed to find it
        verdicts = [verdict]
    else:
        verdicts = [judge(c, schedule) for c in cases]
    k_lr = int(np.argmin([v.min_log_reduction for v in verdicts]))
    k_t = int(np.argmin([v.min_temp_at_removal_c for v in verdicts]))
    errs = [
        reference_error(cases[k], schedule, refinement, verdicts[k]) for k in sorted({k_lr, k_t})
    ]
    return ReferenceError(max(e.log for e in errs), max(e.temp_k for e in errs))


#: Passing stretches of the history tried before the search falls back to doubling.
CONFIRM_TRIES = 8


def _passing_ticks(
    cases: tuple[Case, ...],
    schedule: Schedule,
    tick_s: float,
    first: int,
    limit: int,
    end_at_first_pass: bool = False,
) -> tuple[np.ndarray, np.ndarray]:
    """Done ticks ``first .. limit`` and whether the history of every case passes at each.

    One run per case of ``schedule`` with the food left on the plate to ``limit``; a tick
    takes the verdict of the first row at or after it. With ``end_at_first_pass`` each run
    ends at its first passing row at or after ``first`` (later ticks read that row).
    """
    long = schedule.with_done(limit * tick_s)
    ticks = np.arange(first, limit + 1)
    ok = np.ones(ticks.size, dtype=bool)
    after = first * tick_s - 1e-9 if end_at_first_pass else None
    for c in cases:
        t_rows, slack = slack_rows(c, long, after)
        idx = np.clip(np.searchsorted(t_rows, ticks * tick_s - 1e-9), 0, t_rows.size - 1)
        ok &= slack[idx] >= 0.0
    return ticks, ok


def _first_passing_tick(
    cases: tuple[Case, ...], schedule: Schedule, tick_s: float, first: int, limit: int
) -> tuple[Schedule, Verdict] | None:
    """The first done tick in ``[first, limit]`` the history passes, if an exact run passes it.

    Each case's run ends at its first passing row, so this costs about one run of the
    schedule per case, and one exact run per case to confirm (None: nothing confirmed here).
    """
    ticks, ok = _passing_ticks(cases, schedule, tick_s, first, limit, end_at_first_pass=True)
    if not ok.any():
        return None
    trial = schedule.with_done(int(ticks[int(np.argmax(ok))]) * tick_s)
    verdict = judge_all(cases, trial)
    return (trial, verdict) if verdict.passed else None


def _read_off_one_run(
    cases: tuple[Case, ...], schedule: Schedule, tick_s: float, first: int, limit: int
) -> tuple[Schedule, Verdict] | None:
    """The earliest done tick in ``[first, limit]`` that passes, read off one long run per case.

    No assumption that the passing done times form one interval (a face cooling in the air
    after the last flip can make the removal-temperature rule fail again later): the run
    shows every candidate, and each is confirmed by a run of the exact schedule. None when
    the history cannot answer (a credited rest after removal) or nothing confirms.
    """
    if any(c.requirement.rest_s > 0.0 for c in cases):
        return None
    quick = _first_passing_tick(cases, schedule, tick_s, first, limit)
    if quick is not None:  # where the bisection below ends when passing is monotonic
        return quick
    ticks, ok = _passing_ticks(cases, schedule, tick_s, first, limit)
    cands = ticks[ok]
    runs = np.split(cands, np.flatnonzero(np.diff(cands) > 1) + 1) if cands.size else []
    for run in runs[:CONFIRM_TRIES]:
        # a stretch of done times the history passes: the exact run decides where it starts
        last = schedule.with_done(int(run[-1]) * tick_s)
        verdict = judge_all(cases, last)
        if not verdict.passed:
            continue
        lo, hi, best = int(run[0]) - 1, int(run[-1]), (last, verdict)
        while hi - lo > 1:
            mid = (lo + hi) // 2
            trial = schedule.with_done(mid * tick_s)
            v = judge_all(cases, trial)
            if v.passed:
                hi, best = mid, (trial, v)
            else:
                lo = mid
        return best
    return None


def _extend(
    cases: tuple[Case, ...],
    schedule: Schedule,
    tick_s: float,
    max_extension: float,
    planned: float,
) -> Certificate:
    """The shortest extension of done (whole ticks) with which every case passes."""
    first = cases[0]
    done_ticks = round(schedule.done_s / tick_s)
    verdict = judge_all(cases, schedule)
    if verdict.passed:
        return Certificate(
            schedule,
            verdict,
            schedule.done_s - planned,
            verdict.min_log_reduction - first.requirement.log_reduction,
        )
    limit = done_ticks + max(1, math.ceil(max_extension * done_ticks))
    found = _read_off_one_run(cases, schedule, tick_s, done_ticks, limit)
    if found is not None:
        fixed, verdict = found
        return Certificate(
            fixed,
            verdict,
            fixed.done_s - planned,
            verdict.min_log_reduction - first.requirement.log_reduction,
        )
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
