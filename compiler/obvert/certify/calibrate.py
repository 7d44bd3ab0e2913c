"""Reference-calibrated correction of a plan (modifier adaptation).

The reduced model's plan misses the reference by a few tenths of a per cent of cook time
(its field from frozen, the spacing of its lethality points and its collocation error; the
figures are in docs/reduced-model.md). After a plan is solved, every scenario is run on the
reference with that exact (continuous-time) schedule. The gap between the two models at the
plan becomes a correction of the planner's targets, and the plan is solved again:

* log reduction: the model must reach the target times ``LR_model / LR_ref`` (smallest over
  the model's lethality points over smallest over the reference's cells), i.e. the target
  shifted by ``log10(LR_model) - log10(LR_ref)`` in log10 units;
* removal temperature (if the spec has that rule): the floor plus
  ``T_model - T_ref`` (coldest lethality point minus coldest cell at removal), K.

This is the zero-order modifier of real-time optimisation (Marchetti, A., Chachuat, B. and
Bonvin, D. (2009), "Modifier-adaptation methodology for real-time optimization", Ind. Eng.
Chem. Res. 48:6022-6033), with the reference in the place of the plant. Each round
re-evaluates the gap at the new plan, so at a fixed point the plan meets the targets on the
reference exactly: its done time is the reference's for its event times. The event times
stay the reduced model's choice. A first-order modifier (the gap's slope with respect to
each dwell, by finite differences on both models) was tried and reached the same fixed
point: the model's optimum sits where the smallest log reduction passes from one lethality
point to the next, a kink that an affine correction does not move (docs/reduced-model.md).
The corrected plan is certified like any other: the correction changes what is planned,
never what is checked.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from obvert.certify.node import judge
from obvert.plan.modifier import Modifier
from obvert.plan.ocp import PlanError, Planner, PlanResult
from obvert.plan.schedule import Schedule
from obvert.problem.model import Case

#: A round that moves no dwell by more than this fraction of the cook time ends the correction.
RELATIVE_TOLERANCE = 1e-4

#: Largest correction applied, log10 (a factor of 2 on the log reduction) and K. A larger
#: gap means the reduced model is too far from the reference to steer the plan; the plan is
#: then left as it was and certification repairs it.
MAX_LR_BIAS_LOG10 = math.log10(2.0)
MAX_TEMP_BIAS_K = 5.0


@dataclass(frozen=True)
class Calibrated:
    """A plan after the reference-calibrated correction.

    Attributes
    ----------
    result : PlanResult
        The corrected plan (the uncorrected one when no round was kept).
    model_cook_time_s : float
        Done time of the uncorrected plan, s.
    rounds : int
        Correction rounds kept, -.
    note : str
        Why the correction stopped.
    """

    result: PlanResult
    model_cook_time_s: float
    rounds: int
    note: str


def reference_outcome(cases: Sequence[Case], schedule: Schedule) -> np.ndarray:
    """Per case, (smallest LR over the cells, coldest cell at removal, degC) on the reference."""
    out = np.zeros((len(cases), 2))
    for k, case in enumerate(cases):
        v = judge(case, schedule)
        out[k] = v.min_log_reduction, v.min_temp_at_removal_c
    return out


def gap(plan: PlanResult, cases: Sequence[Case]) -> np.ndarray:
    """Per scenario, (log10 LR_model - log10 LR_ref, T_model - T_ref) at ``plan``.

    ``cases[k]`` is the reference of the planner's scenario ``k``; the model's values are
    the plan's own (``member_log_reduction``, ``member_temp_c``: the collocation's, which
    the NLP constrains).
    """
    if len(cases) != len(plan.member_log_reduction):
        raise ValueError(
            f"cases: {len(cases)} given, the plan has {len(plan.member_log_reduction)} scenarios"
        )
    ref = reference_outcome(cases, plan.schedule)
    lr_gap = np.log10(plan.member_log_reduction) - np.log10(ref[:, 0])
    return np.column_stack([lr_gap, np.asarray(plan.member_temp_c) - ref[:, 1]])


def calibrate(
    planner: Planner,
    kinds: tuple[str, ...],
    start_temp_c: float,
    cases: Sequence[Case],
    plan: PlanResult,
    rounds: int,
) -> Calibrated:
    """Correct ``plan`` against the reference for up to ``rounds`` rounds.

    Parameters
    ----------
    planner : Planner
        The planner that solved ``plan`` (its scenarios match ``cases`` in order).
    kinds : tuple of str
        The plan's event sequence (``done`` implied).
    start_temp_c : float
        Start temperature the planner was given, degC.
    cases : sequence of Case
        Reference runs, one per planner scenario.
    plan : PlanResult
        The uncorrected plan.
    rounds : int
        Largest number of re-solves, - (0: no correction).

    Returns
    -------
    Calibrated
        The last plan whose solve succeeded; a failed re-solve or a gap beyond the
        limits keeps the previous plan and says so in ``note``.
    """
    best, kept, note = plan, 0, "no correction asked"
    for r in range(rounds):
        b = gap(best, cases)
        if np.any(np.abs(b[:, 0]) > MAX_LR_BIAS_LOG10) or np.any(np.abs(b[:, 1]) > MAX_TEMP_BIAS_K):
            note = f"round {r + 1}: model and reference too far apart ({_fmt(b)}); not corrected"
            break
        u = np.array(best.dwell_s)
        mod = Modifier(b, np.zeros((len(cases), 2, u.size)), u)
        try:
            new = planner.solve(kinds, start_temp_c, (u,), modifier=mod, warm=True)
        except PlanError as exc:
            note = f"round {r + 1}: re-solve failed ({exc}); previous plan kept"
            break
        moved = float(np.abs(np.array(new.dwell_s) - u).max())
        best, kept = new, r + 1
        note = f"round {kept}: an event moved {moved:.3f} s ({_fmt(b)})"
        if moved <= RELATIVE_TOLERANCE * new.cook_time_s:
            note = f"converged in {kept} rounds ({_fmt(b)})"
            break
    return Calibrated(best, plan.cook_time_s, kept, note)


def _fmt(b: np.ndarray) -> str:
    """Largest corrections, for notes."""
    return (
        f"log10 LR gap up to {np.abs(b[:, 0]).max():.4f}, "
        f"removal temperature gap up to {np.abs(b[:, 1]).max():.3f} K"
    )
