"""Reference-calibrated correction of a plan (obvert.certify.calibrate).

The reduced model alone plans a few tenths of a per cent short of the finite-volume
reference (docs/reduced-model.md). The correction is the zero-order modifier of real-time
optimisation (Marchetti, A., Chachuat, B. and Bonvin, D. (2009), "Modifier-adaptation
methodology for real-time optimization", Ind. Eng. Chem. Res. 48:6022-6033): at a fixed
point the plan meets the shifted targets exactly, so the planned done time is the one at
which the reference reaches the target with the planned flip.

Checked here against a finer reference than the one the correction calibrates on (400
cells / 0.02 s against 200 / 0.05 s; the reference solver itself is checked against the
plane-wall series solution, a manufactured solution and scikit-fem in this folder), on the
issue's cook-time target of 0.1 %. Kinetics: the Salmonella 7-log fit to USDA FSIS (1999)
Appendix A (tests/physics/test_lethality.py). Food and appliance: invented (the demo's).
"""

from __future__ import annotations

from dataclasses import replace
from importlib.resources import files

import numpy as np
import pytest

from obvert.certify.calibrate import calibrate, gap
from obvert.certify.node import judge
from obvert.plan.collocation import Grid
from obvert.plan.modifier import Modifier
from obvert.plan.ocp import Planner, PlanResult, Requirement
from obvert.plan.schedule import Schedule, phases_for
from obvert.problem import Case, problem_of, surroundings
from obvert.problem.foods import food_table
from obvert.spec import load_spec
from obvert.thermal.reference import ReferenceSettings, simulate
from obvert.thermal.spectral import SpectralModel, SpectralSettings

SPEC = load_spec(str(files("obvert.demo") / "griddle_patty.toml"))
TABLE = food_table(SPEC.food)
ENV = surroundings(SPEC)
LETH = problem_of(SPEC).lethality
CALIBRATION_REF = ReferenceSettings()  # what the build calibrates and certifies on
FINE_REF = ReferenceSettings(n_cells=400, dt_max_s=0.02)
TARGET_COOK = 1e-3  # issue: cook-time error at most 0.1 %


def _planner(mm: float, req: Requirement) -> Planner:
    model = SpectralModel(TABLE, mm * 1e-3, LETH, SpectralSettings(16, lethality_points=21))
    return Planner(model, ENV, req, SPEC.appliance.min_event_gap_s, Grid(8))


def _one_flip(planner: Planner, t0: float):
    d0 = planner.solve((), t0).dwell_s[0]
    seed = np.array([0.5 * d0, 0.5 * d0 - ENV.flip_air_s])
    return planner.solve(("flip",), t0, (seed,))


def _done_on_reference(mm: float, t0: float, sch: Schedule, target: float) -> float:
    """First time the fine reference's smallest log reduction reaches ``target``, s."""
    long = sch.with_done(sch.done_s * 1.03 + 1.0)
    res = simulate(TABLE, mm * 1e-3, t0, phases_for(long, ENV), LETH, FINE_REF)
    last = res.phase_index == res.phase_index[-1]
    t, lr = res.t_s[last], res.log_reduction[last].min(axis=1)
    i = int(np.argmax(lr >= target))
    assert lr[i] >= target and i > 0, "the longer run must cross the target"
    return float(np.interp(target, lr[i - 1 : i + 1], t[i - 1 : i + 1]))


@pytest.mark.parametrize("mm, t0", [(6.0, 4.0), (6.0, -18.0)])
def test_corrected_plan_meets_the_cook_time_target(mm: float, t0: float) -> None:
    """Chilled and frozen, one flip, 7-log target: the uncorrected plan is short by more
    than the issue's 0.1 % (measured 0.25 % and 0.36 % in the benchmark); the corrected
    plan's done time is the fine reference's for its flip to within 0.1 %, and at least
    five times closer."""
    req = Requirement(7.0)
    planner = _planner(mm, req)
    plan = _one_flip(planner, t0)
    case = Case(TABLE, mm * 1e-3, t0, ENV, LETH, req, CALIBRATION_REF)
    cal = calibrate(planner, ("flip",), t0, [case], plan, 3)
    before = plan.cook_time_s / _done_on_reference(mm, t0, plan.schedule, 7.0) - 1.0
    after = cal.result.cook_time_s / _done_on_reference(mm, t0, cal.result.schedule, 7.0) - 1.0
    assert abs(before) > TARGET_COOK, before
    assert abs(after) <= TARGET_COOK, (after, cal.note)
    assert abs(after) < 0.2 * abs(before), (before, after)
    assert cal.rounds >= 1 and cal.model_cook_time_s == plan.cook_time_s
    assert cal.note.startswith("converged"), cal.note


def test_removal_temperature_rule_is_corrected_too() -> None:
    """A binding 71 degC removal rule (71.1 degC, 160 degF: the USDA FSIS consumer chart for
    ground meats, not the Food Code, which states hold times; the demo's rule) with a 1-log target,
    so that the temperature rule binds: after the correction the reference's coldest cell at
    removal is at the floor to within 0.05 K (the reduced model's point rule reads it
    differently)."""
    req = Requirement(1.0, min_temp_c=71.0)
    planner = _planner(8.0, req)
    plan = planner.solve(("flip",), 4.0)
    case = Case(TABLE, 8e-3, 4.0, ENV, LETH, req, CALIBRATION_REF)
    before = judge(case, plan.schedule)
    cal = calibrate(planner, ("flip",), 4.0, [case], plan, 3)
    after = judge(case, cal.result.schedule)
    assert after.min_log_reduction > 1.5, "the temperature rule must be the binding one"
    assert abs(after.min_temp_at_removal_c - 71.0) <= 0.05, (before, after, cal.note)
    assert cal.result.bias[0][1] != 0.0


@pytest.fixture(scope="module")
def chilled_6mm() -> tuple[Planner, PlanResult, Case]:
    """6 mm chilled, 7-log target: planner, its zero-flip plan, and the calibration case."""
    req = Requirement(7.0)
    planner = _planner(6.0, req)
    case = Case(TABLE, 6e-3, 4.0, ENV, LETH, req, CALIBRATION_REF)
    return planner, planner.solve((), 4.0), case


def test_gap_beyond_the_limit_keeps_the_plan(chilled_6mm) -> None:
    """A reference of another slab (twice as thick) is no calibration of this model: the
    gap exceeds the factor-2 limit and the plan is returned unchanged, with the reason."""
    planner, plan, case = chilled_6mm
    wrong = replace(case, thickness_m=12e-3)
    cal = calibrate(planner, (), 4.0, [wrong], plan, 3)
    assert cal.result is plan and cal.rounds == 0
    assert "too far apart" in cal.note


def test_gap_needs_one_case_per_scenario(chilled_6mm) -> None:
    """Mismatched scenarios are an error naming both counts, not a silent zip."""
    _, plan, case = chilled_6mm
    with pytest.raises(ValueError, match="2 given, the plan has 1"):
        gap(plan, [case, replace(case, start_temp_c=3.0)])


def test_zero_rounds_is_the_model_plan(chilled_6mm) -> None:
    """calibration_rounds = 0 leaves the reduced model's plan as it is."""
    planner, plan, case = chilled_6mm
    cal = calibrate(planner, (), 4.0, [case], plan, 0)
    assert cal.result is plan and cal.rounds == 0


def test_modifier_must_match_scenarios_and_dwells(chilled_6mm) -> None:
    """A modifier built for another event sequence is refused with both shapes named."""
    planner, _, _ = chilled_6mm
    with pytest.raises(ValueError, match="1 scenarios and 2 dwells: allowed 1 scenarios and 1"):
        planner.solve((), 4.0, modifier=Modifier.zero(1, 2))
