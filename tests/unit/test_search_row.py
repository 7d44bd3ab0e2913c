"""Choices the row search makes between nodes: which sequences to search and where to start.

Synthetic search outcomes stand in for real ones (no model runs): these are the rules of
:mod:`obvert.table.searched`, checked by hand-computed expectations.
"""

from __future__ import annotations

import numpy as np
import pytest

from obvert.search import Searched, Sequence
from obvert.table.model import NOT_SEARCHED, Candidate
from obvert.table.searched import _far_behind, _nominal_start, _predicted, _unpaid

FLIPS = {n: ("flip",) * n for n in range(5)}


def _res(kinds: tuple[str, ...], done: float, dwell: tuple[float, ...] = ()) -> Searched:
    seq = Sequence(kinds, 10.0, 1.5)
    return Searched(seq, dwell or tuple(10.0 * (k + 1) for k in range(seq.n_free)), done, 5, "")


def test_a_further_flip_is_searched_while_the_last_one_paid() -> None:
    found = {FLIPS[0]: _res(FLIPS[0], 300.0), FLIPS[1]: _res(FLIPS[1], 200.0)}
    assert _unpaid(FLIPS[2], found, 3.0) is None  # flip 1 saved 100 s
    found[FLIPS[2]] = _res(FLIPS[2], 197.5)  # flip 2 saved 2.5 s, less than its cost
    why = _unpaid(FLIPS[3], found, 3.0)
    assert why is not None and "flip 2 shortened the cook by 2.5 s" in why and "3 s" in why
    assert _unpaid(FLIPS[3], found, 2.0) is None  # at a 2 s flip cost it paid
    # a sequence left out on purpose is no failed solve (the build's progress counts those)
    assert not Candidate(3, None, why, FLIPS[3]).failed
    assert Candidate(3, None, "search failed: no done time by 900 s", FLIPS[3]).failed
    assert not Candidate(3, 197.5, "searched: converged", FLIPS[3]).failed


def test_a_sequence_is_searched_when_its_predecessors_were_not_found() -> None:
    found = {FLIPS[0]: _res(FLIPS[0], 300.0)}  # the one-flip search failed
    assert _unpaid(FLIPS[2], found, 3.0) is None
    assert _unpaid(FLIPS[1], {}, 3.0) is None


def test_platen_sequences_compare_flip_counts_with_the_same_platen_moves() -> None:
    close = {n: (*FLIPS[n], "platen_close") for n in range(4)}
    found = {close[0]: _res(close[0], 150.0), close[1]: _res(close[1], 149.0)}
    assert _unpaid(close[2], found, 3.0) is not None
    assert _unpaid(FLIPS[2], found, 3.0) is None  # no flip-only results to compare


def test_prediction_is_the_straight_extrapolation_in_a_smooth_row() -> None:
    kinds = FLIPS[1]
    history = {
        FLIPS[0]: [(-10.0, (), 400.0), (-6.0, (), 380.0)],
        kinds: [(-10.0, (100.0,), 200.0), (-6.0, (96.0,), 190.0)],
    }
    found = {FLIPS[0]: _res(FLIPS[0], 360.0)}  # exactly on the row's straight line
    np.testing.assert_allclose(_predicted(history, kinds, found, -2.0), [92.0])


def test_prediction_follows_the_jump_of_the_sequence_with_one_event_fewer() -> None:
    kinds = FLIPS[1]
    history = {
        FLIPS[0]: [(-6.0, (), 380.0), (-3.0, (), 370.0)],
        kinds: [(-6.0, (96.0,), 190.0), (-3.0, (93.0,), 185.0)],
    }
    # past the freezing point the no-flip cook is 30 % shorter than the line says (360 s)
    found = {FLIPS[0]: _res(FLIPS[0], 252.0)}
    np.testing.assert_allclose(_predicted(history, kinds, found, 0.0), [90.0 * 0.7])


def test_just_past_the_jump_the_last_node_alone_is_extrapolated() -> None:
    # the line through -3 and 0 degC carries the jump's slope (the no-flip cook would be
    # 173 s at 2 degC); the last node alone predicts it within 1.2 %: that is taken
    kinds = FLIPS[1]
    history = {
        FLIPS[0]: [(-3.0, (), 370.0), (0.0, (), 252.0)],
        kinds: [(-3.0, (93.0,), 185.0), (0.0, (63.0,), 130.0)],
    }
    found = {FLIPS[0]: _res(FLIPS[0], 249.0)}
    np.testing.assert_allclose(_predicted(history, kinds, found, 2.0), [63.0 * 249.0 / 252.0])


def test_prediction_falls_back_to_the_nearest_shorter_sequence_searched_here() -> None:
    # the 1-flip sequence was left out at this node (far behind): the jump is read off the
    # no-flip sequence instead
    kinds = FLIPS[2]
    history = {
        FLIPS[0]: [(-6.0, (), 380.0), (-3.0, (), 370.0)],
        FLIPS[1]: [(-6.0, (96.0,), 190.0), (-3.0, (93.0,), 185.0)],
        kinds: [(-6.0, (60.0, 50.0), 170.0), (-3.0, (58.0, 49.0), 166.0)],
    }
    found = {FLIPS[0]: _res(FLIPS[0], 252.0)}  # 30 % below the line (360 s)
    np.testing.assert_allclose(_predicted(history, kinds, found, 0.0), [56.0 * 0.7, 48.0 * 0.7])


def test_a_sequence_far_behind_at_the_previous_node_is_left_out_once() -> None:
    history = {FLIPS[1]: [(-6.0, (96.0,), 190.0)], FLIPS[2]: [(-6.0, (60.0, 50.0), 170.0)]}
    behind = {FLIPS[0]: 1.2, FLIPS[1]: 0.0501, FLIPS[2]: 0.0}
    why = _far_behind(FLIPS[1], behind, history)
    assert why is not None and why.startswith(NOT_SEARCHED)
    assert "5.0 % slower than the fastest sequence at the previous node (-6 degC)" in why
    assert not Candidate(1, None, why, FLIPS[1]).failed  # no failed solve
    assert _far_behind(FLIPS[0], behind, history) is None  # no events: one run, always run
    assert _far_behind(FLIPS[2], behind, history) is None  # the fastest
    assert _far_behind(FLIPS[1], {FLIPS[1]: 0.05}, history) is None  # not more than 5 %
    assert _far_behind(FLIPS[3], behind, history) is None  # not searched there: search it


def test_nominal_start_keeps_the_last_ratio_of_nominal_to_robust_dwells() -> None:
    kinds = FLIPS[2]
    robust_history = {kinds: [(-6.0, (100.0, 50.0), 300.0)]}
    nominal_history = {kinds: [(-6.0, (90.0, 40.0), 270.0)]}
    here = _res(kinds, 200.0, (60.0, 30.0))
    start = _nominal_start(nominal_history, robust_history, here, -3.0)
    assert start == pytest.approx((54.0, 24.0))
    assert _nominal_start({}, robust_history, here, -3.0) == here.dwell_s
