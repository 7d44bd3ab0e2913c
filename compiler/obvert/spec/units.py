"""Quantities with units in spec files ("12 mm", "-18 degC", "450 W/(m^2*K)").

Parsing and conversion use pint. Offset temperature units are read as a number followed by
the unit, so "-18 degC" is a temperature, not a product.
"""

from __future__ import annotations

import json
import math
import re
from functools import lru_cache

import pint

from obvert.spec.errors import SpecError

_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


@lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """Return the shared unit registry (degC and degF are offset units)."""
    return pint.UnitRegistry(autoconvert_offset_to_baseunit=False)


#: What each kind of quantity converts to (the SI unit used inside Obvert).
KINDS: dict[str, tuple[str, str]] = {
    "length": ("m", 'a length such as "12 mm" or "0.5 in"'),
    "temperature": ("degC", 'a temperature such as "-18 degC", "190 degC" or "375 degF"'),
    "temperature_difference": ("delta_degC", 'a temperature difference such as "5.6 K"'),
    "time": ("s", 'a time such as "1.5 s", "100 ms" or "1.7 min"'),
    "heat_transfer_coefficient": ("W/(m^2*K)", 'a coefficient such as "450 W/(m^2*K)"'),
    "conductivity": ("W/(m*K)", 'a conductivity such as "0.42 W/(m*K)"'),
    "density": ("kg/m^3", 'a density such as "1030 kg/m^3"'),
    "specific_heat": ("J/(kg*K)", 'a specific heat such as "3.5 kJ/(kg*K)"'),
    "specific_energy": ("J/kg", 'an energy per mass such as "230 kJ/kg"'),
}


_UNIT_TEXT = re.compile(r"^[A-Za-z0-9_^*/() .\u00b0\u00b5\u03bc-]{1,40}$")


def to_si(number: float, unit: str, kind: str) -> float:
    """``number`` in ``unit`` converted to the SI unit of ``kind`` (no checks; trusted input).

    Used for the ranges of :mod:`obvert.spec.keys`, which are written in the user's units.
    """
    if kind == "temperature_difference":
        unit = {"degC": "delta_degC", "degF": "delta_degF"}.get(unit, unit)
    return float(registry().Quantity(number, unit).to(KINDS[kind][0]).magnitude)


def from_si(value: float, unit: str, kind: str) -> float:
    """``value`` in the SI unit of ``kind`` converted to ``unit`` (the inverse of to_si)."""
    if kind == "property":
        return value
    if kind == "temperature_difference":
        unit = {"degC": "delta_degC", "degF": "delta_degF"}.get(unit, unit)
    return float(registry().Quantity(value, KINDS[kind][0]).to(unit).magnitude)


def quantity(raw: object, path: str, kind: str, allowed: str | None = None) -> float:
    """Convert a spec value with a unit to the SI number Obvert uses.

    Parameters
    ----------
    raw : object
        The TOML value: a string "<number> <unit>".
    path : str
        Dotted field path, for the error message.
    kind : str
        One of :data:`KINDS`.
    allowed : str, optional
        What the field accepts, for the error message (default: the kind's description).

    Returns
    -------
    float
        The value in the unit of ``KINDS[kind]`` (degC for temperatures), finite.

    Raises
    ------
    SpecError
        The value is not a string with a finite number and a unit of the right dimension.
    """
    target, example = KINDS[kind]
    allowed = allowed or example
    if not isinstance(raw, str):
        what = "a number" if isinstance(raw, int | float) and not isinstance(raw, bool) else "not"
        why = "a number without a unit" if what == "a number" else "not a text with a unit"
        raise SpecError(path, raw, f"{allowed} ({why}: write it in quotes with its unit)")
    m = _NUMBER.match(raw)
    if m is None or not m.group(2):
        raise SpecError(path, raw, f"{allowed} (a number followed by a unit)")
    unit = m.group(2).replace("\u00b0C", "degC").replace("\u00b0F", "degF")
    unit = unit.replace("\u00b0", "deg")
    if not _UNIT_TEXT.match(unit):
        raise SpecError(path, raw, f"{allowed} ({json.dumps(unit)} is not a unit)")
    if kind == "temperature_difference":
        unit = {"degC": "delta_degC", "degF": "delta_degF"}.get(unit, unit)
    number = float(m.group(1))
    if not math.isfinite(number):
        raise SpecError(path, raw, f"{allowed} (a finite number)")
    try:
        q = registry().Quantity(number, unit)
        value = float(q.to(target).magnitude)
    except pint.errors.DimensionalityError:
        dim = _dimension(unit)
        raise SpecError(path, raw, f"{allowed} ({json.dumps(unit)} is {dim})") from None
    except Exception:  # noqa: BLE001 - pint's parser raises many types on odd unit text
        raise SpecError(path, raw, f"{allowed} ({json.dumps(unit)} is not a known unit)") from None
    if not math.isfinite(value):
        raise SpecError(path, raw, f"{allowed} (a finite number)")
    return value


def _dimension(unit: str) -> str:
    """A short phrase naming the dimension of ``unit`` (e.g. "a length")."""
    try:
        dim = registry().Quantity(1.0, unit).dimensionality
    except Exception:  # noqa: BLE001 - only for the message
        return "not a unit of this kind"
    for kind, (target, _example) in KINDS.items():
        same = registry().Quantity(1.0, target).dimensionality == dim
        if kind != "temperature_difference" and same:
            return f"a unit of {kind.replace('_', ' ')}"
    return f"of dimension {dim}" if str(dim) != "dimensionless" else "dimensionless"
