"""Spec loading: units, defaults, and errors that name field, value and what is allowed."""

from __future__ import annotations

from importlib import resources

import pytest

from obvert.spec import SpecError, loads_spec


def _demo() -> str:
    return resources.files("obvert.demo").joinpath("griddle_patty.toml").read_text("utf-8")


def test_demo_spec_loads_in_si_units() -> None:
    s = loads_spec(_demo())
    assert s.grid.thickness_m == pytest.approx((0.006, 0.009, 0.012))
    assert s.appliance.tick_s == pytest.approx(0.1)
    assert s.appliance.plate_temp_c == pytest.approx(190.0)
    assert s.safety.log_reduction == 7.0 and s.safety.min_temp_c == 71.0
    assert s.safety.carry_over_s == 0.0  # no carry-over credit unless asked
    assert s.to_dict()["appliance"]["max_flips"] == 2


def test_imperial_units_convert() -> None:
    # 375 degF = 190.556 degC; 0.25 in = 6.35 mm (exact definitions: NIST SP 811, 2008).
    text = _demo().replace('"190 degC"', '"375 degF"').replace('"6 mm"', '"0.25 in"')
    s = loads_spec(text)
    assert s.appliance.plate_temp_c == pytest.approx((375 - 32) * 5 / 9)
    assert s.grid.thickness_m[0] == pytest.approx(0.00635)


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [
        ('tick = "100 ms"', 'tick = "100 mm"', "appliance.tick"),
        ("max_flips = 2", "max_flips = 2.5", "appliance.max_flips"),
        ("max_flips = 2", "max_flips = -1", "appliance.max_flips"),
        ('["6 mm", "9 mm", "12 mm"]', '["9 mm", "6 mm"]', "grid.thickness"),
        ('organism = "salmonella_beef_7log"', 'organism = "dragon"', "safety.organism"),
        ("water = 0.62", "water = 0.92", "food.composition"),
        ('name = "brinecliff_patty"', 'name = "Bad Name"', "table.name"),
        ('min_temperature = "71 degC"', 'min_temperature = "71"', "safety.min_temperature"),
    ],
)
def test_bad_values_name_field_and_value(old: str, new: str, field: str) -> None:
    text = _demo()
    assert old in text
    with pytest.raises(SpecError) as exc:
        loads_spec(text.replace(old, new, 1))
    assert exc.value.path.startswith(field), str(exc.value)
    assert "allowed" in str(exc.value)


def test_missing_section_and_unknown_section() -> None:
    with pytest.raises(SpecError, match="appliance"):
        loads_spec(_demo().replace("[appliance]", "[appliances]"))


def test_custom_kinetics_need_a_source() -> None:
    text = _demo().replace(
        'organism = "salmonella_beef_7log"',
        'organism_name = "house strain"\nd_ref = "1.5 min"\nt_ref = "60 degC"\n'
        'z = "5.5 K"\nlog_reduction = 6.5',
    )
    with pytest.raises(SpecError, match="safety.source"):
        loads_spec(text)
    s = loads_spec(
        text.replace("log_reduction = 6.5", 'log_reduction = 6.5\nsource = "our lab, 2026"')
    )
    assert s.safety.d_ref_s == pytest.approx(90.0) and s.safety.z_k == pytest.approx(5.5)


def test_invalid_toml_is_a_spec_error() -> None:
    with pytest.raises(SpecError, match="valid TOML"):
        loads_spec("[table\nname=")


def test_clamshell_needs_a_platen_and_refuses_flips() -> None:
    text = resources.files("obvert.demo").joinpath("clamshell_patty.toml").read_text("utf-8")
    s = loads_spec(text)
    assert s.appliance.kind == "clamshell" and s.appliance.max_flips == 0
    assert s.appliance.platen_temp_c == pytest.approx(200.0)
    with pytest.raises(SpecError, match="appliance.platen_temperature"):
        loads_spec(text.replace('platen_temperature = "200 degC"\n', ""))
    with pytest.raises(SpecError, match="appliance.max_flips"):
        loads_spec(text.replace('tick = "100 ms"', 'tick = "100 ms"\nmax_flips = 2'))
    griddle = _demo().replace('tick = "100 ms"', 'tick = "100 ms"\nplaten_temperature = "200 degC"')
    with pytest.raises(SpecError, match="no platen"):
        loads_spec(griddle)


def test_conductivity_model_default_choice_and_errors() -> None:
    """[food] conductivity_model: "levy_ice" by default, "parallel" on request; anything else,
    or the key beside measured properties, is an error naming the field and the choices."""
    assert loads_spec(_demo()).food.conductivity_model == "levy_ice"
    text = _demo().replace('freezing_point = "-1.7 degC"', 'freezing_point = "-1.7 degC"\n{}')
    par = loads_spec(text.format('conductivity_model = "parallel"'))
    assert par.food.conductivity_model == "parallel"
    with pytest.raises(SpecError, match=r'food\.conductivity_model = "series".*levy_ice'):
        loads_spec(text.format('conductivity_model = "series"'))


def test_planning_calibration_rounds() -> None:
    """[planning] calibration_rounds: 3 by default, 0 turns the correction off, 0-8 allowed."""
    assert loads_spec(_demo()).planning.calibration_rounds == 3
    text = _demo().replace('flip_cost = "3 s"', 'flip_cost = "3 s"\ncalibration_rounds = {}')
    assert loads_spec(text.format(0)).planning.calibration_rounds == 0
    with pytest.raises(SpecError, match=r"planning\.calibration_rounds.*9.*0 to 8"):
        loads_spec(text.format(9))


def test_flip_may_take_no_time_in_the_air() -> None:
    """A turning arm that flips on the plate: flip_air_time = "0 s" is a valid appliance."""
    text = _demo().replace('flip_air_time = "1.5 s"', 'flip_air_time = "0 s"')
    assert loads_spec(text).appliance.flip_air_s == 0.0


def test_any_positive_log_reduction_target() -> None:
    text = _demo().replace(
        'organism = "salmonella_beef_7log"',
        'organism = "salmonella_beef_7log"\nlog_reduction = 0.3',
    )
    assert loads_spec(text).safety.log_reduction == 0.3
    with pytest.raises(SpecError, match="safety.log_reduction"):
        loads_spec(text.replace("log_reduction = 0.3", "log_reduction = 0"))
