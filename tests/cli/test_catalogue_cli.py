"""``obvert build SPEC1 SPEC2 ... --catalogue NAME``: several products of one appliance.

The bad-input tests stop before any work. The real build compiles two small invented
products for the same invented griddle (tests/cli/small_spec.toml and small_slider_spec.toml,
about 20 s together) once per module, marked slow. Outside references: the C compilers at
-std=c99 -Wall -Wextra -Werror -pedantic (ISO/IEC 9899:1999), 32-bit ARM under qemu when
installed, and ``obvert.firmware.lookup.lookup_fixed`` (the fixed-point corner rule, itself
tested bit-exact against the ``c99_fixed`` target's C in tests/c) for every C answer.
"""

from __future__ import annotations

import json
import shutil
import subprocess
from pathlib import Path

import pytest
from click.testing import CliRunner

import obvert
from obvert.cli import KEY_FILE, PUBLIC_KEY_FILE, main
from obvert.firmware import canonical_json
from obvert.firmware.axes import start_temp_axis_cc, thickness_axis_um
from obvert.firmware.bundle import name_id, parse_bundle
from obvert.firmware.catalogue import loads_catalogue
from obvert.firmware.lookup import lookup_fixed

from .helpers import SPEC

SLIDER = SPEC.with_name("small_slider_spec.toml")
C_FLAGS = ("-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic", "-O2")


def _invoke(*args: str):
    res = CliRunner().invoke(main, list(args))
    if res.exception is not None:  # every failure is a clean exit, never a traceback
        assert isinstance(res.exception, SystemExit), res.exception
    assert "Traceback" not in res.output + res.stderr
    return res


def _variant(tmp_path: Path, name: str, *changes: tuple[str, str]) -> Path:
    """A copy of the slider spec with text replaced (an invented variant)."""
    text = SLIDER.read_text(encoding="utf-8")
    for old, new in changes:
        assert old in text
        text = text.replace(old, new)
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _catalogue(out: Path, *specs: object, extra: tuple[str, ...] = ()):
    args = ["build", *map(str, specs), "--out", str(out), "--quiet", "--target", "json"]
    return _invoke(*args, *extra)


CAT = ("--catalogue", "test_menu", "--table-version", "3")


# --- bad input: refused before any work, nothing written ----------------------------------


def test_several_specs_without_catalogue_are_refused(tmp_path):
    out = tmp_path / "out"
    res = _catalogue(out, SPEC, SLIDER)
    assert res.exit_code == 2
    assert str(SPEC) in res.stderr and str(SLIDER) in res.stderr
    assert "--catalogue NAME" in res.stderr and "nothing was built" in res.stderr
    res = _catalogue(out, SPEC, extra=("--flash-budget", "1000"))
    assert res.exit_code == 2 and "--flash-budget applies to a catalogue only" in res.stderr
    assert not out.exists()


@pytest.mark.parametrize("bad", ["Menu", "1menu", "a-b", "", "menu.h", "m" * 41])
def test_a_bad_catalogue_name_is_refused(tmp_path, bad):
    out = tmp_path / "out"
    res = _catalogue(out, SPEC, SLIDER, extra=("--catalogue", bad, "--table-version", "1"))
    assert res.exit_code == 2
    assert f"--catalogue = {json.dumps(bad)}" in res.stderr
    assert "[a-z][a-z0-9_]*, at most 40 characters" in res.stderr
    assert not out.exists()


def test_a_catalogue_needs_a_table_version_of_one_or_more(tmp_path):
    out = tmp_path / "out"
    res = _catalogue(out, SPEC, SLIDER, extra=("--catalogue", "test_menu"))
    assert res.exit_code == 2 and "--table-version is missing" in res.stderr
    res = _catalogue(out, SPEC, SLIDER, extra=("--catalogue", "test_menu", "--table-version", "0"))
    assert res.exit_code == 2 and "--table-version = 0: allowed an integer from 1" in res.stderr
    assert not out.exists()


def test_specs_for_another_appliance_or_tick_are_refused_naming_files(tmp_path):
    out = tmp_path / "out"
    other = _variant(
        tmp_path,
        "other.toml",
        ('name = "test griddle"', 'name = "another griddle"'),
        ('name = "test_slider"', 'name = "other_slider"'),
    )
    res = _catalogue(out, SPEC, other, extra=CAT)
    assert res.exit_code == 2
    assert f'appliance.name = "test griddle" in {SPEC}, "another griddle" in {other}' in res.stderr
    assert "the same appliance name in every spec" in res.stderr
    slow = _variant(tmp_path, "slow.toml", ('tick = "100 ms"', 'tick = "50 ms"'))
    res = _catalogue(out, SPEC, slow, extra=CAT)
    assert res.exit_code == 2
    assert f'appliance.tick = "100 ms" in {SPEC}, "50 ms" in {slow}' in res.stderr
    assert not out.exists()


def test_two_specs_with_one_table_name_are_refused_naming_both(tmp_path):
    out = tmp_path / "out"
    twin = _variant(tmp_path, "twin.toml", ('name = "test_slider"', 'name = "test_patty"'))
    res = _catalogue(out, SPEC, twin, extra=CAT)
    assert res.exit_code == 2
    assert f'table.name = "test_patty" in {SPEC}, "test_patty" in {twin}' in res.stderr
    assert "a different table name in every spec" in res.stderr
    res = _catalogue(out, SPEC, SPEC, extra=CAT)
    assert res.exit_code == 2 and "each spec file once" in res.stderr
    assert not out.exists()


def test_a_catalogue_named_like_a_product_is_refused(tmp_path):
    out = tmp_path / "out"
    res = _catalogue(
        out, SPEC, SLIDER, extra=("--catalogue", "test_slider", "--table-version", "1")
    )
    assert res.exit_code == 2
    assert '--catalogue = "test_slider"' in res.stderr
    assert "test_slider.json is written by catalogue test_slider and by product" in res.stderr
    assert not out.exists()


def test_a_bad_spec_is_named(tmp_path):
    out = tmp_path / "out"
    bad = _variant(tmp_path, "bad.toml", ("max_flips = 1", "max_flips = -1"))
    res = _catalogue(out, SPEC, bad, extra=CAT)
    assert res.exit_code == 2
    assert f"error: spec {bad}: appliance.max_flips = -1: allowed" in res.stderr
    assert not out.exists()


def test_a_budget_too_small_for_the_grids_is_refused_before_any_work(tmp_path):
    """Two products of 4 and 2 nodes need at least 40 + 68 (header, trailer) + 2 x 36
    (directory entry, product head) + 4 x 6 (axes) + 6 x 16 (one event per node) bytes."""
    out = tmp_path / "out"
    least = 40 + 68 + 2 * 36 + 4 * (2 + 2 + 2 + 1) + 6 * (8 + 8)
    res = _catalogue(out, SPEC, SLIDER, extra=(*CAT, "--flash-budget", str(least - 1)))
    assert res.exit_code == 2
    assert f"need at least {least} bytes of bundle" in res.stderr
    assert f"flash budget of {least - 1} bytes" in res.stderr
    assert not out.exists()


def test_a_catalogue_file_is_checked_naming_the_field(tmp_path):
    out = tmp_path / "out"
    menu = tmp_path / "menu.toml"
    menu.write_text('[catalogue]\nname = "test_menu"\ncolour = "red"\n', encoding="utf-8")
    res = _catalogue(out, menu, extra=("--table-version", "1"))
    assert res.exit_code == 2
    assert f'catalogue file {menu}: catalogue.colour = "red": allowed only the keys' in res.stderr
    menu.write_text('[catalogue]\nname = "test_menu"\n', encoding="utf-8")
    res = _catalogue(out, menu, extra=("--table-version", "1"))
    assert res.exit_code == 2 and "product is missing: allowed one or more" in res.stderr
    menu.write_text(
        '[catalogue]\nname = "test_menu"\nflash_budget_bytes = 0\n[[product]]\nspec = "a.toml"\n',
        encoding="utf-8",
    )
    res = _catalogue(out, menu, extra=("--table-version", "1"))
    assert res.exit_code == 2 and "catalogue.flash_budget_bytes = 0: allowed" in res.stderr
    menu.write_text(
        '[catalogue]\nname = "test_menu"\n[[product]]\nspec = "specs/none.toml"\n',
        encoding="utf-8",
    )
    res = _catalogue(out, menu, extra=("--table-version", "1"))
    assert res.exit_code == 2
    assert str(tmp_path / "specs" / "none.toml") in res.stderr  # relative to the file
    for extra in (("--catalogue", "other"), ()):
        args = (menu, SPEC) if not extra else (menu,)
        res = _catalogue(out, *args, extra=(*extra, "--table-version", "1"))
        assert res.exit_code == 2
        assert f"{menu} is a catalogue file: allowed alone" in res.stderr
    assert not out.exists()


@pytest.mark.slow
def test_a_product_that_fails_stops_the_catalogue_and_nothing_is_written(tmp_path, monkeypatch):
    """The first product builds for real; the second fails as a node that cannot be
    certified would (BuildError): neither the first product's table nor the catalogue
    appears."""
    import obvert.api
    from obvert.table import BuildError

    real = obvert.api.compile_table
    calls = []

    def second_fails(spec, *args, **kwargs):
        calls.append(spec.name)
        if len(calls) == 2:
            raise BuildError(f"{spec.name}: node (thickness 6 mm, start -18 degC) not certified")
        return real(spec, *args, **kwargs)

    monkeypatch.setattr(obvert.api, "compile_table", second_fails)
    out = tmp_path / "out"
    res = _catalogue(out, SLIDER, SPEC, extra=(*CAT, "--jobs", "1"))
    assert calls == ["test_slider", "test_patty"]
    assert res.exit_code == 1
    assert f"error: product 2/2 test_patty ({SPEC}): test_patty: node" in res.stderr
    assert "nothing was written: no product's table and no catalogue 'test_menu'" in res.stderr
    assert not out.exists() or not any(out.iterdir())


# --- a real build of two products into one catalogue --------------------------------------


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """Two small products built into one signed catalogue through the command line."""
    root = tmp_path_factory.mktemp("catalogue")
    keys = root / "keys"
    assert _invoke("keygen", "--out", str(keys)).exit_code == 0
    out = root / "out"
    args = ["build", str(SPEC), str(SLIDER), "--out", str(out), "--target", "c99_fixed"]
    args += ["--target", "json", *CAT, "--sign-key", str(keys / KEY_FILE), "--jobs", "2"]
    res = _invoke(*args)
    assert res.exit_code == 0, res.stderr
    return out, keys, res


@pytest.mark.slow
def test_build_writes_each_product_and_the_catalogue(built):
    out, keys, res = built
    names = sorted(p.name for p in out.iterdir())
    products = [f"{t}.{ext}" for t in ("test_patty", "test_slider") for ext in ("c", "h", "json")]
    catalogue = [f"test_menu.{ext}" for ext in ("bundle", "c", "h", "json")]
    assert names == sorted(products + catalogue)  # no per-product bundle in a catalogue build
    for name in names:
        assert f"wrote {out / name}" in res.stdout
    assert "[test_patty nodes 4/4" in res.stderr and "[test_slider nodes 2/2" in res.stderr
    assert f"product 1/2 test_patty ({SPEC})" in res.stderr
    assert "catalogue test_menu: 2 products, 6 nodes, table version 3, signed" in res.stdout
    manifests = [
        json.loads((out / f"{t}.json").read_bytes()) for t in ("test_patty", "test_slider")
    ]
    pem = (keys / KEY_FILE).read_bytes()
    expect = obvert.emit_catalogue("test_menu", manifests, table_version=3, private_key_pem=pem)
    for name, data in expect.items():  # what the golden files hold, for these tables
        assert (out / name).read_bytes() == data, name
    cat = loads_catalogue((out / "test_menu.json").read_bytes())
    assert {canonical_json(m) for m in cat.manifests} == {
        (out / f"{t}.json").read_bytes() for t in ("test_patty", "test_slider")
    }
    assert (
        obvert.emit(cat.manifest("test_slider"), ["c99_fixed"])["test_slider.c"]
        == (out / "test_slider.c").read_bytes()
    )
    res = _invoke(
        "verify", str(out / "test_menu.bundle"), "--public-key", str(keys / PUBLIC_KEY_FILE),
        "--appliance", "test griddle", "--installed-table-version", "2",
    )  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "products: 2" in res.stdout and "nodes: 6" in res.stdout


@pytest.mark.slow
def test_a_catalogue_file_builds_the_same_catalogue(built, tmp_path):
    """[[product]] spec paths are relative to the catalogue file; same inputs, same bytes."""
    out, keys, _ = built
    folder = tmp_path / "menus"
    folder.mkdir()
    menu = folder / "menu.toml"
    shutil.copy(SPEC, tmp_path / SPEC.name)
    shutil.copy(SLIDER, tmp_path / SLIDER.name)
    menu.write_text(
        '[catalogue]\nname = "test_menu"\n\n'
        f'[[product]]\nspec = "../{SPEC.name}"\n\n[[product]]\nspec = "../{SLIDER.name}"\n',
        encoding="utf-8",
    )
    again = tmp_path / "again"
    args = ["build", str(menu), "--out", str(again), "--quiet", "--target", "c99_fixed"]
    res = _invoke(*args, "--target", "json", "--table-version", "3", "--jobs", "2",
                  "--sign-key", str(keys / KEY_FILE))  # fmt: skip
    assert res.exit_code == 0, res.stderr
    for name in ("test_menu.bundle", "test_menu.c", "test_menu.h", "test_menu.json"):
        assert (again / name).read_bytes() == (out / name).read_bytes(), name


# The harness reads "product_id thickness_um start_centi_c" lines and prints one answer per
# line: "status 1" on a refusal (1: *out untouched), or "0 node i j n cook margin k:t ...".
MAIN = r"""
#include <stdio.h>
#include <string.h>
#include "test_menu.h"

int main(void)
{
    char line[256];
    test_menu_bundle_schedule_t out, sentinel;
    memset(&sentinel, 0xA5, sizeof sentinel);
    printf("check %d\n", (int)test_menu_catalogue_check());
    while (fgets(line, sizeof line, stdin) != NULL) {
        unsigned long pid;
        long long x, t;
        int status;
        unsigned k;
        if (sscanf(line, "%lu %lld %lld", &pid, &x, &t) != 3) { return 4; }
        memcpy(&out, &sentinel, sizeof out);
        status = test_menu_catalogue_lookup((uint32_t)pid, (int32_t)x, (int32_t)t, &out);
        if (status != TEST_MENU_BUNDLE_LOOKUP_OK) {
            printf("%d %d\n", status, memcmp(&out, &sentinel, sizeof out) == 0);
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

UNKNOWN_IDS = (0, 1, 2**32 - 1, name_id("test griddle"), name_id("no_such_product"))


def _grid(m: dict) -> list[tuple[int, int]]:
    """Every axis value and its neighbours, midpoints, the int32 extremes and beyond."""
    xs = [int(v) for v in thickness_axis_um(m)]
    ts = [int(v) for v in start_temp_axis_cc(m)]

    def around(axis: list[int]) -> list[int]:
        mids = [(a + b) // 2 for a, b in zip(axis[:-1], axis[1:], strict=True)]
        near = [v + d for v in axis for d in (-1, 0, 1)]
        return sorted({*near, *mids, axis[0] - 1000, axis[-1] + 1000, -(2**31), 2**31 - 1, 0})

    return [(x, t) for x in around(xs) for t in around(ts)]


def _expected(m: dict, margins: dict[int, int], x: int, t: int) -> str:
    r = lookup_fixed(m, x, t, rule="corner")
    if r.status != 0:
        return f"{r.status} 1"
    n_t = len(m["axes"]["start_temp_c"])
    events = " ".join(f"{k}:{at}" for k, at in r.events)
    return (
        f"0 {r.node} {r.node // n_t} {r.node % n_t} {len(r.events)} {r.events[-1][1]} "
        f"{margins[r.node]} {events}"
    )


def _toolchain(name: str) -> tuple[str, tuple[str, ...], tuple[str, ...]]:
    """(compiler, extra flags, runner) of a tool chain; skip when it is not installed."""
    if name == "arm-qemu":
        if not (shutil.which("arm-linux-gnueabihf-gcc") and shutil.which("qemu-arm")):
            pytest.skip("arm-linux-gnueabihf-gcc or qemu-arm not installed")
        return "arm-linux-gnueabihf-gcc", ("-static",), ("qemu-arm",)
    if not shutil.which(name):
        pytest.skip(f"{name} not installed")
    return name, (), ()


@pytest.mark.slow
@pytest.mark.parametrize("chain", ["gcc", "clang", "arm-qemu"])
def test_c_catalogue_lookup_equals_python_for_each_product(built, tmp_path, chain):
    """Every product over a grid of inputs (on, beside and between the nodes, outside the
    envelope, int32 extremes) and unknown product ids: the C answer equals lookup_fixed's on
    the product's own manifest; a refusal leaves *out untouched."""
    out, _, _ = built
    cc, flags, runner = _toolchain(chain)
    for name in ("test_menu.h", "test_menu.c"):
        shutil.copy(out / name, tmp_path / name)
    (tmp_path / "main.c").write_text(MAIN)
    exe = tmp_path / "program"
    cmd = [cc, *C_FLAGS, *flags, str(tmp_path / "main.c"), str(tmp_path / "test_menu.c"),
           "-o", str(exe)]  # fmt: skip
    proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
    bundle = parse_bundle((out / "test_menu.bundle").read_bytes())
    lines, expect = [], []
    for table in ("test_patty", "test_slider"):
        m = json.loads((out / f"{table}.json").read_bytes())
        pid = name_id(table)
        product = next(p for p in bundle.products if p.product_id == pid)
        margins = {k: node.margin_mlog for k, node in enumerate(product.nodes)}
        for x, t in _grid(m):
            lines.append(f"{pid} {x} {t}")
            expect.append(_expected(m, margins, x, t))
    assert {e.split()[0] for e in expect} == {"0", "-3", "-4", "-5", "-6"}  # every outcome
    for pid in UNKNOWN_IDS:
        lines.append(f"{pid} 8000 0")
        expect.append("-7 1")  # ..._BUNDLE_ERR_UNKNOWN_PRODUCT, *out untouched
    run = subprocess.run(
        [*runner, str(exe)], input="\n".join(lines) + "\n", capture_output=True, text=True,
        timeout=300,
    )  # fmt: skip
    assert run.returncode == 0, run.stderr
    got = run.stdout.splitlines()
    assert got[0] == "check 0"
    assert got[1:] == expect


def test_bundle_command_writes_the_same_catalogue_from_built_tables(tmp_path):
    """``obvert bundle --c-catalogue`` on the stored real tables: the four files of
    ``emit_catalogue`` (the bundle under the name --out gives), and its refusals."""
    golden = Path(__file__).resolve().parents[1] / "golden" / "input"
    tables = [tmp_path / "test_patty.json", tmp_path / "test_slider.json"]
    for path in tables:
        shutil.copy(golden / path.name, path)
    out = tmp_path / "menu.bundle"
    args = ["bundle", *map(str, tables), "--out", str(out), "--table-version", "2"]
    res = _invoke(*args, "--c-catalogue", "test_menu")
    assert res.exit_code == 0, res.stderr
    manifests = [json.loads(p.read_bytes()) for p in tables]
    expect = obvert.emit_catalogue("test_menu", manifests, table_version=2)
    assert out.read_bytes() == expect.pop("test_menu.bundle")
    for name, data in expect.items():
        assert (tmp_path / name).read_bytes() == data, name
    size = out.stat().st_size
    res = _invoke(*args, "--c-catalogue", "small", "--flash-budget", str(size - 1))
    assert res.exit_code == 2 and f"needs {size} bytes" in res.stderr
    assert not (tmp_path / "small.c").exists()
    res = _invoke(*args, "--c-catalogue", "test_patty")  # would overwrite an input table
    assert res.exit_code == 2 and "--c-catalogue" in res.stderr and "input table" in res.stderr
    assert (tmp_path / "test_patty.json").read_bytes() == (golden / "test_patty.json").read_bytes()
    res = _invoke(*args, "--flash-budget", "1000")
    assert res.exit_code == 2 and "--flash-budget = 1000: allowed only with" in res.stderr
