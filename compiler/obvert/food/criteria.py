"""Food-safety criteria a cook must meet: what every point of the food must reach.

Food codes state the lethality of a cook as time at temperature at every point of the food
("68 degC for 17 s", "70 degC instantaneous"); organisms' log reductions come from D and z
values (:mod:`obvert.food.lethality`); a probe check at removal asks every point to be at or
above a temperature at that moment. A :class:`Requirement` holds any of these at once.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray


@dataclass(frozen=True)
class HoldRule:
    """One row of a time-at-temperature rule: every point at least ``temp_c`` for ``hold_s``.

    Attributes
    ----------
    temp_c : float
        Temperature every point must reach, degC.
    hold_s : float
        Time every point must spend at or above ``temp_c`` (accumulated over the cook), s;
        0 means the temperature need only be reached ("instantaneous").
    """

    temp_c: float
    hold_s: float

    def __post_init__(self) -> None:
        if not math.isfinite(self.temp_c):
            raise ValueError(f"HoldRule.temp_c = {self.temp_c!r}: expected a finite degC value")
        if not (math.isfinite(self.hold_s) and self.hold_s >= 0.0):
            raise ValueError(f"HoldRule.hold_s = {self.hold_s!r}: expected a number >= 0 s")


@dataclass(frozen=True)
class Requirement:
    """What the food must reach.

    Attributes
    ----------
    log_reduction : float
        Log reduction every point must reach, log10 units.
    min_temp_c : float | None
        Temperature every point must be at or above at removal, degC (None: no such rule).
    rest_s : float
        Carry-over time after removal credited to lethality and hold times, s (0: none).
    holds : tuple of HoldRule
        Time-at-temperature rows; when given, every point must meet one and the same row
        (as a food code's table of alternatives is read). Empty: no such rule.
    """

    log_reduction: float
    min_temp_c: float | None = None
    rest_s: float = 0.0
    holds: tuple[HoldRule, ...] = ()


def time_above_by_step(
    t_s: ArrayLike, temp_c: ArrayLike, threshold_c: float
) -> NDArray[np.float64]:
    """Time each point spends at or above ``threshold_c`` within each step of its history.

    Parameters
    ----------
    t_s : array_like, shape (n,)
        Times of the history, s, non-decreasing.
    temp_c : array_like, shape (n, m)
        Temperature of each of ``m`` points at each time, degC (one column per point of food).
    threshold_c : float
        The temperature, degC.

    Returns
    -------
    ndarray, shape (n - 1, m)
        Seconds at or above ``threshold_c`` in each step, exact for a history linear
        between samples.
    """
    t = np.asarray(t_s, dtype=float)
    y = np.asarray(temp_c, dtype=float) - threshold_c
    dt = np.diff(t)[:, None]
    a, b = y[:-1], y[1:]
    both = (a >= 0.0) & (b >= 0.0)
    cross = (a >= 0.0) != (b >= 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac_above = np.where(a >= 0.0, a / (a - b), b / (b - a))  # share of the step above
    part = np.where(both, 1.0, np.where(cross, np.nan_to_num(frac_above), 0.0))
    return part * dt


def time_at_or_above(t_s: ArrayLike, temp_c: ArrayLike, threshold_c: float) -> NDArray[np.float64]:
    """Time each point spends at or above ``threshold_c`` over its whole history.

    Parameters
    ----------
    t_s : array_like, shape (n,)
        Times, s.
    temp_c : array_like, shape (n, m)
        Temperature history of each point, degC.
    threshold_c : float
        The temperature, degC.

    Returns
    -------
    ndarray, shape (m,)
        Seconds at or above ``threshold_c`` (:func:`time_above_by_step` summed).
    """
    return np.sum(time_above_by_step(t_s, temp_c, threshold_c), axis=0)


def hold_margin_s(
    t_s: ArrayLike, temp_c: ArrayLike, holds: tuple[HoldRule, ...]
) -> tuple[float, HoldRule | None]:
    """How well the best row of a time-at-temperature rule is met by every point.

    Parameters
    ----------
    t_s : array_like, shape (n,)
        Times, s.
    temp_c : array_like, shape (n, m)
        Temperature history of every point (columns fixed to the food), degC.
    holds : tuple of HoldRule
        The rows; at least one.

    Returns
    -------
    margin_s : float
        For the best row, the smallest over the points of the time at or above its
        temperature minus its hold time, s; a point that never reaches the temperature
        counts as ``-inf``. Met when ``>= 0``.
    row : HoldRule or None
        The best row (None when no point history is given).
    """
    temps = np.asarray(temp_c, dtype=float)
    peak = temps.max(axis=0)
    best: tuple[float, HoldRule | None] = (-math.inf, None)
    for rule in holds:
        above = time_at_or_above(t_s, temps, rule.temp_c)
        spare = np.where(peak >= rule.temp_c, above - rule.hold_s, -np.inf)
        worst = float(spare.min())
        if best[1] is None or worst > best[0]:
            best = (worst, rule)
    return best


@dataclass(frozen=True)
class HoldPreset:
    """A published time-at-temperature table.

    Attributes
    ----------
    rows : tuple of HoldRule
        Its alternatives.
    source : str
        Where it was published.
    """

    rows: tuple[HoldRule, ...]
    source: str


#: Time-at-temperature tables of the food codes, by name.
HOLD_PRESETS: dict[str, HoldPreset] = {
    "food_code_2017_comminuted": HoldPreset(
        (
            HoldRule(63.0, 180.0),
            HoldRule(66.0, 60.0),
            HoldRule(68.0, 17.0),
            HoldRule(70.0, 0.0),
        ),
        "US FDA Food Code 2017, 3-401.11(A)(2), comminuted meat (table of alternatives)",
    ),
    "food_code_2013_comminuted": HoldPreset(
        (
            HoldRule(63.0, 180.0),
            HoldRule(66.0, 60.0),
            HoldRule(68.0, 15.0),
            HoldRule(70.0, 0.0),
        ),
        "US FDA Food Code 2013, 3-401.11(A)(2), comminuted meat (table of alternatives)",
    ),
    "food_code_2017_poultry": HoldPreset(
        (HoldRule(74.0, 0.0),),
        "US FDA Food Code 2017, 3-401.11(A)(3), poultry: 74 degC (165 degF) instantaneous",
    ),
}
