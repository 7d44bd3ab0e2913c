"""A model without latent heat plans a frozen start far too short: the schedule is unsafe.

Physical basis: thawing a frozen patty absorbs the latent heat of fusion of its frozen
water (333.6 kJ/kg of ice; latent heat of fusion of water at 0 degC, e.g. CRC Handbook of
Chemistry and Physics), about 0.4 x 334 = 130 kJ/kg for a 62 % water patty: comparable to the
sensible heat from -18 to 71 degC. The reference model (with latent heat) is the judge.
"""

from __future__ import annotations

import numpy as np

from obvert.certify.node import judge
from obvert.food.choi_okos import Composition, composition_table, properties_at
from obvert.food.presets import preset
from obvert.food.table import PropertyTable
from obvert.plan.collocation import Grid
from obvert.plan.ocp import Planner, Requirement
from obvert.plan.quantize import quantize
from obvert.plan.schedule import Surroundings
from obvert.problem import Case
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceSettings
from obvert.thermal.spectral import SpectralModel, SpectralSettings

COMP = Composition(water=0.62, protein=0.172, fat=0.19, ash=0.018)
ENV = Surroundings(FaceBC(450.0, 190.0), FaceBC(12.0, 30.0, 0.9), None, 1.5)
REQ = Requirement(7.0, 71.0)


def _without_latent(table: PropertyTable) -> PropertyTable:
    p = properties_at(COMP, table.temp_c, table.freezing_point_c)
    rc = p.density * p.cp_sensible
    e = np.concatenate([[0.0], np.cumsum(0.5 * (rc[1:] + rc[:-1]) * np.diff(table.temp_c))])
    return PropertyTable(
        "no latent heat", table.temp_c, table.conductivity, table.density, p.cp_sensible, e,
        table.freezing_point_c, table.ice_fraction,
    )  # fmt: skip


def _plan(table: PropertyTable, thickness_m: float, start_c: float):
    leth = preset("salmonella_beef_7log").model()
    model = SpectralModel(table, thickness_m, leth, SpectralSettings(12))
    res = Planner(model, ENV, REQ, 10.0, Grid(8)).solve(("flip",), start_c)
    return quantize(res.schedule, 0.1, 10.0, 1.5), leth


def test_no_latent_heat_plans_frozen_start_too_short_and_unsafe() -> None:
    real = composition_table(COMP, "patty", freezing_point_c=-1.7)
    fake = _without_latent(real)
    # The fake table really lacks the latent load: enthalpy -18 -> 4 degC far smaller.
    d_real = float(real.enthalpy(4.0) - real.enthalpy(-18.0))
    d_fake = float(fake.enthalpy(4.0) - fake.enthalpy(-18.0))
    assert d_fake < 0.5 * d_real
    good, leth = _plan(real, 0.008, -18.0)
    bad, _ = _plan(fake, 0.008, -18.0)
    assert bad.done_s < 0.85 * good.done_s
    case = Case(real, 0.008, -18.0, ENV, leth, REQ, ReferenceSettings())
    verdict = judge(case, bad)
    assert not verdict.passed
    assert verdict.min_log_reduction < 0.5 * REQ.log_reduction
