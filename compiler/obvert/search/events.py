"""Minimum-time event times by direct search on the compiled finite-volume model.

The unknowns are the dwells before each event (at most a handful); the done time for given
dwells is read off one run per scenario (:func:`obvert.search.readoff.read_done`) and is
minimised with the Nelder-Mead simplex (J. A. Nelder and R. Mead, "A simplex method for
function minimization", The Computer Journal 7(4), 1965, 308-313; the implementation of
``scipy.optimize.minimize``), which needs no derivatives: the done time has kinks where the
binding scenario, point or rule changes, which a derivative-free search steps over. Each run is
a compiled finite-volume run of the same kernel as the reference, on a coarser mesh chosen in
the spec (``[planning] search_cells`` and ``search_step``); its done times differ from the
reference's by a few tenths of a per cent, nearly the same for neighbouring event times, so
the event times it picks are the reference's to within the search's tolerance.

The search starts from a neighbouring node's event times (continuation) or from the optimum
with one event fewer (:func:`seed_from`), with a simplex a few per cent of each dwell wide. A
start predicted from neighbours is already close to the optimum; there the search fits
quadratic models of the done time in a trust region of a couple of seconds instead (COBYQA,
Constrained Optimization BY Quadratic Approximations: ``scipy.optimize.minimize`` since SciPy
1.14, SciPy reference guide), which needed two to five times fewer runs than the simplex from
the same starts and reached the same done times within a fiftieth of a second
(docs/speed.md).
"""

from __future__ import annotations

import math
from collections.abc import Sequence as Seq
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize

from obvert.problem.model import Case
from obvert.search.readoff import Sequence, read_done

#: Width of the first simplex, as a fraction of each dwell (at least :data:`MIN_STEP_S`).
SIMPLEX_FRACTION = 0.05

#: Smallest first step of a dwell, s.
MIN_STEP_S = 1.0

#: The simplex search stops when the simplex is this narrow (half the usual 0.1 s tick), s,
#: and its done times this close, s. (Looser, a tick and half a tick, stopped a cold 6 mm
#: three-flip search 0.15 s short of its optimum: tests/physics/test_event_search.py.)
DWELL_TOLERANCE_S = 0.05
DONE_TOLERANCE_S = 0.02

#: First trust-region radius of a search from a start predicted by neighbouring nodes, s.
NEAR_RADIUS_S = 2.0

#: Last trust-region radius of a screening search (every sequence of a node is screened;
#: only the fastest are searched on to :data:`DWELL_TOLERANCE_S`), s. Screened to 0.5 s,
#: the demo rows chose the same sequences and cook times within one 0.1 s tick as searched
#: to 0.05 s throughout, with a quarter fewer runs (docs/speed.md).
SCREEN_TOLERANCE_S = 0.5

#: Last trust-region radius of the search on from a screened point (the sequences within
#: reach of the fastest), s. The done time is flat near its optimum (a flip 1.4 s off the
#: brute-force optimum cost one 0.1 s tick: docs/speed.md), so dwells within 0.2 s give the
#: same ticks: searched on to 0.2 s instead of 0.05 s, the production-size demo kept 74 of 80
#: cook times and moved 6 by one tick (4 shorter, 2 longer) with 5 % fewer runs.
POLISH_TOLERANCE_S = 0.2

#: Most runs of the search model per scenario in one search (bounds the cost of a hard one).
MAX_EVALUATIONS = 400

#: Runs last this much longer than the best done time so far (a point that is slower than
#: that needs no exact value: it only has to lose).
HORIZON_FACTOR = 1.3

#: Longest cook considered, s.
LONGEST_COOK_S = 4.0 * 3600.0


class SearchError(RuntimeError):
    """No event times of the sequence reach the target within :data:`LONGEST_COOK_S`."""


@dataclass(frozen=True)
class Searched:
    """The outcome of one search.

    Attributes
    ----------
    seq : Sequence
        Events and the appliance's limits.
    dwell_s : tuple of float
        Time on the plate before each event, s.
    done_s : float
        Done time on the search model, s.
    runs : int
        Done-time evaluations (each one run per scenario), -.
    status : str
        How the search ended, in words.
    """

    seq: Sequence
    dwell_s: tuple[float, ...]
    done_s: float
    runs: int
    status: str


def _first_done(cases: Seq[Case], seq: Sequence, dwell: np.ndarray, hint_s: float) -> float:
    """Done time at ``dwell``, lengthening the runs until the target is reached."""
    horizon = max(hint_s, seq.earliest_done_s(dwell) + 60.0)
    while True:
        done = read_done(cases, seq, dwell, horizon)
        if math.isfinite(done):
            return done
        if horizon >= LONGEST_COOK_S:
            raise SearchError(
                f"sequence {seq.kinds}: the target is not reached within "
                f"{LONGEST_COOK_S / 3600.0:g} h of cooking"
            )
        horizon = min(2.0 * horizon, LONGEST_COOK_S)


def search_events(
    cases: Seq[Case],
    seq: Sequence,
    start: Seq[float],
    hint_s: float = 0.0,
    simplex_fraction: float = SIMPLEX_FRACTION,
    near: bool = False,
    radius_s: tuple[float, float] = (NEAR_RADIUS_S, DWELL_TOLERANCE_S),
) -> Searched:
    """Dwells of least done time for the event sequence, s.

    Parameters
    ----------
    cases : sequence of Case
        The scenarios every schedule must pass, on the search mesh.
    seq : Sequence
        Events before done and the appliance's limits.
    start : sequence of float
        Dwells to start from, s (clipped to the appliance's limits).
    hint_s : float
        Expected done time, s (the first run's length; 0: from the limits).
    simplex_fraction : float
        Width of the first simplex as a fraction of each dwell, -.
    near : bool
        The start is close to the optimum (predicted from neighbouring nodes): search with
        quadratic models in a trust region (``radius_s``) instead of the simplex.
    radius_s : (float, float)
        First and last trust-region radius of a ``near`` search, s. The last one is the
        tolerance of the dwells found either way (the simplex stops when it is that narrow,
        and its done times within that tolerance times
        ``DONE_TOLERANCE_S / DWELL_TOLERANCE_S``); above :data:`POLISH_TOLERANCE_S` the
        search is a screening (status "screened to ... s").

    Returns
    -------
    Searched

    Raises
    ------
    SearchError
        The target is not reached within :data:`LONGEST_COOK_S` from the start.
    """
    lb = seq.lower_bounds()[: seq.n_free]
    x0 = np.maximum(np.asarray(start, dtype=float), lb)
    best = [_first_done(cases, seq, x0, hint_s)]
    if seq.n_free == 0:
        return Searched(seq, (), best[0], 1, "no events: done read off one run")
    runs = [1]

    def done_of(x: np.ndarray) -> float:
        runs[0] += 1
        d = np.maximum(x, lb)
        if np.any(x < lb - 1e-12):
            return 1e12 + float(np.sum(lb - x))  # outside the appliance's limits
        done = read_done(cases, seq, d, HORIZON_FACTOR * best[0])
        if math.isfinite(done):
            best[0] = min(best[0], done)
            return done
        return 1e9 + float(np.sum(d))  # slower than the horizon: worse than any point seen

    if near:
        res = minimize(
            done_of,
            x0,
            method="COBYQA",
            bounds=[(float(v), None) for v in lb],
            options={
                "initial_tr_radius": radius_s[0],
                "final_tr_radius": radius_s[1],
                "maxfev": MAX_EVALUATIONS,
            },
        )
    else:
        steps = np.maximum(simplex_fraction * x0, MIN_STEP_S)
        simplex = np.vstack([x0, x0 + np.diag(steps)])
        res = minimize(
            done_of,
            x0,
            method="Nelder-Mead",
            options={
                "initial_simplex": simplex,
                "xatol": radius_s[1],
                "fatol": DONE_TOLERANCE_S * radius_s[1] / DWELL_TOLERANCE_S,
                "maxfev": MAX_EVALUATIONS,
            },
        )
    x = np.maximum(np.asarray(res.x, dtype=float), lb)
    done = float(res.fun)
    if not math.isfinite(done) or done >= 1e9:
        raise SearchError(f"sequence {seq.kinds}: the search found no passing point")
    if not res.success:
        status = f"stopped after {runs[0]} runs"
    elif radius_s[1] > POLISH_TOLERANCE_S:
        status = f"screened to {radius_s[1]:g} s"
    else:
        status = "converged"
    return Searched(seq, tuple(float(v) for v in x), done, runs[0], status)


def seed_from(fewer: Searched, seq: Sequence) -> tuple[float, ...]:
    """Start for ``seq`` from the optimum of its sequence less the last event, s.

    A new flip splits the time on the plate before done in two; a platen closing (or
    opening) goes as early as the appliance allows.
    """
    if seq.kinds[:-1] != fewer.seq.kinds:
        raise ValueError(f"{seq.kinds} does not extend {fewer.seq.kinds} by one event")
    _, t_end, _ = fewer.seq.events(fewer.dwell_s)
    last = fewer.done_s - t_end
    lb = seq.lower_bounds()
    new = 0.5 * last if seq.kinds[-1] == "flip" else float(lb[seq.n_free - 1])
    return (*fewer.dwell_s, max(new, float(lb[seq.n_free - 1])))


def predict(history: Seq[tuple[float, tuple[float, ...]]], start_temp_c: float) -> np.ndarray:
    """Dwells at ``start_temp_c`` from earlier nodes of the same thickness, s.

    ``history`` holds (start temperature, dwells) of the nodes solved so far, in order; the
    last two are extrapolated linearly in the start temperature (one: taken as it is).
    """
    if not history:
        raise ValueError("no earlier node to predict from")
    t1, d1 = history[-1]
    if len(history) == 1:
        return np.array(d1, dtype=float)
    t0, d0 = history[-2]
    if t1 == t0:
        return np.array(d1, dtype=float)
    w = (start_temp_c - t1) / (t1 - t0)
    return np.array(d1, dtype=float) + w * (np.array(d1) - np.array(d0))
