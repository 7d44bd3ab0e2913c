"""Every package of the source tree ships in the wheel (common practice: a package left out of
``[tool.setuptools] packages`` installs without error and fails only on import)."""

from __future__ import annotations

import sys
from pathlib import Path

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[2]


def test_every_source_package_is_listed_for_the_wheel() -> None:
    listed = set(
        tomllib.loads((ROOT / "pyproject.toml").read_text("utf-8"))["tool"]["setuptools"][
            "packages"
        ]
    )
    src = ROOT / "compiler" / "obvert"
    found = {
        ".".join(("obvert", *p.parent.relative_to(src).parts))
        for p in src.rglob("__init__.py")
        if "__pycache__" not in p.parts
    }
    missing = sorted(found - listed)
    assert not missing, f"packages missing from pyproject [tool.setuptools] packages: {missing}"
