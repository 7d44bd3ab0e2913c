"""Cortex-M0 sizes of the generated C (tests/bench/firmware_size.py), with what must hold.

Run: ``python -m pytest -m bench -s tests/bench/test_firmware_size_bench.py`` (seconds).
Skips when arm-none-eabi-gcc is not installed. Outside reference: the compiler and its
``size`` tool (GNU Binutils) for the section sizes; the bundle layout of docs/bundle.md for
the expected data size.
"""

from __future__ import annotations

import importlib.util
import shutil
import sys
from pathlib import Path

import pytest

import obvert

pytestmark = pytest.mark.bench

_SPEC = importlib.util.spec_from_file_location(
    "obvert_bench_firmware_size", Path(__file__).with_name("firmware_size.py")
)
bench = importlib.util.module_from_spec(_SPEC)
sys.modules[_SPEC.name] = bench  # dataclasses look their module up here
_SPEC.loader.exec_module(bench)


def test_sizes_on_cortex_m0():
    if not shutil.which("arm-none-eabi-gcc") or not shutil.which("arm-none-eabi-size"):
        pytest.skip("arm-none-eabi-gcc not installed (apt-get install gcc-arm-none-eabi)")
    rows = {r.label: r for r in bench.measure()}
    print()
    print(bench.version("arm-none-eabi-gcc"))
    print(bench.table(list(rows.values())))
    cat = rows["catalogue (2 products, 6 nodes)"]
    loader = rows["bundle loader alone"]
    bundle = obvert.emit_catalogue("test_menu", bench.manifests(), table_version=1)
    # the catalogue's only const data is its bundle: header 40 + trailer 68, two directory
    # entries of 12, product heads of 24, axes (2 + 2 and 2 + 1 values of 4 bytes) and the
    # nodes (4 and 2 of 8 + 8 E bytes; E = max_events of each product)
    widths = [m["max_events"] for m in bench.manifests()]
    expect = 40 + 68 + 2 * (12 + 24) + 4 * (4 + 3) + 4 * (8 + 8 * widths[0])
    expect += 2 * (8 + 8 * widths[1])
    assert cat.rodata == len(bundle["test_menu.bundle"]) == expect
    assert cat.data == cat.bss == loader.data == loader.bss == loader.rodata == 0  # no RAM
    assert 0 < cat.text - loader.text < 200  # the catalogue adds two small wrappers
    for label in ("c99_fixed table (4 nodes)", "c99_fixed_bilinear table (4 nodes)"):
        assert rows[label].data == rows[label].bss == 0 and rows[label].rodata > 0
