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
    offset = sec.get("plate_offset")
    droop = sec.get("plate_droop")
    rec = sec.get("plate_recovery")
    if rec is not None and droop == 0.0:
        raise SpecError(
            sec._p("plate_recovery"), sec.raw("plate_recovery"), "only with plate_droop above 0 K"
        )
    recovery = ToleranceSpec().plate_recovery_s if rec is None else float(rec)
    contact = sec.get("contact_low")
    thick = sec.get("thickness_error")
    temp = sec.get("start_temp_error")
    fat = _fat_range(sec, food)
    sec.done()
    return ToleranceSpec(offset, droop, recovery, contact, thick, temp, fat)


def _fat_range(sec: Section, food: FoodSpec) -> tuple[float, float] | None:
    values = sec.values("fat_fraction")
    if values is None:
        return None
    path = sec._p("fat_fraction")
    raw = sec.data["fat_fraction"]
    low, high = float(values[0]), float(values[1])
    if low > high:
        raise SpecError(path, raw, "[low, high] with low at most high")
    if food.composition is None:
        raise SpecError(path, raw, "only for a food given by [food.composition]")
    fat = food.composition.fat
    if not low <= fat <= high:
        raise SpecError(path, raw, f"a range that holds the nominal fat fraction {fat:g}")
    return (low, high)
