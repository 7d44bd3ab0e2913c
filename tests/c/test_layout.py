"""The C layouts as a firmware build sees them: one copy of the data, the format-version
check, symbols named in comments, every optimisation level, static analysers.

Outside references: the C compilers (gcc, clang) at -std=c99 -Wall -Wextra -Werror -pedantic
(ISO/IEC 9899:1999: 6.2.2 linkage of identifiers, 6.9 external definitions, 6.10.1
conditional inclusion, 6.10.5 #error), the symbol tables printed by binutils ``nm`` (POSIX
nm output format: upper-case type letters are global symbols, ``R``/``r`` read-only data,
``T``/``t`` code), and the static analysers cppcheck and ``gcc -fanalyzer``. The tables are
synthetic (invented numbers).
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
from dataclasses import replace
from pathlib import Path

import pytest

from obvert.emitter import emit, load_target
from obvert.firmware import FORMAT_VERSION
from obvert.firmware.lookup import lookup_f32, lookup_fixed

from .conftest import Toolchain, build_program, compile_units, header_only
from .manifests import cells_manifest
from .test_bilinear import expected_line as bilinear_line
from .test_bilinear import fixed_cases
from .test_c_header import _hex32, expected_line, float_queries, user_unit

C_TARGETS = ("c99", "c99_fixed", "c99_bilinear", "c99_fixed_bilinear")
LAYOUTS = ("split", "header_only")
LEVELS = ("-O0", "-O1", "-O2", "-O3", "-Os")
NAME = "synthetic_grill"


def _target(name: str, layout: str):
    return load_target(name) if layout == "split" else header_only(name)


def _files(target: str, layout: str, **manifest_args) -> dict[str, bytes]:
    return emit(cells_manifest(**manifest_args), _target(target, layout))


def _data_symbols(bilinear: bool) -> list[str]:
    names = ["axis_", "event_count", "event_kind", "event_ticks", "margin_mlog"]
    if bilinear:
        names += ["cell_rule", "cell_pad_ticks", "cell_margin_mlog"]
    return [f"{NAME}_{n}" for n in names]


# --- one copy of the data per firmware ------------------------------------------------------

TWO_UNITS_MAIN = r"""
#include <stdio.h>
#define SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION @version@
#include "synthetic_grill.h"
int other_unit(void);
int main(void)
{
    synthetic_grill_schedule_t s;
    int status = synthetic_grill_lookup(@x@, @t@, &s);
    printf("%d %lu %d\n", status, (unsigned long)s.cook_ticks, other_unit());
    return 0;
}
"""

TWO_UNITS_OTHER = r"""
#define SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION @version@
#include "synthetic_grill.h"
int other_unit(void)
{
    synthetic_grill_schedule_t s;
    return synthetic_grill_lookup(@x@, @t@, &s) + (int)SYNTHETIC_GRILL_DATA_BYTES;
}
"""


def _two_units(fixed: bool, text: str) -> str:
    x, t = ("9000", "-100") if fixed else ("9.0f", "-1.0f")
    text = text.replace("@version@", str(FORMAT_VERSION))
    return text.replace("@x@", x).replace("@t@", t)


def _nm(exe) -> list[tuple[str, str]]:
    """``(type letter, name)`` of every symbol of ``exe`` that names the table."""
    proc = subprocess.run(["nm", str(exe)], capture_output=True, text=True, timeout=60)
    assert proc.returncode == 0, proc.stderr
    rows = [line.split() for line in proc.stdout.splitlines()]
    return [(r[-2], r[-1]) for r in rows if len(r) >= 2 and r[-1].startswith(NAME)]


@pytest.mark.parametrize("target", C_TARGETS)
def test_split_layout_has_one_copy_of_the_data(host_cc, tmp_path, target):
    """Two units include the header and link with the .c: each array is one global read-only
    symbol; the header-only layout, by contrast, gives each unit its own local copy."""
    if not shutil.which("nm"):
        pytest.skip("nm (binutils) not installed")
    fixed, bilinear = "fixed" in target, "bilinear" in target
    runs = {}
    for layout in LAYOUTS:
        folder = tmp_path / layout
        folder.mkdir()
        files = _files(target, layout)
        assert sorted(files) == sorted(
            [f"{NAME}.h", f"{NAME}.c"] if layout == "split" else [f"{NAME}.h"]
        )
        (folder / "other.c").write_text(_two_units(fixed, TWO_UNITS_OTHER))
        proc, exe = build_program(host_cc, folder, files, _two_units(fixed, TWO_UNITS_MAIN),
                                  (str(folder / "other.c"), "-O0"))  # fmt: skip
        assert proc.returncode == 0, proc.stderr
        runs[layout] = (host_cc.run(exe, []), _nm(exe))
    assert runs["split"][0] == runs["header_only"][0]  # same answers from both layouts
    assert runs["split"][0].startswith("0 ")
    split, inlined = runs["split"][1], runs["header_only"][1]
    for prefix in _data_symbols(bilinear):
        mine = [(kind, name) for kind, name in split if name.startswith(prefix)]
        names = [name for _, name in mine]
        assert mine and len(names) == len(set(names)), (prefix, mine)  # one copy of each
        assert all(kind == "R" for kind, _ in mine), mine  # global, read-only (flash)
    for prefix in (f"{NAME}_axis_", f"{NAME}_event_ticks"):  # read by both lookup rules
        mine = [name for _, name in split if name.startswith(prefix)]
        theirs = [name for kind, name in inlined if name.startswith(prefix) and kind == "r"]
        assert len(theirs) == 2 * len(mine), (prefix, inlined)  # header-only: one per unit
    lookups = [(kind, name) for kind, name in split if name == f"{NAME}_lookup"]
    assert lookups == [("T", f"{NAME}_lookup")]


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", ["c99", "c99_bilinear"])
def test_flash_budget_static_assert_fires(host_cc, tmp_path, target, layout):
    """The C byte count equals Python's: a budget of exactly that builds, one byte less stops
    the build (in the .c file in layout split, in the including unit in header-only)."""
    files = _files(target, layout)
    header = files[f"{NAME}.h"].decode()
    line = "#define SYNTHETIC_GRILL_FLASH_BUDGET_BYTES 65536UL"
    assert line in header
    want = int(re.search(r"\(SYNTHETIC_GRILL_DATA_BYTES == ([0-9]+)u\)", "".join(
        v.decode() for v in files.values())).group(1))  # fmt: skip
    assert want == (382 if "bilinear" in target else 328)  # see test_bilinear_table_data
    for budget, ok in ((want, True), (want - 1, False)):
        files[f"{NAME}.h"] = header.replace(line, line.replace("65536", str(budget))).encode()
        problems = compile_units(host_cc, tmp_path, files, user_unit(False))
        assert (not problems) is ok, problems
        if not ok:
            unit = f"{NAME}.c" if layout == "split" else "user.c"
            assert [u for u, _ in problems] == [unit]
            assert "check_flash_budget" in problems[0][1]


# --- the format-version check always fires ----------------------------------------------------

NO_EXPECT = r"""
#include "synthetic_grill.h"
int firmware_step(void);
int firmware_step(void) { return SYNTHETIC_GRILL_N_NODES; }
"""


@pytest.mark.parametrize("layout", LAYOUTS)
def test_format_version_is_required_and_checked(host_cc, tmp_path, layout):
    """Without the firmware's expected version, or with another one, the build stops."""
    files = _files("c99", layout)
    problems = compile_units(host_cc, tmp_path, files, NO_EXPECT)
    assert [u for u, _ in problems] == ["user.c"]  # the .c states its own version
    assert "define SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION" in problems[0][1]
    wrong = user_unit(False).replace(
        f"EXPECT_FORMAT_VERSION {FORMAT_VERSION}", f"EXPECT_FORMAT_VERSION {FORMAT_VERSION + 1}"
    )
    problems = compile_units(host_cc, tmp_path, files, wrong)
    assert [u for u, _ in problems] == ["user.c"]
    assert "table format version differs" in problems[0][1]
    assert not compile_units(host_cc, tmp_path, files, user_unit(False))
    # A firmware-wide expectation (-D on every unit) is checked in the .c as well.
    flag = f"-DSYNTHETIC_GRILL_EXPECT_FORMAT_VERSION={FORMAT_VERSION + 1}"
    problems = compile_units(host_cc, tmp_path, files, NO_EXPECT, (flag,))
    units = ["user.c", f"{NAME}.c"] if layout == "split" else ["user.c"]
    assert [u for u, _ in problems] == units
    assert all("table format version differs" in text for _, text in problems)
    flag = f"-DSYNTHETIC_GRILL_EXPECT_FORMAT_VERSION={FORMAT_VERSION}"
    assert not compile_units(host_cc, tmp_path, files, NO_EXPECT, (flag,))


def test_source_refuses_a_header_of_another_version_or_build(host_cc, tmp_path):
    """The .c file checks its header: same format version and the same build (table id)."""
    files = _files("c99", "split")
    header = files[f"{NAME}.h"].decode()
    old = f"#define SYNTHETIC_GRILL_FORMAT_VERSION {FORMAT_VERSION}\n"
    assert old in header
    flag = f"-DSYNTHETIC_GRILL_EXPECT_FORMAT_VERSION={FORMAT_VERSION + 1}"
    other_version = header.replace(old, old.replace(str(FORMAT_VERSION), str(FORMAT_VERSION + 1)))
    problems = compile_units(host_cc, tmp_path, {**files, f"{NAME}.h": other_version.encode()},
                             NO_EXPECT, (flag,))  # fmt: skip
    assert [u for u, _ in problems] == [f"{NAME}.c"]
    assert "the header has another table format version than this file" in problems[0][1]
    other_build = emit(cells_manifest(max_ticks=3000), load_target("c99"))[f"{NAME}.h"]
    assert other_build != files[f"{NAME}.h"]
    problems = compile_units(host_cc, tmp_path, {**files, f"{NAME}.h": other_build},
                             user_unit(False))  # fmt: skip
    assert [u for u, _ in problems] == [f"{NAME}.c"]
    assert "the header comes from another build of the table" in problems[0][1]


# --- symbols named in comments exist -----------------------------------------------------------

_COMMENT = re.compile(r"/\*.*?\*/", re.S)
_DEFINITIONS = (
    re.compile(r"^#define\s+(\w+)", re.M),
    re.compile(r"^(?:extern\s+|static\s+)?const\s+\w+\s+(\w+)\s*\[", re.M),
    re.compile(r"^typedef\s+char\s+(\w+)\s*\[", re.M),
    re.compile(r"^typedef\s+struct\s+(\w+)", re.M),
    re.compile(r"^}\s*(\w+)\s*;", re.M),
    re.compile(r"^(?:static\s+)?(?:inline\s+)?(?:int|int32_t)\s+(\w+)\s*\(", re.M),
)
# Defined by the firmware, not by the header (the .c file of layout split defines it too).
FIRMWARE_DEFINES = ("SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION",)


def named_in_comments(text: str) -> set[str]:
    """Identifiers ``prefix_...`` / ``PREFIX_...`` in the comments (``PREFIX_ERR_*`` kept
    with its star: a family of names)."""
    found = set()
    for comment in _COMMENT.findall(text):
        found |= set(re.findall(r"\b(?:synthetic_grill|SYNTHETIC_GRILL)_\w*\*?", comment))
    return found


def defined_in_code(text: str) -> set[str]:
    """Names the code (comments removed) defines or declares at file scope."""
    code = _COMMENT.sub(" ", text)
    return {name for pattern in _DEFINITIONS for name in pattern.findall(code)}


def undefined_names(files: dict[str, bytes], allowed: tuple[str, ...] = ()) -> list[str]:
    """Names in the comments of each file that neither that file nor the header defines.

    The header's comments are checked against the header alone: what it names must be
    visible to every unit that includes it (a static helper of the .c file is not).
    """
    header = next(v.decode() for k, v in files.items() if k.endswith(".h"))
    missing = set()
    for data in files.values():
        text = data.decode()
        defined = defined_in_code(text) | defined_in_code(header) | set(allowed)
        for name in named_in_comments(text):
            if name.endswith("*"):
                if not any(d.startswith(name[:-1]) for d in defined):
                    missing.add(name)
            elif name not in defined:
                missing.add(name)
    return sorted(missing)


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", C_TARGETS)
def test_symbols_named_in_comments_are_defined(target, layout):
    files = _files(target, layout)
    text = "\n".join(v.decode() for v in files.values())
    for name, data in files.items():  # every emitted file carries the caution and the hash
        assert b" * FOOD-SAFETY CAUTION:\n" in data and b" * Manifest sha256: " in data, name
    named = named_in_comments(text)
    assert {"synthetic_grill_lookup", "SYNTHETIC_GRILL_EVENT_*", "SYNTHETIC_GRILL_ERR_*"} <= named
    assert undefined_names(files, FIRMWARE_DEFINES) == []
    assert undefined_names(files) == ["SYNTHETIC_GRILL_EXPECT_FORMAT_VERSION"]


def test_comment_check_finds_a_missing_symbol():
    """The check can fail: a comment naming an undefined symbol or family is reported."""
    files = _files("c99_bilinear", "split")
    header = files[f"{NAME}.h"].decode()
    header = header.replace(
        "/* Event kinds. */", "/* Event kinds; see synthetic_grill_weight(). */"
    )
    header = header.replace("/* Dimensions.", "/* SYNTHETIC_GRILL_HEAT_* and Dimensions.")
    files[f"{NAME}.h"] = header.encode()
    # synthetic_grill_weight is a static helper of the .c file: not visible to the header's
    # readers, so the header may not name it.
    want = ["SYNTHETIC_GRILL_HEAT_*", "synthetic_grill_weight"]
    assert undefined_names(files, FIRMWARE_DEFINES) == want


# --- every optimisation level, both compilers, static analysers --------------------------------


@pytest.fixture(params=["gcc", "clang"])
def any_cc(request) -> Toolchain:
    if not shutil.which(request.param):
        pytest.skip(f"{request.param} not installed")
    return Toolchain(request.param, request.param, ())


@pytest.mark.parametrize("level", LEVELS)
@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", C_TARGETS)
def test_clean_at_every_optimisation_level(any_cc, tmp_path, target, layout, level):
    """-std=c99 -Wall -Wextra -Werror -pedantic at -O0..-Os, with a short firmware unit that
    keeps the schedule on the stack (user_unit: the case where gcc -O2 once reported a read
    of an unset schedule entry in the bilinear lookup)."""
    problems = compile_units(any_cc, tmp_path, _files(target, layout),
                             user_unit("fixed" in target), (level,))  # fmt: skip
    assert not problems, problems


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", C_TARGETS)
def test_cppcheck_finds_nothing(tmp_path, target, layout):
    if not shutil.which("cppcheck"):
        pytest.skip("cppcheck not installed")
    files = _files(target, layout)
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    (tmp_path / "user.c").write_text(user_unit("fixed" in target))
    units = ["user.c"] + sorted(n for n in files if n.endswith(".c"))
    cmd = ["cppcheck", "--std=c99", "--enable=warning,style,portability", "--error-exitcode=1",
           "-q", f"-I{tmp_path}", *(str(tmp_path / u) for u in units)]  # fmt: skip
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr


@pytest.mark.parametrize("layout", LAYOUTS)
@pytest.mark.parametrize("target", C_TARGETS)
def test_gcc_analyzer_finds_nothing(tmp_path, target, layout):
    if not shutil.which("gcc"):
        pytest.skip("gcc not installed")
    cmd = ["gcc", "-fanalyzer", "-x", "c", "-c", "-", "-o", "/dev/null"]
    probe = subprocess.run(cmd, input="int x;\n", capture_output=True, text=True, timeout=60)
    if probe.returncode != 0:
        pytest.skip("this gcc has no -fanalyzer")
    gcc = Toolchain("gcc", "gcc", ())
    problems = compile_units(gcc, tmp_path, _files(target, layout),
                             user_unit("fixed" in target), ("-fanalyzer",))  # fmt: skip
    assert not problems, problems


def test_header_only_is_a_profile_option():
    """The built-in C targets default to split; header_only is one key (and no .c output)."""
    for name in C_TARGETS:
        assert load_target(name).layout == "split"
        files = emit(cells_manifest(), replace(header_only(name)))
        assert sorted(files) == [f"{NAME}.h"]
        text = files[f"{NAME}.h"].decode()
        assert f"static inline int {NAME}_lookup(" in text
        assert f"static const uint8_t {NAME}_event_count[]" in text


# --- the stored real table (tests/golden) through every C target ------------------------------

REAL = Path(__file__).resolve().parents[1] / "golden" / "input" / "test_patty.json"


@pytest.mark.parametrize("target", C_TARGETS)
def test_real_table_matches_python_on_every_target(toolchain, tmp_path, harness, target):
    """The manifest the real pipeline built (tests/golden/input) on every C target: the
    compiled lookup answers exactly as ``obvert.firmware.lookup`` with the target's rule."""
    m = json.loads(REAL.read_text(encoding="utf-8"))
    fixed, rule = "fixed" in target, "bilinear" if "bilinear" in target else "corner"
    name = m["table"]["name"]
    files = emit(m, load_target(target))
    proc, exe = build_program(toolchain, tmp_path, files,
                              harness(f"{name}.h", name, fixed, rule == "bilinear"))  # fmt: skip
    assert proc.returncode == 0, proc.stderr
    line = bilinear_line if rule == "bilinear" else expected_line
    if fixed:
        cases = fixed_cases(m, 500)
        want = [line(m, lookup_fixed(m, x, t, rule=rule)) for x, t in cases]
        got = toolchain.run(exe, ["int"], "".join(f"{x} {t}\n" for x, t in cases))
    else:
        cases = float_queries(m, 500)
        want = [line(m, lookup_f32(m, x, t, rule=rule)) for x, t in cases]
        got = toolchain.run(exe, ["f32"], "".join(f"{_hex32(x)} {_hex32(t)}\n" for x, t in cases))
    assert got.splitlines() == want
    assert sum(g.startswith("0 ") for g in want) > 100
