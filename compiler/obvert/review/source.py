"""Reading what the review commands look at: a JSON table and the spec it was built from.

A manifest holds its spec in SI units (``manifest["spec"]``) with the sha256 of its canonical
JSON (``spec_hash``). :func:`spec_of_manifest` rebuilds the :class:`~obvert.spec.Spec` from
that dict and refuses the result unless it hashes to the same ``spec_hash``, so a review
never runs on a spec that differs from the one the table was certified under.
"""

from __future__ import annotations

import dataclasses
import json
import re
import types
import typing
from pathlib import Path
from typing import Any

from obvert.firmware import ManifestError, canonical_sha256, check_manifest
from obvert.spec import Spec
from obvert.spec.units import quantity

_SHORT_TEMP = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*([CF])\s*$")


class ReviewError(ValueError):
    """A file or value given to a review command cannot be used (the message says why)."""


def read_manifest(path: Path) -> dict[str, Any]:
    """Read and check a JSON table.

    Parameters
    ----------
    path : Path
        The canonical JSON manifest written by ``obvert build --target json``.

    Returns
    -------
    dict
        The manifest.

    Raises
    ------
    ReviewError
        The file cannot be read, is not JSON, or is not a valid table (message names the file).
    """
    try:
        data = json.loads(Path(path).read_text("utf-8"))
    except OSError as exc:
        raise ReviewError(f"{path}: cannot read the file ({exc.strerror})") from None
    except UnicodeDecodeError as exc:
        raise ReviewError(f"{path}: not UTF-8 text (byte {exc.start})") from None
    except json.JSONDecodeError as exc:
        raise ReviewError(f"{path}: not JSON ({exc.msg} at line {exc.lineno})") from None
    if not isinstance(data, dict):
        raise ReviewError(f"{path}: not a JSON table (expected an object at the top level)")
    try:
        check_manifest(data)
    except ManifestError as exc:
        raise ReviewError(f"{path}: not a valid table ({exc})") from None
    except (KeyError, TypeError, ValueError) as exc:
        raise ReviewError(f"{path}: not a valid table ({exc!r})") from None
    return data


def _convert(value: Any, hint: Any) -> Any:
    """``value`` (JSON) converted to the type ``hint`` of a spec dataclass field."""
    if dataclasses.is_dataclass(hint):
        return _rebuild(hint, value)
    origin = typing.get_origin(hint)
    if origin in (typing.Union, types.UnionType):
        if value is None:
            return None
        errors = []
        for arg in typing.get_args(hint):
            if arg is type(None):
                continue
            try:
                return _convert(value, arg)
            except (TypeError, ValueError) as exc:
                errors.append(str(exc))
        raise TypeError(f"{value!r} fits none of {hint} ({'; '.join(errors)})")
    if origin is tuple:
        if not isinstance(value, list):
            raise TypeError(f"{value!r}: expected a list")
        args = typing.get_args(hint)
        if len(args) == 2 and args[1] is Ellipsis:
            return tuple(_convert(v, args[0]) for v in value)
        if len(args) != len(value):
            raise TypeError(f"{value!r}: expected {len(args)} items")
        return tuple(_convert(v, a) for v, a in zip(value, args, strict=True))
    if hint is float:
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise TypeError(f"{value!r}: expected a number")
        return float(value)
    if hint is int or hint is str or hint is bool:
        if not isinstance(value, hint) or (hint is int and isinstance(value, bool)):
            raise TypeError(f"{value!r}: expected {hint.__name__}")
        return value
    raise TypeError(f"unsupported field type {hint!r}")


def _rebuild(cls: Any, data: Any) -> Any:
    """An instance of dataclass ``cls`` from its ``asdict`` form."""
    if not isinstance(data, dict):
        raise TypeError(f"{cls.__name__}: expected an object, got {data!r}")
    hints = typing.get_type_hints(cls)
    kwargs = {}
    for f in dataclasses.fields(cls):
        if f.name in data:
            kwargs[f.name] = _convert(data[f.name], hints[f.name])
    return cls(**kwargs)


def spec_of_manifest(manifest: dict[str, Any], source: str = "<table>") -> Spec:
    """The spec a table was built from, rebuilt from ``manifest["spec"]``.

    Parameters
    ----------
    manifest : dict
        A checked manifest.
    source : str
        Names the table in errors.

    Returns
    -------
    Spec
        A spec whose canonical JSON hashes to ``manifest["spec_hash"]``.

    Raises
    ------
    ReviewError
        The spec cannot be rebuilt, or the rebuilt spec does not hash to ``spec_hash``
        (then give the spec file with ``--spec``).
    """
    try:
        spec = _rebuild(Spec, manifest["spec"])
    except (KeyError, TypeError, ValueError) as exc:
        raise ReviewError(
            f"{source}: the spec inside the table cannot be read back ({exc}); "
            "give the spec file with --spec"
        ) from None
    if canonical_sha256(spec.to_dict()) != manifest.get("spec_hash"):
        raise ReviewError(
            f"{source}: the spec read back from the table does not match its spec_hash; "
            "give the spec file with --spec"
        )
    return spec


def check_spec_matches(spec: Spec, manifest: dict[str, Any], source: str) -> None:
    """Raise ReviewError unless ``spec`` is the spec ``manifest`` was built from."""
    if canonical_sha256(spec.to_dict()) != manifest.get("spec_hash"):
        raise ReviewError(
            f"{source}: the table was not built from this spec (its spec_hash "
            f"{str(manifest.get('spec_hash'))[:12]}... differs from the spec's)"
        )


def measured_point(thickness: str, start: str) -> tuple[float, float]:
    """A measurement typed by a user, in SI: (thickness m, start temperature degC).

    Parameters
    ----------
    thickness : str
        A length with its unit, e.g. ``"12 mm"`` or ``"12mm"``.
    start : str
        A temperature with its unit, e.g. ``"-18 degC"`` or ``"-18C"``.

    Raises
    ------
    ReviewError
        A value that is not a quantity of the right kind (message names the option).
    """
    from obvert.spec import SpecError

    short = _SHORT_TEMP.match(start)  # "-18C" / "40 F": a bare C or F after the number
    start_text = f"{short.group(1)} deg{short.group(2)}" if short else start
    try:
        x = quantity(thickness, "--thickness", "length")
        t = quantity(start_text, "--start", "temperature")
    except SpecError as exc:
        raise ReviewError(str(exc)) from None
    return x, t
