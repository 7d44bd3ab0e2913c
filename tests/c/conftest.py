"""Fixtures of the C tests: synthetic manifests, tool chains, the lookup harness.

The C compiler and the C99 language (ISO/IEC 9899:1999) are the outside reference here:
the generated header is compiled at -std=c99 -Wall -Wextra -Werror -pedantic and its
answers are compared exactly with the Python lookup.
"""

from __future__ import annotations

import shutil
import subprocess
from dataclasses import dataclass, replace
from pathlib import Path
from string import Template

import pytest

from obvert.emitter import TargetProfile, load_target
from obvert.emitter.profile import C_SOURCE_TEMPLATE
from obvert.firmware import FORMAT_VERSION

from .manifests import cells_manifest, manifest_module

C_FLAGS = ("-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-O2")


@dataclass(frozen=True)
class Toolchain:
    """A C compiler and how to run what it builds."""

    name: str
    cc: str
    flags: tuple[str, ...]
    runner: tuple[str, ...] = ()

    def compile(self, sources: list[Path], exe: Path, extra: tuple[str, ...] = ()):
        """Compile and link; return the CompletedProcess (never raises on failure)."""
        cmd = [self.cc, *C_FLAGS, *self.flags, *extra, *map(str, sources), "-o", str(exe)]
        return subprocess.run(cmd, capture_output=True, text=True, timeout=120)

    def run(self, exe: Path, args: list[str], stdin: str = "") -> str:
        """Run ``exe`` with ``args``; return stdout, failing the test on a non-zero exit."""
        proc = subprocess.run(
            [*self.runner, str(exe), *args],
            input=stdin,
            capture_output=True,
            text=True,
            timeout=120,
        )
        assert proc.returncode == 0, proc.stderr
        return proc.stdout


def _toolchain(name: str) -> Toolchain:
    if name == "arm-qemu":
        if not (shutil.which("arm-linux-gnueabihf-gcc") and shutil.which("qemu-arm")):
            pytest.skip("arm-linux-gnueabihf-gcc or qemu-arm not installed")
        return Toolchain(name, "arm-linux-gnueabihf-gcc", ("-static",), ("qemu-arm",))
    if not shutil.which(name):
        pytest.skip(f"{name} not installed")
    return Toolchain(name, name, ())


def header_only(target: TargetProfile | str) -> TargetProfile:
    """``target`` with layout ``header_only``: its ``.c`` output dropped."""
    profile = load_target(target) if isinstance(target, str) else target
    outputs = tuple(o for o in profile.outputs if o.template != C_SOURCE_TEMPLATE)
    return replace(profile, layout="header_only", outputs=outputs)


def build_program(
    toolchain: Toolchain,
    folder: Path,
    files: dict[str, bytes],
    main_source: str,
    extra: tuple[str, ...] = (),
):
    """Write the emitted ``files`` and ``main.c`` to ``folder`` and build them into one program.

    Every emitted ``.c`` file is compiled and linked with ``main.c`` (layout ``split``); a
    header-only table has none. Returns ``(CompletedProcess, executable path)``.
    """
    for name, data in files.items():
        (folder / name).write_bytes(data)
    (folder / "main.c").write_text(main_source)
    sources = [folder / "main.c"] + [folder / n for n in sorted(files) if n.endswith(".c")]
    exe = folder / "program"
    return toolchain.compile(sources, exe, extra), exe


def compile_units(
    toolchain: Toolchain,
    folder: Path,
    files: dict[str, bytes],
    user_source: str,
    extra: tuple[str, ...] = (),
) -> list[tuple[str, str]]:
    """Compile ``user.c`` and every emitted ``.c`` file on its own (``-c``).

    Returns ``(file name, compiler messages)`` of every unit that failed or printed anything.
    """
    for name, data in files.items():
        (folder / name).write_bytes(data)
    (folder / "user.c").write_text(user_source)
    units = ["user.c"] + sorted(n for n in files if n.endswith(".c"))
    problems = []
    for unit in units:
        proc = toolchain.compile([folder / unit], folder / f"{unit}.o", ("-c", *extra))
        if proc.returncode != 0 or proc.stderr.strip():
            problems.append((unit, proc.stderr))
    return problems


@pytest.fixture(params=["gcc", "clang", "arm-qemu"])
def toolchain(request) -> Toolchain:
    """Every available tool chain: host gcc, host clang, 32-bit ARM under qemu."""
    return _toolchain(request.param)


@pytest.fixture(params=["gcc", "clang"])
def host_cc(request) -> Toolchain:
    """Host compilers only (compile-failure and linking checks)."""
    return _toolchain(request.param)


@pytest.fixture
def make_manifest():
    """Factory of synthetic manifests (invented numbers, documented schema)."""
    return manifest_module.synthetic_manifest


@pytest.fixture
def make_cells_manifest():
    """Factory of synthetic manifests with cells and tolerances (invented numbers)."""
    return cells_manifest


# The harness reads one query per line from stdin and prints one answer per line:
#   OK:     "0 node i j n_events cook_ticks margin_mlog kind:ticks ..."
#   error:  "<status> <1 if *out was left untouched else 0>"
# argv[1] selects the input form: "f32" (two binary32 bit patterns in hex), "f64" (two
# binary64 bit patterns: thickness in m and temperature in degC, converted as
# (float)(m * 1000.0) and (float)c), "int" (two decimal int32), "dump" (table data).
HARNESS = Template(r"""
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#ifndef ${P}_EXPECT_FORMAT_VERSION
#define ${P}_EXPECT_FORMAT_VERSION $version
#endif
#include "$header"

static void answer(int status, const ${p}_schedule_t *out, const ${p}_schedule_t *sentinel)
{
    unsigned k;
    if (status != ${P}_OK) {
        printf("%d %d\n", status, memcmp(out, sentinel, sizeof *out) == 0);
        return;
    }
    printf("%d %u %u %u", status, (unsigned)out->node, (unsigned)out->i_thickness,
           (unsigned)out->j_start_temp);${answer_cell}
    printf(" %u %lu %ld", (unsigned)out->n_events, (unsigned long)out->cook_ticks,
           (long)out->margin_mlog);
    for (k = 0; k < out->n_events; ++k) {
        printf(" %u:%lu", (unsigned)out->kinds[k], (unsigned long)out->at_ticks[k]);
    }
    printf("\n");
}

static char buf[64];
${axis_text}

static void dump(void)
{
    unsigned n, k;
    printf("version %d nodes %d %d %d events %d tick_us %lu bytes %lu\n",
           ${P}_FORMAT_VERSION, ${P}_N_THICKNESS, ${P}_N_START_TEMP, ${P}_N_NODES,
           ${P}_MAX_EVENTS, (unsigned long)${P}_TICK_US, (unsigned long)${P}_DATA_BYTES);
    printf("null %d\n", ${p}_lookup(${x0}, ${t0}, NULL));
    for (n = 0; n < ${P}_N_THICKNESS; ++n) { printf("x %s\n", ${fmt_x}); }
    for (n = 0; n < ${P}_N_START_TEMP; ++n) { printf("t %s\n", ${fmt_t}); }
    for (n = 0; n < ${P}_N_NODES; ++n) {
        printf("node %u %u %ld", n, (unsigned)${p}_event_count[n], (long)${p}_margin_mlog[n]);
        for (k = 0; k < ${P}_MAX_EVENTS; ++k) {
            printf(" %u:%lu", (unsigned)${p}_event_kind[n][k],
                   (unsigned long)${p}_event_ticks[n][k]);
        }
        printf("\n");
    }${dump_cells}
}

int main(int argc, char **argv)
{
    char line[256];
    ${p}_schedule_t out, sentinel;
    memset(&sentinel, 0xA5, sizeof sentinel);
    if (argc > 1 && strcmp(argv[1], "dump") == 0) {
        dump();
        return 0;
    }
    while (argc > 1 && fgets(line, sizeof line, stdin) != NULL) {
        int status;
        memcpy(&out, &sentinel, sizeof out);
        ${dispatch}
        answer(status, &out, &sentinel);
    }
    return 0;
}
""")

_FLOAT_PARTS = {
    "x0": "1.0f",
    "t0": "1.0f",
    "fmt_x": "axis_bits(${p}_axis_thickness_mm[n])",
    "fmt_t": "axis_bits(${p}_axis_start_temp_c[n])",
    "axis_text": r"""
static const char *axis_bits(float v)
{
    uint32_t bits;
    memcpy(&bits, &v, sizeof bits);
    sprintf(buf, "%08lx", (unsigned long)bits);
    return buf;
}
""",
    "dispatch": r"""
        if (strcmp(argv[1], "f32") == 0) {
            unsigned long a, b;
            uint32_t ua, ub;
            float x, t;
            if (sscanf(line, "%lx %lx", &a, &b) != 2) { return 2; }
            ua = (uint32_t)a; ub = (uint32_t)b;
            memcpy(&x, &ua, sizeof x);
            memcpy(&t, &ub, sizeof t);
            status = ${p}_lookup(x, t, &out);
        } else {
            unsigned long long a, b;
            double xm, tc;
            if (sscanf(line, "%llx %llx", &a, &b) != 2) { return 2; }
            memcpy(&xm, &a, sizeof xm);
            memcpy(&tc, &b, sizeof tc);
            status = ${p}_lookup((float)(xm * 1000.0), (float)tc, &out);
        }
""",
}

_FIXED_PARTS = {
    "x0": "1",
    "t0": "1",
    "fmt_x": "axis_int(${p}_axis_thickness_um[n])",
    "fmt_t": "axis_int(${p}_axis_start_temp_cc[n])",
    "axis_text": r"""
static const char *axis_int(int32_t v)
{
    sprintf(buf, "%ld", (long)v);
    return buf;
}
""",
    "dispatch": r"""
        {
            long long a, b;
            if (sscanf(line, "%lld %lld", &a, &b) != 2) { return 2; }
            status = ${p}_lookup((int32_t)a, (int32_t)b, &out);
        }
""",
}


# Bilinear targets: OK lines carry the cell and the rule after "node i j"; the dump adds
# "cell k rule pad margin" lines.
_BILINEAR_PARTS = {
    "answer_cell": r"""
    printf(" %u %u", (unsigned)out->cell, (unsigned)out->rule_used);""",
    "dump_cells": r"""
    for (n = 0; n < ${P}_N_CELLS; ++n) {
        printf("cell %u %u %lu %ld\n", n, (unsigned)${p}_cell_rule[n],
               (unsigned long)${p}_cell_pad_ticks[n], (long)${p}_cell_margin_mlog[n]);
    }""",
}


def harness_source(header: str, prefix: str, fixed: bool, bilinear: bool = False) -> str:
    """C source of the lookup harness for ``header`` (symbol prefix ``prefix``)."""
    parts = dict(_FIXED_PARTS if fixed else _FLOAT_PARTS)
    parts.update(_BILINEAR_PARTS if bilinear else {"answer_cell": "", "dump_cells": ""})
    names = {"p": prefix, "P": prefix.upper()}
    filled = {k: Template(v).substitute(names) for k, v in parts.items()}
    return HARNESS.substitute(header=header, version=FORMAT_VERSION, **names, **filled)


@pytest.fixture
def harness():
    """``harness(header, prefix, fixed) -> C source`` of the lookup harness."""
    return harness_source
