"""Time at temperature as the food codes write it, checked exactly on each point's history.

Rows: US FDA Food Code 2017, 3-401.11(A)(2), comminuted meat: 63 degC for 3 min, 66 degC for
1 min, 68 degC for 17 s, 70 degC instantaneous (and the 2013 edition's 15 s at 68 degC);
3-401.11(A)(3), poultry: 74 degC instantaneous (as collected in the project's reference
values). At a constant temperature the time a point spends at or above it is the holding
time itself, so each row is met exactly when the holding time reaches it.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from obvert.certify.node import judge
from obvert.food.criteria import HOLD_PRESETS, HoldRule, Requirement, time_at_or_above
from obvert.plan.schedule import Event, Schedule
from obvert.problem import problem_of
from obvert.spec import load_spec
from obvert.thermal.boundary import FaceBC, Surroundings

SPEC = Path(__file__).resolve().parents[1] / "cli" / "small_spec.toml"
CODE_2017 = [(63.0, 180.0), (66.0, 60.0), (68.0, 17.0), (70.0, 0.0)]


def test_presets_are_the_published_rows() -> None:
    got = [(r.temp_c, r.hold_s) for r in HOLD_PRESETS["food_code_2017_comminuted"].rows]
    assert got == CODE_2017
    assert [(r.temp_c, r.hold_s) for r in HOLD_PRESETS["food_code_2013_comminuted"].rows][2] == (
        68.0,
        15.0,
    )
    assert [(r.temp_c, r.hold_s) for r in HOLD_PRESETS["food_code_2017_poultry"].rows] == [
        (74.0, 0.0)
    ]


def test_linear_history_is_measured_exactly() -> None:
    """T(t) = 60 + 0.5 t from 0 to 40 s crosses 68 degC at 16 s: 24 s at or above it."""
    t = np.linspace(0.0, 40.0, 9)
    temps = (60.0 + 0.5 * t)[:, None]
    assert time_at_or_above(t, temps, 68.0)[0] == pytest.approx(24.0, abs=1e-12)
    # a rise then a fall: 62 -> 72 -> 62 over 20 s (linear), above 70 for 4 s
    t2 = np.array([0.0, 10.0, 20.0])
    y2 = np.array([[62.0], [72.0], [62.0]])
    assert time_at_or_above(t2, y2, 70.0)[0] == pytest.approx(4.0, abs=1e-12)


def _steady_case(temp_c: float, rows: tuple[HoldRule, ...]):
    """The small test patty held at ``temp_c`` everywhere: start, plate and air alike."""
    base = problem_of(load_spec(SPEC)).cases_at(0.008, 4.0)[0]
    face = FaceBC(500.0, temp_c)
    env = Surroundings(plate=face, air=face, platen=None, flip_air_s=base.env.flip_air_s)
    return replace(
        base,
        start_temp_c=temp_c,
        env=env,
        requirement=Requirement(log_reduction=1e-9, holds=rows),
    )


@pytest.mark.parametrize(("temp_c", "hold_s"), CODE_2017)
def test_each_food_code_row_at_constant_temperature(temp_c: float, hold_s: float) -> None:
    """Held at the row's temperature (0.05 K above it, so every point is 'at or above'),
    the rule is met from exactly the row's time on, with the spare time the difference."""
    rows = (HoldRule(temp_c, hold_s),)
    case = _steady_case(temp_c + 0.05, rows)
    for held in (hold_s, hold_s + 1.0):
        v = judge(case, Schedule((Event("done", max(held, 0.1)),)))
        assert v.passed
        assert v.hold_margin_s == pytest.approx(max(held, 0.1) - hold_s, abs=1e-9)
    if hold_s > 0.0:
        short = judge(case, Schedule((Event("done", hold_s - 0.1),)))
        assert not short.passed
        assert short.hold_margin_s == pytest.approx(-0.1, abs=1e-9)
    # 0.05 K below the row's temperature the row is never met, whatever the time
    cold = _steady_case(temp_c - 0.05, rows)
    v = judge(cold, Schedule((Event("done", hold_s + 30.0),)))
    assert not v.passed and v.hold_margin_s == -np.inf


def test_one_row_must_hold_at_every_point() -> None:
    """At 66.5 degC for 70 s the 66 degC / 1 min row is met, the 68 degC rows are not."""
    rows = HOLD_PRESETS["food_code_2017_comminuted"].rows
    v = judge(_steady_case(66.5, rows), Schedule((Event("done", 70.0),)))
    assert v.passed and v.hold_margin_s == pytest.approx(10.0, abs=1e-9)


@pytest.mark.slow
def test_flipping_schedule_planned_and_certified_with_the_rule() -> None:
    """A one-node table of the small test patty with the 2017 comminuted-meat rows."""
    import obvert

    text = SPEC.read_text("utf-8")
    text = text.replace('thickness = ["6 mm", "10 mm"]', 'thickness = ["10 mm"]')
    text = text.replace('["-18 degC", "4 degC"]', '["4 degC"]')
    text = text.replace(
        'min_temperature = "71 degC"', 'time_at_temperature = "food_code_2017_comminuted"'
    )
    spec = obvert.loads_spec(text)
    assert spec.safety.time_at_temperature == tuple(CODE_2017)
    table = obvert.compile_table(spec, ["json"])
    node = table.nodes[0]
    assert node.schedule.flips >= 1
    assert node.hold_margin_s is not None and node.hold_margin_s >= 0.0
    m = obvert.manifest(table)
    assert m["safety"]["time_at_temperature"][2] == {"temp_c": 68.0, "hold_s": 17.0}
    # the emitted schedule, judged again on the reference, meets the rule
    case = problem_of(spec).cases_at(0.010, 4.0)[0]
    assert judge(case, node.schedule).passed
