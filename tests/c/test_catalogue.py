"""A catalogue in one C output: several products' bundle compiled in, looked up by product id.

Outside references as in test_bundle_loader.py: the C compilers (-std=c99 -Wall -Wextra
-Werror -pedantic), 32-bit ARM under qemu, cppcheck, and ``lookup_fixed`` (the fixed-point
corner rule) for every answer. Products: the real table (tests/golden/input) and two synthetic
ones with invented numbers and platen events.
"""

from __future__ import annotations

import random
import re
import shutil
import subprocess

import pytest

from obvert.emitter import EmitError
from obvert.emitter.catalogue import catalogue_files
from obvert.firmware.bundle import name_id, parse_bundle

from .conftest import build_program, compile_units
from .manifests import cells_manifest
from .test_bundle_loader import _expected_line, _queries, real_manifest

MAIN = r"""
#include <stdio.h>
#include <string.h>
#include "line_menu.h"

int main(void)
{
    char line[256];
    line_menu_bundle_schedule_t out;
    printf("check %d\n", (int)line_menu_catalogue_check());
    printf("ids %lu %lu %lu\n", (unsigned long)LINE_MENU_PRODUCT_TEST_PATTY,
           (unsigned long)LINE_MENU_PRODUCT_BRINECLIFF_SLIDER,
           (unsigned long)LINE_MENU_PRODUCT_BRINECLIFF_DOUBLE);
    while (fgets(line, sizeof line, stdin) != NULL) {
        unsigned long pid;
        long long x, t;
        int status;
        unsigned k;
        if (sscanf(line, "%lu %lld %lld", &pid, &x, &t) != 3) { return 4; }
        memset(&out, 0xA5, sizeof out);
        status = line_menu_catalogue_lookup((uint32_t)pid, (int32_t)x, (int32_t)t, &out);
        if (status != LINE_MENU_BUNDLE_LOOKUP_OK) {
            printf("%d 1\n", status);
            continue;
        }
        printf("0 %lu %u %u %u %lu %ld", (unsigned long)out.node, (unsigned)out.i_thickness,
               (unsigned)out.j_start_temp, (unsigned)out.n_events,
               (unsigned long)out.cook_ticks, (long)out.margin_mlog);
        for (k = 0; k < out.n_events; ++k) {
            printf(" %u:%lu", (unsigned)out.kinds[k], (unsigned long)out.at_ticks[k]);
        }
        printf("\n");
    }
    return 0;
}
"""


def _manifests() -> list[dict]:
    real = real_manifest()
    synth = [
        cells_manifest("brinecliff_slider"),
        cells_manifest("brinecliff_double", (0.005, 0.008, 0.02)),
    ]
    for m in synth:
        m["spec"]["appliance"] = {"name": real["spec"]["appliance"]["name"]}
    return [real, *synth]


def test_catalogue_lookup_by_product_id_equals_python(toolchain, tmp_path):
    manifests = _manifests()
    files = catalogue_files("line_menu", manifests, table_version=2)
    data = files.pop("line_menu.bundle")
    parsed = {p.product_id: p for p in parse_bundle(data).products}
    proc, exe = build_program(toolchain, tmp_path, files, MAIN)
    assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
    rng = random.Random(7)
    lines, expect = [], []
    for m in manifests:
        pid = name_id(m["table"]["name"])
        for x, t in _queries(m, rng, 800):
            lines.append(f"{pid} {x} {t}")
            expect.append(_expected_line(m, parsed[pid], x, t))
    lines.append("0 8000 0")
    expect.append("-7 1")
    got = toolchain.run(exe, [], "\n".join(lines) + "\n").splitlines()
    assert got[0] == "check 0"
    ids = [name_id(n) for n in ("test_patty", "brinecliff_slider", "brinecliff_double")]
    assert got[1] == "ids " + " ".join(map(str, ids))
    assert got[2:] == expect


def test_catalogue_data_is_the_bundle_and_refuses_bad_names(tmp_path):
    files = catalogue_files("line_menu", _manifests(), table_version=2)
    text = files["line_menu.c"].decode()
    body = text.split("line_menu_catalogue_data[LINE_MENU_CATALOGUE_BYTES] = {", 1)[1]
    body = body.split("};", 1)[0]
    assert (
        bytes(int(v, 16) for v in re.findall(r"0x([0-9A-F]{2})u", body))
        == files["line_menu.bundle"]
    )
    for bad in ("Line", "1menu", "a-b", ""):
        with pytest.raises(EmitError, match="catalogue name"):
            catalogue_files(bad, _manifests(), table_version=2)
    with pytest.raises(EmitError, match="table version 0"):
        catalogue_files("line_menu", _manifests(), table_version=0)
    if shutil.which("cppcheck"):
        for name, blob in files.items():
            (tmp_path / name).write_bytes(blob)
        source = str(tmp_path / "line_menu.c")
        cmd = ["cppcheck", "--std=c99", "--enable=warning,style,portability",
               "--error-exitcode=1", "-q", f"-I{tmp_path}", source]  # fmt: skip
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr


USER_UNIT = r"""
#include "line_menu.h"
int firmware_start(void);
int firmware_start(void) { return (int)line_menu_catalogue_check(); }
"""


def test_flash_budget_static_assert_fires(host_cc, tmp_path):
    """The C byte count equals the bundle's: a budget of exactly that many bytes builds, one
    byte less stops the build of line_menu.c at the budget check (ISO C99 6.7.5.2: an array
    of negative size is a constraint violation, so every conforming compiler refuses it)."""
    files = catalogue_files("line_menu", _manifests(), table_version=2)
    size = len(files.pop("line_menu.bundle"))
    files.pop("line_menu.json")
    header = files["line_menu.h"].decode()
    line = "#define LINE_MENU_FLASH_BUDGET_BYTES 65536UL"
    assert line in header and f"#define LINE_MENU_CATALOGUE_BYTES {size}u" in header
    for budget, ok in ((size, True), (size - 1, False), (65536, True)):
        files["line_menu.h"] = header.replace(line, line.replace("65536", str(budget))).encode()
        problems = compile_units(host_cc, tmp_path, files, USER_UNIT)
        assert (not problems) is ok, problems
        if not ok:
            assert [u for u, _ in problems] == ["line_menu.c"]
            assert "line_menu_check_flash_budget" in problems[0][1]
    # the Python side refuses such a budget before writing any C
    with pytest.raises(EmitError, match=f"needs {size} bytes"):
        catalogue_files("line_menu", _manifests(), table_version=2, flash_budget_bytes=size - 1)
    small = catalogue_files("line_menu", _manifests(), table_version=2, flash_budget_bytes=size)
    assert f"#define LINE_MENU_FLASH_BUDGET_BYTES {size}UL" in small["line_menu.h"].decode()


CORTEX_M0 = ("-mcpu=cortex-m0", "-mthumb", "-Os", "-ffreestanding")
INTEGER_HELPERS = {
    "__aeabi_lmul", "__aeabi_llsl", "__aeabi_llsr", "__aeabi_lasr", "__aeabi_idiv",
    "__aeabi_uidiv", "__aeabi_idivmod", "__aeabi_uidivmod", "__aeabi_ldivmod", "__aeabi_uldivmod",
}  # fmt: skip


def test_catalogue_compiles_for_cortex_m0(tmp_path):
    """The catalogue (loader, lookup and data) compiles for an Armv6-M core without an FPU or
    a C library: arm-none-eabi-gcc, -std=c99 -Wall -Wextra -Werror -pedantic, freestanding
    (ISO C99 4p6: a freestanding program may use <stddef.h> and <stdint.h> only)."""
    if not shutil.which("arm-none-eabi-gcc"):
        pytest.skip("arm-none-eabi-gcc not installed (apt-get install gcc-arm-none-eabi)")
    files = catalogue_files("line_menu", _manifests(), table_version=2)
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    (tmp_path / "user.c").write_text(USER_UNIT)
    flags = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", *CORTEX_M0]
    for unit in ("line_menu.c", "user.c"):
        cmd = ["arm-none-eabi-gcc", *flags, "-c", str(tmp_path / unit), "-o",
               str(tmp_path / f"{unit}.o")]  # fmt: skip
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
        assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
    # No C library, no heap, no floating point: the only calls leaving the object are the
    # compiler's own integer helpers of the Arm run-time ABI (libgcc), e.g. the 64-bit
    # multiply of the block-size check (Arm IHI 0043, "Run-time ABI for the Arm
    # Architecture", section 4.2 integer helpers; the float helpers are __aeabi_f*/d*).
    nm = subprocess.run(
        ["arm-none-eabi-nm", "-u", str(tmp_path / "line_menu.c.o")],
        capture_output=True, text=True, timeout=60, check=True,
    )  # fmt: skip
    undefined = set(nm.stdout.split()) - {"U"}
    assert undefined <= INTEGER_HELPERS, undefined


@pytest.mark.parametrize("level", ["-O0", "-O1", "-O2", "-O3", "-Os"])
def test_catalogue_is_clean_at_every_optimisation_level(host_cc, tmp_path, level):
    """-std=c99 -Wall -Wextra -Werror -pedantic at -O0..-Os (the static asserts included)."""
    files = catalogue_files("line_menu", _manifests(), table_version=2)
    problems = compile_units(host_cc, tmp_path, files, USER_UNIT, (level,))
    assert not problems, problems
