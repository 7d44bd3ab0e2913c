"""Quantities with units in spec files ("12 mm", "-18 degC", "450 W/(m^2*K)").

Parsing and conversion use pint. Offset temperature units are read as a number followed by
the unit, so "-18 degC" is a temperature, not a product.
"""

from __future__ import annotations

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
    "length": ("m", "a length such as '12 mm' or '0.5 in'"),
    "temperature": ("degC", "a temperature such as '-18 degC', '190 degC' or '375 degF'"),
    "temperature_difference": ("delta_degC", "a temperature difference such as '5.6 K'"),
    "time": ("s", "a time such as '1.5 s', '100 ms' or '1.7 min'"),
    "heat_transfer_coefficient": ("W/(m^2*K)", "a coefficient such as '450 W/(m^2*K)'"),
    "conductivity": ("W/(m*K)", "a conductivity such as '0.42 W/(m*K)'"),
    "density": ("kg/m^3", "a density such as '1030 kg/m^3'"),
    "specific_heat": ("J/(kg*K)", "a specific heat such as '3.5 kJ/(kg*K)'"),
    "specific_energy": ("J/kg", "an energy per mass such as '230 kJ/kg'"),
}


def quantity(raw: object, path: str, kind: str) -> float:
    """Convert a spec value with a unit to the SI number Obvert uses.

    Parameters
    ----------
    raw : object
        The TOML value: a string "<number> <unit>".
    path : str
        Dotted field path, for the error message.
    kind : str
        One of :data:`KINDS`.

    Returns
    -------
    float
        The value in the unit of ``KINDS[kind]`` (degC for temperatures).

    Raises
    ------
    SpecError
        The value is not a string with a number and a unit of the right dimension.
    """
    target, allowed = KINDS[kind]
    if not isinstance(raw, str):
        raise SpecError(path, raw, f"{allowed} (a string with a unit)")
    m = _NUMBER.match(raw)
    if m is None or not m.group(2):
        raise SpecError(path, raw, f"{allowed} (a number followed by a unit)")
    ureg = registry()
    unit = m.group(2).replace("°C", "degC").replace("°F", "degF").replace("°", "deg")
    if kind == "temperature_difference":
        unit = {"degC": "delta_degC", "degF": "delta_degF"}.get(unit, unit)
    try:
        q = ureg.Quantity(float(m.group(1)), unit)
        value = float(q.to(target).magnitude)
    except (pint.errors.PintError, AttributeError, TypeError, ValueError) as exc:
        raise SpecError(path, raw, f"{allowed} ({exc})") from None
    if not math.isfinite(value):
        raise SpecError(path, raw, f"{allowed} (finite)")
    return value
