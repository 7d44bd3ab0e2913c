"""Cook schedules: the event sequence an appliance runs, and the phases it implies.

A schedule is an ordered list of events (``flip``, ``platen_close``, ``platen_open``, ``done``),
each at a time in seconds from the moment the food is laid on the plate. Between events the
boundary conditions of the slab are fixed (a :class:`~obvert.thermal.boundary.Phase`). A flip
lifts the food at its event time; it spends the appliance's flip air time with both faces in
air and lands mirrored.
"""

from __future__ import annotations

from collections.abc import Sequence as Seq
from dataclasses import dataclass

import numpy as np

from obvert.firmware.contract import EVENT_CODES
from obvert.thermal.boundary import Phase, Surroundings

__all__ = ["EVENT_CODES", "Event", "Schedule", "Sequence", "Surroundings", "phases_for"]


@dataclass(frozen=True)
class Event:
    """One appliance action.

    Attributes
    ----------
    kind : str
        One of :data:`EVENT_CODES`.
    at_s : float
        Time of the action from loading, s.
    """

    kind: str
    at_s: float

    def __post_init__(self) -> None:
        if self.kind not in EVENT_CODES:
            raise ValueError(f"event kind {self.kind!r}: allowed {sorted(EVENT_CODES)}")


@dataclass(frozen=True)
class Schedule:
    """An ordered event list ending with ``done``.

    Attributes
    ----------
    events : tuple of Event
        Events in time order; the last is ``done``.
    """

    events: tuple[Event, ...]

    def __post_init__(self) -> None:
        if not self.events or self.events[-1].kind != "done":
            raise ValueError("a schedule must end with a 'done' event")
        times = [e.at_s for e in self.events]
        if any(b < a for a, b in zip(times, times[1:], strict=False)) or times[0] < 0:
            raise ValueError(f"event times {times!r}: must be non-negative and non-decreasing")

    @property
    def done_s(self) -> float:
        """Cook time (removal from the plate), s."""
        return self.events[-1].at_s

    @property
    def flips(self) -> int:
        """Number of flips."""
        return sum(e.kind == "flip" for e in self.events)

    def with_done(self, done_s: float) -> Schedule:
        """Same schedule with the done time moved to ``done_s`` (s).

        A platen opening at the done time (the clamshell releasing the food) moves with it.
        """
        head = list(self.events[:-1])
        if head and head[-1].kind == "platen_open" and head[-1].at_s == self.done_s:
            head[-1] = Event("platen_open", done_s)
        return Schedule((*head, Event("done", done_s)))


@dataclass(frozen=True)
class Sequence:
    """An event sequence on one appliance, and what the appliance allows between events.

    Attributes
    ----------
    kinds : tuple of str
        Events before done, in order (``flip``, ``platen_close``, ``platen_open``).
    min_gap_s : float
        Least time on the plate between loading or landing and the next event, s; after a
        flip the air time counts towards it.
    flip_air_s : float
        Time a flipped food spends in the air, s.
    """

    kinds: tuple[str, ...]
    min_gap_s: float
    flip_air_s: float

    @property
    def n_free(self) -> int:
        """Dwells searched (one before each event before done)."""
        return len(self.kinds)

    def lower_bounds(self) -> np.ndarray:
        """Least dwell before each event and before done, s (shape ``n_free + 1``)."""
        lb = [self.min_gap_s]
        for prev in self.kinds:
            air = self.flip_air_s if prev == "flip" else 0.0
            lb.append(max(self.min_gap_s - air, 0.0))
        return np.array(lb)

    def events(self, dwell: Seq[float]) -> tuple[tuple[Event, ...], float, bool]:
        """Events before done for the dwells, the time the last one ends, s, and the platen.

        Returns the events, the time the food is back on the plate after the last event
        (s) and whether the platen is closed then.
        """
        if len(dwell) != self.n_free:
            raise ValueError(f"{len(dwell)} dwells for the sequence {self.kinds}")
        out, t, closed = [], 0.0, False
        for kind, d in zip(self.kinds, dwell, strict=True):
            t += float(d)
            out.append(Event(kind, t))
            if kind == "flip":
                t += self.flip_air_s
            closed = {"platen_close": True, "platen_open": False}.get(kind, closed)
        return tuple(out), t, closed

    def earliest_done_s(self, dwell: Seq[float]) -> float:
        """Earliest done time the appliance allows after the events, s."""
        _, t_end, _ = self.events(dwell)
        return t_end + float(self.lower_bounds()[-1])

    def dwells_of(self, schedule: Schedule) -> tuple[float, ...]:
        """The dwell before each event of ``schedule`` (this sequence's events), s."""
        head = [
            e for e in schedule.events[:-1] if e.at_s < schedule.done_s or e.kind != "platen_open"
        ]
        if tuple(e.kind for e in head) != self.kinds:
            raise ValueError(f"schedule events {[e.kind for e in head]} are not {self.kinds}")
        out, t = [], 0.0
        for e in head:
            out.append(e.at_s - t)
            t = e.at_s + (self.flip_air_s if e.kind == "flip" else 0.0)
        return tuple(out)

    def schedule(self, dwell: Seq[float], done_s: float) -> Schedule:
        """The schedule with these dwells and done at ``done_s`` (a closed platen opens then)."""
        head, _, closed = self.events(dwell)
        tail = (Event("platen_open", done_s),) if closed else ()
        return Schedule((*head, *tail, Event("done", done_s)))


def phases_for(schedule: Schedule, env: Surroundings, rest_s: float = 0.0) -> list[Phase]:
    """Phases (fixed boundary conditions) that the slab lives through under ``schedule``.

    Parameters
    ----------
    schedule : Schedule
        Events to run.
    env : Surroundings
        Plate, air and platen conditions of the appliance.
    rest_s : float
        Time after removal credited as carry-over (both faces in air), s.

    Returns
    -------
    list of Phase
        Phases in order, durations in s.
    """
    phases: list[Phase] = []
    t = 0.0
    top = env.air
    for ev in schedule.events:
        if ev.at_s < t - 1e-9:
            raise ValueError(
                f"event {ev.kind} at {ev.at_s:.3f} s falls inside the previous flip "
                f"(which lands at {t:.3f} s)"
            )
        phases.append(Phase(ev.at_s - t, env.plate, top))
        t = ev.at_s
        if ev.kind == "flip":
            phases.append(Phase(env.flip_air_s, env.air, env.air, flip_before=True))
            t += env.flip_air_s
        elif ev.kind == "platen_close":
            if env.platen is None:
                raise ValueError("schedule closes a platen but the appliance has none")
            top = env.platen
        elif ev.kind == "platen_open":
            top = env.air
    if rest_s > 0.0:
        phases.append(Phase(rest_s, env.air, env.air))
    return [p for p in phases if p.duration_s > 0.0 or p.flip_before]
