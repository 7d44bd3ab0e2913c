"""Robust planning: one schedule for several scenarios at once (the fat range of a patty).

A schedule that must work for both a lean and a fat version of the patty can be no shorter
than the slower of the two single-scenario optima (a property of any min-max problem), and
on the reference model it must reach the 7-log target in both with at most a small
extension (the reduced model's error, measured in docs/reduced-model.md).
"""

from __future__ import annotations

from dataclasses import replace

from obvert.certify.node import certify
from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.plan.collocation import Grid
from obvert.plan.ocp import Member, Planner, Requirement
from obvert.plan.schedule import Surroundings
from obvert.problem import Case
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceSettings
from obvert.thermal.spectral import SpectralModel, SpectralSettings

LETH = LethalityModel(103.6, 60.0, 5.586)
ENV = Surroundings(FaceBC(450.0, 190.0), FaceBC(12.0, 30.0, 0.9), None, 1.5)
DROOPED = replace(ENV, plate=FaceBC(405.0, 186.0, 0.0, 10.0, 30.0))
REQ = Requirement(7.0)
LEAN = composition_table(Composition(water=0.68, protein=0.19, fat=0.11, ash=0.02), "lean")
FAT = composition_table(Composition(water=0.55, protein=0.155, fat=0.28, ash=0.015), "fat")
L, T0 = 0.007, 2.0


def _model(table):
    return SpectralModel(table, L, LETH, SpectralSettings(12))


def test_robust_plan_covers_both_and_is_no_shorter_than_either() -> None:
    grid = Grid(8)
    lean = Planner(_model(LEAN), DROOPED, REQ, 10.0, grid).solve(("flip",), T0)
    fat = Planner(_model(FAT), DROOPED, REQ, 10.0, grid).solve(("flip",), T0)
    robust = Planner(
        _model(LEAN), DROOPED, REQ, 10.0, grid, extra=(Member(_model(FAT), DROOPED),)
    ).solve(("flip",), T0)
    assert robust.cook_time_s >= max(lean.cook_time_s, fat.cook_time_s) - 0.05
    assert robust.min_log_reduction >= 7.0 - 1e-6
    ref = ReferenceSettings(n_cells=120, dt_max_s=0.05)
    cases = [Case(t, L, T0, DROOPED, LETH, REQ, ref) for t in (LEAN, FAT)]
    ticked = robust.schedule.with_done(round(robust.cook_time_s * 10.0 + 0.5) / 10.0)
    ticked = type(ticked)(
        tuple(replace(e, at_s=round(e.at_s * 10.0) / 10.0) for e in ticked.events)
    )
    cert = certify(cases, ticked, 0.1)
    assert cert.extension_s <= 0.01 * robust.cook_time_s, cert.extension_s


def test_the_nominal_done_time_is_the_reference_s_within_a_tick() -> None:
    # The search planner's nominal plan (price of robustness) is searched on the search
    # mesh and carried to the reference by the robust plan's own reference/search ratio,
    # without a reference run of its own. Checked against the reference read-off of the
    # nominal event times themselves, at a frozen and a chilled 12 mm node.
    from pathlib import Path

    from obvert.problem import problem_of
    from obvert.search import Sequence, read_done, search_events
    from obvert.spec import load_spec
    from obvert.table.searched import _nominal

    spec = load_spec(Path(__file__).resolve().parents[1] / "cli" / "tolerance_spec.toml")
    problem = problem_of(spec)
    a = spec.appliance
    seq = Sequence(("flip", "flip"), a.min_event_gap_s, a.flip_air_s)
    for t0 in (-18.0, 4.0):
        at = (0.012, t0)
        robust = search_events(problem.search_cases_at(*at), seq, (60.0, 80.0), 250.0)
        reference_s = read_done(problem.cases_at(*at), seq, robust.dwell_s, 400.0)
        histories: tuple[dict, dict] = ({}, {})
        estimate = _nominal(problem, at, robust, reference_s, histories)
        assert estimate is not None
        dwell = histories[1][seq.kinds][-1][1]  # the nominal event times found
        nominal_case = problem.case(problem.nominal, *at)
        exact = read_done([nominal_case], seq, dwell, 400.0)
        assert estimate < reference_s - 5.0  # a real price of robustness
        assert abs(estimate - exact) < 0.1, (estimate, exact)  # within one 0.1 s tick
