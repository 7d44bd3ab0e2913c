"""The done-time search does not assume that the passing done times form one interval.

With "every point at least T at removal", a face that cools in the air after a flip can make
a schedule pass, then fail, then pass again as done moves later. Here the small test patty
(6 mm, from 4 degC) is turned at 70 s under a cold air blast on its upper face (250 W/(m^2 K)
at 10 degC, an invented but physical condition): the passing done times start a few seconds
after the flip and end within a second, when the upper face has cooled below the floor.
A search that doubles its step and bisects between a failing and a passing trial can step
over that window. The earliest passing done is found by a brute-force scan of exact reference
runs, and certification must return exactly it.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from obvert.certify.node import certify, judge
from obvert.plan.schedule import Event, Schedule
from obvert.problem import problem_of
from obvert.spec import load_spec
from obvert.thermal.boundary import FaceBC

SPEC = Path(__file__).resolve().parents[1] / "cli" / "small_spec.toml"
TICK = 0.1
FLIP = 70.0


def _case():
    case = problem_of(load_spec(SPEC)).cases_at(0.006, 4.0)[0]
    env = replace(case.env, air=FaceBC(250.0, 10.0, 0.9))
    req = replace(case.requirement, log_reduction=0.01)  # the removal-temperature rule binds
    return replace(case, env=env, requirement=req)


def _at(done_s: float) -> Schedule:
    return Schedule((Event("flip", FLIP), Event("done", round(done_s, 1))))


def test_passing_done_times_are_not_one_interval() -> None:
    case = _case()
    verdicts = {d: judge(case, _at(d)).passed for d in (74.0, 78.3, 85.0, 140.0)}
    assert verdicts == {74.0: False, 78.3: True, 85.0: False, 140.0: False}


def test_certification_finds_the_earliest_passing_done() -> None:
    case = _case()
    start = _at(FLIP + 1.6)
    ticks = [round(FLIP + 1.6 + k * TICK, 1) for k in range(0, 200)]
    first = next(d for d in ticks if judge(case, _at(d)).passed)  # brute force, exact runs
    cert = certify([case], start, TICK)
    assert cert.schedule.done_s == pytest.approx(first, abs=1e-9)
    assert cert.verdict.passed and cert.extension_s == pytest.approx(first - start.done_s)


@pytest.mark.parametrize(("flip", "done"), [(70.0, 120.0), (60.0, 130.0), (85.0, 140.0)])
def test_the_short_read_off_ends_where_the_full_one_does(monkeypatch, flip, done) -> None:
    """Certification first reads off a run ended at its first passing row, then confirms it.

    The full read-off (every row to twice the planned done, each passing stretch confirmed
    and bisected with exact runs) must end on the same tick on ordinary patties.
    """
    import obvert.certify.node as node

    case = problem_of(load_spec(SPEC)).cases_at(0.008, -6.0)[0]
    short = Schedule((Event("flip", flip), Event("done", done)))
    quick = certify([case], short, TICK, max_extension=3.0)
    monkeypatch.setattr(node, "_first_passing_tick", lambda *args: None)
    full = certify([case], short, TICK, max_extension=3.0)
    assert quick.extension_s > 0.0  # the read-off was needed
    assert quick.schedule == full.schedule
    assert quick.verdict == full.verdict
