"""Obvert: compile certified cook programs for automated contact-cooking appliances.

The output of this package is an engineering aid. Every cook program it emits must be
validated by measurement on the real appliance, and defers to local food codes, HACCP
plans and licensed food-safety professionals.

Public API (imported on first use, so that ``obvert --help`` answers at once)::

    import obvert
    spec = obvert.load_spec("patty.toml")
    table = obvert.compile_table(spec, ["c99", "json"], jobs=2)
    files = obvert.emit(table, ["c99", "json"])   # {file name: bytes}

Errors: :class:`SpecError` (bad spec), :class:`ProfileError` (bad target),
:class:`BuildError` and :class:`CellCertificationError` (a node or cell could not be planned
or certified), :class:`ManifestError` (a manifest that is not certified or not in the
current format), :class:`EmitError` (a target cannot represent the table).
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

from obvert.about import CAUTION, __version__

#: Public name -> module that defines it.
_PUBLIC = {
    "load_spec": "obvert.spec",
    "loads_spec": "obvert.spec",
    "Spec": "obvert.spec",
    "SpecError": "obvert.spec",
    "demo_spec": "obvert.api",
    "compile_table": "obvert.api",
    "emit": "obvert.api",
    "emit_catalogue": "obvert.api",
    "manifest": "obvert.table",
    "CookTable": "obvert.table",
    "BuildError": "obvert.table",
    "CellCertificationError": "obvert.table",
    "load_target": "obvert.emitter",
    "TargetProfile": "obvert.emitter",
    "ProfileError": "obvert.emitter",
    "EmitError": "obvert.emitter",
    "ManifestError": "obvert.firmware",
    "check_manifest": "obvert.firmware",
    "upgrade_manifest": "obvert.firmware",
}

__all__ = ["CAUTION", "__version__", *sorted(_PUBLIC)]


def __getattr__(name: str) -> Any:
    """Import a public name on first use (PEP 562)."""
    if name in _PUBLIC:
        value = getattr(import_module(_PUBLIC[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'obvert' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted({*globals(), *_PUBLIC})
