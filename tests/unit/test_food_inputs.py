"""Bad food inputs raise ValueError naming the field, the value and what is allowed."""

from __future__ import annotations

import math

import numpy as np
import pytest

from obvert.food.choi_okos import MAX_STEP_C, Composition, composition_table
from obvert.food.lethality import log_reduction
from obvert.food.measured import measured_table
from obvert.food.presets import PRESETS, preset

GOOD = {"water": 0.7, "protein": 0.2, "fat": 0.08, "carbohydrate": 0.0, "fibre": 0.0, "ash": 0.02}


@pytest.mark.parametrize("field", sorted(GOOD))
@pytest.mark.parametrize("value", [-0.1, 1.5, math.nan, math.inf, "0.2", None])
def test_composition_field_out_of_range(field, value):
    kwargs = dict(GOOD, **{field: value})
    with pytest.raises(ValueError) as err:
        Composition(**kwargs)
    msg = str(err.value)
    assert f"Composition.{field}" in msg and repr(value) in msg and "[0, 1]" in msg


@pytest.mark.parametrize("water", [0.5, 0.8])
def test_composition_sum_off(water):
    with pytest.raises(ValueError, match=r"sum to .*allowed: 1 within 0\.01"):
        Composition(**dict(GOOD, water=water))


def test_composition_sum_within_tolerance_is_normalised():
    comp = Composition(**dict(GOOD, water=0.705))
    fractions = comp.normalised()
    assert sum(fractions.values()) == pytest.approx(1.0, abs=1e-15)
    assert fractions["water"] == pytest.approx(0.705 / 1.005)


@pytest.mark.parametrize("step", [0.0, -0.05, MAX_STEP_C * 1.01, math.nan])
def test_composition_table_bad_step(step):
    with pytest.raises(ValueError, match=r"step_c = .*allowed"):
        composition_table(Composition(**GOOD), "x", step_c=step)


@pytest.mark.parametrize("t_f", [0.5, math.nan, "cold"])
def test_composition_table_bad_freezing_point(t_f):
    with pytest.raises(ValueError, match=r"freezing_point_c = .*allowed"):
        composition_table(Composition(**GOOD), "x", freezing_point_c=t_f)


def test_composition_table_bad_range():
    with pytest.raises(ValueError, match=r"lo_c = 50.*hi_c = 10"):
        composition_table(Composition(**GOOD), "x", lo_c=50.0, hi_c=10.0)


def test_composition_table_freezing_point_mid_cell_and_reduced_step():
    table = composition_table(Composition(**GOOD), "x", freezing_point_c=-1.3, step_c=0.05)
    step = table.temp_c[1] - table.temp_c[0]
    offset = (-1.3 - table.temp_c[0]) / step
    assert step <= 0.05 and table.temp_c[0] == -40.0
    assert offset - math.floor(offset) == pytest.approx(0.5, abs=1e-9)


def _measured(**overrides):
    args = {
        "name": "m",
        "conductivity": 0.45,
        "density": 1050.0,
        "cp": 3500.0,
        "freezing_point_c": -1.5,
        "latent_heat_j_per_kg": 230e3,
    }
    args.update(overrides)
    return measured_table(**args)


@pytest.mark.parametrize(
    ("field", "spec", "pattern"),
    [
        (
            "conductivity",
            [(0.0, 0.4), (10.0, 0.45), (5.0, 0.5)],
            r"conductivity\[2\].*5\.0.*10\.0.*increasing",
        ),
        ("conductivity", [(0.0, 0.4), (0.0, 0.45)], r"conductivity\[1\].*not above"),
        ("density", [(0.0, 1050.0), (20.0, -3.0)], r"density\[1\].*-3\.0.*allowed range"),
        ("cp", 3.5, r"cp: value 3\.5 J/\(kg K\).*allowed range 200"),
        ("cp", [(0.0, 3500.0), (50.0, 0.0)], r"cp\[1\].*value 0\.0"),
        ("density", 0.0, r"density: value 0\.0"),
        ("conductivity", [], r"conductivity: table is empty"),
        ("conductivity", [(0.0, 0.4, 1.0)], r"conductivity\[0\] = \(0\.0, 0\.4, 1\.0\).*pair"),
        ("conductivity", "0.45", r"conductivity = '0\.45'.*number or a sequence"),
        ("density", [(math.nan, 1000.0)], r"density\[0\]: temperature nan"),
        ("cp", [(0.0, math.inf)], r"cp\[0\].*value inf"),
    ],
)
def test_measured_bad_tables(field, spec, pattern):
    with pytest.raises(ValueError, match=pattern):
        _measured(**{field: spec})


@pytest.mark.parametrize(
    ("overrides", "pattern"),
    [
        ({"latent_heat_j_per_kg": -1.0}, r"latent_heat_j_per_kg = -1\.0.*allowed 0 to 333600"),
        ({"latent_heat_j_per_kg": 4e5}, r"latent_heat_j_per_kg = 400000\.0.*allowed"),
        ({"freezing_point_c": None}, r"freezing_point_c = None.*allowed"),
        ({"freezing_point_c": 2.0}, r"freezing_point_c = 2\.0.*\(-40\.0, 0\]"),
        ({"freezing_point_c": -45.0}, r"freezing_point_c = -45\.0"),
        ({"latent_end_c": -50.0}, r"latent_end_c = -50\.0.*lo_c"),
        ({"step_c": 0.5}, r"step_c = 0\.5.*allowed"),
    ],
)
def test_measured_bad_freezing_inputs(overrides, pattern):
    with pytest.raises(ValueError, match=pattern):
        _measured(**overrides)


def test_measured_interpolation_and_constant_extrapolation():
    table = _measured(conductivity=[(0.0, 0.40), (50.0, 0.50)], latent_heat_j_per_kg=0.0)
    assert float(table.k(25.0)) == pytest.approx(0.45)
    assert float(table.k(-30.0)) == pytest.approx(0.40)
    assert float(table.k(200.0)) == pytest.approx(0.50)
    assert np.all(table.ice_fraction == 0.0) and table.freezing_point_c == -1.5
    no_freeze = _measured(freezing_point_c=None, latent_heat_j_per_kg=0.0)
    assert no_freeze.freezing_point_c == float("-inf")


def test_unknown_preset_lists_allowed_names():
    with pytest.raises(ValueError) as err:
        preset("salmonella_pork")
    msg = str(err.value)
    assert "'salmonella_pork'" in msg and all(name in msg for name in PRESETS)


@pytest.mark.parametrize(
    ("times", "temps", "pattern"),
    [
        ([0.0], [60.0], r"time_s has shape \(1,\)"),
        ([0.0, 1.0, 1.0], [60.0, 61.0, 62.0], r"time_s\[2\] = 1\.0 s is not after"),
        ([0.0, 1.0], [60.0], r"temp_c has shape \(1,\)"),
        ([0.0, 1.0], [60.0, math.nan], r"temp_c\[1\] = nan: allowed finite"),
    ],
)
def test_log_reduction_bad_history(times, temps, pattern):
    with pytest.raises(ValueError, match=pattern):
        log_reduction(preset("salmonella_beef_7log").model(), times, temps)
