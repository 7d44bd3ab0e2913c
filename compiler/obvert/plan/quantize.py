"""Quantisation of event times to the firmware timer tick."""

from __future__ import annotations

import math

from obvert.plan.schedule import Event, Schedule

#: Slack for floating-point noise when a time is already a whole number of ticks, ticks.
_EPS = 1e-9


def quantize(schedule: Schedule, tick_s: float, min_gap_s: float, flip_air_s: float) -> Schedule:
    """Round event times to whole ticks, keeping the appliance's mechanical limits.

    Flips and platen moves go to the nearest tick; the done time is rounded up, never down.
    Any event that would then come closer than ``min_gap_s`` to the previous one (or inside a
    flip's air time) is pushed later to the next allowed tick. Safety is not assumed from the
    rounding: the quantised schedule is certified on the reference model afterwards.

    Parameters
    ----------
    schedule : Schedule
        Continuous-time schedule, s.
    tick_s : float
        Firmware tick, s.
    min_gap_s : float
        Minimum time between events (and from loading to the first), s.
    flip_air_s : float
        Time in the air during a flip, s.

    Returns
    -------
    Schedule
        Schedule whose event times are whole multiples of ``tick_s``.
    """
    gap = math.ceil(min_gap_s / tick_s - _EPS)
    air = math.ceil(flip_air_s / tick_s - _EPS)
    out: list[Event] = []
    prev, prev_kind, released = 0, None, False
    evs = schedule.events
    for k, ev in enumerate(evs):
        if ev.kind == "done" and released:
            out.append(Event("done", prev * tick_s))  # done together with the release
            continue
        # A platen opening together with done releases the food: it is the end of the cook.
        released = ev.kind == "platen_open" and k + 1 < len(evs) and evs[k + 1].at_s == ev.at_s
        x = ev.at_s / tick_s
        ticks = math.ceil(x - _EPS) if ev.kind == "done" or released else round(x)
        earliest = prev + max(gap, air if prev_kind == "flip" else 0)
        ticks = max(ticks, earliest)
        out.append(Event(ev.kind, ticks * tick_s))
        prev, prev_kind = ticks, ev.kind
    return Schedule(tuple(out))
