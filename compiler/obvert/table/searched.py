"""One thickness row of the table planned by direct search of event times.

Per node, the event sequences the appliance allows are screened on the coarse mesh
(:func:`obvert.search.search_events`, to :data:`SCREEN_TOLERANCE_S`), each starting from its
own event times at the row's earlier nodes (extrapolated along the start temperature and
rescaled by how far the sequence with one event fewer moved, which follows the jump at the
freezing point), or else from the optimum with one event fewer. A further flip is not
searched once the flip before it saved no more than the flip cost (each flip saves less than
the one before). The screened sequences within :data:`POLISH_BAND_S` of the least cost (cook
time plus ``flip_cost`` per flip, on the search mesh) are searched on to
:data:`~obvert.search.events.POLISH_TOLERANCE_S`, and the least cost wins. Its event times
are put on whole ticks (with ``[planning] reference_polish = "last_event"``, the last event
is then searched again on the reference itself, tick by tick:
:func:`_last_event_on_reference`), and its done time is read off one reference run per
scenario, against the target raised by the margin certification will ask for (the spec's
minimum plus the reference error measured at the previous node of the row), so that
certification usually passes at its first run. Certification then decides, as for any plan
(:func:`obvert.table.entry.certified_node`).

The nodes of a row are solved in order of start temperature, each from the ones before it,
whichever worker runs the row: the result does not depend on how the rows are shared out.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from obvert.certify.node import raised
from obvert.plan.quantize import quantize
from obvert.problem.model import Case, Problem
from obvert.search import (
    Searched,
    SearchError,
    Sequence,
    limits,
    read_done,
    search_events,
    seed_from,
)
from obvert.search.events import (
    NEAR_RADIUS_S,
    POLISH_TOLERANCE_S,
    SCREEN_TOLERANCE_S,
    predict,
)
from obvert.table.entry import BuildError, certified_node, node_name
from obvert.table.model import NOT_SEARCHED, Candidate, Node

#: Trust region of a screening search from a predicted start: first and last radius, s.
SCREEN = (NEAR_RADIUS_S, SCREEN_TOLERANCE_S)

#: Screened sequences whose cost is within this of the least cost are searched on, s.
POLISH_BAND_S = 0.3

#: A sequence whose cost at the previous node of the row was more than this fraction above
#: that node's least cost is not searched (sequences with no events cost one run and always
#: are). On the production-size demo, of the sequences more than 5 % behind at a node, none
#: came within 2.5 s (3.5 %) of the fastest at the next one, the freezing point included
#: (docs/speed.md), where the polish band is 0.3 s.
FAR_BEHIND = 0.05

#: Per event sequence, (start temperature degC, dwells s, done s) of the row's nodes so far.
History = dict[tuple[str, ...], list[tuple[float, tuple[float, ...], float]]]

#: Per event sequence searched at the previous node of the row, its cost's relative excess
#: over that node's least cost (0 for the sequence chosen there).
Behind = dict[tuple[str, ...], float]


def search_row(problem: Problem, i: int) -> list[Node]:
    """All nodes of thickness row ``i``, planned by event-time search."""
    spec = problem.spec
    thick = spec.grid.thickness_m[i]
    history: History = {}
    nominal: History = {}  # the same for the nominal plans (price of robustness)
    error = (0.0, 0.0)  # reference error (log10, K) at the previous node of the row
    behind: Behind = {}
    out = []
    for j, t0 in enumerate(spec.grid.start_temp_c):
        node, error = _node(problem, i, j, (thick, t0), (history, nominal), error, behind)
        out.append(node)
    return out


def _cold_start(seq: Sequence, cook_s: float) -> tuple[float, ...]:
    """Start with no neighbour: flips evenly spaced over ``cook_s``, platen moves early, s."""
    flips = seq.kinds.count("flip")
    lb = seq.lower_bounds()
    return tuple(
        cook_s / (flips + 1) if kind == "flip" else float(lb[k]) for k, kind in enumerate(seq.kinds)
    )


def _search(
    cases: tuple[Case, ...],
    seq: Sequence,
    starts: list[tuple[tuple[float, ...], bool]],
    hint_s: float,
    fewer: Searched | None,
    radius_s: tuple[float, float] = SCREEN,
) -> tuple[Searched, int]:
    """Search from the first start; the others only if it fails or is no faster than ``fewer``.

    Each start is (dwells in s, whether it was predicted from neighbouring nodes); a
    predicted start is searched in a trust region (``radius_s``: first and last radius, s),
    the others by the simplex to the last radius.
    """
    best: Searched | None = None
    runs, errors = 0, []
    for start, near in starts:
        try:
            res = search_events(cases, seq, start, hint_s, near=near, radius_s=radius_s)
        except SearchError as exc:
            errors.append(str(exc))
            continue
        runs += res.runs
        if best is None or res.done_s < best.done_s - 1e-9:
            best = res
        if fewer is None or best.done_s < fewer.done_s - 1e-9:
            break
    if best is None:
        raise SearchError("; ".join(errors))
    return best, runs


def _node(
    problem: Problem,
    i: int,
    j: int,
    at: tuple[float, float],
    histories: tuple[History, History],
    error: tuple[float, float],
    behind: Behind,
) -> tuple[Node, tuple[float, float]]:
    """Plan and certify one node; ``behind`` is read, then refilled for the next node."""
    spec = problem.spec
    a, p = spec.appliance, spec.planning
    history, nominal_history = histories
    cases = problem.cases_at(*at)
    coarse = problem.search_cases_at(*at)
    bounds = limits(coarse[0])
    hint = 1.2 * max((v for v in bounds.values() if v is not None), default=600.0)
    found: dict[tuple[str, ...], Searched] = {}
    why_not: dict[tuple[str, ...], str] = {}
    runs_of: dict[tuple[str, ...], int] = {}
    for kinds in problem.sequences:
        seq = Sequence(kinds, a.min_event_gap_s, a.flip_air_s)
        fewer = found.get(kinds[:-1]) if kinds and kinds[-1] == "flip" else None
        unpaid = _unpaid(kinds, found, p.flip_cost_s) or _far_behind(kinds, behind, history)
        if unpaid is not None:
            why_not[kinds] = unpaid
            continue
        starts: list[tuple[tuple[float, ...], bool]] = []
        if kinds in history:
            starts.append((_predicted(history, kinds, found, at[1]), True))
        if kinds and kinds[:-1] in found:
            starts.append((seed_from(found[kinds[:-1]], seq), False))
        starts.append((_cold_start(seq, hint), False))
        # the sequence chosen at the previous node is searched to the polish's tolerance at
        # once (one trust-region search instead of a screening and a second search)
        radius = (NEAR_RADIUS_S, POLISH_TOLERANCE_S) if behind.get(kinds) == 0.0 else SCREEN
        try:
            found[kinds], runs_of[kinds] = _search(coarse, seq, starts, hint, fewer, radius)
        except SearchError as exc:
            why_not[kinds] = str(exc)
    if not found:
        raise BuildError(
            f"{node_name(at)}: no event sequence reaches the target: " + "; ".join(why_not.values())
        )

    def cost(r: Searched) -> float:
        return r.done_s + r.seq.kinds.count("flip") * p.flip_cost_s

    # the screened sequences within reach of the fastest are searched on (polished)
    best_cost = min(cost(r) for r in found.values())
    for kinds, res in found.items():
        if res.status.startswith("screened") and cost(res) <= best_cost + POLISH_BAND_S:
            finer = _polish(coarse, res)
            runs_of[kinds] += finer.runs
            if finer.done_s > res.done_s:  # nothing faster within the finer tolerance
                finer = replace(res, status=finer.status)
            found[kinds] = finer
    for kinds, res in found.items():
        history.setdefault(kinds, []).append((at[1], res.dwell_s, res.done_s))
    least = min(cost(r) for r in found.values())
    behind.clear()
    behind.update({kinds: cost(res) / least - 1.0 for kinds, res in found.items()})
    total_runs = sum(runs_of.values())
    cands = []
    for kinds in problem.sequences:
        if kinds in found:
            n = runs_of[kinds]
            runs = f"{n} run{'' if n == 1 else 's'} of the search mesh"
            note = f"searched: {found[kinds].status} ({runs})"
            cands.append(Candidate(kinds.count("flip"), found[kinds].done_s, note, kinds))
        else:
            cands.append(Candidate(kinds.count("flip"), None, why_not[kinds], kinds))
    choice = min(found.values(), key=cost)  # ties: the first (fewer events) wins
    seq = choice.seq
    ticked = quantize(
        seq.schedule(choice.dwell_s, choice.done_s), a.tick_s, a.min_event_gap_s, a.flip_air_s
    )
    dwell = seq.dwells_of(ticked)
    # done off the reference itself, against the margin certification will ask for
    stricter = [raised(c, p.min_margin_log + error[0], error[1]) for c in cases]
    # the search mesh's done time is within a few tenths of a per cent of the reference's
    horizon = 1.03 * choice.done_s + 10.0
    if p.reference_polish == "last_event" and seq.n_free > 0:
        dwell, planned = _last_event_on_reference(stricter, seq, dwell, horizon, a.tick_s)
    else:
        planned = read_done(stricter, seq, dwell, horizon)
    if not math.isfinite(planned):
        planned = read_done(stricter, seq, dwell, 1.5 * choice.done_s + 60.0)
    if not math.isfinite(planned):
        planned = choice.done_s
    ticked = seq.schedule(dwell, max(planned, seq.earliest_done_s(dwell)))
    ticked = quantize(ticked, a.tick_s, a.min_event_gap_s, a.flip_air_s)
    nominal = _nominal(problem, at, choice, planned, (history, nominal_history))
    node, cert = certified_node(
        problem,
        cases,
        (i, j),
        at,
        ticked,
        planned,
        candidates=tuple(
            c if c.sequence != seq.kinds else _with_reference(c, planned) for c in cands
        ),
        bounds_s=tuple(sorted(bounds.items())),
        nominal_planned_s=nominal,
        model_planned_s=choice.done_s,
        calibration_note=(
            f"event times searched on {problem.search.n_cells} cells, "
            f"{problem.search.dt_max_s:g} s steps ({total_runs} runs); done read off the "
            "reference"
        ),
        planned_dwell_s=dwell,
    )
    err = (cert.error.log, cert.error.temp_k) if cert.error else (0.0, 0.0)
    return node, err


def _polish(cases: tuple[Case, ...], screened: Searched) -> Searched:
    """``screened`` searched on to :data:`POLISH_TOLERANCE_S` (itself if that fails)."""
    try:
        res = search_events(
            cases,
            screened.seq,
            screened.dwell_s,
            screened.done_s,
            near=True,
            radius_s=(SCREEN_TOLERANCE_S, POLISH_TOLERANCE_S),
        )
    except SearchError:
        return screened
    return res


#: How far the last event is searched on the reference either way, s (the search mesh's
#: optimum put a 2-flip plan's last flip 1.4 s early: docs/speed.md).
REFERENCE_POLISH_S = 2.0


def _last_event_on_reference(
    cases: list[Case], seq: Sequence, dwell: tuple[float, ...], horizon_s: float, tick_s: float
) -> tuple[tuple[float, ...], float]:
    """The last event's dwell searched on the reference, in whole ticks; (dwells s, done s).

    Golden-section search over :data:`REFERENCE_POLISH_S` either way of ``dwell`` (whose
    events are on ticks), each point's done time read off one reference run per case
    (:func:`obvert.search.read_done`, continuous in the dwell), down to one tick; the best
    point read is kept (the start's own when nothing is faster). Moving the last dwell by
    whole ticks keeps every event on a tick.
    """
    k = seq.n_free - 1
    lb = float(seq.lower_bounds()[k])
    seen: dict[int, float] = {}

    def done_at(m: int) -> float:  # the last dwell moved by m ticks
        if m not in seen:
            d = list(dwell)
            d[k] = dwell[k] + m * tick_s
            seen[m] = read_done(cases, seq, d, horizon_s) if d[k] >= lb - 1e-9 else math.inf
        return seen[m]

    lo, hi = -round(REFERENCE_POLISH_S / tick_s), round(REFERENCE_POLISH_S / tick_s)
    ratio = (math.sqrt(5.0) - 1.0) / 2.0
    while hi - lo > 2:
        a_, b_ = round(hi - ratio * (hi - lo)), round(lo + ratio * (hi - lo))
        if a_ == b_:
            b_ = a_ + 1
        if done_at(a_) <= done_at(b_):
            hi = b_
        else:
            lo = a_
    for m in range(lo, hi + 1):
        done_at(m)
    done_at(0)
    best = min(seen, key=lambda m: (seen[m], abs(m)))  # ties: the search mesh's own time
    d = list(dwell)
    d[k] = dwell[k] + best * tick_s
    return tuple(d), seen[best]


def _nominal_start(
    history: History, robust_history: History, robust: Searched, t0: float
) -> tuple[float, ...]:
    """Start of the nominal search at ``t0``: the robust dwells times their last ratio, s.

    The nominal plan's dwells relative to the robust plan's change slowly along a row, even
    where both jump at the freezing point; with no earlier node, the robust dwells.
    """
    kinds = robust.seq.kinds
    nom = [e for e in history.get(kinds, ()) if e[0] != t0]
    rob = {e[0]: e[1] for e in robust_history.get(kinds, ()) if e[0] != t0}
    if not nom or nom[-1][0] not in rob:
        return robust.dwell_s
    ratio = np.asarray(nom[-1][1]) / np.asarray(rob[nom[-1][0]])
    return tuple(float(v) for v in np.asarray(robust.dwell_s) * ratio)


def _extrapolated(
    history: History, kinds: tuple[str, ...], t0: float, nodes: int = 2
) -> tuple[np.ndarray, float]:
    """Dwells (s) and done time (s) of ``kinds`` at ``t0`` from the row's last ``nodes`` nodes.

    Two nodes: the straight line through them; one: its values as they are.
    """
    last = [e for e in history[kinds] if e[0] != t0][-nodes:]
    dwell = predict([(t, d) for t, d, _ in last], t0)
    done = float(predict([(t, (x,)) for t, _, x in last], t0)[0])
    return dwell, done


def _predicted(
    history: History, kinds: tuple[str, ...], found: dict[tuple[str, ...], Searched], t0: float
) -> tuple[float, ...]:
    """Start for ``kinds`` at ``t0``: the row's dwells extrapolated, rescaled, s.

    Done times jump where the start temperature crosses the freezing point (latent heat), and
    a straight extrapolation misses the jump. The sequence with one event fewer (or, when it
    was not searched here, the nearest shorter one that was; the one with no events always
    is) has already been searched at this node: its done time over its own extrapolated done
    time scales the dwells (1 in smooth stretches of the row). Just past the jump the line
    through the last two nodes carries the jump's slope; the last node alone is taken
    instead wherever it predicted that shorter sequence's done time better.
    """
    # no shorter sequence to rescale by: the straight line
    best = (math.inf, _extrapolated(history, kinds, t0)[0])
    shorter = (kinds[:n] for n in range(len(kinds) - 1, -1, -1))
    parent = next(
        (s for s in shorter if s in found and any(e[0] != t0 for e in history.get(s, ()))), None
    )
    if parent is not None:  # the nearest shorter sequence searched here
        done = found[parent].done_s
        for nodes in (2, 1):
            dwell, _ = _extrapolated(history, kinds, t0, nodes)
            _, expected = _extrapolated(history, parent, t0, nodes)
            if expected > 0.0 and abs(done / expected - 1.0) < best[0] - 1e-12:
                best = (abs(done / expected - 1.0), dwell * (done / expected))
    return tuple(float(v) for v in best[1])


def _unpaid(
    kinds: tuple[str, ...], found: dict[tuple[str, ...], Searched], flip_cost_s: float
) -> str | None:
    """Why ``kinds`` is not searched: its last flip's predecessor did not pay (None: search it).

    Flips come before any platen move in a sequence. With ``n`` flips, the sequences with
    ``n - 1`` and ``n - 2`` flips and the same platen moves are compared: if the ``n - 1``-th
    flip did not shorten the cook by more than the flip cost, a further flip is not searched
    (each further flip shortens the cook by less than the one before: docs/speed.md).
    """
    n = kinds.count("flip")
    if n < 2:
        return None
    rest = tuple(k for k in kinds if k != "flip")
    one_less = ("flip",) * (n - 1) + rest
    two_less = ("flip",) * (n - 2) + rest
    if one_less not in found or two_less not in found:
        return None
    gain = found[two_less].done_s - found[one_less].done_s
    if gain > flip_cost_s:
        return None
    return (
        f"{NOT_SEARCHED}flip {n - 1} shortened the cook by {gain:.1f} s, no more than the "
        f"flip cost ({flip_cost_s:g} s)"
    )


def _far_behind(kinds: tuple[str, ...], behind: Behind, history: History) -> str | None:
    """Why ``kinds`` is not searched: far behind at the previous node (None: search it).

    Only a sequence searched at the previous node is judged (one left out there is searched
    again, which refreshes its history); one with no events costs a single run and is
    always run.
    """
    gap = behind.get(kinds)
    if not kinds or gap is None or gap <= FAR_BEHIND:
        return None
    t_prev = history[kinds][-1][0]
    return (
        f"{NOT_SEARCHED}{100.0 * gap:.1f} % slower than the fastest sequence at the previous "
        f"node ({t_prev:g} degC), more than {100.0 * FAR_BEHIND:g} %"
    )


def _with_reference(c: Candidate, planned_s: float) -> Candidate:
    return Candidate(c.flips, c.planned_cook_time_s, c.note, c.sequence, planned_s)


def _nominal(
    problem: Problem,
    at: tuple[float, float],
    robust: Searched,
    reference_s: float,
    histories: tuple[History, History],
) -> float | None:
    """Done time of the chosen sequence at nominal conditions, s (None: no tolerances).

    Searched on the search mesh from the robust event times, scaled as the nominal ones were
    at the row's previous node (``histories``: robust and nominal, :func:`_nominal_start`),
    and carried to the reference by the robust plan's own ratio: ``reference_s`` (the robust
    plan's done time read off the reference, against the target raised by the margin
    certification asks for) over its done time on the search mesh. The two plans differ in
    their scenario only, which moves the search mesh's few tenths of a per cent of error by
    far less than a tick (docs/speed.md), so the price of robustness compares like with like
    without a reference run of its own.
    """
    nom = problem.nominal
    if nom is None:
        return None
    ref = problem.case(nom, *at)
    coarse = (replace(ref, settings=problem.search),)
    kinds = robust.seq.kinds
    robust_history, history = histories
    start = _nominal_start(history, robust_history, robust, at[1])
    try:
        res = search_events(coarse, robust.seq, start, robust.done_s, near=True, radius_s=SCREEN)
    except SearchError:
        return None
    history.setdefault(kinds, []).append((at[1], res.dwell_s, res.done_s))
    return res.done_s * reference_s / robust.done_s
