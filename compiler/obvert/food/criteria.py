"""Food-safety criteria a cook must meet: what every point of the food must reach."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Requirement:
    """What the food must reach by removal.

    Attributes
    ----------
    log_reduction : float
        Log reduction every point must reach, log10 units.
    min_temp_c : float | None
        Temperature every point must be at or above at removal, degC (None: no such rule).
    rest_s : float
        Carry-over time after removal credited to lethality, s (0: no credit).
    """

    log_reduction: float
    min_temp_c: float | None = None
    rest_s: float = 0.0
