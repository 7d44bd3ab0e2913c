"""Template context of the C bundle loader (``templates/bundle/``), alone or as a catalogue.

The loader (target ``c99_bundle_loader``) is named after one table; a catalogue is the loader
named after the catalogue, with a bundle of several products compiled in as const data and a
lookup by product id. Everything the templates print is decided here.
"""

from __future__ import annotations

import textwrap
from collections.abc import Mapping, Sequence
from typing import Any

from obvert.about import CAUTION, __version__
from obvert.emitter.errors import EmitError
from obvert.firmware.bundle import name_id, parse_bundle

__all__ = ["catalogue_context", "loader_context"]

_ROW_BYTES = 12


def _base(prefix: str, header: str, generated_by: str, appliance: str) -> dict[str, Any]:
    return {
        "p": prefix,
        "P": prefix.upper(),
        "header": header,
        "generated_by": generated_by,
        "caution_lines": textwrap.wrap(CAUTION, 72),
        "appliance_name": appliance,
        "appliance_model": name_id(appliance),
        "catalogue": None,
    }


def loader_context(manifest: Mapping[str, Any], target: Any, header: str) -> dict[str, Any]:
    """Context of the loader named after one table (target ``c99_bundle_loader``).

    Parameters
    ----------
    manifest : dict
        A checked manifest; its table name gives the prefix and the product id.
    target : TargetProfile
        The loader's target profile.
    header : str
        File name of the loader's header, included by its ``.c`` file.

    Returns
    -------
    dict
        ``p``, ``P``, ``header``, ``generated_by``, ``caution_lines``, ``appliance_name``,
        ``appliance_model``, ``products`` (one row: macro, table, id) and ``catalogue`` None.
    """
    table = manifest["table"]["name"]
    generator = manifest["generator"]
    by = f"{generator['name']} {generator['version']}, target {target.name}"
    try:
        appliance = manifest["spec"]["appliance"]["name"]
    except (KeyError, TypeError):
        raise EmitError(
            f"table {table!r}: manifest field spec.appliance.name is missing: the bundle "
            "loader names the appliance model"
        ) from None
    out = _base(target.prefix_for(table), header, by, appliance)
    out["products"] = [{"macro": "BUNDLE_PRODUCT_ID", "table": table, "id": name_id(table)}]
    return out


def catalogue_context(
    name: str, bundle: bytes, tables: Sequence[str], appliance: str, budget: int
) -> dict[str, Any]:
    """Context of a catalogue: the loader named ``name`` with ``bundle`` compiled in.

    Parameters
    ----------
    name : str
        Catalogue name: C prefix and file stem, ``[a-z][a-z0-9_]*``.
    bundle : bytes
        A bundle that parses (:func:`obvert.firmware.bundle.parse_bundle`).
    tables : sequence of str
        Table names of its products (their ids name the product macros).
    appliance : str
        The appliance name the bundle is for.
    budget : int
        Flash budget of the compiled-in data, bytes (a static assert holds it).

    Returns
    -------
    dict
        As :func:`loader_context`, with one product row per table and ``catalogue`` holding
        the data rows (text of 12 bytes each), the byte count and the budget.
    """
    parsed = parse_bundle(bundle, appliance_model=name_id(appliance))
    if parsed.table_version < 1:
        raise EmitError(f"catalogue {name!r}: table version 0; a catalogue needs 1 or more")
    ids = sorted(name_id(t) for t in tables)
    if ids != [p.product_id for p in parsed.products]:
        raise EmitError(f"catalogue {name!r}: the tables {list(tables)} are not the bundle's")
    out = _base(name, f"{name}.h", f"obvert {__version__}, catalogue", appliance)
    out["products"] = [
        {"macro": f"PRODUCT_{t.upper()}", "table": t, "id": name_id(t)} for t in sorted(tables)
    ]
    rows = [
        ", ".join(f"0x{b:02X}u" for b in bundle[k : k + _ROW_BYTES])
        for k in range(0, len(bundle), _ROW_BYTES)
    ]
    out["catalogue"] = {
        "rows": rows,
        "n_bytes": len(bundle),
        "table_version": parsed.table_version,
        "budget": budget,
    }
    return out
