r"""Canonical JSON serialisation of a manifest.

The canonical form is the one byte string every output of a table derives from, and the
input of the manifest hash. Rules:

* objects have their keys sorted (code-point order) and indented by two spaces;
* keys must be strings; values must be ``None``, ``bool``, ``int``, ``float``, ``str``,
  ``list``, ``tuple`` (written as a list) or ``dict``;
* floats are written as Python's shortest round-trip representation (``float.__repr__``,
  e.g. ``0.1``, ``7.0``, ``1e-05``), so an integral float stays distinct from an int;
  NaN and infinities are refused;
* strings are escaped to ASCII (``\uXXXX``), so the bytes do not depend on an encoder;
* the text ends with one newline and is encoded as UTF-8 (plain ASCII in practice).
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Mapping
from typing import Any

__all__ = ["CanonicalError", "canonical_json", "canonical_sha256"]


class CanonicalError(ValueError):
    """A value cannot be written canonically (the message names its path)."""


def canonical_json(obj: Any) -> bytes:
    """Serialise ``obj`` to canonical JSON bytes.

    Parameters
    ----------
    obj : Any
        A tree of dicts (string keys), lists, tuples, strings, ints, finite floats,
        booleans and ``None``.

    Returns
    -------
    bytes
        Canonical JSON text ending in a newline, UTF-8 encoded.

    Raises
    ------
    CanonicalError
        If the tree holds a non-finite float, a non-string key or a value of another type;
        the message names the path of the offending value (``$.nodes[3].cook_time_s``).
    """
    _check(obj, "$")
    text = json.dumps(
        obj,
        sort_keys=True,
        indent=2,
        separators=(",", ": "),
        ensure_ascii=True,
        allow_nan=False,
    )
    return (text + "\n").encode("utf-8")


def canonical_sha256(obj: Any) -> str:
    """SHA-256 of :func:`canonical_json` of ``obj``, as 64 lower-case hex digits."""
    return hashlib.sha256(canonical_json(obj)).hexdigest()


def _check(value: Any, path: str) -> None:
    """Raise :class:`CanonicalError` unless ``value`` is a canonical JSON tree."""
    if value is None or isinstance(value, (bool, str)):
        return
    if isinstance(value, int):
        _check_exact_type(value, int, path)
        return
    if isinstance(value, float):
        _check_exact_type(value, float, path)
        if not math.isfinite(value):
            raise CanonicalError(
                f"{path} = {value!r}: only finite numbers are allowed in canonical JSON"
            )
        return
    if isinstance(value, Mapping):
        _check_mapping(value, path)
        return
    if isinstance(value, (list, tuple)):
        for index, item in enumerate(value):
            _check(item, f"{path}[{index}]")
        return
    raise CanonicalError(
        f"{path} = {value!r} has type {type(value).__name__}; allowed: dict, list, tuple, "
        "str, int, float, bool, None"
    )


def _check_exact_type(value: Any, kind: type, path: str) -> None:
    """Refuse subclasses of int/float (numpy scalars, enums) whose repr is not JSON."""
    if type(value) is not kind:
        raise CanonicalError(
            f"{path} = {value!r} has type {type(value).__name__}; convert it to a plain "
            f"Python {kind.__name__} first"
        )


def _check_mapping(value: Mapping[Any, Any], path: str) -> None:
    """Check the keys and values of a mapping."""
    if not isinstance(value, dict):
        raise CanonicalError(f"{path} has type {type(value).__name__}; allowed mapping type: dict")
    for key, item in value.items():
        if not isinstance(key, str):
            raise CanonicalError(
                f"{path} has key {key!r} of type {type(key).__name__}; keys must be str"
            )
        _check(item, f"{path}.{key}")
