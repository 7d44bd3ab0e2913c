"""Generated files equal the reviewed golden files byte for byte.

A golden file is the reviewed output for the synthetic manifest; any change of the
templates, filters or canonical form shows up here as a diff to review. Refresh them only
deliberately: ``OBVERT_REFRESH_GOLDEN=1 python -m pytest tests/golden``.
"""

from __future__ import annotations

import json
import os
import random
from pathlib import Path

import pytest

from obvert.emitter import emit, load_target
from obvert.firmware import canonical_json

GOLDEN = Path(__file__).resolve().parent
TARGETS = ("c99", "c99_fixed", "json")
REFRESH = os.environ.get("OBVERT_REFRESH_GOLDEN") == "1"


@pytest.mark.parametrize("target", TARGETS)
def test_output_equals_golden_file(target, make_manifest):
    files = emit(make_manifest(), load_target(target))
    assert files, "a target writes at least one file"
    for name, data in files.items():
        path = GOLDEN / target / name
        if REFRESH:
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(data)
            continue
        assert path.is_file(), f"missing golden file {path}; refresh with OBVERT_REFRESH_GOLDEN=1"
        assert data == path.read_bytes(), f"{path} differs from the generated {name}"
    if REFRESH:
        pytest.skip(f"golden files of {target} refreshed")


def test_golden_json_is_the_manifest(make_manifest):
    """The JSON output is the canonical serialisation of the manifest and parses back to it."""
    manifest = make_manifest()
    data = (GOLDEN / "json" / "synthetic_grill.json").read_bytes()
    assert data == canonical_json(manifest)
    assert json.loads(data) == manifest


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
def test_output_is_independent_of_key_order_and_repeatable(target, make_manifest):
    manifest = make_manifest()
    profile = load_target(target)
    first = emit(manifest, profile)
    assert emit(manifest, profile) == first
    rng = random.Random(7)
    for _ in range(5):
        assert emit(_shuffled(manifest, rng), profile) == first
