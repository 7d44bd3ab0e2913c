"""A TOML table being read: keys used are tracked, so that leftovers can be refused."""

from __future__ import annotations

import difflib
import math
from typing import Any

from obvert.spec.errors import SpecError
from obvert.spec.units import quantity


class Section:
    """A TOML table being read: tracks the keys used so leftovers can be refused."""

    def __init__(self, data: object, path: str) -> None:
        if not isinstance(data, dict):
            raise SpecError(path, data, "a table")
        self.data: dict[str, Any] = data
        self.path = path
        self.used: set[str] = set()

    def _p(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def has(self, key: str) -> bool:
        """Whether the table holds ``key``."""
        return key in self.data

    def raw(self, key: str, default: object = ...) -> Any:
        """The value of ``key`` as given (marked used), or ``default`` (none: an error)."""
        self.used.add(key)
        if key not in self.data:
            if default is ...:
                near = self._near(key, set(self.data) - self.used)
                hint = f"; the spec has {near!r} instead: a misspelling?" if near else ""
                raise SpecError(self._p(key), None, f"a value: the field is required{hint}")
            return default
        return self.data[key]

    @staticmethod
    def _near(word: str, candidates: set[str]) -> str | None:
        match = difflib.get_close_matches(word, sorted(candidates), n=1, cutoff=0.6)
        return match[0] if match else None

    def section(self, key: str, required: bool = True) -> Section | None:
        """The sub-table ``key`` (None when optional and absent)."""
        if not required and key not in self.data:
            self.used.add(key)
            return None
        return Section(self.raw(key), self._p(key))

    def qty(self, key: str, kind: str, default: object = ...) -> float | None:
        """A quantity with a unit (``"12 mm"``) in SI units of ``kind``, or None."""
        value = self.raw(key, default)
        if value is None:
            return None
        return quantity(value, self._p(key), kind)

    def bounded(
        self, key: str, kind: str, lo: float, hi: float, unit: str, default: object = ...
    ) -> Any:
        """A quantity with a unit in ``[lo, hi]`` SI units of ``kind`` (None if defaulted so).

        An error echoes the value as the spec wrote it, and the allowed range in ``unit``.
        """
        value = self.raw(key, default)
        if value is None:
            return None
        si = quantity(value, self._p(key), kind)
        if si is None or not math.isfinite(si) or not lo <= si <= hi:
            raise SpecError(self._p(key), value, f"{lo:g} to {hi:g} {unit}")
        return si

    def number(self, key: str, lo: float, hi: float, default: object = ...) -> float:
        """A bare number in ``[lo, hi]``."""
        value = self.raw(key, default)
        ok = isinstance(value, int | float) and not isinstance(value, bool)
        if not ok or not math.isfinite(value) or not lo <= value <= hi:
            raise SpecError(self._p(key), value, f"a number from {lo:g} to {hi:g}")
        return float(value)

    def integer(self, key: str, lo: int, hi: int, default: object = ...) -> int:
        """An integer in ``[lo, hi]``."""
        value = self.raw(key, default)
        if not isinstance(value, int) or isinstance(value, bool) or not lo <= value <= hi:
            raise SpecError(self._p(key), value, f"an integer from {lo} to {hi}")
        return value

    def text(self, key: str, default: object = ...) -> str:
        """A non-empty string."""
        value = self.raw(key, default)
        if not isinstance(value, str) or not value.strip():
            raise SpecError(self._p(key), value, "a non-empty string")
        return value

    def done(self) -> None:
        """Refuse every key of the table that was not read."""
        extra = sorted(set(self.data) - self.used)
        if extra:
            near = self._near(extra[0], self.used)
            hint = f" (nearest: {near!r})" if near else ""
            raise SpecError(
                self._p(extra[0]),
                self.data[extra[0]],
                f"no such key here{hint}; known keys: {', '.join(sorted(self.used))}",
            )
