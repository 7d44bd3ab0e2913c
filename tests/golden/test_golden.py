"""Generated files equal the reviewed golden files byte for byte.

A golden file is the reviewed output of a target for one of three inputs: the synthetic
manifest (``synthetic_grill``; the corner and JSON targets: it has no cells), the synthetic
manifest with cells and tolerances (``synthetic_cells``; every target, and the header-only
layout of every C target) and the real manifest that the real pipeline built from
tests/cli/small_spec.toml (``test_patty``; every target). Any change of the templates,
filters or canonical form shows up here as a diff to review. Refresh them only
deliberately: ``OBVERT_REFRESH_GOLDEN=1 python -m pytest tests/golden`` (this also rebuilds
the real manifest, which takes a few minutes).
"""

from __future__ import annotations

import json
import random
from dataclasses import replace
from pathlib import Path

import pytest

from obvert.emitter import emit, load_target
from obvert.emitter.profile import C_SOURCE_TEMPLATE
from obvert.firmware import canonical_json, check_manifest

from .conftest import GOLDEN, REAL_MANIFEST, REFRESH, TARGETS

CORNER_TARGETS = ("c99", "c99_fixed", "json")
C_TARGETS = ("c99", "c99_fixed", "c99_bilinear", "c99_fixed_bilinear")


def _header_only(name: str):
    target = load_target(name)
    outputs = tuple(o for o in target.outputs if o.template != C_SOURCE_TEMPLATE)
    return replace(target, layout="header_only", outputs=outputs)


def _compare(files: dict[str, bytes], folder: Path) -> None:
    """Every file equals its golden copy in ``folder`` (written instead on refresh)."""
    assert files, "a target writes at least one file"
    for name, data in files.items():
        path = folder / name
        if REFRESH:
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(data)
            continue
        assert path.is_file(), f"missing golden file {path}; refresh with OBVERT_REFRESH_GOLDEN=1"
        assert data == path.read_bytes(), f"{path} differs from the generated {name}"
    if REFRESH:
        pytest.skip(f"golden files in {folder.name} refreshed")


@pytest.mark.parametrize("target", CORNER_TARGETS)
def test_synthetic_output_equals_golden_file(target, make_manifest):
    _compare(emit(make_manifest(), load_target(target)), GOLDEN / target)


@pytest.mark.parametrize("target", TARGETS)
def test_synthetic_cells_output_equals_golden_file(target, make_cells_manifest):
    m = make_cells_manifest("synthetic_cells")
    _compare(emit(m, load_target(target)), GOLDEN / target)


@pytest.mark.parametrize("target", C_TARGETS)
def test_header_only_output_equals_golden_file(target, make_cells_manifest):
    m = make_cells_manifest("synthetic_cells")
    _compare(emit(m, _header_only(target)), GOLDEN / f"{target}_header_only")


@pytest.mark.parametrize("target", TARGETS)
def test_real_output_equals_golden_file(target, real_manifest):
    _compare(emit(real_manifest, load_target(target)), GOLDEN / target)


def test_real_manifest_is_a_certified_real_build(real_manifest):
    """The stored real manifest passes the firmware contract's checks and carries what only
    the real pipeline writes (cells of both rules, per-node bounds and candidates)."""
    check_manifest(real_manifest)
    assert REAL_MANIFEST.read_bytes() == canonical_json(real_manifest)
    assert real_manifest["table"]["name"] == "test_patty"
    assert set(real_manifest["cells"]) == {"corner", "bilinear"}
    for node in real_manifest["nodes"]:
        assert node["margin_log"] >= 0.0 and node["candidates"]
        assert isinstance(node["bounds_s"], dict)


def test_golden_json_is_the_manifest(make_manifest, real_manifest):
    """The JSON output is the canonical serialisation of the manifest and parses back to it."""
    manifest = make_manifest()
    data = (GOLDEN / "json" / "synthetic_grill.json").read_bytes()
    assert data == canonical_json(manifest)
    assert json.loads(data) == manifest
    assert (GOLDEN / "json" / "test_patty.json").read_bytes() == REAL_MANIFEST.read_bytes()


def _shuffled(obj, rng):
    """Same tree, every dict rebuilt in a random key insertion order."""
    if isinstance(obj, dict):
        keys = list(obj)
        rng.shuffle(keys)
        return {k: _shuffled(obj[k], rng) for k in keys}
    if isinstance(obj, list):
        return [_shuffled(v, rng) for v in obj]
    return obj


@pytest.mark.parametrize("target", TARGETS)
def test_output_is_independent_of_key_order_and_repeatable(target, make_cells_manifest):
    manifest = make_cells_manifest()
    profile = load_target(target)
    first = emit(manifest, profile)
    assert emit(manifest, profile) == first
    rng = random.Random(7)
    for _ in range(5):
        assert emit(_shuffled(manifest, rng), profile) == first
