"""Bilinear targets: the compiled C answers line for line as the Python lookup.

Outside references: the C compilers (gcc, clang; ISO/IEC 9899:1999 "Programming languages -
C", ISO 1999, at -std=c99 -Wall -Wextra -Werror -pedantic), IEEE 754-2019 binary32
arithmetic of the host CPU and of 32-bit ARM (hard-float) under qemu, and the C99 exact-width
integer types (section 7.18.1.1) for the int64 sums. The expected answers come from
``obvert.firmware.lookup`` (rule="bilinear"), whose arithmetic is checked against an exact
rational reference in tests/unit/test_lookup_bilinear.py. The tables are synthetic
(invented numbers).
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from fractions import Fraction

import numpy as np
import pytest

from obvert.emitter import EmitError, ProfileError, emit, load_target, loads_target
from obvert.firmware import FORMAT_VERSION, ManifestError
from obvert.firmware.lookup import (
    lookup_f32,
    lookup_fixed,
    start_temp_axis_cc,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
    thickness_axis_um,
)

from .conftest import build_program, compile_units, header_only
from .manifests import ODD_NODE, cells_manifest
from .test_c_header import FIRMWARE_WARNINGS, _hex32, float_queries, user_unit

NODE_NONE = 65535
RNG_SEED = 20240612
RULE_CODE = {"corner": 0, "bilinear": 1}


def expected_line(m: dict, r) -> str:
    """The bilinear harness line for Python result ``r`` ("0 node i j cell rule n ...")."""
    if r.status != 0:
        return f"{r.status} 1"
    n_t = len(m["axes"]["start_temp_c"])
    node, (i, j) = NODE_NONE, (NODE_NONE, NODE_NONE)
    if r.node is not None:
        node, (i, j) = r.node, divmod(r.node, n_t)
    margin = math.floor(Fraction(m["cells"]["bilinear"][r.cell]["min_margin_log"]) * 1000)
    events = " ".join(f"{k}:{t}" for k, t in r.events)
    head = f"0 {node} {i} {j} {r.cell} {RULE_CODE[r.rule_used]} {len(r.events)}"
    return f"{head} {r.events[-1][1]} {margin} {events}"


def _in_cell_f32(ax, at, rng, per_cell: int) -> list[tuple[np.float32, np.float32]]:
    """Random points inside every cell, points on every cell edge, quarter points."""
    pairs = []
    for ci in range(ax.size - 1):
        for cj in range(at.size - 1):
            xs = rng.uniform(ax[ci], ax[ci + 1], per_cell).astype(np.float32)
            ts = rng.uniform(at[cj], at[cj + 1], per_cell).astype(np.float32)
            pairs += list(zip(xs, ts, strict=True))
            pairs += [(ax[ci], t) for t in ts[:20]] + [(x, at[cj + 1]) for x in xs[:20]]
            for f in (0.25, 0.5, 0.75):
                x = np.float32(ax[ci] + f * (ax[ci + 1] - ax[ci]))
                t = np.float32(at[cj] + f * (at[cj + 1] - at[cj]))
                pairs += [(x, t), (x, at[cj]), (ax[ci + 1], t)]
    return pairs


def _rounding_probes(ax, at, rng, n: int = 40000) -> list[tuple[np.float32, np.float32]]:
    """Points whose binary32 weight differs from the binary64 one (x - X[ci] rounds)."""
    one = np.float32(65536.0)
    pairs = []
    for axis, other, is_x in ((ax, at, True), (at, ax, False)):
        for c in range(axis.size - 1):
            lo, hi = axis[c], axis[c + 1]
            v = rng.uniform(lo, hi, n).astype(np.float32)
            w32 = np.floor(((v - lo) / (hi - lo)) * one)
            w64 = np.floor((v.astype(np.float64) - lo) / (np.float64(hi) - lo) * 65536.0)
            odd = v[w32 != w64][:40]
            mids = ((other[1:].astype(np.float64) + other[:-1]) / 2).astype(np.float32)
            pairs += [(a, b) if is_x else (b, a) for a in odd for b in mids]
    return pairs


def float_cases(m: dict, n_random: int = 2000) -> list[tuple[np.float32, np.float32]]:
    ax, at = thickness_axis_mm_f32(m), start_temp_axis_f32(m)
    rng = np.random.default_rng(RNG_SEED)
    probes = _rounding_probes(ax, at, rng)
    assert len(probes) > 50
    return float_queries(m, n_random) + _in_cell_f32(ax, at, rng, 150) + probes


def fixed_cases(m: dict, n_random: int = 2000) -> list[tuple[int, int]]:
    ax, at = [int(v) for v in thickness_axis_um(m)], [int(v) for v in start_temp_axis_cc(m)]

    def probes(axis):
        base = [v + d for v in axis for d in (-1, 0, 1)]
        mids = [(a + b) // 2 for a, b in zip(axis, axis[1:], strict=False)]
        return base + mids + [-(2**31), 2**31 - 1, 0, axis[0] - 1000, axis[-1] + 1000]

    rng = np.random.default_rng(RNG_SEED + 1)
    pairs = [(x, t) for x in probes(ax) for t in probes(at)]
    xs = rng.integers(ax[0] - 50, ax[-1] + 51, n_random)
    ts = rng.integers(at[0] - 50, at[-1] + 51, n_random)
    pairs += [(int(x), int(t)) for x, t in zip(xs, ts, strict=True)]
    for ci in range(len(ax) - 1):
        for cj in range(len(at) - 1):
            xs = rng.integers(ax[ci], ax[ci + 1] + 1, 150)
            ts = rng.integers(at[cj], at[cj + 1] + 1, 150)
            pairs += [(int(x), int(t)) for x, t in zip(xs, ts, strict=True)]
            pairs += [(ax[ci], int(t)) for t in ts[:20]] + [(int(x), at[cj]) for x in xs[:20]]
    return pairs


def _stdin_f32(cases) -> str:
    return "".join(f"{_hex32(x)} {_hex32(t)}\n" for x, t in cases)


def _stdin_int(cases) -> str:
    return "".join(f"{x} {t}\n" for x, t in cases)


@pytest.fixture(scope="module")
def oracle():
    """Manifests, query lists and the Python answers, computed once per module."""
    m = cells_manifest()
    big = cells_manifest(max_ticks=2**24)
    out = {}
    for name, man, n_random in (("std", m, 2000), ("big", big, 300)):
        fc, xc = float_cases(man, n_random), fixed_cases(man, n_random)
        out[name, "f32"] = (
            man,
            _stdin_f32(fc),
            [expected_line(man, lookup_f32(man, x, t, rule="bilinear")) for x, t in fc],
        )
        out[name, "int"] = (
            man,
            _stdin_int(xc),
            [expected_line(man, lookup_fixed(man, x, t, rule="bilinear")) for x, t in xc],
        )
    return out


def _compile(toolchain, tmp_path, files: dict, fixed: bool, harness, extra=()):
    """The bilinear harness built with the table's files (``.h``, and ``.c`` if split)."""
    source = harness("synthetic_grill.h", "synthetic_grill", fixed, True)
    proc, exe = build_program(toolchain, tmp_path, files, source, extra)
    assert proc.returncode == 0, proc.stderr
    return exe


def _target(name: str, layout: str = "split", **changes):
    target = load_target(name) if layout == "split" else header_only(name)
    return replace(target, **changes) if changes else target


TARGETS = [
    ("c99_bilinear", "split", {}, "f32"),
    ("c99_bilinear", "header_only", {}, "f32"),
    ("c99_fixed_bilinear", "split", {}, "int"),
    ("c99_fixed_bilinear", "header_only", {"time_type": "uint16_t"}, "int"),
]


@pytest.mark.parametrize(("target", "layout", "changes", "form"), TARGETS)
def test_bilinear_c_matches_python(
    toolchain, tmp_path, harness, oracle, target, layout, changes, form
):
    m, stdin, want = oracle["std", form]
    files = emit(m, _target(target, layout, **changes))
    if form == "int":
        for name, data in files.items():
            assert not re.search(rb"\b(float|double)\b", data), f"integer-only {name} names float"
    exe = _compile(toolchain, tmp_path, files, form == "int", harness)
    got = toolchain.run(exe, [form], stdin).splitlines()
    assert len(got) == len(want) > 3000
    bad = [(n, g, w) for n, (g, w) in enumerate(zip(got, want, strict=True)) if g != w]
    assert not bad, bad[:5]
    ok = [line.split() for line in got if line.startswith("0 ")]
    # Every cell answered, by interpolation (rule 1, no node) and by the corner (rule 0).
    assert {int(f[4]) for f in ok} == set(range(6))
    assert {(f[4], f[5]) for f in ok} >= {("0", "1"), ("2", "1"), ("5", "1"), ("1", "0")}
    assert sum(f[1] == str(NODE_NONE) for f in ok) > 1000
    statuses = {int(line.split()[0]) for line in got}
    assert statuses == ({0, -2, -3, -4, -5, -6} if form == "f32" else {0, -3, -4, -5, -6})


PAIRS = [("c99_bilinear", "f32"), ("c99_fixed_bilinear", "int")]


@pytest.mark.parametrize(("target", "form"), PAIRS)
def test_ticks_at_the_int64_guard_match_python(toolchain, tmp_path, harness, oracle, target, form):
    """Longest done exactly 2**24 ticks: the weighted sums reach about 2**56 in int64."""
    m, stdin, want = oracle["big", form]
    exe = _compile(toolchain, tmp_path, emit(m, load_target(target)),
                   form == "int", harness)  # fmt: skip
    got = toolchain.run(exe, [form], stdin).splitlines()
    assert got == want
    assert max(int(line.split()[7]) for line in got if line.startswith("0 ")) >= 2**24


@pytest.mark.parametrize("target", ["c99_bilinear", "c99_fixed_bilinear"])
def test_bilinear_table_data(host_cc, tmp_path, harness, make_cells_manifest, target):
    """Node rows unpadded, one row per cell: applied rule, pad, margin rounded down."""
    m = make_cells_manifest()
    exe = _compile(host_cc, tmp_path, emit(m, load_target(target)),
                   "fixed" in target, harness)  # fmt: skip
    lines = host_cc.run(exe, ["dump"]).splitlines()
    # bytes: 4 * 7 axes + 12 * (1 + 4 * 5 + 4) nodes + 6 * (1 + 4 + 4) cells = 382
    assert lines[0] == f"version {FORMAT_VERSION} nodes 4 3 12 events 4 tick_us 100000 bytes 382"
    nodes = [line for line in lines if line.startswith("node ")]
    for k, (row, node) in enumerate(zip(nodes, m["nodes"], strict=True)):
        events = [f"{m['event_kinds'][e['kind']]}:{e['at_ticks']}" for e in node["events"]]
        assert row.split()[4:] == events + [events[-1]] * (4 - len(events)), k
    cells = [line for line in lines if line.startswith("cell ")]
    # Cell 4 is certified for the corner rule; cells 1 and 3 touch the odd node.
    assert ODD_NODE == 5
    modes = [1, 0, 1, 0, 0, 1]
    want = [
        f"cell {k} {modes[k]} {c['done_pad_ticks']} "
        f"{math.floor(Fraction(c['min_margin_log']) * 1000)}"
        for k, c in enumerate(m["cells"]["bilinear"])
    ]
    assert cells == want


@pytest.mark.parametrize("target", ["c99_bilinear", "c99_fixed_bilinear"])
def test_bilinear_header_is_clean_under_firmware_warnings(toolchain, tmp_path, target):
    """Common firmware warning set (common practice), incl. -Wpadded and -Wconversion."""
    for layout in ("split", "header_only"):
        for time_type in ("uint32_t", "uint16_t"):
            files = emit(cells_manifest(), _target(target, layout, time_type=time_type))
            problems = compile_units(toolchain, tmp_path, files, user_unit("fixed" in target),
                                     FIRMWARE_WARNINGS)  # fmt: skip
            assert not problems, (layout, time_type, problems)


def test_single_value_axis_is_refused_naming_the_axis():
    m = cells_manifest(start_temp_c=(4.0,))
    assert "bilinear" not in m["cells"]
    for target in ("c99_bilinear", "c99_fixed_bilinear"):
        with pytest.raises(EmitError, match=r"needs at least 2 values on axes\.start_temp_c"):
            emit(m, load_target(target))
    assert emit(m, load_target("c99"))  # the corner rule still works, pad 0


def test_missing_cells_are_refused(make_manifest):
    with pytest.raises(EmitError, match=r"manifest field cells\.bilinear is missing"):
        emit(make_manifest(), load_target("c99_bilinear"))


def test_tick_guard_of_the_int64_sums():
    ok = cells_manifest(max_ticks=2**24)
    assert emit(ok, load_target("c99_fixed_bilinear"))
    big = cells_manifest(max_ticks=2**24 + 1)
    for target in ("c99_bilinear", "c99_fixed_bilinear"):
        with pytest.raises(EmitError, match=r"at_ticks = 16777217: .* at most 2\*\*24"):
            emit(big, load_target(target))
    assert emit(big, load_target("c99"))  # the corner rule has no sums to guard


def test_pad_must_fit_the_time_type():
    m = cells_manifest(max_ticks=65535)
    with pytest.raises(EmitError, match=r"65535 plus the largest done pad 4: exceeds uint16_t"):
        emit(m, _target("c99_bilinear", time_type="uint16_t"))
    with pytest.raises(EmitError, match=r"at_ticks = 6553[5-7] \(done pad [12] included\)"):
        emit(m, _target("c99", time_type="uint16_t"))


@pytest.mark.parametrize(
    ("path", "value", "pattern"),
    [
        (("bilinear", 2, "ci"), 0, r"cells\.bilinear\[2\]\.ci = 0: cells are ci-major"),
        (("bilinear", 0, "rule"), "nearest", r"cells\.bilinear\[0\]\.rule = 'nearest'"),
        (("corner", 0, "rule"), "bilinear", r"cells\.corner\[0\]\.rule = 'bilinear'"),
        (("bilinear", 1, "done_pad_ticks"), -1, r"done_pad_ticks = -1: expected an integer"),
        (("bilinear", 1, "min_margin_log"), None, r"cells\.bilinear\[1\]\.min_margin_log"),
    ],
)
def test_bad_cells_are_named(path, value, pattern):
    m = cells_manifest()
    rule, k, key = path
    m["cells"][rule][k][key] = value
    with pytest.raises(ManifestError, match=pattern):
        emit(m, load_target("json"))


def test_profile_lookup_field():
    assert load_target("c99_bilinear").lookup == "bilinear"
    assert load_target("c99_fixed_bilinear").number_format == "fixed"
    assert load_target("c99").lookup == "corner"
    text = (
        'name = "x"\ndescription = "d"\nlookup = "nearest"\n'
        '[[outputs]]\nfilename = "{table}.h"\ntemplate = "c/table.h.j2"\n'
    )
    with pytest.raises(ProfileError, match=r"x\.toml: lookup = 'nearest': allowed \['corner', "):
        loads_target(text, "x.toml")


def test_banner_states_tolerances_envelope_and_refusal():
    text = emit(cells_manifest(), load_target("c99_fixed_bilinear"))["synthetic_grill.h"].decode()
    banner = text[: text.index("*/")]
    for line in (
        " *   plate_offset_k = 5.0 K",
        " *   plate_droop_k = 12.0 K",
        " *   plate_recovery_s = 40.0 s",
        " *   contact_low_fraction = 0.15 (fraction)",
        " *   thickness_error_m = 0.0005 m",
        " *   start_temp_error_k = 1.0 K",
        " *   fat_fraction = [0.15, 0.25] (fraction)",
    ):
        assert line + "\n" in banner
    flat = " ".join(banner.replace(" * ", " ").split())
    assert "Certified envelope: thickness 0.006 to 0.015 m, start temperature -18.0 to 4.0" in flat
    assert "outside the envelope (or not a number) return a status code, never a schedule" in flat
    assert "Cells: 6; interpolated in 3, corner rule in 3; largest done pad 4 ticks." in flat
    bare = emit(cells_manifest(tolerances=None), load_target("c99"))["synthetic_grill.h"]
    assert b"Tolerances: no tolerances declared." in bare
