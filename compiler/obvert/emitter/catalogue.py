"""A catalogue: several products' tables in one C output with a lookup by product id.

The catalogue is the bundle of its tables (:func:`obvert.emitter.bundle.bundle_bytes`)
compiled into C as const data, together with the bundle loader named after the catalogue
(``templates/bundle/``): ``<name>_catalogue_check()`` once at start-up, then
``<name>_catalogue_lookup(product_id, thickness_um, start_centi_c, &out)``. Pure: manifests
in, ``{filename: bytes}`` out.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from obvert.emitter.bundle import bundle_bytes
from obvert.emitter.errors import EmitError
from obvert.emitter.loader import catalogue_context
from obvert.emitter.render import render_template

__all__ = ["catalogue_files"]

_NAME = re.compile(r"[a-z][a-z0-9_]*\Z")


def catalogue_files(
    name: str,
    manifests: Sequence[Mapping[str, Any]],
    *,
    table_version: int,
    private_key_pem: bytes | None = None,
) -> dict[str, bytes]:
    """C files and bundle of a catalogue of products.

    Parameters
    ----------
    name : str
        Catalogue name: file stem and C prefix, ``[a-z][a-z0-9_]*``.
    manifests : sequence of dict
        One checked manifest per product, all for one appliance and tick.
    table_version : int
        Table version of the catalogue's bundle, 1 to 2**32 - 1.
    private_key_pem : bytes, optional
        Ed25519 private key signing the bundle (the compiled-in copy carries the signature
        too; the C check does not read it).

    Returns
    -------
    dict of str to bytes
        ``<name>.h``, ``<name>.c`` (loader, data and catalogue lookup) and ``<name>.bundle``.

    Raises
    ------
    EmitError
        A bad name, or whatever :func:`obvert.emitter.bundle.bundle_bytes` refuses.
    """
    if not isinstance(name, str) or not _NAME.match(name):
        raise EmitError(f"catalogue name = {name!r}: expected [a-z][a-z0-9_]*")
    data = bundle_bytes(manifests, table_version=table_version, private_key_pem=private_key_pem)
    tables = [m["table"]["name"] for m in manifests]
    appliance = manifests[0]["spec"]["appliance"]["name"]
    context = catalogue_context(name, data, tables, appliance)
    return {
        f"{name}.h": render_template("bundle/loader.h.j2", context).encode("utf-8"),
        f"{name}.c": render_template("bundle/loader.c.j2", context).encode("utf-8"),
        f"{name}.bundle": data,
    }
