"""The public API as the README shows it, and the docstring examples, run as written."""

from __future__ import annotations

import doctest
import json
import os
import re
from pathlib import Path

import pytest

import obvert
import obvert.api

ROOT = Path(__file__).resolve().parents[2]
SMALL_SPEC = Path(__file__).with_name("small_spec.toml")


def _readme_example() -> str:
    text = (ROOT / "README.md").read_text("utf-8")
    section = text.split("## Python API", 1)[1]
    match = re.search(r"```python\n(.*?)```", section, re.S)
    assert match, "README has no python example under '## Python API'"
    return match.group(1)


def test_readme_example_is_five_lines_of_api() -> None:
    code = _readme_example()
    lines = [ln for ln in code.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    assert len(lines) <= 6, lines
    for name in ("load_spec", "compile_table", "emit"):
        assert f"obvert.{name}" in code


@pytest.mark.slow
def test_readme_example_runs(tmp_path: Path) -> None:
    """The README's example on a one-node spec of the small test product."""
    text = SMALL_SPEC.read_text("utf-8")
    text = text.replace('thickness = ["6 mm", "10 mm"]', 'thickness = ["8 mm"]')
    text = text.replace(
        'start_temperature = ["-18 degC", "4 degC"]', 'start_temperature = ["2 degC"]'
    )
    (tmp_path / "patty.toml").write_text(text, "utf-8")
    cwd = os.getcwd()
    os.chdir(tmp_path)
    try:
        exec(compile(_readme_example(), "README.md", "exec"), {})  # noqa: S102 (our own README)
    finally:
        os.chdir(cwd)
    m = json.loads((tmp_path / "test_patty.json").read_text("utf-8"))
    assert obvert.check_manifest(m) is None
    assert m["nodes"][0]["margin_log"] >= 0.0
    assert (tmp_path / "test_patty.h").read_bytes().startswith(b"/*")


@pytest.mark.slow
def test_api_docstring_examples() -> None:
    """Every example in the public API's docstrings runs and prints what it shows."""
    result = doctest.testmod(obvert.api, optionflags=doctest.ELLIPSIS)
    assert result.attempted >= 3 and result.failed == 0


def test_public_names_resolve() -> None:
    for name in obvert.__all__:
        assert getattr(obvert, name) is not None
    with pytest.raises(AttributeError, match="no attribute 'compile'"):
        obvert.compile  # noqa: B018
