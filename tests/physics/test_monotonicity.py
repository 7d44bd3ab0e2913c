"""The orderings the certification relies on, checked on the reference model.

Cell certification (obvert.certify.cells) and the worst-case scenario (obvert.problem.scenarios)
use that, under one fixed schedule, a colder start, a colder or drooping plate and a weaker
contact never give a higher smallest log reduction nor a warmer cold spot at removal. For
the enthalpy form of the heat equation with monotone boundary fluxes this is the
comparison principle (M. H. Protter and H. F. Weinberger, "Maximum Principles in
Differential Equations", Prentice-Hall, 1967, ch. 3; from memory). For a thicker slab there
is no such theorem on the same interval; that it never cooks faster is common practice and
is checked here numerically, as are the others (the discretised model must keep them too).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from obvert.certify.node import judge
from obvert.food.choi_okos import Composition, composition_table
from obvert.food.lethality import LethalityModel
from obvert.plan.ocp import Requirement
from obvert.plan.schedule import Event, Schedule, Surroundings
from obvert.problem import Case
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceSettings

# Lean-beef-like composition (invented test food) and a 7-log Salmonella-like target.
TABLE = composition_table(Composition(water=0.62, protein=0.172, fat=0.19, ash=0.018), "t")
LETH = LethalityModel(103.6, 60.0, 5.586)
ENV = Surroundings(
    plate=FaceBC(450.0, 190.0),
    air=FaceBC(12.0, 30.0, 0.9),
    platen=None,
    flip_air_s=1.5,
)
REQ = Requirement(7.0, 71.0)
REF = ReferenceSettings(n_cells=120, dt_max_s=0.05)
BASE = Case(TABLE, 0.008, -6.0, ENV, LETH, REQ, REF)
SCHEDULES = {
    "one flip": Schedule((Event("flip", 45.0), Event("done", 100.0))),
    "no flip": Schedule((Event("done", 150.0),)),
}


def _slower_variants(case: Case) -> dict[str, Case]:
    plate = case.env.plate
    return {
        "thicker by 0.5 mm": replace(case, thickness_m=case.thickness_m + 0.0005),
        "colder start by 2 K": replace(case, start_temp_c=case.start_temp_c - 2.0),
        "plate 5 K low": replace(
            case, env=replace(case.env, plate=replace(plate, t_inf_c=plate.t_inf_c - 5.0))
        ),
        "contact 10 % low": replace(
            case, env=replace(case.env, plate=replace(plate, h=0.9 * plate.h))
        ),
        "plate drooping 15 K": replace(
            case, env=replace(case.env, plate=replace(plate, droop_k=15.0, droop_tau_s=40.0))
        ),
    }


@pytest.mark.parametrize("sched_name", sorted(SCHEDULES))
def test_slower_conditions_never_cook_more(sched_name: str) -> None:
    sched = SCHEDULES[sched_name]
    base = judge(BASE, sched)
    for name, case in _slower_variants(BASE).items():
        v = judge(case, sched)
        assert v.min_log_reduction < base.min_log_reduction, (sched_name, name)
        assert v.min_temp_at_removal_c < base.min_temp_at_removal_c, (sched_name, name)
