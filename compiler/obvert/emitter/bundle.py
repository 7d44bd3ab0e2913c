"""Write field-update bundles: checked manifests in, bundle bytes out (docs/bundle.md).

Pure: no files, no clock. The node rows are the answers of the fixed-point corner lookup
(:func:`obvert.firmware.lookup.lookup_fixed`) on the node itself, so a bundle holds exactly
what the ``c99_fixed`` target's rows hold (the corner cell's done pad included). Ed25519
signatures are deterministic: the same manifests, version and key give the same bytes.
"""

from __future__ import annotations

import math
import struct
import zlib
from collections.abc import Mapping, Sequence
from fractions import Fraction
from typing import Any

from obvert.emitter.errors import EmitError
from obvert.firmware.axes import start_temp_axis_cc, thickness_axis_um
from obvert.firmware.bundle import (
    BUNDLE_MAGIC,
    BUNDLE_VERSION,
    DIRECTORY_ENTRY_BYTES,
    FLAG_UNSIGNED,
    HEADER_BYTES,
    MAX_EVENTS_LIMIT,
    PRODUCT_HEAD_BYTES,
    SIGNATURE_BYTES,
    key_id,
    name_id,
)
from obvert.firmware.lookup import lookup_fixed
from obvert.firmware.validate import check_manifest

__all__ = ["bundle_bytes", "new_key_pair", "signing_key"]

_U32_MAX = 2**32 - 1


def new_key_pair() -> tuple[bytes, bytes]:
    """A fresh Ed25519 key pair as ``(private PEM (PKCS8, unencrypted), public PEM)``."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    key = Ed25519PrivateKey.generate()
    private = key.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.NoEncryption(),
    )
    public = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    return private, public


def signing_key(private_pem: bytes) -> Any:
    """The Ed25519 private key of a PEM text (unencrypted); EmitError when it is not one."""
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    try:
        key = serialization.load_pem_private_key(private_pem, password=None)
    except (ValueError, TypeError) as exc:
        raise EmitError(f"signing key: not an unencrypted PEM private key ({exc})") from None
    if not isinstance(key, Ed25519PrivateKey):
        raise EmitError(f"signing key: a {type(key).__name__}, not an Ed25519 private key")
    return key


def _tick_us(manifest: Mapping[str, Any]) -> int:
    tick_s = float(manifest["tick_s"])
    tick_us = round(tick_s * 1e6)
    if tick_us < 1 or abs(tick_s * 1e6 - tick_us) > 1e-6 * max(1, tick_us):
        raise EmitError(f"manifest field tick_s = {tick_s!r}: needs a whole number of us >= 1")
    return tick_us


def _appliance_name(manifest: Mapping[str, Any]) -> str:
    """The spec's appliance name, from which the bundle's model id is derived."""
    try:
        name = manifest["spec"]["appliance"]["name"]
    except (KeyError, TypeError):
        name = None
    if not isinstance(name, str) or not name:
        table = manifest.get("table", {}).get("name")
        raise EmitError(
            f"table {table!r}: manifest field spec.appliance.name = {name!r}: a bundle needs "
            "the appliance name (its model id is derived from it)"
        )
    return name


def _product_block(manifest: Mapping[str, Any]) -> bytes:
    """Head, axes and node records of one product (layout in docs/bundle.md)."""
    name = manifest["table"]["name"]
    try:
        axis_x = [int(v) for v in thickness_axis_um(manifest)]
        axis_t = [int(v) for v in start_temp_axis_cc(manifest)]
    except ValueError as exc:
        raise EmitError(f"table {name!r}: {exc}") from None
    width = int(manifest["max_events"])
    if not 1 <= width <= MAX_EVENTS_LIMIT or len(axis_x) > 0xFFFF or len(axis_t) > 0xFFFF:
        raise EmitError(
            f"table {name!r}: max_events = {width}, axes {len(axis_x)} x {len(axis_t)}: a "
            f"bundle allows 1 to {MAX_EVENTS_LIMIT} events and at most 65535 values per axis"
        )
    out = bytearray(struct.pack("<HHHH", len(axis_x), len(axis_t), width, 0))
    out += struct.pack("<iiii", axis_x[0], axis_x[-1], axis_t[0], axis_t[-1])
    out += struct.pack(f"<{len(axis_x)}i", *axis_x) + struct.pack(f"<{len(axis_t)}i", *axis_t)
    n_t = len(axis_t)
    for i, x in enumerate(axis_x):
        for j, t in enumerate(axis_t):
            node = i * n_t + j
            answer = lookup_fixed(manifest, x, t, rule="corner")
            if answer.status != 0 or answer.node != node:
                raise EmitError(f"table {name!r}: node {node} does not answer for itself")
            events = list(answer.events)
            if any(ticks > _U32_MAX for _, ticks in events):
                raise EmitError(f"table {name!r}: nodes[{node}] has a tick above uint32")
            margin = math.floor(Fraction(manifest["nodes"][node]["margin_log"]) * 1000)
            if not -(2**31) <= margin < 2**31:
                raise EmitError(f"table {name!r}: nodes[{node}].margin_log too big for int32")
            out += struct.pack("<HHi", len(events), 0, margin)
            for kind, ticks in events + [events[-1]] * (width - len(events)):
                out += struct.pack("<IB3x", ticks, kind)
    return bytes(out)


def bundle_bytes(
    manifests: Sequence[Mapping[str, Any]],
    *,
    table_version: int,
    private_key_pem: bytes | None = None,
) -> bytes:
    """Bundle the tables of ``manifests`` for one appliance model.

    Parameters
    ----------
    manifests : sequence of dict
        Canonical manifests, one per product, all for the same appliance name and tick.
        The product id of each is :func:`obvert.firmware.bundle.name_id` of its table name.
    table_version : int
        Monotonic table version, 0 to 2**32 - 1; appliances accept only a newer one.
    private_key_pem : bytes, optional
        Ed25519 private key (PEM, unencrypted); None writes an unsigned bundle (flag set,
        key id and signature zero).

    Returns
    -------
    bytes
        The bundle; the same inputs give the same bytes.

    Raises
    ------
    EmitError
        No manifest, a table version outside uint32, manifests for different appliances or
        ticks, repeated product ids, or a table that does not fit the layout.
    ManifestError
        A manifest fails the firmware contract's checks.
    """
    if isinstance(table_version, bool) or not isinstance(table_version, int):
        raise EmitError(f"table_version = {table_version!r}: expected an integer")
    if not 0 <= table_version <= _U32_MAX:
        raise EmitError(f"table_version = {table_version}: allowed 0 to {_U32_MAX}")
    if not manifests:
        raise EmitError("a bundle needs at least one table")
    if len(manifests) > 0xFFFF:
        raise EmitError(f"{len(manifests)} tables: a bundle holds at most 65535")
    for m in manifests:
        check_manifest(m)
    appliances = sorted({_appliance_name(m) for m in manifests})
    ticks = sorted({_tick_us(m) for m in manifests})
    if len(appliances) != 1 or len(ticks) != 1:
        raise EmitError(
            f"appliance names {appliances}, ticks {ticks} us: one bundle is for one appliance "
            "model and one tick"
        )
    by_id: dict[int, Mapping[str, Any]] = {}
    for m in manifests:
        pid = name_id(m["table"]["name"])
        if pid in by_id:
            raise EmitError(
                f"tables {by_id[pid]['table']['name']!r} and {m['table']['name']!r} have the "
                f"same product id 0x{pid:08x}"
            )
        by_id[pid] = m
    blocks = [(pid, _product_block(by_id[pid])) for pid in sorted(by_id)]
    offset = HEADER_BYTES + DIRECTORY_ENTRY_BYTES * len(blocks)
    directory = bytearray()
    for pid, block in blocks:
        directory += struct.pack("<III", pid, offset, len(block))
        offset += len(block)
    total = offset + 4 + SIGNATURE_BYTES
    if total > _U32_MAX:
        raise EmitError(f"bundle of {total} bytes: exceeds uint32 sizes")
    key = signing_key(private_key_pem) if private_key_pem is not None else None
    ident = bytes(8)
    if key is not None:
        from cryptography.hazmat.primitives import serialization

        raw = key.public_key().public_bytes(
            serialization.Encoding.Raw, serialization.PublicFormat.Raw
        )
        ident = key_id(raw)
    header = BUNDLE_MAGIC + struct.pack(
        "<HHIIIIHHI",
        BUNDLE_VERSION,
        0 if key is not None else FLAG_UNSIGNED,
        table_version,
        name_id(appliances[0]),
        ticks[0],
        total,
        len(blocks),
        HEADER_BYTES,
        0,
    )
    body = header + ident + bytes(directory) + b"".join(b for _, b in blocks)
    if len(header) + len(ident) != HEADER_BYTES or PRODUCT_HEAD_BYTES != 24:
        raise EmitError("internal: header layout differs from obvert.firmware.bundle")
    signed = body + struct.pack("<I", zlib.crc32(body))
    signature = key.sign(signed) if key is not None else bytes(SIGNATURE_BYTES)
    return signed + signature
