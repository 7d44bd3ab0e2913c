"""The header emitted for a real, certified build answers exactly as the Python lookup.

Outside reference: the C compilers at -std=c99 -Wall -Wextra -Werror -pedantic
(ISO/IEC 9899:1999) and IEEE 754 binary32 comparisons on the host and, when installed,
32-bit ARM under qemu.
"""

from __future__ import annotations

from obvert.firmware.lookup import lookup_f32

from .conftest import build_program
from .test_c_header import _hex32, expected_line, float_queries


def test_built_header_matches_python_lookup(toolchain, tmp_path, harness, built) -> None:
    m = built.manifest
    name = m["table"]["name"]
    files = {p.name: p.read_bytes() for p in built.out.iterdir() if p.suffix in (".c", ".h")}
    assert sorted(files) == [f"{name}.c", f"{name}.h"]  # c99: data and lookup in the .c file
    proc, exe = build_program(toolchain, tmp_path, files, harness(f"{name}.h", name, False))
    assert proc.returncode == 0, proc.stderr
    queries = float_queries(m, n_random=2000)
    stdin = "".join(f"{_hex32(x)} {_hex32(t)}\n" for x, t in queries)
    got = toolchain.run(exe, ["f32"], stdin).splitlines()
    want = [expected_line(m, lookup_f32(m, x, t)) for x, t in queries]
    assert got == want
    # In range, on edges, out of range on both axes and NaN were all exercised.
    assert {int(line.split()[0]) for line in got} == {0, -2, -3, -4, -5, -6}
    assert {int(line.split()[1]) for line in got if line.startswith("0 ")} == set(range(4))
