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

import numpy as np

from obvert.certify.history import slack_rows
from obvert.plan.schedule import Sequence
from obvert.problem.model import Case

__all__ = ["Sequence", "read_done"]


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
        t, slack = slack_rows(case, long, lower - 1e-9)
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
