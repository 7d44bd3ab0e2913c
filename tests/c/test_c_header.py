"""The generated C99 header, compiled and run, answers exactly as the Python lookup.

Outside references: the C compilers (gcc, clang; ISO/IEC 9899:1999 "Programming languages
- C", ISO 1999, at -std=c99 -pedantic) and IEEE 754-2019 binary32 arithmetic as implemented
by the host CPU and by 32-bit ARM (hard-float) under qemu. Expected answers come from
obvert.firmware.lookup, whose own semantics are checked against a brute-force rational
reference in tests/unit/test_lookup.py.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
from fractions import Fraction

import numpy as np
import pytest

from obvert.emitter import TargetProfile, emit, load_target
from obvert.firmware import FORMAT_VERSION
from obvert.firmware.lookup import (
    LookupResult,
    lookup,
    lookup_f32,
    lookup_fixed,
    start_temp_axis_cc,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
    thickness_axis_um,
)

from .conftest import build_program, compile_units, header_only

RNG_SEED = 20240611
F32_SPECIALS = np.array(
    [0x00000000, 0x80000000, 0x00000001, 0x80000001, 0x7F7FFFFF, 0xFF7FFFFF, 0x7F800000,
     0xFF800000, 0x7FC00000, 0xFFC00000, 0x7F800001, 0x7FC00001, 0x3F800000],
    dtype=np.uint32,
).view(np.float32)  # fmt: skip


def _margin_mlog(node: dict) -> int:
    """Margin in 0.001 log10 rounded down, computed exactly with rationals."""
    return math.floor(Fraction(node["margin_log"]) * 1000)


def expected_line(manifest: dict, result: LookupResult) -> str:
    """The harness line the C must print for ``result``."""
    if result.status != 0:
        return f"{result.status} 1"
    n_t = len(manifest["axes"]["start_temp_c"])
    i, j = divmod(result.node, n_t)
    node = manifest["nodes"][result.node]
    events = " ".join(f"{k}:{t}" for k, t in result.events)
    head = f"0 {result.node} {i} {j} {len(result.events)} {result.events[-1][1]}"
    return f"{head} {_margin_mlog(node)} {events}"


def _probe_values(axis: np.ndarray) -> np.ndarray:
    """Axis values, their binary32 neighbours, midpoints, far outside values and specials."""
    axis = axis.astype(np.float32)
    up = np.nextafter(axis, np.float32(np.inf))
    down = np.nextafter(axis, np.float32(-np.inf))
    mids = ((axis[1:].astype(np.float64) + axis[:-1]) / 2).astype(np.float32)
    outside = np.array([axis[0] - 1, axis[-1] + 1, -1e30, 1e30], dtype=np.float32)
    return np.concatenate([axis, up, down, mids, outside, F32_SPECIALS])


def float_queries(manifest: dict, n_random: int = 3000) -> list[tuple[np.float32, np.float32]]:
    """Grid-product probes plus uniform randoms around the range plus random bit patterns."""
    ax = thickness_axis_mm_f32(manifest)
    at = start_temp_axis_f32(manifest)
    pairs = [(x, t) for x in _probe_values(ax) for t in _probe_values(at)]
    rng = np.random.default_rng(RNG_SEED)
    xs = rng.uniform(ax[0] - 1, ax[-1] + 1, n_random).astype(np.float32)
    ts = rng.uniform(at[0] - 1, at[-1] + 1, n_random).astype(np.float32)
    bits = rng.integers(0, 2**32, size=(500, 2), dtype=np.uint64).astype(np.uint32)
    pairs += list(zip(xs, ts, strict=True))
    pairs += [tuple(row) for row in bits.view(np.float32)]
    return pairs


def _hex32(v: np.float32) -> str:
    return f"{int(np.float32(v).view(np.uint32)):08x}"


LAYOUTS = ("split", "header_only")


def _target(name: str, layout: str = "split") -> TargetProfile:
    return load_target(name) if layout == "split" else header_only(name)


def _files(manifest: dict, target: str, layout: str = "split") -> dict[str, bytes]:
    """Every file of ``target`` for ``manifest`` (``.h``, and ``.c`` in layout split)."""
    return emit(manifest, _target(target, layout))


def _build(toolchain, tmp_path, files: dict, prefix: str, fixed: bool, harness, bilinear=False):
    """The lookup harness built with the table's files; returns the executable."""
    header = next(n for n in files if n.endswith(".h"))
    source = harness(header, prefix, fixed, bilinear)
    proc, exe = build_program(toolchain, tmp_path, files, source)
    assert proc.returncode == 0, proc.stderr
    return exe


@pytest.mark.parametrize("layout", LAYOUTS)
def test_float_lookup_matches_python(toolchain, tmp_path, make_manifest, harness, layout):
    m = make_manifest()
    exe = _build(toolchain, tmp_path, _files(m, "c99", layout), m["table"]["name"], False, harness)
    queries = float_queries(m)
    stdin = "".join(f"{_hex32(x)} {_hex32(t)}\n" for x, t in queries)
    got = toolchain.run(exe, ["f32"], stdin).splitlines()
    want = [expected_line(m, lookup_f32(m, x, t)) for x, t in queries]
    assert len(got) == len(want) == len(queries)
    mismatches = [(q, g, w) for q, g, w in zip(queries, got, want, strict=True) if g != w]
    assert not mismatches, mismatches[:5]
    # The probes reach every status code the float lookup can return, and every node.
    statuses = {int(line.split()[0]) for line in got}
    assert statuses == {0, -2, -3, -4, -5, -6}
    assert {int(line.split()[1]) for line in got if line.startswith("0 ")} == set(range(12))


def test_metre_inputs_match_python(toolchain, tmp_path, make_manifest, harness):
    """``lookup(m, thickness_m, t)`` equals C called with (float)(thickness_m * 1000.0)."""
    m = make_manifest()
    exe = _build(toolchain, tmp_path, _files(m, "c99"), m["table"]["name"], False, harness)
    ax = np.array(m["axes"]["thickness_m"])
    at = np.array(m["axes"]["start_temp_c"])
    xs = np.concatenate([ax, np.nextafter(ax, 1.0), np.nextafter(ax, -1.0), [0.0, 1.0, np.nan]])
    ts = np.concatenate([at, np.nextafter(at, 99.0), np.nextafter(at, -99.0), [-np.inf]])
    rng = np.random.default_rng(RNG_SEED + 1)
    pairs = [(x, t) for x in xs for t in ts]
    pairs += list(zip(rng.uniform(0.005, 0.016, 1000), rng.uniform(-19, 5, 1000), strict=True))
    stdin = "".join(
        f"{np.float64(x).view(np.uint64):016x} {np.float64(t).view(np.uint64):016x}\n"
        for x, t in pairs
    )
    got = toolchain.run(exe, ["f64"], stdin).splitlines()
    want = [expected_line(m, lookup(m, float(x), float(t))) for x, t in pairs]
    assert got == want


@pytest.mark.parametrize("layout", LAYOUTS)
def test_fixed_lookup_matches_python(toolchain, tmp_path, make_manifest, harness, layout):
    m = make_manifest()
    files = _files(m, "c99_fixed", layout)
    for name, data in files.items():
        assert not re.search(rb"\b(float|double)\b", data), f"integer-only {name} names float"
    exe = _build(toolchain, tmp_path, files, m["table"]["name"], True, harness)
    ax, at = thickness_axis_um(m), start_temp_axis_cc(m)

    def probes(axis):
        base = [int(v) + d for v in axis for d in (-1, 0, 1)]
        return base + [-(2**31), 2**31 - 1, 0, -1, int(axis[0]) - 1000, int(axis[-1]) + 1000]

    rng = np.random.default_rng(RNG_SEED + 2)
    pairs = [(x, t) for x in probes(ax) for t in probes(at)]
    pairs += [(int(x), int(t)) for x, t in zip(rng.integers(ax[0] - 50, ax[-1] + 50, 2000),
                                                rng.integers(at[0] - 50, at[-1] + 50, 2000),
                                                strict=True)]  # fmt: skip
    got = toolchain.run(exe, ["int"], "".join(f"{x} {t}\n" for x, t in pairs)).splitlines()
    want = [expected_line(m, lookup_fixed(m, x, t)) for x, t in pairs]
    assert got == want
    assert {int(line.split()[0]) for line in got} == {0, -3, -4, -5, -6}


@pytest.mark.parametrize("target", ["c99", "c99_fixed"])
def test_table_data_matches_manifest(toolchain, tmp_path, make_manifest, harness, target):
    """Dimensions, tick, byte count, axes and padded event rows as the compiler sees them."""
    m = make_manifest()
    fixed = target == "c99_fixed"
    exe = _build(toolchain, tmp_path, _files(m, target), m["table"]["name"], fixed, harness)
    lines = toolchain.run(exe, ["dump"]).splitlines()
    n_x, n_t, n = 4, 3, 12
    # bytes: 4 * (4 + 3) axes + 12 * (1 count + 4 kinds + 4 * 4 ticks + 4 margin) = 328
    assert (
        lines[0]
        == f"version {FORMAT_VERSION} nodes {n_x} {n_t} {n} events 4 tick_us 100000 bytes 328"
    )
    assert lines[1] == "null -1"
    if fixed:
        axes = [f"x {v}" for v in (6000, 9000, 12500, 15000)]
        axes += [f"t {v}" for v in (-1800, 0, 400)]
    else:
        axes = [f"x {_hex32(v)}" for v in (6.0, 9.0, 12.5, 15.0)]
        axes += [f"t {_hex32(v)}" for v in (-18.0, 0.0, 4.0)]
    assert lines[2 : 2 + n_x + n_t] == axes
    rows = lines[2 + n_x + n_t :]
    assert len(rows) == n
    for k, (row, node) in enumerate(zip(rows, m["nodes"], strict=True)):
        events = [(m["event_kinds"][e["kind"]], e["at_ticks"]) for e in node["events"]]
        events += [events[-1]] * (4 - len(events))
        cells = " ".join(f"{a}:{b}" for a, b in events)
        assert row == f"node {k} {len(node['events'])} {_margin_mlog(node)} {cells}"


TWO_TABLES = r"""
#include <stdio.h>
#define FIRST_EXPECT_FORMAT_VERSION @version@
#define SECOND_EXPECT_FORMAT_VERSION @version@
#include "first.h"
#include "second.h"
#include "first.h"
int other_unit(void);
int main(void)
{
    first_schedule_t a;
    second_schedule_t b;
    int sa = first_lookup(7.0f, -3.0f, &a);
    int sb = second_lookup(9.0f, -3.0f, &b);
    printf("%d %u %lu %d %u %lu %d\n", sa, (unsigned)a.node, (unsigned long)a.cook_ticks, sb,
           (unsigned)b.node, (unsigned long)b.cook_ticks, other_unit());
    return 0;
}
"""

OTHER_UNIT = r"""
#define FIRST_EXPECT_FORMAT_VERSION @version@
#define SECOND_EXPECT_FORMAT_VERSION @version@
#include "second.h"
#include "first.h"
int other_unit(void)
{
    second_schedule_t b;
    return second_lookup(20.0f, 0.0f, &b) + FIRST_N_NODES * 100 + SECOND_N_NODES;
}
"""


def _versioned(source: str) -> str:
    return source.replace("@version@", str(FORMAT_VERSION))


@pytest.mark.parametrize("layout", LAYOUTS)
def test_two_tables_link_into_one_program(host_cc, tmp_path, make_manifest, layout):
    """Two tables with different prefixes, both in two translation units, link and run."""
    first = make_manifest("first")
    second = make_manifest("second", thickness_m=(0.008, 0.02), start_temp_c=(-20.0, 5.0))
    files = {**_files(first, "c99", layout), **_files(second, "c99", layout)}
    assert len(files) == (4 if layout == "split" else 2)
    (tmp_path / "other.c").write_text(_versioned(OTHER_UNIT))
    proc, exe = build_program(host_cc, tmp_path, files, _versioned(TWO_TABLES),
                              (str(tmp_path / "other.c"),))  # fmt: skip
    assert proc.returncode == 0, proc.stderr
    a, b = lookup_f32(first, 7.0, -3.0), lookup_f32(second, 9.0, -3.0)
    other = lookup_f32(second, 20.0, 0.0).status + 12 * 100 + 4
    want = f"{a.status} {a.node} {a.events[-1][1]} {b.status} {b.node} {b.events[-1][1]} {other}"
    assert host_cc.run(exe, []).strip() == want


@pytest.mark.parametrize("layout", LAYOUTS)
def test_header_compiles_as_cplusplus(tmp_path, make_manifest, layout):
    """Not required, but the extern "C" guards should hold: g++ -std=c++11 -pedantic (the
    table's .c file, in layout split, compiled as C and linked in)."""
    cxx = "g++"
    if not (shutil.which(cxx) and shutil.which("gcc")):
        pytest.skip("g++ or gcc not installed")
    files = _files(make_manifest(), "c99", layout)
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    (tmp_path / "t.cpp").write_text(
        f"#define SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION {FORMAT_VERSION}\n"
        '#include "synthetic_grill.h"\nint main() { synthetic_grill_schedule_t s;\n'
        "  return synthetic_grill_lookup(7.0f, 1.0f, &s) == SYNTHETIC_GRILL_OK ? 0 : 1; }\n"
    )
    objects = []
    if "synthetic_grill.c" in files:
        obj = tmp_path / "table.o"
        cmd = ["gcc", "-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-c",
               str(tmp_path / "synthetic_grill.c"), "-o", str(obj)]  # fmt: skip
        c_proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
        assert c_proc.returncode == 0, c_proc.stderr
        objects.append(str(obj))
    cmd = [cxx, "-std=c++11", "-Wall", "-Wextra", "-Werror", "-pedantic", str(tmp_path / "t.cpp"),
           *objects, "-o", str(tmp_path / "t")]  # fmt: skip
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert subprocess.run([str(tmp_path / "t")], timeout=60).returncode == 0


FIRMWARE_WARNINGS = (
    "-Wundef", "-Wconversion", "-Wsign-conversion", "-Wshadow", "-Wcast-qual",
    "-Wstrict-prototypes", "-Wmissing-prototypes", "-Wredundant-decls", "-Wdouble-promotion",
    "-Wcast-align", "-Wpadded",
)  # fmt: skip

USER_UNIT = r"""
#define SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION @version@
#include "synthetic_grill.h"
int firmware_step(@arg@ x, @arg@ t);
int firmware_step(@arg@ x, @arg@ t)
{
    synthetic_grill_schedule_t s;
    int status = synthetic_grill_lookup(x, t, &s);
    if (status != SYNTHETIC_GRILL_OK) {
        return status;
    }
    return (int)s.cook_ticks + (int)s.kinds[0] + (int)s.n_events;
}
"""


def user_unit(fixed: bool) -> str:
    """A firmware unit calling the lookup, for compile-only tests.

    The schedule lives on the caller's stack and the caller reads ``cook_ticks`` and
    ``kinds[0]``: with the lookup inlined (header-only) this is where gcc -O2/-O3 once saw a
    read of an unset entry in the bilinear lookup (-Wmaybe-uninitialized).
    """
    arg = "int32_t" if fixed else "float"
    return _versioned(USER_UNIT).replace("@arg@", arg)


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", ["c99", "c99_fixed"])
def test_header_is_clean_under_stricter_firmware_warnings(toolchain, tmp_path, make_manifest,
                                                          target, layout):  # fmt: skip
    """Common firmware warning set (common practice), incl. -Wpadded and -Wconversion.

    -Wfloat-equal is left out on purpose: the NaN test is ``x != x`` by design.
    """
    files = _files(make_manifest(), target, layout)
    problems = compile_units(toolchain, tmp_path, files, user_unit(target == "c99_fixed"),
                             FIRMWARE_WARNINGS)  # fmt: skip
    assert not problems, problems


@pytest.mark.parametrize("target", ["c99", "c99_fixed"])
def test_corner_done_pads_match_python(toolchain, tmp_path, harness, make_cells_manifest, target):
    """With cells, the corner rule adds the cell's done pad (to done and a platen_open at
    done); the C API is unchanged and the answers equal ``lookup(..., rule="corner")``."""
    m = make_cells_manifest()
    fixed = target == "c99_fixed"
    exe = _build(toolchain, tmp_path, _files(m, target), m["table"]["name"], fixed, harness)
    if fixed:
        ax, at = thickness_axis_um(m), start_temp_axis_cc(m)
        pairs = [(int(x) + d, int(t) + e) for x in ax for t in at for d in (-1, 0, 1)
                 for e in (-1, 0, 1)]  # fmt: skip
        results = [lookup_fixed(m, x, t) for x, t in pairs]
        stdin = "".join(f"{x} {t}\n" for x, t in pairs)
    else:
        pairs = float_queries(m, n_random=1000)
        results = [lookup_f32(m, x, t) for x, t in pairs]
        stdin = "".join(f"{_hex32(x)} {_hex32(t)}\n" for x, t in pairs)
    got = toolchain.run(exe, ["int" if fixed else "f32"], stdin).splitlines()
    assert got == [expected_line(m, r) for r in results]
    padded = [r for r in results if r.status == 0 and r.events != _raw_events(m, r.node)]
    assert padded and all(r.events[-1][1] > _raw_events(m, r.node)[-1][1] for r in padded)
    # A platen_open at the done tick moved with done (node 4, raw 1525, in cell 1, pad 1).
    r = next(r for r in results if r.node == 4)
    assert r.events[-2:] == ((3, 1526), (0, 1526)) and r.cell == 1


def _raw_events(m: dict, node: int) -> tuple:
    return tuple((m["event_kinds"][e["kind"]], e["at_ticks"]) for e in m["nodes"][node]["events"])
