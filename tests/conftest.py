"""Session fixtures shared across test folders."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import pytest

_SPEC = importlib.util.spec_from_file_location(
    "obvert_tests_cli_helpers", Path(__file__).with_name("cli") / "helpers.py"
)
helpers = importlib.util.module_from_spec(_SPEC)
sys.modules[_SPEC.name] = helpers
_SPEC.loader.exec_module(helpers)


#: Fixtures that compile a real table (minutes of planning and certification).
BUILD_FIXTURES = {"built", "built_tolerances"}


def pytest_collection_modifyitems(items: list[pytest.Item]) -> None:
    """Mark every test that compiles a real table as ``slow`` (deselect with -m "not slow")."""
    for item in items:
        if BUILD_FIXTURES & set(getattr(item, "fixturenames", ())):
            item.add_marker(pytest.mark.slow)


@pytest.fixture(scope="session")
def built(tmp_path_factory: pytest.TempPathFactory):
    """The small test spec built once through the CLI: output folder, stdout, manifest."""
    return helpers.build_once(tmp_path_factory.mktemp("build"))


@pytest.fixture(scope="session")
def built_tolerances(tmp_path_factory: pytest.TempPathFactory):
    """The tolerance spec built once (bilinear float header and JSON): out, stdout, manifest."""
    return helpers.build_tolerances(tmp_path_factory.mktemp("build_tol"))
