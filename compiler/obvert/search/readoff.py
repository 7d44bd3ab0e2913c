"""The done time of an event sequence, read off one run per scenario.

The food is left on the plate long after its last event; each row of the run says what
removing it then would give (:func:`obvert.certify.history.slack_rows`). The done time is the
first moment, no earlier than the appliance allows after the last event, where every scenario
passes: the slack crosses zero between two rows and the crossing is interpolated linearly, so
the done time moves continuously with the event times (what a search over them needs).
"""

from __future__ import annotations

import math
from collections.abc import Sequence as Seq
from dataclasses import dataclass

import numpy as np

from obvert.certify.history import slack_rows
from obvert.plan.schedule import Event, Schedule
from obvert.problem.model import Case


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


def read_done(cases: Seq[Case], seq: Sequence, dwell: Seq[float], horizon_s: float) -> float:
    """Earliest done time at which every case passes, s (``inf``: not by ``horizon_s``).

    Parameters
    ----------
    cases : sequence of Case
        The scenarios (and the mesh they run on).
    seq : Sequence
        The events and the appliance's limits.
    dwell : sequence of float
        Time on the plate before each event, s.
    horizon_s : float
        How long each run lasts at most, s.

    Returns
    -------
    float
        The done time, s, interpolated between time steps where the slack crosses zero.
    """
    lower = seq.earliest_done_s(dwell)
    horizon = max(float(horizon_s), lower + 1.0)
    long = seq.schedule(dwell, horizon)
    worst = lower
    for case in cases:
        t, slack = slack_rows(case, long)
        ok = (t >= lower - 1e-9) & (slack >= 0.0)
        hits = np.flatnonzero(ok)
        if hits.size == 0:
            return math.inf
        i = int(hits[0])
        at = float(t[i])
        if i > 0 and t[i - 1] < lower - 1e-9 and slack[i - 1] >= 0.0:
            at = lower  # passing already on both sides of the earliest allowed time
        elif i > 0 and np.isfinite(slack[i - 1]):
            s0, s1 = float(slack[i - 1]), float(slack[i])
            t0 = float(t[i - 1])
            at = max(lower, t0 + (at - t0) * (-s0) / (s1 - s0))
        worst = max(worst, at)
    return worst
