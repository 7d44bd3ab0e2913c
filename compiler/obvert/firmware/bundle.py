"""Field-update bundles: the binary layout, its parser and verifier (docs/bundle.md).

A bundle carries one or more products' cook tables in the integer-only layout of the
``c99_fixed`` targets (axes in micrometres and 0.01 degC, events in ticks), stamped with a
monotonic table version and the appliance model it is for, protected by a CRC-32 and signed
with Ed25519. Everything is little-endian. The parser here runs the same checks, in the same
order and with the same status codes, as the C reference loader
(``templates/bundle/loader.c.j2``); the verifier adds the Ed25519 signature, which on an
appliance is the device's own crypto library's job.
"""

from __future__ import annotations

import hashlib
import struct
import zlib
from dataclasses import dataclass
from enum import IntEnum

__all__ = [
    "BUNDLE_MAGIC",
    "BUNDLE_VERSION",
    "DIRECTORY_ENTRY_BYTES",
    "EVENT_BYTES",
    "FLAG_UNSIGNED",
    "HEADER_BYTES",
    "MAX_EVENTS_LIMIT",
    "PRODUCT_HEAD_BYTES",
    "SIGNATURE_BYTES",
    "TRAILER_BYTES",
    "Bundle",
    "BundleError",
    "BundleNode",
    "BundleProduct",
    "BundleStatus",
    "key_id",
    "name_id",
    "node_bytes",
    "parse_bundle",
    "product_block_bytes",
    "verify_bundle",
]

#: First four bytes of every bundle.
BUNDLE_MAGIC = b"OBVB"
#: Version of the bundle layout (independent of the manifest's format version).
BUNDLE_VERSION = 1
#: Header flag: the bundle is not signed (signature field all zero).
FLAG_UNSIGNED = 0x0001
#: Bytes of the header; the product directory follows it.
HEADER_BYTES = 40
#: Bytes of one product directory entry (product id, offset, size).
DIRECTORY_ENTRY_BYTES = 12
#: Bytes of a product block before its axes.
PRODUCT_HEAD_BYTES = 24
#: Bytes of one event (u32 ticks, u8 kind, 3 reserved zero bytes).
EVENT_BYTES = 8
#: Bytes of the Ed25519 signature at the end.
SIGNATURE_BYTES = 64
#: CRC-32 and signature.
TRAILER_BYTES = 4 + SIGNATURE_BYTES
#: Largest ``max_events`` of a product (the C loader's schedule holds this many events).
MAX_EVENTS_LIMIT = 32
#: Event kind codes allowed in a bundle (obvert.firmware.contract.EVENT_CODES).
_KIND_DONE = 0
_KIND_MAX = 3
_INT32 = (-(2**31), 2**31 - 1)


class BundleStatus(IntEnum):
    """Result of checking a bundle; the C loader returns the same values.

    ``BAD_SIGNATURE``, ``WRONG_KEY`` and ``UNSIGNED`` come from the Python verifier only (the
    C loader leaves the signature to the device's crypto library).
    """

    OK = 0
    TOO_SHORT = 1
    BAD_MAGIC = 2
    UNSUPPORTED_VERSION = 3
    OUT_OF_RANGE = 4
    BAD_CRC = 5
    BAD_FIELD = 6
    WRONG_MODEL = 7
    NOT_NEWER = 8
    BAD_SIGNATURE = 9
    WRONG_KEY = 10
    UNSIGNED = 11


class BundleError(ValueError):
    """A bundle is refused; ``status`` says why, the message names the field and value."""

    def __init__(self, status: BundleStatus, message: str) -> None:
        super().__init__(message)
        self.status = status


@dataclass(frozen=True)
class BundleNode:
    """One node's schedule as stored in a bundle.

    Attributes
    ----------
    margin_mlog : int
        Certified margin, milli-log10 (rounded down).
    events : tuple of (int, int)
        ``(kind code, at_ticks)`` of each event, the last being done (cell pad included).
    """

    margin_mlog: int
    events: tuple[tuple[int, int], ...]


@dataclass(frozen=True)
class BundleProduct:
    """One product's table in a bundle.

    Attributes
    ----------
    product_id : int
        Product id (uint32).
    envelope : tuple of int
        ``(thickness_low_um, thickness_high_um, start_low_cc, start_high_cc)``: um and
        0.01 degC.
    thickness_um : tuple of int
        Thickness axis, micrometres.
    start_temp_cc : tuple of int
        Start-temperature axis, 0.01 degC.
    max_events : int
        Event slots per node.
    nodes : tuple of BundleNode
        i-major: node ``i * len(start_temp_cc) + j``.
    """

    product_id: int
    envelope: tuple[int, int, int, int]
    thickness_um: tuple[int, ...]
    start_temp_cc: tuple[int, ...]
    max_events: int
    nodes: tuple[BundleNode, ...]


@dataclass(frozen=True)
class Bundle:
    """A parsed bundle.

    Attributes
    ----------
    format_version : int
        Bundle layout version.
    signed : bool
        False when the header's unsigned flag is set.
    table_version : int
        Monotonic table version (uint32).
    appliance_model : int
        32-bit appliance model id (:func:`name_id` of the appliance name).
    tick_us : int
        Firmware tick, microseconds.
    key_id : bytes
        First 8 bytes of SHA-256 of the raw signing public key; zeros when unsigned.
    products : tuple of BundleProduct
        In ascending product id.
    crc : int
        Stored CRC-32.
    signature : bytes
        The 64-byte signature field.
    signed_bytes : bytes
        Everything the signature covers (all bytes before it).
    """

    format_version: int
    signed: bool
    table_version: int
    appliance_model: int
    tick_us: int
    key_id: bytes
    products: tuple[BundleProduct, ...]
    crc: int
    signature: bytes
    signed_bytes: bytes

    @property
    def node_count(self) -> int:
        """Nodes over all products."""
        return sum(len(p.nodes) for p in self.products)


def name_id(name: str) -> int:
    """32-bit id of a name: the first 4 bytes of SHA-256 of its UTF-8, little-endian.

    Used for the appliance model (the spec's appliance name) and product ids (table name).
    """
    return int.from_bytes(hashlib.sha256(name.encode("utf-8")).digest()[:4], "little")


def key_id(public_raw: bytes) -> bytes:
    """First 8 bytes of SHA-256 of a raw 32-byte Ed25519 public key."""
    return hashlib.sha256(public_raw).digest()[:8]


def node_bytes(max_events: int) -> int:
    """Bytes of one node record: u16 n_events, u16 reserved, i32 margin, the events."""
    return 8 + EVENT_BYTES * max_events


def product_block_bytes(n_x: int, n_t: int, max_events: int) -> int:
    """Bytes of one product block: its head, both axes and ``n_x * n_t`` node records."""
    return PRODUCT_HEAD_BYTES + 4 * (n_x + n_t) + n_x * n_t * node_bytes(max_events)


def _u16(data: bytes, at: int) -> int:
    return int(struct.unpack_from("<H", data, at)[0])


def _u32(data: bytes, at: int) -> int:
    return int(struct.unpack_from("<I", data, at)[0])


def _i32(data: bytes, at: int) -> int:
    return int(struct.unpack_from("<i", data, at)[0])


def _fail(status: BundleStatus, message: str) -> BundleError:
    return BundleError(status, message)


def _head(data: bytes) -> int:
    """Checks of the frame (size, magic, version, total size, CRC); returns the body end."""
    size = len(data)
    if size < HEADER_BYTES + TRAILER_BYTES:
        raise _fail(
            BundleStatus.TOO_SHORT,
            f"size = {size} bytes: a bundle has at least {HEADER_BYTES + TRAILER_BYTES}",
        )
    if data[:4] != BUNDLE_MAGIC:
        raise _fail(BundleStatus.BAD_MAGIC, f"magic = {data[:4]!r}: expected {BUNDLE_MAGIC!r}")
    version = _u16(data, 4)
    if version != BUNDLE_VERSION:
        raise _fail(
            BundleStatus.UNSUPPORTED_VERSION,
            f"format_version = {version}: this reader supports {BUNDLE_VERSION}",
        )
    total = _u32(data, 20)
    if total > size:
        raise _fail(
            BundleStatus.TOO_SHORT,
            f"total_size = {total} bytes but the file has {size}: truncated",
        )
    if total < size:
        raise _fail(
            BundleStatus.OUT_OF_RANGE,
            f"total_size = {total} bytes but the file has {size}: trailing bytes",
        )
    body_end = size - TRAILER_BYTES
    stored, computed = _u32(data, body_end), zlib.crc32(data[:body_end])
    if stored != computed:
        raise _fail(
            BundleStatus.BAD_CRC,
            f"crc32 = 0x{stored:08x} but the bytes before it give 0x{computed:08x}",
        )
    return body_end


def _flags(data: bytes, body_end: int) -> bool:
    """Check the flags and the signature field of an unsigned bundle; True when signed."""
    flags = _u16(data, 6)
    if flags & ~FLAG_UNSIGNED:
        raise _fail(BundleStatus.BAD_FIELD, f"flags = 0x{flags:04x}: allowed bits 0x0001")
    if _u16(data, 26) != HEADER_BYTES or _u32(data, 28) != 0:
        raise _fail(
            BundleStatus.BAD_FIELD,
            f"header_size = {_u16(data, 26)}, reserved = {_u32(data, 28)}: expected "
            f"{HEADER_BYTES} and 0",
        )
    signed = not flags & FLAG_UNSIGNED
    if not signed and any(data[body_end + 4 :]):
        raise _fail(BundleStatus.BAD_FIELD, "unsigned bundle: the signature field must be zero")
    if not signed and any(data[32:40]):
        raise _fail(BundleStatus.BAD_FIELD, "unsigned bundle: key_id must be zero")
    return signed


def _ascending(values: list[int], field: str) -> None:
    for n in range(1, len(values)):
        if values[n] <= values[n - 1]:
            raise _fail(
                BundleStatus.BAD_FIELD,
                f"{field}[{n - 1}], [{n}] = {values[n - 1]}, {values[n]}: must ascend strictly",
            )


def _node(data: bytes, at: int, width: int, field: str) -> BundleNode:
    count = _u16(data, at)
    if not 1 <= count <= width:
        raise _fail(BundleStatus.OUT_OF_RANGE, f"{field}.n_events = {count}: allowed 1 to {width}")
    if _u16(data, at + 2) != 0:
        raise _fail(BundleStatus.BAD_FIELD, f"{field}.reserved = {_u16(data, at + 2)}: must be 0")
    events = []
    for k in range(width):
        e = at + 8 + EVENT_BYTES * k
        ticks, kind = _u32(data, e), data[e + 4]
        if any(data[e + 5 : e + 8]):
            raise _fail(BundleStatus.BAD_FIELD, f"{field}.events[{k}] reserved bytes must be 0")
        events.append((kind, ticks))
    for k, (kind, ticks) in enumerate(events[:count]):
        last = k == count - 1
        if kind > _KIND_MAX or (kind == _KIND_DONE) != last:
            raise _fail(
                BundleStatus.BAD_FIELD,
                f"{field}.events[{k}].kind = {kind}: kinds 1 to 3 before the last event, "
                "0 (done) last",
            )
        if k and ticks < events[k - 1][1]:
            raise _fail(
                BundleStatus.BAD_FIELD, f"{field}.events[{k}].at_ticks = {ticks}: goes back in time"
            )
    for k in range(count, width):
        if events[k] != events[count - 1]:
            raise _fail(
                BundleStatus.BAD_FIELD,
                f"{field}.events[{k}] = {events[k]}: slots after done repeat done",
            )
    return BundleNode(_i32(data, at + 4), tuple(events[:count]))


def _product(data: bytes, at: int, size: int, product_id: int, field: str) -> BundleProduct:
    if size < PRODUCT_HEAD_BYTES:
        raise _fail(BundleStatus.OUT_OF_RANGE, f"{field}.size = {size}: below the block head")
    n_x, n_t, width = _u16(data, at), _u16(data, at + 2), _u16(data, at + 4)
    if n_x < 1 or n_t < 1 or not 1 <= width <= MAX_EVENTS_LIMIT:
        raise _fail(
            BundleStatus.OUT_OF_RANGE,
            f"{field}: n_thickness = {n_x}, n_start_temp = {n_t}, max_events = {width}: "
            f"allowed >= 1, >= 1, 1 to {MAX_EVENTS_LIMIT}",
        )
    if _u16(data, at + 6) != 0:
        raise _fail(BundleStatus.BAD_FIELD, f"{field}.reserved = {_u16(data, at + 6)}: must be 0")
    want = product_block_bytes(n_x, n_t, width)
    if size != want:
        raise _fail(
            BundleStatus.OUT_OF_RANGE,
            f"{field}.size = {size}: its counts need exactly {want} bytes",
        )
    envelope = (_i32(data, at + 8), _i32(data, at + 12), _i32(data, at + 16), _i32(data, at + 20))
    axis_x = [_i32(data, at + PRODUCT_HEAD_BYTES + 4 * k) for k in range(n_x)]
    axis_t = [_i32(data, at + PRODUCT_HEAD_BYTES + 4 * (n_x + k)) for k in range(n_t)]
    _ascending(axis_x, f"{field}.thickness_um")
    _ascending(axis_t, f"{field}.start_temp_cc")
    if envelope != (axis_x[0], axis_x[-1], axis_t[0], axis_t[-1]):
        raise _fail(
            BundleStatus.BAD_FIELD,
            f"{field}.envelope = {list(envelope)}: must equal the axis ends "
            f"{[axis_x[0], axis_x[-1], axis_t[0], axis_t[-1]]}",
        )
    first = at + PRODUCT_HEAD_BYTES + 4 * (n_x + n_t)
    nodes = tuple(
        _node(data, first + n * node_bytes(width), width, f"{field}.nodes[{n}]")
        for n in range(n_x * n_t)
    )
    return BundleProduct(
        product_id,
        envelope,
        tuple(axis_x),
        tuple(axis_t),
        width,
        nodes,
    )


def parse_bundle(
    data: bytes,
    *,
    installed_table_version: int | None = None,
    appliance_model: int | None = None,
) -> Bundle:
    """Check a bundle as the C loader does and return its content (signature not checked).

    Parameters
    ----------
    data : bytes
        The whole bundle file.
    installed_table_version : int, optional
        Table version the appliance runs; the bundle must be newer. None: not checked.
    appliance_model : int, optional
        The appliance's model id; the bundle must be for it. None: not checked.

    Returns
    -------
    Bundle
        The parsed content.

    Raises
    ------
    BundleError
        With the :class:`BundleStatus` of the first failed check, in the C loader's order:
        size, magic, version, total size, CRC, flags, model, table version, directory,
        products.
    """
    data = bytes(data)
    body_end = _head(data)
    signed = _flags(data, body_end)
    model, table_version = _u32(data, 12), _u32(data, 8)
    if appliance_model is not None and model != appliance_model:
        raise _fail(
            BundleStatus.WRONG_MODEL,
            f"appliance_model = 0x{model:08x}: this appliance is 0x{appliance_model:08x}",
        )
    if installed_table_version is not None and table_version <= installed_table_version:
        raise _fail(
            BundleStatus.NOT_NEWER,
            f"table_version = {table_version}: not newer than the installed "
            f"{installed_table_version}",
        )
    count = _u16(data, 24)
    first = HEADER_BYTES + DIRECTORY_ENTRY_BYTES * count
    if count < 1 or first > body_end:
        raise _fail(
            BundleStatus.OUT_OF_RANGE,
            f"product_count = {count}: allowed 1 to what fits before byte {body_end}",
        )
    products, expect, previous = [], first, -1
    for p in range(count):
        entry = HEADER_BYTES + DIRECTORY_ENTRY_BYTES * p
        pid, offset, size = _u32(data, entry), _u32(data, entry + 4), _u32(data, entry + 8)
        field = f"products[{p}]"
        if pid <= previous:
            raise _fail(
                BundleStatus.BAD_FIELD, f"{field}.product_id = {pid}: ids must ascend strictly"
            )
        if offset != expect or size > body_end - offset:
            raise _fail(
                BundleStatus.OUT_OF_RANGE,
                f"{field}: offset = {offset}, size = {size}: expected offset {expect} and a "
                f"block ending by byte {body_end}",
            )
        products.append(_product(data, offset, size, pid, field))
        previous, expect = pid, offset + size
    if expect != body_end:
        raise _fail(
            BundleStatus.OUT_OF_RANGE,
            f"products end at byte {expect} but the CRC is at byte {body_end}",
        )
    return Bundle(
        format_version=BUNDLE_VERSION,
        signed=signed,
        table_version=table_version,
        appliance_model=model,
        tick_us=_u32(data, 16),
        key_id=data[32:40],
        products=tuple(products),
        crc=_u32(data, body_end),
        signature=data[body_end + 4 :],
        signed_bytes=data[: body_end + 4],
    )


def verify_bundle(
    data: bytes,
    public_key_pem: bytes | None,
    *,
    allow_unsigned: bool = False,
    installed_table_version: int | None = None,
    appliance_model: int | None = None,
) -> Bundle:
    """Check everything in a bundle, the Ed25519 signature included.

    Parameters
    ----------
    data : bytes
        The whole bundle file.
    public_key_pem : bytes or None
        The Ed25519 public key in PEM (SubjectPublicKeyInfo); None only with
        ``allow_unsigned`` and an unsigned bundle.
    allow_unsigned : bool
        Accept a bundle whose header says unsigned.
    installed_table_version, appliance_model : int, optional
        As for :func:`parse_bundle`.

    Returns
    -------
    Bundle
        The parsed content.

    Raises
    ------
    BundleError
        Any check of :func:`parse_bundle`, then ``UNSIGNED`` (unsigned, not allowed),
        ``WRONG_KEY`` (the bundle names another key) or ``BAD_SIGNATURE``.
    ValueError
        ``public_key_pem`` is not an Ed25519 public key in PEM.
    """
    bundle = parse_bundle(
        data, installed_table_version=installed_table_version, appliance_model=appliance_model
    )
    if not bundle.signed:
        if allow_unsigned:
            return bundle
        raise _fail(BundleStatus.UNSIGNED, "the bundle is unsigned (its header says so)")
    if public_key_pem is None:
        raise _fail(BundleStatus.WRONG_KEY, "the bundle is signed: a public key is needed")
    from cryptography.exceptions import InvalidSignature
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PublicKey

    try:
        key = serialization.load_pem_public_key(public_key_pem)
    except (ValueError, TypeError) as exc:
        raise ValueError(f"not a PEM public key ({exc})") from None
    if not isinstance(key, Ed25519PublicKey):
        raise ValueError(f"a {type(key).__name__}, not an Ed25519 public key")
    raw = key.public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    if key_id(raw) != bundle.key_id:
        raise _fail(
            BundleStatus.WRONG_KEY,
            f"key_id = {bundle.key_id.hex()}: signed with another key than this one "
            f"({key_id(raw).hex()})",
        )
    try:
        key.verify(bundle.signature, bundle.signed_bytes)
    except InvalidSignature:
        raise _fail(BundleStatus.BAD_SIGNATURE, "the Ed25519 signature does not verify") from None
    return bundle
