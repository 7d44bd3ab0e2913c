"""Fixtures of the golden-file tests: the golden inputs.

Three inputs: the synthetic manifest (invented numbers, no cells), the synthetic manifest
with cells and tolerances (invented numbers, every target accepts it), and a real manifest
built by the real pipeline from tests/cli/small_spec.toml and stored in
``tests/golden/input/`` (rebuilt only on ``OBVERT_REFRESH_GOLDEN=1``).
"""

from __future__ import annotations

import importlib.util
import json
import os
import sys
from pathlib import Path

import pytest

from obvert.firmware import canonical_json

TESTS = Path(__file__).resolve().parents[1]
GOLDEN = Path(__file__).resolve().parent
REAL_MANIFEST = GOLDEN / "input" / "test_patty.json"
SMALL_SPEC = TESTS / "cli" / "small_spec.toml"
#: A second real product for the same appliance (catalogue goldens).
SLIDER_MANIFEST = GOLDEN / "input" / "test_slider.json"
SLIDER_SPEC = TESTS / "cli" / "small_slider_spec.toml"
REFRESH = os.environ.get("OBVERT_REFRESH_GOLDEN") == "1"
#: Every built-in target; the real table is certified for the rules all of them use.
TARGETS = ("c99", "c99_fixed", "c99_bilinear", "c99_fixed_bilinear", "json")


def _load(name: str, path: Path):
    if name not in sys.modules:
        spec = importlib.util.spec_from_file_location(name, path)
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        spec.loader.exec_module(module)
    return sys.modules[name]


_BASE = _load("obvert_tests_manifest_base", TESTS / "conftest_manifest.py")
_CELLS = _load("obvert_tests_cells_manifest", TESTS / "c" / "manifests.py")


def build_real_manifest(spec_file: Path = SMALL_SPEC) -> dict:
    """A small test spec through the real pipeline: compile for every target, manifest."""
    import obvert
    from obvert.spec import load_spec

    table = obvert.compile_table(load_spec(spec_file), list(TARGETS))
    return obvert.table.manifest(table)


@pytest.fixture(scope="session")
def real_manifest() -> dict:
    """The stored real manifest (rebuilt and stored first on ``OBVERT_REFRESH_GOLDEN=1``)."""
    if REFRESH:
        REAL_MANIFEST.parent.mkdir(parents=True, exist_ok=True)
        REAL_MANIFEST.write_bytes(canonical_json(build_real_manifest()))
    assert REAL_MANIFEST.is_file(), f"missing {REAL_MANIFEST}; refresh with OBVERT_REFRESH_GOLDEN=1"
    return json.loads(REAL_MANIFEST.read_text(encoding="utf-8"))


@pytest.fixture
def make_manifest():
    """Factory of synthetic manifests (invented numbers, documented schema)."""
    return _BASE.synthetic_manifest


@pytest.fixture
def make_cells_manifest():
    """Factory of synthetic manifests with cells and tolerances (invented numbers)."""
    return _CELLS.cells_manifest


@pytest.fixture(scope="session")
def slider_manifest() -> dict:
    """The stored real manifest of the second small product (rebuilt on refresh)."""
    if REFRESH:
        SLIDER_MANIFEST.write_bytes(canonical_json(build_real_manifest(SLIDER_SPEC)))
    assert SLIDER_MANIFEST.is_file(), (
        f"missing {SLIDER_MANIFEST}; refresh with OBVERT_REFRESH_GOLDEN=1"
    )
    return json.loads(SLIDER_MANIFEST.read_text(encoding="utf-8"))
