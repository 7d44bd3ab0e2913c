"""A catalogue: several products' tables in one C output with a lookup by product id.

The catalogue is the bundle of its tables (:func:`obvert.emitter.bundle.bundle_bytes`)
compiled into C as const data, together with the bundle loader named after the catalogue
(``templates/bundle/``): ``<name>_catalogue_check()`` once at start-up, then
``<name>_catalogue_lookup(product_id, thickness_um, start_centi_c, &out)``; beside it the
bundle itself and the catalogue document ``<name>.json`` (every product's manifest,
:mod:`obvert.firmware.catalogue`). Pure: manifests in, ``{filename: bytes}`` out.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

from obvert.emitter.bundle import bundle_bytes
from obvert.emitter.errors import EmitError
from obvert.emitter.loader import catalogue_context
from obvert.emitter.profile import load_target
from obvert.emitter.render import render_template
from obvert.firmware.catalogue import catalogue_bytes, catalogue_document

__all__ = ["CATALOGUE_NAME_RULE", "catalogue_budget", "catalogue_files", "check_catalogue_name"]

#: What a catalogue name may be (file stem and C prefix).
CATALOGUE_NAME_RULE = "[a-z][a-z0-9_]*, at most 40 characters"
_NAME = re.compile(r"[a-z][a-z0-9_]{0,39}\Z")
#: Target whose integer layout the bundle holds; its flash_budget_bytes is the default budget.
_LAYOUT_TARGET = "c99_fixed"


def check_catalogue_name(name: object) -> str:
    """``name`` when it is a valid catalogue name; EmitError naming the value otherwise."""
    if not isinstance(name, str) or not _NAME.match(name):
        raise EmitError(f"catalogue name = {name!r}: expected {CATALOGUE_NAME_RULE}")
    return name


def catalogue_budget(flash_budget_bytes: int | None = None) -> int:
    """The catalogue's byte budget: ``flash_budget_bytes``, else the ``c99_fixed`` target's.

    Parameters
    ----------
    flash_budget_bytes : int, optional
        A budget given by the user, bytes (1 to 2**32 - 1).

    Returns
    -------
    int
        The budget, bytes.

    Raises
    ------
    EmitError
        A budget that is not a positive uint32.
    """
    if flash_budget_bytes is None:
        budget = load_target(_LAYOUT_TARGET).flash_budget_bytes
        return int(budget) if budget is not None else 2**32 - 1
    if (
        isinstance(flash_budget_bytes, bool)
        or not isinstance(flash_budget_bytes, int)
        or not 1 <= flash_budget_bytes <= 2**32 - 1
    ):
        raise EmitError(
            f"flash budget = {flash_budget_bytes!r}: expected an integer from 1 to {2**32 - 1} "
            "bytes"
        )
    return flash_budget_bytes


def catalogue_files(
    name: str,
    manifests: Sequence[Mapping[str, Any]],
    *,
    table_version: int,
    private_key_pem: bytes | None = None,
    flash_budget_bytes: int | None = None,
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
    flash_budget_bytes : int, optional
        Most bytes the compiled-in bundle may take (``<NAME>_FLASH_BUDGET_BYTES``, held by a
        static assert in the C); default the ``c99_fixed`` target's ``flash_budget_bytes``.

    Returns
    -------
    dict of str to bytes
        ``<name>.h``, ``<name>.c`` (loader, data and catalogue lookup), ``<name>.bundle``
        and ``<name>.json`` (the catalogue document, every product's manifest).

    Raises
    ------
    EmitError
        A bad name or budget, a bundle over the budget, or whatever
        :func:`obvert.emitter.bundle.bundle_bytes` refuses.
    """
    check_catalogue_name(name)
    budget = catalogue_budget(flash_budget_bytes)
    data = bundle_bytes(manifests, table_version=table_version, private_key_pem=private_key_pem)
    if len(data) > budget:
        raise EmitError(
            f"catalogue {name!r}: its bundle needs {len(data)} bytes of const data; the flash "
            f"budget allows {budget} bytes: give fewer products or grid nodes, or a larger "
            "budget"
        )
    tables = [m["table"]["name"] for m in manifests]
    appliance = manifests[0]["spec"]["appliance"]["name"]
    context = catalogue_context(name, data, tables, appliance, budget)
    document = catalogue_document(
        name, manifests, table_version=table_version, flash_budget_bytes=budget, bundle=data
    )
    return {
        f"{name}.h": render_template("bundle/loader.h.j2", context).encode("utf-8"),
        f"{name}.c": render_template("bundle/loader.c.j2", context).encode("utf-8"),
        f"{name}.bundle": data,
        f"{name}.json": catalogue_bytes(document),
    }
