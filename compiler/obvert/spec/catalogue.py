"""Catalogue files: which products' specs one appliance's catalogue is built from.

A catalogue file is a small TOML file (docs/catalogue.md)::

    [catalogue]
    name = "line_menu"               # file stem and C prefix of the catalogue
    flash_budget_bytes = 32768       # optional

    [[product]]
    spec = "products/patty.toml"     # relative to the catalogue file

Unknown keys are refused; a bad value raises :class:`SpecError` naming the field.
"""

from __future__ import annotations

import sys
from dataclasses import dataclass
from pathlib import Path

from obvert.spec.errors import MISSING, SpecError

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

__all__ = ["CatalogueFile", "is_catalogue_file", "load_catalogue_file"]

_U32_MAX = 2**32 - 1


@dataclass(frozen=True)
class CatalogueFile:
    """What a catalogue file asks for."""

    #: Catalogue name (checked where the catalogue is emitted).
    name: str
    #: The products' spec files, relative paths resolved against the catalogue file's folder.
    specs: tuple[Path, ...]
    #: Byte budget of the compiled-in bundle, bytes (None: the default).
    flash_budget_bytes: int | None


def _table(path: Path) -> dict[str, object] | None:
    try:
        return tomllib.loads(path.read_text("utf-8-sig"))
    except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
        return None


def is_catalogue_file(path: Path) -> bool:
    """True when ``path`` reads as TOML with a ``[catalogue]`` table (no checks beyond)."""
    data = _table(path)
    return data is not None and isinstance(data.get("catalogue"), dict)


def load_catalogue_file(path: str | Path) -> CatalogueFile:
    """Read and check a catalogue file.

    Parameters
    ----------
    path : str or Path
        The catalogue file.

    Returns
    -------
    CatalogueFile
        Name, spec files (resolved against the file's folder) and budget.

    Raises
    ------
    SpecError
        The file cannot be read or parsed, holds an unknown table or key, or a value of the
        wrong kind (the field path is ``catalogue.name``, ``product[1].spec`` ...).
    """
    p = Path(path)
    data = _table(p)
    if data is None:
        raise SpecError("file", str(p), "a readable catalogue file of valid UTF-8 TOML")
    for key in sorted(set(data) - {"catalogue", "product"}):
        raise SpecError(key, data[key], "only the tables [catalogue] and [[product]]")
    head = data.get("catalogue")
    if not isinstance(head, dict):
        raise SpecError("catalogue", head, "a table with name and flash_budget_bytes")
    for key in sorted(set(head) - {"name", "flash_budget_bytes"}):
        raise SpecError(f"catalogue.{key}", head[key], "only the keys name, flash_budget_bytes")
    name = head.get("name", MISSING)
    if not isinstance(name, str):
        raise SpecError("catalogue.name", name, "a catalogue name, [a-z][a-z0-9_]*")
    budget = head.get("flash_budget_bytes")
    if budget is not None and (
        isinstance(budget, bool) or not isinstance(budget, int) or not 1 <= budget <= _U32_MAX
    ):
        raise SpecError(
            "catalogue.flash_budget_bytes", budget, f"an integer from 1 to {_U32_MAX} (bytes)"
        )
    products = data.get("product", MISSING)
    if not isinstance(products, list) or not products:
        raise SpecError("product", products, "one or more [[product]] tables with spec = PATH")
    specs = []
    for k, entry in enumerate(products):
        if not isinstance(entry, dict) or sorted(entry) != ["spec"]:
            raise SpecError(f"product[{k}]", entry, "one key, spec = the path of a spec file")
        if not isinstance(entry["spec"], str) or not entry["spec"]:
            raise SpecError(f"product[{k}].spec", entry["spec"], "the path of a spec file")
        specs.append(p.parent / entry["spec"])
    return CatalogueFile(name, tuple(specs), budget)
