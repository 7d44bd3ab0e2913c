"""Building the small test spec through the CLI (shared by tests/conftest.py and tests/cli)."""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path

from click.testing import CliRunner

from obvert.cli import main

SPEC = Path(__file__).with_name("small_spec.toml")
TOLERANCE_SPEC = Path(__file__).with_name("tolerance_spec.toml")


@dataclass(frozen=True)
class Built:
    out: Path
    stdout: str
    manifest: dict


def run_build(out: Path, *extra: str) -> tuple[int, str, str]:
    runner = CliRunner()
    res = runner.invoke(main, ["build", str(SPEC), "--out", str(out), *extra])
    return res.exit_code, res.stdout, res.stderr


def build_once(out: Path) -> Built:
    code, stdout, stderr = run_build(out, "--target", "c99", "--target", "json")
    assert code == 0, stderr
    m = json.loads((out / "test_patty.json").read_text())
    return Built(out, stdout, m)


@dataclass(frozen=True)
class BuiltTolerances:
    out: Path
    stdout: str
    manifest: dict
    spec: object


def build_tolerances(out: Path) -> BuiltTolerances:
    """Build the tolerance spec (bilinear float header + JSON) through the CLI."""
    from obvert.spec import load_spec

    runner = CliRunner()
    args = ["build", str(TOLERANCE_SPEC), "--out", str(out), "--quiet"]
    res = runner.invoke(main, [*args, "--target", "c99_bilinear", "--target", "json"])
    assert res.exit_code == 0, res.stderr
    m = json.loads((out / "tol_patty.json").read_text())
    return BuiltTolerances(out, res.stdout, m, load_spec(TOLERANCE_SPEC))
