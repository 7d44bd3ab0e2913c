"""The error raised for bad spec input."""

from __future__ import annotations


class SpecError(ValueError):
    """A spec field holds a value that is not allowed.

    Parameters
    ----------
    path : str
        Dotted path of the field, e.g. ``appliance.plate_temperature``.
    value : object
        The offending value as given.
    allowed : str
        What the field accepts.
    """

    def __init__(self, path: str, value: object, allowed: str) -> None:
        self.path, self.value, self.allowed = path, value, allowed
        super().__init__(f"{path} = {value!r}: allowed {allowed}")


def range_check(path: str, value: float, lo: float, hi: float, unit: str) -> float:
    """Return ``value`` if ``lo <= value <= hi``, else raise SpecError naming ``path``."""
    if not lo <= value <= hi:
        raise SpecError(path, value, f"{lo:g} to {hi:g} {unit}")
    return value
