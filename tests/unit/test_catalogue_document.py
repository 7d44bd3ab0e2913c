"""The catalogue document ``<name>.json``: written canonically, read back to the manifests.

Outside references: the JSON grammar (RFC 8259) through Python's ``json`` module, SHA-256
(FIPS 180-4) through ``hashlib`` for the recorded bundle digest. The products are the real
tables in tests/golden/input (built by the real pipeline from tests/cli/small_spec.toml and
tests/cli/small_slider_spec.toml), so no table is compiled here.
"""

from __future__ import annotations

import copy
import hashlib
import json
from pathlib import Path

import pytest

import obvert
from obvert.about import CAUTION
from obvert.emitter import EmitError
from obvert.firmware import canonical_json
from obvert.firmware.bundle import name_id, parse_bundle
from obvert.firmware.catalogue import (
    CATALOGUE_FORMAT_VERSION,
    CatalogueError,
    loads_catalogue,
)

INPUT = Path(__file__).resolve().parents[1] / "golden" / "input"


def _manifests() -> list[dict]:
    return [
        json.loads((INPUT / f"{name}.json").read_text(encoding="utf-8"))
        for name in ("test_patty", "test_slider")
    ]


def _files(**kw) -> dict[str, bytes]:
    return obvert.emit_catalogue("test_menu", _manifests(), table_version=4, **kw)


def test_document_reads_back_to_every_products_manifest():
    files = _files()
    data = files["test_menu.json"]
    doc = json.loads(data)
    assert data == canonical_json(doc)  # sorted keys, fixed float format, one newline
    assert doc["catalogue_format_version"] == CATALOGUE_FORMAT_VERSION == 1
    assert doc["caution"] == CAUTION
    assert doc["appliance"] == {"name": "test griddle", "model_id": name_id("test griddle")}
    assert doc["tick_s"] == 0.1 and doc["table_version"] == 4
    assert doc["flash_budget_bytes"] == 65536  # the c99_fixed target's flash_budget_bytes
    bundle = files["test_menu.bundle"]
    assert doc["bundle"] == {
        "bytes": len(bundle),
        "sha256": hashlib.sha256(bundle).hexdigest(),
    }
    ids = [p["product_id"] for p in doc["products"]]
    assert ids == sorted(ids) == sorted(name_id(n) for n in ("test_patty", "test_slider"))
    assert ids == [p.product_id for p in parse_bundle(bundle).products]
    cat = loads_catalogue(data)
    by_table = {m["table"]["name"]: m for m in _manifests()}
    assert [m["table"]["name"] for m in cat.manifests] == [p["table"] for p in doc["products"]]
    for m in cat.manifests:
        # each product exactly as the json target writes it
        original = by_table[m["table"]["name"]]
        assert canonical_json(m) == canonical_json(original)
        assert obvert.emit(m, ["json"])[f"{m['table']['name']}.json"] == canonical_json(original)
    assert cat.manifest("test_slider") == by_table["test_slider"]
    assert (cat.name, cat.appliance, cat.table_version) == ("test_menu", "test griddle", 4)
    with pytest.raises(KeyError):
        cat.manifest("no_such_table")


def test_same_inputs_same_bytes_whatever_the_order():
    a = _files()
    b = obvert.emit_catalogue("test_menu", _manifests()[::-1], table_version=4)
    assert a == b


def _changed(change) -> bytes:
    doc = json.loads(_files()["test_menu.json"])
    change(doc)
    return json.dumps(doc).encode()


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (lambda d: d.update(catalogue_format_version=2), "catalogue_format_version = 2"),
        (lambda d: d.pop("caution"), "missing ['caution']"),
        (lambda d: d.update(extra=1), "unknown ['extra']"),
        (lambda d: d["products"].reverse(), "strictly ascending product id"),
        (lambda d: d["products"][0].update(product_id=7), "products[0]: table"),
        (lambda d: d["products"][1]["manifest"].pop("nodes"), "products[1].manifest"),
        (lambda d: d["appliance"].update(model_id=1), "field appliance"),
        (lambda d: d.update(tick_s=0.2), "expected the catalogue's"),
        (lambda d: d.update(products=[]), "at least one product"),
    ],
    ids=["version", "missing", "unknown", "order", "id", "manifest", "model", "tick", "empty"],
)
def test_a_changed_document_is_refused_naming_the_field(change, message):
    with pytest.raises(CatalogueError, match=None) as info:
        loads_catalogue(_changed(change))
    assert message in str(info.value)


def test_not_json_is_refused():
    with pytest.raises(CatalogueError, match="not a JSON document"):
        loads_catalogue(b"{")
    with pytest.raises(CatalogueError, match="expected an object"):
        loads_catalogue(b"[]")


def test_budget_too_small_is_refused_before_any_file():
    size = len(_files()["test_menu.bundle"])
    assert _files(flash_budget_bytes=size)["test_menu.bundle"]  # exactly the size: fits
    with pytest.raises(EmitError, match=f"needs {size} bytes .* allows {size - 1} bytes"):
        _files(flash_budget_bytes=size - 1)
    for bad in (0, -5, 2**32, True, 1.5):
        with pytest.raises(EmitError, match="flash budget"):
            _files(flash_budget_bytes=bad)


def test_mixed_appliances_are_refused():
    a, b = _manifests()
    b = copy.deepcopy(b)
    b["spec"]["appliance"]["name"] = "another griddle"
    with pytest.raises(EmitError, match="one appliance model"):
        obvert.emit_catalogue("test_menu", [a, b], table_version=1)
