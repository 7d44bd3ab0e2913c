"""The catalogue document: every product's manifest for one appliance in one JSON file.

A catalogue (docs/catalogue.md) is what one appliance runs: several products' certified
tables, the bundle that carries them (``<name>.bundle``), the C that has that bundle compiled
in (``<name>.h/.c``) and this document, ``<name>.json``, for host software and review. The
document holds each product's full manifest exactly as the ``json`` target writes it, keyed
by product id, and is written with :func:`obvert.firmware.canonical.canonical_json`.
Pure: dicts and bytes in, dicts and bytes out.
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from obvert.about import CAUTION, __version__
from obvert.firmware.bundle import name_id
from obvert.firmware.canonical import canonical_json
from obvert.firmware.validate import ManifestError, check_manifest

__all__ = [
    "CATALOGUE_FORMAT_VERSION",
    "Catalogue",
    "CatalogueError",
    "catalogue_bytes",
    "catalogue_document",
    "loads_catalogue",
]

#: Version of the catalogue document's layout (independent of the manifest's and bundle's).
CATALOGUE_FORMAT_VERSION = 1

_KEYS = (
    "appliance",
    "bundle",
    "catalogue",
    "catalogue_format_version",
    "caution",
    "flash_budget_bytes",
    "generator",
    "products",
    "table_version",
    "tick_s",
)


class CatalogueError(ValueError):
    """A catalogue document is refused; the message names the field, the value and why."""


@dataclass(frozen=True)
class Catalogue:
    """A catalogue document read back.

    Attributes
    ----------
    name : str
        Catalogue name (file stem and C prefix).
    appliance : str
        Appliance name of every product (its model id is :func:`name_id` of it).
    tick_s : float
        Firmware tick of every product, s.
    table_version : int
        Table version of the catalogue's bundle.
    flash_budget_bytes : int
        Byte budget of the compiled-in bundle, bytes.
    bundle_sha256 : str
        SHA-256 of ``<name>.bundle`` (64 hex digits).
    manifests : tuple of dict
        Each product's manifest, in ascending product id.
    """

    name: str
    appliance: str
    tick_s: float
    table_version: int
    flash_budget_bytes: int
    bundle_sha256: str
    manifests: tuple[dict[str, Any], ...]

    def manifest(self, table: str) -> dict[str, Any]:
        """The manifest of the product whose table name is ``table`` (KeyError if none)."""
        for m in self.manifests:
            if m["table"]["name"] == table:
                return m
        raise KeyError(table)


def catalogue_document(
    name: str,
    manifests: Sequence[Mapping[str, Any]],
    *,
    table_version: int,
    flash_budget_bytes: int,
    bundle: bytes,
) -> dict[str, Any]:
    """The catalogue document of checked manifests and their bundle.

    Parameters
    ----------
    name : str
        Catalogue name.
    manifests : sequence of dict
        One checked manifest per product, all for one appliance name and tick (the bundle
        writer has checked that).
    table_version : int
        Table version of the bundle.
    flash_budget_bytes : int
        Byte budget the C catalogue's static assert holds the bundle to, bytes.
    bundle : bytes
        The catalogue's bundle (its size and SHA-256 are recorded).

    Returns
    -------
    dict
        ``appliance`` (name, model id), ``bundle`` (size, SHA-256), ``catalogue``,
        ``catalogue_format_version``, ``caution``, ``flash_budget_bytes``, ``generator``,
        ``products`` (product id, table name, manifest; ascending product id),
        ``table_version`` and ``tick_s``; canonical JSON of it is ``<name>.json``.
    """
    first = manifests[0]
    appliance = first["spec"]["appliance"]["name"]
    products = sorted(
        (
            {"product_id": name_id(m["table"]["name"]), "table": m["table"]["name"], "manifest": m}
            for m in manifests
        ),
        key=lambda p: p["product_id"],
    )
    return {
        "appliance": {"name": appliance, "model_id": name_id(appliance)},
        "bundle": {
            "bytes": len(bundle),
            "sha256": hashlib.sha256(bundle).hexdigest(),
        },
        "catalogue": name,
        "catalogue_format_version": CATALOGUE_FORMAT_VERSION,
        "caution": CAUTION,
        "flash_budget_bytes": int(flash_budget_bytes),
        "generator": {"name": "obvert", "version": __version__},
        "products": [dict(p) for p in products],
        "table_version": int(table_version),
        "tick_s": float(first["tick_s"]),
    }


def _field(doc: Mapping[str, Any], key: str, kind: type | tuple[type, ...], allowed: str) -> Any:
    value = doc.get(key)
    if isinstance(value, bool) or not isinstance(value, kind):
        raise CatalogueError(f"catalogue field {key} = {value!r}: expected {allowed}")
    return value


def loads_catalogue(data: bytes) -> Catalogue:
    """Read a catalogue document (``<name>.json``) back and check it.

    Parameters
    ----------
    data : bytes
        The document's bytes (UTF-8 JSON).

    Returns
    -------
    Catalogue
        The manifests in ascending product id, each checked by the firmware contract.

    Raises
    ------
    CatalogueError
        Not JSON, another catalogue format version, a missing or unknown field, products
        not in ascending product id, a product id that is not its table name's, a manifest
        for another appliance or tick, or a manifest that fails the contract's checks.
    """
    try:
        doc = json.loads(data.decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise CatalogueError(f"catalogue: not a JSON document ({exc})") from None
    if not isinstance(doc, dict):
        raise CatalogueError(f"catalogue: a JSON {type(doc).__name__}, expected an object")
    version = doc.get("catalogue_format_version")
    if isinstance(version, bool) or version != CATALOGUE_FORMAT_VERSION:
        raise CatalogueError(
            f"catalogue field catalogue_format_version = {version!r}: this version reads "
            f"{CATALOGUE_FORMAT_VERSION}"
        )
    unknown = sorted(set(doc) - set(_KEYS))
    missing = sorted(set(_KEYS) - set(doc))
    if unknown or missing:
        raise CatalogueError(
            f"catalogue fields: unknown {unknown}, missing {missing}: allowed exactly {list(_KEYS)}"
        )
    name = _field(doc, "catalogue", str, "a catalogue name")
    appliance = _field(doc, "appliance", dict, "an object with name and model_id")
    appliance_name = appliance.get("name")
    if not isinstance(appliance_name, str) or appliance.get("model_id") != name_id(appliance_name):
        raise CatalogueError(
            f"catalogue field appliance = {appliance!r}: expected a name and its model id"
        )
    tick_s = _field(doc, "tick_s", float, "the tick in s (a number)")
    bundle = _field(doc, "bundle", dict, "an object with bytes and sha256")
    digest = bundle.get("sha256")
    if not isinstance(digest, str) or len(digest) != 64:
        raise CatalogueError(f"catalogue field bundle.sha256 = {digest!r}: expected 64 hex digits")
    products = _field(doc, "products", list, "a list of products")
    if not products:
        raise CatalogueError("catalogue field products = []: expected at least one product")
    manifests = []
    previous = -1
    for k, p in enumerate(products):
        where = f"products[{k}]"
        if not isinstance(p, dict) or sorted(p) != ["manifest", "product_id", "table"]:
            raise CatalogueError(
                f"catalogue field {where} = {p!r:.80}: expected product_id, table, manifest"
            )
        m = p["manifest"]
        try:
            check_manifest(m)
        except ManifestError as exc:
            raise CatalogueError(f"catalogue field {where}.manifest: {exc}") from None
        table = m["table"]["name"]
        if p["table"] != table or p["product_id"] != name_id(table):
            raise CatalogueError(
                f"catalogue field {where}: table {p['table']!r}, product_id {p['product_id']!r}: "
                f"expected the manifest's table {table!r} and its id {name_id(table)}"
            )
        if p["product_id"] <= previous:
            raise CatalogueError(
                f"catalogue field {where}.product_id = {p['product_id']}: products must be in "
                "strictly ascending product id"
            )
        previous = p["product_id"]
        if m["spec"]["appliance"]["name"] != appliance_name or float(m["tick_s"]) != tick_s:
            raise CatalogueError(
                f"catalogue field {where}.manifest: appliance "
                f"{m['spec']['appliance']['name']!r}, tick_s {m['tick_s']!r}: expected the "
                f"catalogue's {appliance_name!r} and {tick_s!r}"
            )
        manifests.append(m)
    version = _field(doc, "table_version", int, "an integer")
    budget = _field(doc, "flash_budget_bytes", int, "an integer")
    return Catalogue(name, appliance_name, tick_s, version, budget, digest, tuple(manifests))


def catalogue_bytes(document: Mapping[str, Any]) -> bytes:
    """Canonical JSON bytes of a catalogue document (``<name>.json``)."""
    return canonical_json(dict(document))
