"""Fixtures of the golden-file tests: the synthetic manifest (invented numbers)."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest

_SPEC = importlib.util.spec_from_file_location(
    "obvert_tests_manifest_golden", Path(__file__).resolve().parents[1] / "conftest_manifest.py"
)
_MODULE = importlib.util.module_from_spec(_SPEC)
_SPEC.loader.exec_module(_MODULE)


@pytest.fixture
def make_manifest():
    """Factory of synthetic manifests (invented numbers, documented schema)."""
    return _MODULE.synthetic_manifest
