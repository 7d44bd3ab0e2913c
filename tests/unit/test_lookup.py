"""Python lookup: the conservative-corner rule on binary32 and int32 inputs.

Outside reference: the rule written out directly with exact rational arithmetic
(``fractions.Fraction`` holds every binary32 value exactly), independent of the numpy
search the implementation uses; binary32 rounding as specified by IEEE 754-2019 (round to
nearest, ties to even), as implemented by numpy.float32.
"""

from __future__ import annotations

import dataclasses
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from obvert.firmware.lookup import (
    LookupResult,
    LookupStatus,
    lookup,
    lookup_f32,
    lookup_fixed,
    start_temp_axis_cc,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
    thickness_axis_um,
)

KINDS = {"done": 0, "flip": 1}


def small_manifest(thickness_m=(0.005, 0.0095, 0.02), start_temp_c=(-20.0, -0.5, 3.0, 7.25)):
    """A hand-made table: node k has k flips, all at distinct ticks."""
    nodes = []
    for i, x in enumerate(thickness_m):
        for j, t in enumerate(start_temp_c):
            k = i * len(start_temp_c) + j
            events = [{"kind": "flip", "at_s": 10.0 * (n + 1), "at_ticks": 100 * (n + 1)}
                      for n in range(k % 3)]  # fmt: skip
            events.append({"kind": "done", "at_s": 100.0 + k, "at_ticks": 1000 + 10 * k})
            nodes.append({"i": i, "j": j, "thickness_m": x, "start_temp_c": t, "events": events})
    return {
        "axes": {"thickness_m": list(thickness_m), "start_temp_c": list(start_temp_c)},
        "event_kinds": KINDS,
        "nodes": nodes,
    }


M = small_manifest()


def reference(manifest, x, t):
    """Conservative corner written out with exact rationals (status, node)."""
    x, t = np.float32(x), np.float32(t)
    if np.isnan(x) or np.isnan(t):
        return -2, None
    ax = [Fraction(float(v)) for v in thickness_axis_mm_f32(manifest)]
    at = [Fraction(float(v)) for v in start_temp_axis_f32(manifest)]
    if np.isinf(x):
        return (-3 if x < 0 else -4), None
    fx = Fraction(float(x))
    if fx < ax[0] or fx > ax[-1]:
        return (-3 if fx < ax[0] else -4), None
    if np.isinf(t):
        return (-5 if t < 0 else -6), None
    ft = Fraction(float(t))
    if ft < at[0] or ft > at[-1]:
        return (-5 if ft < at[0] else -6), None
    i = min(k for k, v in enumerate(ax) if v >= fx)
    j = max(k for k, v in enumerate(at) if v <= ft)
    return 0, i * len(at) + j


def test_every_node_maps_to_itself():
    for node, n in enumerate(M["nodes"]):
        r = lookup(M, n["thickness_m"], n["start_temp_c"])
        assert r.status == 0 and r.node == node
        want = tuple((KINDS[e["kind"]], e["at_ticks"]) for e in n["events"])
        assert r.events == want


def test_cell_interior_takes_thickest_coldest_corner():
    # 9.6 mm lies between 9.5 and 20 mm -> i = 2; 2.9 degC between -0.5 and 3 -> j = 1
    r = lookup_f32(M, 9.6, 2.9)
    assert (r.status, r.node) == (0, 2 * 4 + 1)
    # one binary32 step above a node moves to the next thicker row; below stays
    x = np.float32(9.5)
    assert lookup_f32(M, np.nextafter(x, np.float32(99)), 3.0).node == 2 * 4 + 2
    assert lookup_f32(M, np.nextafter(x, np.float32(0)), 3.0).node == 1 * 4 + 2
    t = np.float32(3.0)
    assert lookup_f32(M, 9.5, np.nextafter(t, np.float32(-99))).node == 1 * 4 + 1


@pytest.mark.parametrize(
    ("x", "t", "status"),
    [
        (np.nan, 0.0, LookupStatus.NAN),
        (9.0, np.nan, LookupStatus.NAN),
        (4.999, 0.0, LookupStatus.THICKNESS_BELOW),
        (20.001, 0.0, LookupStatus.THICKNESS_ABOVE),
        (-np.inf, 0.0, LookupStatus.THICKNESS_BELOW),
        (9.0, -20.001, LookupStatus.START_TEMP_BELOW),
        (9.0, np.inf, LookupStatus.START_TEMP_ABOVE),
        (1e30, -1e30, LookupStatus.THICKNESS_ABOVE),  # thickness is checked first
    ],
)
def test_refusals(x, t, status):
    assert lookup_f32(M, x, t) == LookupResult(status=int(status), node=None, events=())


@settings(max_examples=400, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(0, 2**32 - 1))
def test_any_binary32_pair_matches_rational_reference(bx, bt):
    x = np.uint32(bx).view(np.float32)
    t = np.uint32(bt).view(np.float32)
    r = lookup_f32(M, x, t)
    assert (r.status, r.node) == reference(M, x, t)


@settings(max_examples=400, deadline=None)
@given(st.floats(4.0, 21.0, width=32), st.floats(-21.0, 8.0, width=32))
def test_in_range_pairs_match_rational_reference(x, t):
    r = lookup_f32(M, x, t)
    assert (r.status, r.node) == reference(M, x, t)


@settings(max_examples=200, deadline=None)
@given(st.floats(0.004, 0.021), st.floats(-21.0, 8.0))
def test_metres_api_is_float32_of_millimetres(x_m, t):
    # lookup() is defined as lookup_f32 on float32(x_m * 1000.0) (product in binary64)
    assert lookup(M, x_m, t) == lookup_f32(M, np.float32(x_m * 1000.0), np.float32(t))


def test_float32_axis_values():
    # IEEE 754 binary32 nearest of 9.5 mm and -0.5 degC are exact; 7.25 also exact.
    assert thickness_axis_mm_f32(M).tolist() == [5.0, 9.5, 20.0]
    assert start_temp_axis_f32(M).tolist() == [-20.0, -0.5, 3.0, 7.25]
    assert thickness_axis_mm_f32(M).dtype == np.float32


def test_negative_zero_equals_zero():
    m = small_manifest(start_temp_c=(-5.0, 0.0, 5.0))
    assert lookup_f32(m, 9.5, -0.0).node == lookup_f32(m, 9.5, 0.0).node == 1 * 3 + 1


def test_axis_that_collapses_in_float32_is_refused():
    m = small_manifest(thickness_m=(0.005, 0.005 + 1e-13, 0.02))
    with pytest.raises(ValueError, match=r"axes\.thickness_m\[0\] and \[1\].*float32 mm"):
        lookup_f32(m, 6.0, 0.0)


def test_fixed_axes_on_lattice_and_rounded_conservatively():
    assert thickness_axis_um(M).tolist() == [5000, 9500, 20000]
    assert start_temp_axis_cc(M).tolist() == [-2000, -50, 300, 725]
    m = small_manifest(thickness_m=(0.0050004, 0.0095, 0.02), start_temp_c=(-20.004, 3.0))
    # off-lattice: thickness rounds down (5000.4 -> 5000), temperature up (-2000.4 -> -2000)
    assert thickness_axis_um(m).tolist()[0] == 5000
    assert start_temp_axis_cc(m).tolist()[0] == -2000


def test_fixed_lookup_matches_rule():
    assert lookup_fixed(M, 9500, -50).node == 1 * 4 + 1
    assert lookup_fixed(M, 9501, -50).node == 2 * 4 + 1
    assert lookup_fixed(M, 9500, -51).node == 1 * 4 + 0
    assert lookup_fixed(M, 4999, 0).status == LookupStatus.THICKNESS_BELOW
    assert lookup_fixed(M, 20001, 0).status == LookupStatus.THICKNESS_ABOVE
    assert lookup_fixed(M, 20000, -2001).status == LookupStatus.START_TEMP_BELOW
    assert lookup_fixed(M, 20000, 726).status == LookupStatus.START_TEMP_ABOVE
    assert lookup_fixed(M, 2**31 - 1, -(2**31)).status == LookupStatus.THICKNESS_ABOVE


@pytest.mark.parametrize(
    ("x", "t", "error"),
    [
        (9.5, 0, TypeError),
        (True, 0, TypeError),
        (2**31, 0, ValueError),
        (0, -(2**31) - 1, ValueError),
    ],
)
def test_fixed_lookup_refuses_bad_arguments(x, t, error):
    with pytest.raises(error, match="thickness_um|start_temp_cc"):
        lookup_fixed(M, x, t)


def test_result_is_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        lookup(M, 0.01, 0.0).node = 3
