"""The ``[tolerances]`` section of a spec (see docs/certification.md)."""

from __future__ import annotations

from typing import TYPE_CHECKING

from obvert.spec.errors import SpecError
from obvert.spec.model import FoodSpec, ToleranceSpec

if TYPE_CHECKING:
    from obvert.spec.section import Section


def tolerances_section(sec: Section | None, food: FoodSpec) -> ToleranceSpec:
    """The ``[tolerances]`` section (absent: every tolerance zero)."""
    if sec is None:
        return ToleranceSpec()

    def diff(key: str, kind: str, hi: float, unit: str) -> float:
        v = sec.bounded(key, kind, 0.0, hi, unit, None)
        return 0.0 if v is None else float(v)

    offset = diff("plate_offset", "temperature_difference", 60.0, "K")
    droop = diff("plate_droop", "temperature_difference", 60.0, "K")
    rec = sec.bounded("plate_recovery", "time", 0.1, 600.0, "s", None)
    recovery = 30.0 if rec is None else float(rec)
    if rec is not None and droop == 0.0:
        raise SpecError(
            sec._p("plate_recovery"), sec.raw("plate_recovery"), "only with plate_droop > 0"
        )
    contact = sec.number("contact_low", 0.0, 0.5, 0.0)
    thick = diff("thickness_error", "length", 0.005, "m")
    temp = diff("start_temp_error", "temperature_difference", 10.0, "K")
    fat = _fat_range(sec, food)
    sec.done()
    return ToleranceSpec(offset, droop, recovery, contact, thick, temp, fat)


def _fat_range(sec: Section, food: FoodSpec) -> tuple[float, float] | None:
    raw = sec.raw("fat_fraction", None)
    if raw is None:
        return None
    path = sec._p("fat_fraction")
    ok = isinstance(raw, list) and len(raw) == 2
    ok = ok and all(isinstance(v, int | float) and not isinstance(v, bool) for v in raw)
    if not ok or not 0.0 <= raw[0] <= raw[1] < 0.9:
        raise SpecError(path, raw, "[low, high] mass fractions with 0 <= low <= high < 0.9")
    if food.composition is None:
        raise SpecError(path, raw, "a fat range only for a food given by [food.composition]")
    fat = food.composition.fat
    if not raw[0] <= fat <= raw[1]:
        raise SpecError(path, raw, f"a range that holds the nominal fat fraction {fat:g}")
    return (float(raw[0]), float(raw[1]))
