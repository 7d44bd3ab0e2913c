"""Worst-case scenarios of a node under the spec's declared tolerances.

The firmware looks up a schedule by the *measured* thickness and start temperature; the
real food may be up to ``thickness_error`` thicker and ``start_temp_error`` colder, the
heated surfaces up to ``plate_offset`` below setpoint with a further ``plate_droop`` that
recovers after loading, and the contact coefficients up to ``contact_low`` below nominal.
Each of these moves only makes the cook slower (a colder start, a thicker slab, a colder
plate or a weaker contact never cooks faster: the comparison principle for the enthalpy
form of the heat equation, checked on the reference model in
tests/physics/test_monotonicity.py), so one corner of the tolerance box is the worst and
the plan and certification need only that corner. The fat fraction has no such order
(fat lowers both conductivity and heat capacity), so both ends of its range are kept.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from obvert.food.choi_okos import Composition
from obvert.food.table import PropertyTable
from obvert.problem.foods import food_table
from obvert.spec.model import FoodSpec, Spec, ToleranceSpec
from obvert.thermal.boundary import FaceBC, Surroundings


@dataclass(frozen=True)
class Scenario:
    """The real conditions behind one measured node.

    Attributes
    ----------
    name : str
        ``nominal``, ``worst``, ``worst_fat_low`` or ``worst_fat_high``.
    table : PropertyTable
        Food properties.
    thickness_offset_m : float
        Added to the measured thickness, m.
    start_offset_k : float
        Added to the measured start temperature, K.
    env : Surroundings
        Plate, platen and air as the food meets them.
    """

    name: str
    table: PropertyTable
    thickness_offset_m: float
    start_offset_k: float
    env: Surroundings


def heated_face(face: FaceBC, tol: ToleranceSpec) -> FaceBC:
    """A plate or platen at the low end of its tolerances (offset, droop, weak contact)."""
    return FaceBC(
        h=face.h * (1.0 - tol.contact_low_fraction),
        t_inf_c=face.t_inf_c - tol.plate_offset_k,
        emissivity=face.emissivity,
        droop_k=tol.plate_droop_k,
        droop_tau_s=tol.plate_recovery_s,
    )


def worst_surroundings(env: Surroundings, tol: ToleranceSpec) -> Surroundings:
    """The appliance at the slow corner of its tolerances (air unchanged)."""
    return Surroundings(
        plate=heated_face(env.plate, tol),
        air=env.air,
        platen=None if env.platen is None else heated_face(env.platen, tol),
        flip_air_s=env.flip_air_s,
    )


def fat_variant(food: FoodSpec, fat: float) -> FoodSpec:
    """The food with fat mass fraction ``fat``, the other components scaled to sum to one."""
    comp = food.composition
    if comp is None:
        raise ValueError(f"food {food.name!r}: a fat range needs a composition")
    scale = (1.0 - fat) / (1.0 - comp.fat)
    others = {
        k: getattr(comp, k) * scale for k in ("water", "protein", "carbohydrate", "fibre", "ash")
    }
    return replace(food, composition=Composition(fat=fat, **others))


def scenarios(spec: Spec, env: Surroundings) -> tuple[Scenario, ...]:
    """The scenarios every schedule must pass: the worst corner (one per fat end).

    Without declared tolerances this is the single nominal scenario.
    """
    tol = spec.tolerances
    if not tol.any:
        return (nominal(spec, env),)
    worst_env = worst_surroundings(env, tol)
    dx, dt = tol.thickness_error_m, -tol.start_temp_error_k
    if tol.fat_fraction is None:
        return (Scenario("worst", food_table(spec.food), dx, dt, worst_env),)
    lo, hi = tol.fat_fraction
    return (
        Scenario("worst_fat_low", food_table(fat_variant(spec.food, lo)), dx, dt, worst_env),
        Scenario("worst_fat_high", food_table(fat_variant(spec.food, hi)), dx, dt, worst_env),
    )


def nominal(spec: Spec, env: Surroundings) -> Scenario:
    """The appliance and food exactly as declared."""
    return Scenario("nominal", food_table(spec.food), 0.0, 0.0, env)
