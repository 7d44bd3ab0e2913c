"""The event-time search against exhaustive scans with a general-purpose library.

The search (``obvert.search``) minimises the done time over the dwells before each event with
Nelder-Mead, reading each done time off one run. The checks below hold it to independent
answers on the same compiled model:

* the done time read off one run against the earliest passing done found by bisection on
  exact runs of each trial schedule (the way certification confirms a done time);
* the one-flip optimum against ``scipy.optimize.brute`` (an exhaustive grid, then a
  bounded polish; SciPy reference guide, scipy.optimize.brute) over the flip time;
* the two-flip optimum against a 3 s grid over both flips, polished by
  ``scipy.optimize.minimize`` (Powell) from the best grid point.

The demo kitchen's griddle patty is used on a coarse mesh (the search's own default) so the
checks run in seconds; a 6 mm patty from 4 degC has its optimum well inside the limits.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from scipy.optimize import brute, minimize

from obvert import demo_spec
from obvert.certify.node import judge_all
from obvert.problem import problem_of
from obvert.search import Sequence, read_done, search_events, seed_from
from obvert.search.events import predict

SPEC = demo_spec("griddle", thickness=["6 mm", "10 mm"], start_temperature=["-6 degC", "4 degC"])
SPEC = replace(SPEC, tolerances=type(SPEC.tolerances)())
PROBLEM = problem_of(SPEC)
APP = SPEC.appliance


def _seq(flips: int) -> Sequence:
    return Sequence(("flip",) * flips, APP.min_event_gap_s, APP.flip_air_s)


def _cases(thick: float = 0.006, t0: float = 4.0):
    return PROBLEM.search_cases_at(thick, t0)


def test_done_read_off_one_run_equals_bisection_on_exact_runs() -> None:
    cases = _cases()
    seq = _seq(1)
    dwell = (25.0,)
    done = read_done(cases, seq, dwell, 400.0)
    step = PROBLEM.search.dt_max_s

    def passes(t: float) -> bool:
        return judge_all(cases, seq.schedule(dwell, t)).passed

    lo, hi = seq.earliest_done_s(dwell), 400.0
    assert not passes(lo) and passes(hi)
    while hi - lo > 1e-3:
        mid = 0.5 * (lo + hi)
        lo, hi = (lo, mid) if passes(mid) else (mid, hi)
    # the exact runs cut their last phase at the trial done, the long run at its own steps:
    # the two agree to within one step of the mesh
    assert abs(done - hi) <= step


def test_done_is_inf_when_the_horizon_is_too_short() -> None:
    assert read_done(_cases(), _seq(1), (25.0,), 40.0) == np.inf


def test_one_flip_optimum_matches_an_exhaustive_scan() -> None:
    cases = _cases()
    seq = _seq(1)

    def done(x: np.ndarray) -> float:
        return read_done(cases, seq, (float(np.ravel(x)[0]),), 300.0)

    scan = brute(done, [(APP.min_event_gap_s, 60.0)], Ns=101, finish=None, full_output=True)
    x_scan = float(np.ravel(scan[0])[0])
    polished = minimize(done, [x_scan], method="Powell", bounds=[(x_scan - 1.0, x_scan + 1.0)])
    best = min(float(scan[1]), float(polished.fun))
    found = search_events(cases, seq, (40.0,), 150.0)
    assert found.done_s <= best + 0.02  # the search's done tolerance
    assert found.done_s >= best - 0.05  # and no better than the scan can be (same function)
    assert abs(found.dwell_s[0] - float(polished.x[0])) < 1.0


def test_two_flip_optimum_matches_a_grid_scan() -> None:
    cases = _cases()
    seq = _seq(2)

    def done(x) -> float:
        return read_done(cases, seq, (float(x[0]), float(x[1])), 300.0)

    lb = seq.lower_bounds()
    grid = [(a, b) for a in np.arange(lb[0], 40.0, 3.0) for b in np.arange(lb[1], 40.0, 3.0)]
    values = [done(g) for g in grid]
    start = grid[int(np.argmin(values))]
    polished = minimize(done, start, method="Powell", bounds=[(lb[0], None), (lb[1], None)])
    best = min(min(values), float(polished.fun))
    one = search_events(cases, _seq(1), (30.0,), 150.0)
    found = search_events(cases, seq, seed_from(one, seq), one.done_s)
    assert found.done_s <= best + 0.05
    assert found.done_s < one.done_s  # a second flip pays on this patty


def test_continuation_start_converges_to_the_same_optimum_in_fewer_runs() -> None:
    # three flips on the 6 mm patty: from evenly spaced flips the simplex wanders (about 300
    # runs); from its neighbours' optima at -6 and -2 degC it starts next to the optimum
    seq = _seq(3)
    history = []
    for t0 in (-6.0, -2.0):
        history.append((t0, search_events(_cases(0.006, t0), seq, (40.0,) * 3, 200.0).dwell_s))
    mid = _cases(0.006, 2.0)
    cold = search_events(mid, seq, (40.0,) * 3, 200.0)
    predicted = tuple(predict(history, 2.0))
    warm = search_events(mid, seq, predicted, 200.0)
    assert abs(warm.done_s - cold.done_s) <= 0.05
    assert warm.runs < 0.5 * cold.runs
    # from the same prediction, quadratic models in a small trust region (COBYQA)
    near = search_events(mid, seq, predicted, 200.0, near=True)
    assert abs(near.done_s - cold.done_s) <= 0.05
    assert near.runs < warm.runs


def test_predict_extrapolates_linearly_in_start_temperature() -> None:
    h = [(-18.0, (30.0, 60.0)), (-14.0, (28.0, 57.0))]
    np.testing.assert_allclose(predict(h, -10.0), [26.0, 54.0])
    np.testing.assert_allclose(predict(h[:1], -10.0), [30.0, 60.0])
    with pytest.raises(ValueError, match="no earlier node"):
        predict([], 0.0)


def test_sequence_dwells_round_trip_through_a_schedule() -> None:
    seq = Sequence(("flip", "flip", "platen_close"), 10.0, 1.5)
    dwell = (20.0, 30.0, 8.5)
    sched = seq.schedule(dwell, 120.0)
    assert [e.kind for e in sched.events] == ["flip", "flip", "platen_close", "platen_open", "done"]
    assert seq.dwells_of(sched) == pytest.approx(dwell)
    assert seq.earliest_done_s(dwell) == pytest.approx(20 + 1.5 + 30 + 1.5 + 8.5 + 10.0)
    with pytest.raises(ValueError, match="does not extend"):
        seed_from(
            search_events(_cases(), _seq(0), (), 150.0),
            Sequence(("platen_close", "flip"), 10.0, 1.5),
        )


def test_runs_ended_at_the_first_passing_row_read_the_same_done_times(monkeypatch) -> None:
    """The search's runs stop once the food is done; the done times are those of full runs."""
    import obvert.search.readoff as readoff

    full = readoff.slack_rows
    rng = np.random.default_rng(7)
    picks = []
    for thick, t0 in [(0.006, 4.0), (0.010, -6.0)]:
        for flips in (1, 2, 3):
            for _ in range(2):
                picks.append((_cases(thick, t0), _seq(flips), rng.uniform(12.0, 40.0, flips)))
    early = [read_done(c, s, d, 900.0) for c, s, d in picks]
    monkeypatch.setattr(readoff, "slack_rows", lambda case, long, _after=None: full(case, long))
    whole = [read_done(c, s, d, 900.0) for c, s, d in picks]
    assert all(np.isfinite(early))
    assert early == whole  # bit for bit


@pytest.mark.parametrize(("thick", "t0"), [(0.006, 4.0), (0.010, -6.0)])
def test_each_further_flip_shortens_the_cook_less_than_the_one_before(thick, t0) -> None:
    """The premise of not searching a flip once the one before did not pay its flip cost.

    Common practice on contact grills (flipping more often shortens the cook, with
    diminishing returns); checked here on the search's own model, one to four flips, each
    searched from the optimum with one flip fewer as the row search does.
    """
    cases = _cases(thick, t0)
    res = search_events(cases, _seq(0), (), 600.0)
    done = [res.done_s]
    for flips in range(1, 5):
        seq = _seq(flips)
        start = seed_from(res, seq) if flips > 1 else (0.4 * res.done_s,)
        res = search_events(cases, seq, start, res.done_s)
        done.append(res.done_s)
    gains = -np.diff(done)  # the last can be negative: the appliance's event gaps bind
    assert gains[0] > 0.0, done
    assert np.all(np.diff(gains) < 0.0), (done, gains)


def test_the_chosen_sequence_of_every_node_is_searched_to_full_tolerance() -> None:
    """Sequences are screened to 0.5 s; the one a node keeps is always searched on."""
    from obvert.table.searched import search_row

    nodes = search_row(PROBLEM, 0)  # 6 mm from -6 and from 4 degC, up to the demo's flips
    assert len(nodes) == 2
    for node in nodes:
        kinds = tuple(e.kind for e in node.schedule.events if e.kind != "done")
        kept = [c for c in node.candidates if tuple(c.sequence) == kinds]
        assert len(kept) == 1, node.candidates
        assert kept[0].note.startswith("searched: converged"), kept[0].note
