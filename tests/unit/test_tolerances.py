"""Declared tolerances: spec loading, clear errors, and the worst-case scenarios."""

from __future__ import annotations

from importlib.resources import files

import pytest

from obvert.problem import surroundings
from obvert.problem.scenarios import fat_variant, scenarios
from obvert.spec import SpecError, loads_spec

DEMO = (files("obvert.demo") / "griddle_patty.toml").read_text()
BASE = DEMO.split("[tolerances]")[0]


def _with(tol: str):
    return loads_spec(BASE + "\n[tolerances]\n" + tol)


def test_defaults_are_zero_and_nominal() -> None:
    spec = loads_spec(BASE)
    assert not spec.tolerances.any
    (only,) = scenarios(spec, surroundings(spec))
    assert only.name == "nominal" and only.thickness_offset_m == 0.0


def test_units_are_converted() -> None:
    t = _with('thickness_error = "0.5 mm"\nstart_temp_error = "1.5 K"\nplate_offset = "3 K"\n')
    assert t.tolerances.thickness_error_m == pytest.approx(5e-4)
    assert t.tolerances.start_temp_error_k == 1.5
    assert t.tolerances.plate_offset_k == 3.0


@pytest.mark.parametrize(
    ("text", "field"),
    [
        ('plate_offset = "3 s"', "tolerances.plate_offset"),
        ("plate_offset = 3", "tolerances.plate_offset"),
        ('thickness_error = "9 mm"', "tolerances.thickness_error"),
        ("contact_low = 0.7", "tolerances.contact_low"),
        ('plate_recovery = "30 s"', "tolerances.plate_recovery"),
        ("fat_fraction = [0.25, 0.3]", "tolerances.fat_fraction"),
        ("fat_fraction = [0.3, 0.1]", "tolerances.fat_fraction"),
        ("fat_typo = 1", "tolerances.fat_typo"),
    ],
)
def test_bad_tolerance_names_field(text: str, field: str) -> None:
    with pytest.raises(SpecError) as err:
        _with(text + "\n")
    assert field in str(err.value)


def test_worst_scenario_is_the_slow_corner() -> None:
    spec = _with(
        'plate_offset = "4 K"\nplate_droop = "10 K"\nplate_recovery = "30 s"\n'
        'contact_low = 0.1\nthickness_error = "0.3 mm"\nstart_temp_error = "1 K"\n'
    )
    env = surroundings(spec)
    (worst,) = scenarios(spec, env)
    assert worst.thickness_offset_m == pytest.approx(3e-4)
    assert worst.start_offset_k == -1.0
    p = worst.env.plate
    assert p.t_inf_c == env.plate.t_inf_c - 4.0
    assert p.h == pytest.approx(0.9 * env.plate.h)
    assert (p.droop_k, p.droop_tau_s) == (10.0, 30.0)
    assert worst.env.air == env.air  # air is not a heated surface


def test_fat_range_gives_both_ends_and_sums_to_one() -> None:
    spec = _with("fat_fraction = [0.15, 0.25]\n")
    names = [s.name for s in scenarios(spec, surroundings(spec))]
    assert names == ["worst_fat_low", "worst_fat_high"]
    lean = fat_variant(spec.food, 0.15).composition
    total = lean.water + lean.protein + lean.fat + lean.ash + lean.carbohydrate + lean.fibre
    assert total == pytest.approx(1.0)
    assert lean.water > spec.food.composition.water  # less fat, more of everything else
