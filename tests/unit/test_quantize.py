"""Tick quantisation keeps mechanical limits and never rounds the done time down."""

from __future__ import annotations

import pytest

from obvert.firmware import to_ticks
from obvert.plan.quantize import quantize
from obvert.plan.schedule import Event, Schedule


def test_done_rounds_up_and_flips_to_nearest() -> None:
    s = Schedule((Event("flip", 20.04), Event("done", 55.01)))
    q = quantize(s, 0.1, 10.0, 1.5)
    assert [to_ticks(e.at_s, 0.1) for e in q.events] == [200, 551]


def test_minimum_gap_and_flip_air_time_are_kept() -> None:
    s = Schedule((Event("flip", 4.0), Event("flip", 10.0), Event("done", 10.5)))
    q = quantize(s, 0.1, 5.0, 1.5)
    t = [e.at_s for e in q.events]
    assert t[0] == pytest.approx(5.0)  # first event no earlier than the gap after loading
    assert t[1] - t[0] >= 5.0 - 1e-9 and t[2] - t[1] >= 5.0 - 1e-9


def test_release_and_done_share_a_tick_and_move_together() -> None:
    s = Schedule((Event("platen_close", 5.0), Event("platen_open", 60.02), Event("done", 60.02)))
    q = quantize(s, 0.1, 5.0, 1.0)
    ticks = [to_ticks(e.at_s, 0.1) for e in q.events]
    assert ticks == [50, 601, 601]
    later = q.with_done(62.0)
    assert [e.at_s for e in later.events[1:]] == [62.0, 62.0]
