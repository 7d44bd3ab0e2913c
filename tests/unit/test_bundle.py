"""Bundle writer and verifier (obvert.emitter.bundle, obvert.firmware.bundle; docs/bundle.md).

Outside references: RFC 8032 section 7.1 test 1 (Ed25519 key and signature of the empty
message) through the ``cryptography`` package; the CRC-32/ISO-HDLC check value 0xCBF43926 of
"123456789" from the CRC catalogue, and Python's ``zlib.crc32``; the fixed-point corner lookup
``obvert.firmware.lookup.lookup_fixed`` for the node rows. The bundle is built from the real
manifest stored in tests/golden/input (no table is compiled here).
"""

from __future__ import annotations

import copy
import json
import struct
import zlib
from pathlib import Path

import pytest
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from obvert.emitter import EmitError
from obvert.emitter.bundle import bundle_bytes, new_key_pair
from obvert.firmware.axes import start_temp_axis_cc, thickness_axis_um
from obvert.firmware.bundle import (
    BUNDLE_MAGIC,
    HEADER_BYTES,
    SIGNATURE_BYTES,
    BundleError,
    BundleStatus,
    name_id,
    parse_bundle,
    verify_bundle,
)
from obvert.firmware.lookup import lookup_fixed

REAL = Path(__file__).resolve().parents[1] / "golden" / "input" / "test_patty.json"
# RFC 8032, section 7.1, TEST 1.
RFC_SECRET = bytes.fromhex("9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60")
RFC_PUBLIC = bytes.fromhex("d75a980182b10ab7d54bfed3c964073a0ee172f3daa62325af021a68f707511a")
RFC_SIGNATURE = bytes.fromhex(
    "e5564300c360ac729086e2cc806e828a84877f1eb8e5d974d873e065224901555fb8821590a33bacc61e3970"
    "1cf9b46bd25bf5f0595bbe24655141438e7a100b"
)
VERSION = 5


def _manifest() -> dict:
    return json.loads(REAL.read_text(encoding="utf-8"))


def _pems(seed: bytes = RFC_SECRET) -> tuple[bytes, bytes]:
    key = Ed25519PrivateKey.from_private_bytes(seed)
    private = key.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.NoEncryption(),
    )
    public = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    return private, public


@pytest.fixture(scope="module")
def signed() -> bytes:
    return bundle_bytes([_manifest()], table_version=VERSION, private_key_pem=_pems()[0])


def _refused(data: bytes, public: bytes | None, **kw) -> BundleStatus:
    with pytest.raises(BundleError) as info:
        verify_bundle(data, public, **kw)
    return info.value.status


def _recrc(data: bytes) -> bytes:
    out = bytearray(data)
    end = len(out) - 4 - SIGNATURE_BYTES
    out[end : end + 4] = struct.pack("<I", zlib.crc32(bytes(out[:end])))
    return bytes(out)


def test_ed25519_is_rfc8032_test_1():
    """RFC 8032 section 7.1 TEST 1: the key pair and the signature of the empty message."""
    key = Ed25519PrivateKey.from_private_bytes(RFC_SECRET)
    raw = key.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw)
    assert raw == RFC_PUBLIC
    assert key.sign(b"") == RFC_SIGNATURE


def test_crc_is_crc32_iso_hdlc(signed):
    """The CRC catalogue's CRC-32/ISO-HDLC check value, and the bundle's CRC is zlib's."""
    assert zlib.crc32(b"123456789") == 0xCBF43926
    end = len(signed) - 4 - SIGNATURE_BYTES
    assert struct.unpack_from("<I", signed, end)[0] == zlib.crc32(signed[:end])


def test_header_fields_sit_at_their_documented_offsets(signed):
    """docs/bundle.md's byte-offset table, field by field."""
    m = _manifest()
    assert signed[0:4] == BUNDLE_MAGIC
    version, flags, table_version, model, tick_us, total, count, header = struct.unpack_from(
        "<HHIIIIHH", signed, 4
    )
    assert (version, flags, table_version) == (1, 0, VERSION)
    assert model == name_id(m["spec"]["appliance"]["name"])
    assert tick_us == round(m["tick_s"] * 1e6)
    assert (total, count, header) == (len(signed), 1, HEADER_BYTES)
    pid, offset, size = struct.unpack_from("<III", signed, HEADER_BYTES)
    assert pid == name_id(m["table"]["name"])
    assert offset == HEADER_BYTES + 12
    assert offset + size == len(signed) - 68


def test_content_is_the_fixed_point_corner_rows(signed):
    m = _manifest()
    bundle = verify_bundle(signed, _pems()[1])
    (product,) = bundle.products
    xs = [int(v) for v in thickness_axis_um(m)]
    ts = [int(v) for v in start_temp_axis_cc(m)]
    assert list(product.thickness_um) == xs and list(product.start_temp_cc) == ts
    assert product.envelope == (xs[0], xs[-1], ts[0], ts[-1])
    assert product.max_events == m["max_events"]
    for n, node in enumerate(product.nodes):
        x, t = xs[n // len(ts)], ts[n % len(ts)]
        assert node.events == lookup_fixed(m, x, t).events
    assert bundle.node_count == len(m["nodes"]) == len(product.nodes)


def test_same_inputs_give_the_same_bytes(signed):
    m = _manifest()
    again = bundle_bytes([copy.deepcopy(m)], table_version=VERSION, private_key_pem=_pems()[0])
    assert again == signed
    assert bundle_bytes([m], table_version=VERSION) == bundle_bytes([m], table_version=VERSION)
    assert bundle_bytes([m], table_version=VERSION + 1) != bundle_bytes([m], table_version=VERSION)


def test_every_bit_flip_and_truncation_is_refused(signed):
    """Exhaustive over every bit of the signed bundle and every shorter length."""
    public = _pems()[1]
    verify_bundle(signed, public)
    seen = set()
    for bit in range(8 * len(signed)):
        mutated = bytearray(signed)
        mutated[bit // 8] ^= 1 << (bit % 8)
        seen.add(_refused(bytes(mutated), public))
    assert BundleStatus.BAD_SIGNATURE in seen and BundleStatus.BAD_CRC in seen
    for n in range(len(signed)):
        assert _refused(signed[:n], public) is BundleStatus.TOO_SHORT


def test_each_refusal_has_its_own_status(signed):
    m = _manifest()
    private, public = _pems()
    other_public = _pems(bytes(range(32)))[1]
    model = name_id(m["spec"]["appliance"]["name"])
    assert _refused(signed, other_public) is BundleStatus.WRONG_KEY
    changed = bytearray(signed)
    # The first event time of the last node (its record is the 32 bytes before the CRC);
    # the CRC recomputed, so only the signature sees the change.
    changed[len(signed) - 68 - 24] ^= 0x01
    changed = _recrc(bytes(changed))
    assert parse_bundle(changed).products[0].nodes[-1] != parse_bundle(signed).products[0].nodes[-1]
    assert _refused(changed, public) is BundleStatus.BAD_SIGNATURE
    kw = {"appliance_model": model}
    assert _refused(signed, public, installed_table_version=VERSION, **kw) is (
        BundleStatus.NOT_NEWER
    )
    assert _refused(signed, public, installed_table_version=VERSION + 9) is BundleStatus.NOT_NEWER
    assert verify_bundle(signed, public, installed_table_version=VERSION - 1, **kw)
    assert _refused(signed, public, appliance_model=model ^ 0x80) is BundleStatus.WRONG_MODEL
    assert _refused(b"OBVX" + signed[4:], public) is BundleStatus.BAD_MAGIC
    newer = bytearray(signed)
    newer[4] = 2
    assert _refused(bytes(newer), public) is BundleStatus.UNSUPPORTED_VERSION
    assert _refused(signed + b"\0", public) is BundleStatus.OUT_OF_RANGE
    unsigned = bundle_bytes([m], table_version=VERSION)
    assert _refused(unsigned, public) is BundleStatus.UNSIGNED
    assert not verify_bundle(unsigned, None, allow_unsigned=True).signed
    forged = unsigned[:-SIGNATURE_BYTES] + signed[-SIGNATURE_BYTES:]
    assert _refused(forged, public, allow_unsigned=True) is BundleStatus.BAD_FIELD
    assert private != public


def test_messages_name_the_field_and_value(signed):
    public = _pems()[1]
    with pytest.raises(BundleError, match=r"crc32 = 0x[0-9a-f]{8} but the bytes before it"):
        verify_bundle(signed[:20] + bytes([signed[20] ^ 0]) + signed[21:30] + b"\x99"
                      + signed[31:], public)  # fmt: skip
    with pytest.raises(BundleError, match=r"total_size = \d+ bytes but the file has \d+"):
        verify_bundle(signed[:-1], public)
    with pytest.raises(ValueError, match="not an Ed25519 public key|not a PEM public key"):
        verify_bundle(signed, b"-----BEGIN PUBLIC KEY-----\nAAAA\n-----END PUBLIC KEY-----\n")


def test_writer_refuses_bad_input():
    m = _manifest()
    for bad in (-1, 2**32, 1.5, True):
        with pytest.raises(EmitError, match="table_version"):
            bundle_bytes([m], table_version=bad)
    with pytest.raises(EmitError, match="at least one table"):
        bundle_bytes([], table_version=1)
    other = copy.deepcopy(m)
    other["spec"]["appliance"]["name"] = "a second griddle"
    other["table"]["name"] = "second_patty"
    with pytest.raises(EmitError, match="one appliance model"):
        bundle_bytes([m, other], table_version=1)
    with pytest.raises(EmitError, match="same product id"):
        bundle_bytes([m, copy.deepcopy(m)], table_version=1)
    rsa_like = new_key_pair()[1]  # a public key is not a signing key
    with pytest.raises(EmitError, match="signing key"):
        bundle_bytes([m], table_version=1, private_key_pem=rsa_like)
    nameless = copy.deepcopy(m)
    del nameless["spec"]["appliance"]
    with pytest.raises(EmitError, match="spec.appliance.name"):
        bundle_bytes([nameless], table_version=1)


def test_new_key_pairs_sign_and_verify():
    private, public = new_key_pair()
    data = bundle_bytes([_manifest()], table_version=1, private_key_pem=private)
    assert verify_bundle(data, public).signed
    assert new_key_pair()[0] != private


def test_docs_carry_the_caution_and_every_status():
    from obvert.about import CAUTION

    docs = Path(__file__).resolve().parents[2] / "docs" / "bundle.md"
    text = docs.read_text(encoding="utf-8")
    flat = " ".join(line.lstrip("> ").strip() for line in text.splitlines())
    assert " ".join(CAUTION.split()) in " ".join(flat.split())
    for status in BundleStatus:
        assert f"| `{status.name}` | {int(status)} |" in text
