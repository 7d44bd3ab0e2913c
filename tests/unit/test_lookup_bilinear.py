"""Python lookup, bilinear rule and cell pads, against an exact rational reference.

Outside references: the rule of docs/table-format.md written out independently with exact
rational arithmetic (``fractions.Fraction``), and binary32 rounding implemented from its
definition in IEEE 754-2019, clause 4.3.1 (roundTiesToEven: the nearest representable value,
ties to an even significand) with 24-bit significands (clause 3.3, Table 3.2), instead of
numpy. The bound, order and gap properties are consequences of a convex combination rounded
up (common practice; no further source). Tables are hand-made (invented numbers).
"""

from __future__ import annotations

import copy
import math
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

KINDS = {"done": 0, "flip": 1, "platen_close": 2, "platen_open": 3}
SHARED = ("platen_close", "flip", "platen_open", "done")
X_M = (0.005, 0.0095, 0.02)
T_C = (-20.0, -0.5, 3.0, 7.25)
N_T = len(T_C)
ODD_NODE = 11  # node (2, 3): flip, done only -> cell 5 falls back to the corner rule
CORNER_CELL = 3  # certified for the corner rule only
OPEN_AT_DONE = (1, 4, 8)  # platen_open at the done tick
W = 65536


def _events(k: int, i: int, j: int) -> list[dict]:
    done = 1000 + 370 * i * i + 130 * j + 70 * i * j + 11 * k
    if k == ODD_NODE:
        pairs = [("flip", done // 2), ("done", done)]
    else:
        opened = done if k in OPEN_AT_DONE else done - 90 - 3 * k
        pairs = list(zip(SHARED, (40 + 5 * j, 300 + 17 * i + 9 * j, opened, done), strict=True))
    return [{"kind": kind, "at_s": t / 10, "at_ticks": t} for kind, t in pairs]


def _cells(rule: str, pad) -> list[dict]:
    out = []
    for ci in range(len(X_M) - 1):
        for cj in range(N_T - 1):
            k = ci * (N_T - 1) + cj
            r = "corner" if rule == "corner" or k == CORNER_CELL else "bilinear"
            at = {"thickness_m": 0.01, "start_temp_c": 0.0}
            out.append({"ci": ci, "cj": cj, "rule": r, "done_pad_ticks": pad(k),
                        "min_margin_log": 0.25, "at": at})  # fmt: skip
    return out


def table(cells: bool = True) -> dict:
    nodes = [
        {"i": i, "j": j, "thickness_m": x, "start_temp_c": t, "events": _events(i * N_T + j, i, j)}
        for i, x in enumerate(X_M)
        for j, t in enumerate(T_C)
    ]
    m = {"axes": {"thickness_m": list(X_M), "start_temp_c": list(T_C)}, "event_kinds": KINDS,
         "nodes": nodes}  # fmt: skip
    if cells:
        m["cells"] = {"corner": _cells("corner", lambda k: k % 2 * 2),
                      "bilinear": _cells("bilinear", lambda k: (3 * k) % 4)}  # fmt: skip
    return m


M = table()
# Corners millions of ticks apart: one unit of weight moves the answer by many ticks.
STEEP = copy.deepcopy(M)
for _node in STEEP["nodes"]:
    for _e in _node["events"]:
        _e["at_ticks"] += 3_000_000 * (_node["i"] + _node["j"])
AX = [Fraction(float(v)) for v in thickness_axis_mm_f32(M)]
AT = [Fraction(float(v)) for v in start_temp_axis_f32(M)]
AXI = [int(v) for v in thickness_axis_um(M)]
ATI = [int(v) for v in start_temp_axis_cc(M)]


def round32(r: Fraction) -> Fraction:
    """Nearest binary32 value to ``r`` (ties to even), normal range (IEEE 754-2019 4.3.1)."""
    if r == 0:
        return Fraction(0)
    a = abs(r)
    e = a.numerator.bit_length() - a.denominator.bit_length()
    if Fraction(2) ** e > a:
        e -= 1
    assert Fraction(2) ** e <= a < Fraction(2) ** (e + 1) and e >= -126
    ulp = Fraction(2) ** (e - 23)
    n = math.floor(a / ulp)
    rest = a / ulp - n
    if rest > Fraction(1, 2) or (rest == Fraction(1, 2) and n % 2 == 1):
        n += 1
    return (n * ulp) if r > 0 else -(n * ulp)


def weight_f32(v: Fraction, lo: Fraction, hi: Fraction) -> int:
    q = round32(round32(v - lo) / round32(hi - lo))
    return min(max(math.floor(q * W), 0), W)  # q * 65536 is exact in binary32


def weight_int(v: int, lo: int, hi: int) -> int:
    return min(max(math.floor(Fraction(v - lo, hi - lo) * W), 0), W)


def raw(m: dict, node: int) -> tuple:
    return tuple((KINDS[e["kind"]], e["at_ticks"]) for e in m["nodes"][node]["events"])


def padded(events: tuple, pad: int) -> tuple:
    done = events[-1][1]
    return tuple((k, t + pad) if k == 0 or (k == 3 and t == done) else (k, t) for k, t in events)


def reference(m: dict, x: Fraction, t: Fraction, ax, at, weight) -> LookupResult:
    """The bilinear rule written out with rationals (inputs inside the axes)."""
    i = min(k for k, v in enumerate(ax) if v >= x)
    j = max(k for k, v in enumerate(at) if v <= t)
    ci, cj = max(i - 1, 0), min(j, len(at) - 2)
    cell = ci * (len(at) - 1) + cj
    entry = m["cells"]["bilinear"][cell]
    corners = [(ci + a) * len(at) + cj + b for a, b in ((0, 0), (1, 0), (0, 1), (1, 1))]
    rows = [raw(m, n) for n in corners]
    if entry["rule"] == "corner" or len({tuple(k for k, _ in r) for r in rows}) > 1:
        node = i * len(at) + j
        return LookupResult(0, node, padded(raw(m, node), entry["done_pad_ticks"]), cell, "corner")
    fx = Fraction(weight(x, ax[ci], ax[ci + 1]), W)
    ft = Fraction(weight(t, at[cj], at[cj + 1]), W)
    mix = ((1 - fx) * (1 - ft), fx * (1 - ft), (1 - fx) * ft, fx * ft)
    events = tuple(
        (rows[0][k][0], math.ceil(sum(w * r[k][1] for w, r in zip(mix, rows, strict=True))))
        for k in range(len(rows[0]))
    )
    return LookupResult(0, None, padded(events, entry["done_pad_ticks"]), cell, "bilinear")


def ref_f32(x, t) -> LookupResult:
    return reference(M, Fraction(float(x)), Fraction(float(t)), AX, AT, weight_f32)


def ref_fixed(x: int, t: int) -> LookupResult:
    return reference(M, Fraction(x), Fraction(t), AXI, ATI, weight_int)


f32_x = st.floats(5.0, 20.0, width=32)
f32_t = st.floats(-20.0, 7.25, width=32)


@settings(max_examples=600, deadline=None)
@given(f32_x, f32_t)
def test_float_lookup_equals_rational_reference(x, t):
    assert lookup_f32(M, np.float32(x), np.float32(t), rule="bilinear") == ref_f32(x, t)


@settings(max_examples=600, deadline=None)
@given(st.integers(AXI[0], AXI[-1]), st.integers(ATI[0], ATI[-1]))
def test_fixed_lookup_equals_rational_reference(x, t):
    assert lookup_fixed(M, x, t, rule="bilinear") == ref_fixed(x, t)


def test_nextafter_neighbours_of_nodes_equal_reference():
    for x in thickness_axis_mm_f32(M):
        for t in start_temp_axis_f32(M):
            for dx in (-np.inf, 0, np.inf):
                for dt in (-np.inf, 0, np.inf):
                    xq = np.nextafter(x, np.float32(dx)) if dx else x
                    tq = np.nextafter(t, np.float32(dt)) if dt else t
                    r = lookup_f32(M, xq, tq, rule="bilinear")
                    if r.status == 0:
                        assert r == ref_f32(xq, tq), (xq, tq)


def test_binary32_weights_where_they_differ_from_exact_ones():
    """Probes where the binary32 weight chain and the exact quotient floor differ by one.

    These come from the binary32 rounding of ``t - T[cj]``; a lookup that computed the
    weight in binary64 or exactly fails here (on a table whose corners are far apart).
    """
    rng = np.random.default_rng(11)
    found = 0
    for cj in range(N_T - 1):
        lo, hi = AT[cj], AT[cj + 1]
        ts = rng.uniform(float(lo), float(hi), 40000).astype(np.float32)
        scaled = (ts.astype(np.float64) - float(lo)) / float(hi - lo) * W
        near = ts[np.abs(scaled - np.round(scaled)) < 2e-3]
        for t in near:
            exact = min(math.floor((Fraction(float(t)) - lo) / (hi - lo) * W), W)
            if weight_f32(Fraction(float(t)), lo, hi) == exact:
                continue
            found += 1
            for x in (np.float32(7.0), np.float32(8.25)):  # cell row ci = 0 interpolates
                got = lookup_f32(STEEP, x, t, rule="bilinear")
                want = reference(STEEP, Fraction(float(x)), Fraction(float(t)), AX, AT, weight_f32)
                assert got == want, (x, t)
                assert got.rule_used == "bilinear"
    assert found >= 5


def _cell_of_node(i: int, j: int) -> int:
    return max(i - 1, 0) * (N_T - 1) + min(j, N_T - 2)


def test_at_a_node_bilinear_returns_the_node_plus_pad():
    for i, j in [(i, j) for i in range(len(X_M)) for j in range(N_T)]:
        node, cell = i * N_T + j, _cell_of_node(i, j)
        pad = M["cells"]["bilinear"][cell]["done_pad_ticks"]
        want = padded(raw(M, node), pad)
        for r in (lookup(M, X_M[i], T_C[j], rule="bilinear"),
                  lookup_fixed(M, AXI[i], ATI[j], rule="bilinear")):  # fmt: skip
            assert (r.events, r.cell) == (want, cell), (i, j)
            assert r.rule_used == ("corner" if cell in (CORNER_CELL, 5) else "bilinear")
            assert r.node == (node if r.rule_used == "corner" else None)


def test_on_an_edge_it_is_the_one_dimensional_interpolation():
    """x on a node line: ceil((a0 (W - wt) + a1 wt) / W) between the two nodes on it."""
    rng = np.random.default_rng(7)
    checked = 0
    for i in range(len(X_M)):
        for t in rng.integers(ATI[0], ATI[-1] + 1, 60):
            r = lookup_fixed(M, AXI[i], int(t), rule="bilinear")
            cj = min(max(k for k in range(N_T) if ATI[k] <= t), N_T - 2)
            if r.rule_used != "bilinear":
                continue
            wt = weight_int(int(t), ATI[cj], ATI[cj + 1])
            lo, hi = raw(M, i * N_T + cj), raw(M, i * N_T + cj + 1)
            line = tuple(
                (a[0], -(-(a[1] * (W - wt) + b[1] * wt) // W)) for a, b in zip(lo, hi, strict=True)
            )
            pad = M["cells"]["bilinear"][_cell_of_node(i, cj)]["done_pad_ticks"]
            assert r.events == padded(line, pad)
            checked += 1
    assert checked > 60


def _corner_rows(r: LookupResult) -> list[tuple]:
    ci, cj = divmod(r.cell, N_T - 1)
    return [raw(M, (ci + a) * N_T + cj + b) for a, b in ((0, 0), (1, 0), (0, 1), (1, 1))]


@settings(max_examples=400, deadline=None)
@given(f32_x, f32_t)
def test_bounds_order_and_gaps_of_the_corners_are_kept(x, t):
    r = lookup_f32(M, x, t, rule="bilinear")
    if r.rule_used != "bilinear":
        return
    rows = _corner_rows(r)
    pad = M["cells"]["bilinear"][r.cell]["done_pad_ticks"]
    assert [k for k, _ in r.events] == [k for k, _ in rows[0]]
    for n, (_, tick) in enumerate(r.events):
        ticks = [row[n][1] for row in rows]
        assert min(ticks) <= tick <= max(ticks) + pad
    for n in range(len(r.events) - 1):
        gap = r.events[n + 1][1] - r.events[n][1]
        assert gap >= min(row[n + 1][1] - row[n][1] for row in rows)


def test_mismatched_kinds_and_corner_cells_fall_back():
    for x_mm, t_c, cell in ((15.0, 5.0, 5), (15.0, -10.0, CORNER_CELL)):
        r = lookup_f32(M, x_mm, t_c, rule="bilinear")
        corner = lookup_f32(M, x_mm, t_c, rule="corner")
        pad = M["cells"]["bilinear"][cell]["done_pad_ticks"]
        assert (r.rule_used, r.cell, r.node) == ("corner", cell, corner.node)
        assert r.events == padded(raw(M, corner.node), pad)
    # Without the odd node, cell 5 interpolates.
    m = copy.deepcopy(M)
    m["nodes"][ODD_NODE]["events"] = _events(10, 2, 3)
    assert lookup_f32(m, 15.0, 5.0, rule="bilinear").rule_used == "bilinear"


def test_corner_rule_adds_the_cell_pad():
    bare = table(cells=False)
    seen = set()
    for i, j in [(i, j) for i in range(len(X_M)) for j in range(N_T)]:
        r = lookup(M, X_M[i], T_C[j])
        plain = lookup(bare, X_M[i], T_C[j])
        pad = M["cells"]["corner"][_cell_of_node(i, j)]["done_pad_ticks"]
        assert (r.node, r.cell, r.rule_used) == (plain.node, _cell_of_node(i, j), "corner")
        assert (plain.cell, plain.rule_used) == (None, "corner")
        assert r.events == padded(plain.events, pad)
        done = plain.events[-1][1]
        for (k, a), (_, b) in zip(r.events, plain.events, strict=True):
            assert a - b == (pad if k == 0 or (k == 3 and b == done) else 0)
            seen.add((k, a - b))
    assert (3, 2) in seen and (0, 2) in seen and (2, 0) in seen  # platen_open moved with done


def test_refusals_are_unchanged_by_the_rule():
    for x, t, status in ((4.9, 0.0, LookupStatus.THICKNESS_BELOW), (np.nan, 0.0, LookupStatus.NAN),
                         (9.0, 7.5, LookupStatus.START_TEMP_ABOVE)):  # fmt: skip
        want = LookupResult(int(status), None, (), None, None)
        assert lookup_f32(M, x, t, rule="bilinear") == want == lookup_f32(M, x, t)
    assert lookup_fixed(M, AXI[-1] + 1, 0, rule="bilinear").status == LookupStatus.THICKNESS_ABOVE


@pytest.mark.parametrize("call", [lookup, lookup_f32])
def test_bad_rule_name_is_named(call):
    with pytest.raises(ValueError, match=r"rule = 'nearest': allowed \['corner', 'bilinear'\]"):
        call(M, 0.01, 0.0, rule="nearest")
    with pytest.raises(ValueError, match=r"rule = 'Bilinear'"):
        lookup_fixed(M, 10000, 0, rule="Bilinear")


def test_missing_cells_and_single_value_axes():
    with pytest.raises(ValueError, match=r"manifest field cells\.bilinear is missing"):
        lookup(table(cells=False), 0.01, 0.0, rule="bilinear")
    one = table(cells=False)
    one["axes"]["thickness_m"] = [0.01]
    one["nodes"] = one["nodes"][:N_T]
    with pytest.raises(ValueError, match=r"needs at least 2 values on axes\.thickness_m"):
        lookup_fixed(one, 10000, 0, rule="bilinear")
    r = lookup_fixed(one, 10000, 0)
    assert (r.status, r.node, r.cell, r.rule_used) == (0, 1, None, "corner")


@pytest.mark.parametrize(
    ("rule", "k", "key", "value", "pattern"),
    [
        ("bilinear", 1, "cj", 0, r"cells\.bilinear\[1\]\.cj = 0: cells are ci-major"),
        ("corner", 2, "rule", "bilinear", r"cells\.corner\[2\]\.rule = 'bilinear': allowed"),
        ("bilinear", 0, "done_pad_ticks", 1.5, r"cells\.bilinear\[0\]\.done_pad_ticks = 1\.5"),
        ("bilinear", 0, "done_pad_ticks", True, r"done_pad_ticks = True"),
    ],
)
def test_bad_cells_are_named(rule, k, key, value, pattern):
    m = copy.deepcopy(M)
    m["cells"][rule][k][key] = value
    with pytest.raises(ValueError, match=pattern):
        lookup_f32(m, 9.0, 0.0, rule=rule)
    m = copy.deepcopy(M)
    m["cells"][rule].pop()
    with pytest.raises(ValueError, match=rf"cells\.{rule} = 5: expected a list of 6 cells"):
        lookup_f32(m, 9.0, 0.0, rule=rule)
