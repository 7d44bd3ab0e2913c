"""Bundles and the C bundle loader equal their reviewed golden files byte for byte.

The bundle is the real manifest (tests/golden/input, built by the real pipeline from
tests/cli/small_spec.toml) at table version 1, signed with the RFC 8032 section 7.1 test 1
key (a published test key, never a production key); a second golden bundle holds two
synthetic products unsigned. Refresh only deliberately: ``OBVERT_REFRESH_GOLDEN=1 python -m
pytest tests/golden``.
"""

from __future__ import annotations

from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from obvert.emitter import emit, load_target
from obvert.emitter.bundle import bundle_bytes
from obvert.firmware.bundle import verify_bundle

from .conftest import GOLDEN
from .test_golden import _compare

RFC8032_TEST1_SECRET = bytes.fromhex(
    "9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60"
)


def _test_key() -> tuple[bytes, bytes]:
    key = Ed25519PrivateKey.from_private_bytes(RFC8032_TEST1_SECRET)
    private = key.private_bytes(
        serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8, serialization.NoEncryption()
    )
    public = key.public_key().public_bytes(
        serialization.Encoding.PEM, serialization.PublicFormat.SubjectPublicKeyInfo
    )
    return private, public


def test_real_bundle_equals_golden_file(real_manifest):
    private, public = _test_key()
    data = bundle_bytes([real_manifest], table_version=1, private_key_pem=private)
    assert verify_bundle(data, public).table_version == 1
    _compare({"test_patty.bundle": data}, GOLDEN / "bundle")


def test_synthetic_catalogue_bundle_equals_golden_file(make_cells_manifest):
    products = [make_cells_manifest("synthetic_cells"), make_cells_manifest("synthetic_grill")]
    for m in products:
        m["spec"]["appliance"] = {"name": "Brinecliff line griddle"}
    data = bundle_bytes(products, table_version=7)
    assert len(verify_bundle(data, None, allow_unsigned=True).products) == 2
    _compare({"synthetic_catalogue.bundle": data}, GOLDEN / "bundle")


def test_bundle_loader_equals_golden_file(real_manifest):
    _compare(emit(real_manifest, load_target("c99_bundle_loader")), GOLDEN / "c99_bundle_loader")


def test_catalogue_equals_golden_files(make_cells_manifest):
    from obvert.emitter.catalogue import catalogue_files

    products = [make_cells_manifest("synthetic_cells"), make_cells_manifest("synthetic_grill")]
    for m in products:
        m["spec"]["appliance"] = {"name": "Brinecliff line griddle"}
    _compare(catalogue_files("brinecliff_menu", products, table_version=7), GOLDEN / "catalogue")
