"""A TOML table being read against the key table of :mod:`obvert.spec.keys`.

Unknown keys are refused as soon as the table is opened (naming the nearest known key);
every value is checked against its key's kind, range and choices; keys read are tracked so
that a known key the context does not use can be refused too.
"""

from __future__ import annotations

import difflib
import json
import math
from functools import cache
from typing import Any

from obvert.spec.errors import MISSING, SpecError
from obvert.spec.keys import KEYS, PLAIN_KINDS, REQUIRED, Key, keys_of
from obvert.spec.units import from_si, quantity, to_si

_NOUNS = {
    "length": "a length",
    "temperature": "a temperature",
    "temperature_difference": "a temperature difference",
    "time": "a time",
    "heat_transfer_coefficient": "a heat-transfer coefficient",
    "conductivity": "a conductivity",
    "density": "a density",
    "specific_heat": "a specific heat",
    "specific_energy": "an energy per mass",
    "property": "a value",
}

_UNSET = object()


def nearest(word: str, candidates: object) -> str | None:
    """The candidate closest to ``word`` (a likely misspelling), or None."""
    match = difflib.get_close_matches(str(word), sorted(map(str, candidates)), n=1, cutoff=0.6)
    return match[0] if match else None


def describe(key: Key) -> str:
    """What one value of ``key`` may be, as said after "allowed" in a message."""
    rng = key.range_text()
    if key.kind == "number":
        return f"a number {rng}".rstrip()
    if key.kind == "integer":
        return f"an integer {rng}".rstrip()
    if key.kind == "text":
        return (
            f"a non-empty text ({key.note})"
            if key.name == "name" and key.note
            else ("a non-empty text in quotes")
        )
    if key.kind == "choice":
        return "one of " + ", ".join(json.dumps(c) for c in key.choices)
    if key.kind == "section":
        return f"a table [{key.path}]"
    noun = _NOUNS.get(key.kind, "a value")
    example = key.example.strip("[]").split('", ')[0].rstrip('"') + '"'
    example = example if example.startswith('"') else '"' + example
    return f"{noun} {rng}, with its unit as in {example}"


@cache
def si_bounds(key: Key) -> tuple[float, float]:
    """The range of ``key`` in SI units (an absent side is infinite)."""
    lo = -math.inf if key.lo is None else key.lo
    hi = math.inf if key.hi is None else key.hi
    if key.kind in PLAIN_KINDS and key.kind != "property" or not key.unit:
        return (lo, hi)
    kind = key.kind
    if kind == "property":
        kind = {"W/(m*K)": "conductivity", "kg/m^3": "density"}.get(key.unit, "specific_heat")
    return tuple(x if math.isinf(x) else to_si(x, key.unit, kind) for x in (lo, hi))  # type: ignore[return-value]


def check_value(key: Key, value: object, path: str, kind: str | None = None) -> Any:
    """One value of ``key`` checked against its kind, range and choices.

    Parameters
    ----------
    key : Key
        The key (its kind, range and choices).
    value : object
        The value as parsed from TOML.
    path : str
        Dotted path of the value for messages (``grid.thickness[2]``).
    kind : str, optional
        Quantity kind to use instead of ``key.kind`` (for ``"property"`` keys).

    Returns
    -------
    object
        float in SI units for quantities and numbers, int, or str.

    Raises
    ------
    SpecError
        The value is of the wrong type, unit, range or choice.
    """
    allowed = describe(key)
    lo, hi = si_bounds(key)
    if key.kind == "text":
        if not isinstance(value, str) or not value.strip():
            raise SpecError(path, value, allowed)
        return value
    if key.kind == "choice":
        if not isinstance(value, str) or value not in key.choices:
            near = nearest(value, key.choices) if isinstance(value, str) else None
            hint = f" (nearest: {json.dumps(near)})" if near else ""
            raise SpecError(path, value, allowed + hint)
        return value
    if key.kind == "integer":
        if not isinstance(value, int) or isinstance(value, bool) or not lo <= value <= hi:
            raise SpecError(path, value, allowed)
        return value
    if key.kind == "number":
        ok = isinstance(value, int | float) and not isinstance(value, bool)
        if not ok or not math.isfinite(value) or not lo <= value <= hi:
            raise SpecError(path, value, allowed)
        return float(value)
    si = quantity(value, path, kind or key.kind, allowed)
    if not lo <= si <= hi:
        typed = str(value).strip()
        if key.unit and not typed.endswith(" " + key.unit):
            shown = from_si(si, key.unit, kind or key.kind)
            allowed += f" ({json.dumps(typed)} is {shown:.6g} {key.unit})"
        raise SpecError(path, value, allowed)
    return si


class Section:
    """A TOML table being read: refuses unknown keys at once and tracks the keys used.

    Parameters
    ----------
    data : object
        The parsed table.
    path : str
        Its dotted path (``""`` for the whole file).
    """

    def __init__(self, data: object, path: str) -> None:
        if not isinstance(data, dict):
            raise SpecError(path or "file", data, f"a table [{path}]" if path else "a table")
        self.data: dict[str, Any] = data
        self.path = path
        self.used: set[str] = set()
        known = [k.name for k in keys_of(path)]
        for name in data:
            if name not in known:
                near = nearest(name, known)
                hint = f" (did you mean {json.dumps(near)}?)" if near else ""
                if path:
                    allowed = f"a key of [{path}]{hint}: {', '.join(known)}"
                else:
                    allowed = f"a section of a spec{hint}: {', '.join(known)}"
                raise SpecError(self._p(name), data[name], allowed)

    def _p(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def key(self, name: str) -> Key:
        """The key ``name`` of this section in the key table."""
        return KEYS[(self.path, name)]

    def has(self, name: str) -> bool:
        """Whether the table holds ``name``."""
        return name in self.data

    def raw(self, name: str, default: object = _UNSET) -> Any:
        """The value of ``name`` as given (marked used), or its default.

        ``default`` overrides the key table's default; a required key that is absent is an
        error naming the field and what it takes.
        """
        key = self.key(name)
        self.used.add(name)
        if name in self.data:
            return self.data[name]
        default = key.default if default is _UNSET else default
        if default is REQUIRED or default is ...:
            allowed = describe(key) if key.count is None else list_text(key)
            raise SpecError(self._p(name), MISSING, f"{allowed} (the field is required)")
        return default

    def get(self, name: str, default: object = _UNSET) -> Any:
        """The checked value of ``name`` (SI units for quantities; None if absent and so).

        Parameters
        ----------
        name : str
            Key name in this section.
        default : object, optional
            Overrides the key table's default (as typed in TOML; ``...`` makes it required).
        """
        value = self.raw(name, default)
        if value is None:
            return None
        return check_value(self.key(name), value, self._p(name))

    def values(self, name: str) -> tuple[Any, ...] | None:
        """The checked list of ``name`` (a key with a ``count``), or None if absent and so."""
        key = self.key(name)
        raw = self.raw(name)
        if raw is None:
            return None
        raw = list(raw) if isinstance(raw, tuple) else raw  # a default from the key table
        path = self._p(name)
        lo, hi = key.count or (1, 1)
        if not isinstance(raw, list):
            raise SpecError(path, raw, list_text(key))
        if not lo <= len(raw) <= hi:
            raise SpecError(path, raw, f"{list_text(key)} ({len(raw)} given)")
        return tuple(check_value(key, v, f"{path}[{i}]") for i, v in enumerate(raw))

    def section(self, name: str) -> Section:
        """The sub-table ``name`` (an error when absent)."""
        return Section(self.raw(name, ...), self._p(name))

    def optional_section(self, name: str) -> Section | None:
        """The sub-table ``name``, or None when absent."""
        self.used.add(name)
        return None if name not in self.data else Section(self.data[name], self._p(name))

    def done(self) -> None:
        """Refuse every known key of the table that this context did not read."""
        extra = [k for k in self.data if k not in self.used]
        if extra:
            key = self.key(extra[0])
            why = key.note or "not with the other keys given"
            raise SpecError(self._p(extra[0]), self.data[extra[0]], f"this key {why}")


def list_text(key: Key) -> str:
    """What a list-valued key may be, as said after "allowed"."""
    lo, hi = key.count or (1, 1)
    n = f"{lo}" if lo == hi else f"{lo} to {hi}"
    return f"a list of {n} values, each {describe(key)}"
