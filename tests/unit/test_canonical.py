"""Canonical JSON: deterministic bytes, valid JSON, exact round trip, clear refusals.

Outside references: RFC 8259 "The JavaScript Object Notation (JSON) Data Interchange
Format" (IETF, T. Bray, 2017), section 6 (number grammar) and section 8.1 (UTF-8); the
Python standard library's json parser (a general-purpose reference implementation);
FIPS 180-4 "Secure Hash Standard" (NIST, 2015) through hashlib for SHA-256.
"""

from __future__ import annotations

import hashlib
import json
import math
import re

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from obvert.firmware import CanonicalError, canonical_json, canonical_sha256

# RFC 8259 section 6: number = [ minus ] int [ frac ] [ exp ]
RFC8259_NUMBER = re.compile(r"-?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?\Z")

finite_floats = st.floats(allow_nan=False, allow_infinity=False)
scalars = st.none() | st.booleans() | st.integers(-(2**70), 2**70) | finite_floats | st.text()
trees = st.recursive(
    scalars,
    lambda children: (
        st.lists(children, max_size=4) | st.dictionaries(st.text(max_size=6), children, max_size=4)
    ),
    max_leaves=20,
)


def _reorder(obj, reverse: bool):
    """Same tree with every dict rebuilt in reversed or sorted key insertion order."""
    if isinstance(obj, dict):
        keys = sorted(obj, reverse=reverse)
        return {k: _reorder(obj[k], reverse) for k in keys}
    if isinstance(obj, list):
        return [_reorder(v, reverse) for v in obj]
    return obj


@settings(max_examples=200, deadline=None)
@given(trees)
def test_round_trip_is_exact_and_bytes_are_stable(tree):
    data = canonical_json(tree)
    assert data.endswith(b"\n") and not data.endswith(b"\n\n")
    assert data == canonical_json(tree)
    # RFC 8259 section 8.1 / Python json: parses back to the same tree, floats bit for bit.
    assert json.loads(data) == tree
    data.decode("ascii")  # ensure_ascii: plain ASCII whatever the strings hold


@settings(max_examples=200, deadline=None)
@given(st.dictionaries(st.text(max_size=8), trees, max_size=6))
def test_key_insertion_order_does_not_matter(tree):
    assert canonical_json(_reorder(tree, True)) == canonical_json(_reorder(tree, False))


@settings(max_examples=300, deadline=None)
@given(finite_floats)
def test_floats_are_shortest_round_trip_and_rfc8259_numbers(x):
    text = canonical_json(x).decode().strip()
    assert RFC8259_NUMBER.match(text), text
    assert float(text) == x and math.copysign(1.0, float(text)) == math.copysign(1.0, x)
    assert text == repr(x)


def test_fixed_layout_of_a_small_tree():
    data = canonical_json({"b": [1, 2.5, None], "a": {"z": True, "y": "x"}, "c": 7.0})
    assert data == (
        b'{\n  "a": {\n    "y": "x",\n    "z": true\n  },\n  "b": [\n    1,\n    2.5,\n'
        b'    null\n  ],\n  "c": 7.0\n}\n'
    )


def test_tuple_is_written_as_list():
    assert canonical_json({"a": (1, 2)}) == canonical_json({"a": [1, 2]})


@pytest.mark.parametrize("bad", [math.nan, math.inf, -math.inf])
def test_non_finite_float_is_refused_with_its_path(bad):
    with pytest.raises(CanonicalError, match=r"\$\.nodes\[1\]\.cook_time_s"):
        canonical_json({"nodes": [{}, {"cook_time_s": bad}]})


@pytest.mark.parametrize(
    ("value", "pattern"),
    [
        ({1: "a"}, r"key 1 of type int"),
        ({"a": np.float64(1.5)}, r"\$\.a .* float64"),
        ({"a": np.int64(3)}, r"\$\.a .* int64"),
        ({"a": {1, 2}}, r"\$\.a .* set"),
        ({"a": b"x"}, r"\$\.a .* bytes"),
    ],
)
def test_other_types_are_refused(value, pattern):
    with pytest.raises(CanonicalError, match=pattern):
        canonical_json(value)


def test_sha256_is_of_the_canonical_bytes():
    tree = {"b": 1, "a": [0.1, "x"]}
    # FIPS 180-4 SHA-256 via hashlib; a known answer: SHA-256("abc")
    assert hashlib.sha256(b"abc").hexdigest().startswith("ba7816bf")
    assert canonical_sha256(tree) == hashlib.sha256(canonical_json(tree)).hexdigest()
    assert canonical_sha256({"a": [0.1, "x"], "b": 1}) == canonical_sha256(tree)
