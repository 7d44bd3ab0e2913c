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
