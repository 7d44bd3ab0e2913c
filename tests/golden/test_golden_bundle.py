"""Bundles, catalogues and the C bundle loader equal their reviewed golden files byte for byte.

The bundle is the real manifest (tests/golden/input, built by the real pipeline from
tests/cli/small_spec.toml) at table version 1, signed with the RFC 8032 section 7.1 test 1
key (a published test key, never a production key); a second golden bundle holds two
synthetic products unsigned. The catalogue of ``obvert build --catalogue`` is made by
``obvert.emit_catalogue`` from the products' manifests: its golden files come from the two
real manifests (test_patty and test_slider, the second built from
tests/cli/small_slider_spec.toml), signed with the same test key; tests/cli checks that the
command writes exactly what that function gives for the tables it built. Refresh only
deliberately: ``OBVERT_REFRESH_GOLDEN=1 python -m pytest tests/golden``.
"""

from __future__ import annotations

from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

from obvert.emitter import emit, load_target
from obvert.emitter.bundle import bundle_bytes
from obvert.firmware.bundle import name_id, verify_bundle

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


def test_build_catalogue_equals_golden_files(real_manifest, slider_manifest):
    """Every output of a catalogue of two real products: .h, .c, .bundle and .json."""
    import obvert
    from obvert.firmware.catalogue import loads_catalogue

    private, public = _test_key()
    files = obvert.emit_catalogue(
        "test_menu", [real_manifest, slider_manifest], table_version=1, private_key_pem=private
    )
    assert sorted(files) == ["test_menu.bundle", "test_menu.c", "test_menu.h", "test_menu.json"]
    assert len(verify_bundle(files["test_menu.bundle"], public).products) == 2
    cat = loads_catalogue(files["test_menu.json"])
    assert cat.manifests == tuple(
        sorted([real_manifest, slider_manifest], key=lambda m: name_id(m["table"]["name"]))
    )
    _compare(files, GOLDEN / "catalogue_build")
