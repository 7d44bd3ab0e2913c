"""Reading a spec TOML file into a :class:`~obvert.spec.model.Spec`.

Every dimensional value carries its unit ("12 mm"). Unknown keys are errors. Every error
names the field path, the value and what is allowed.
"""

from __future__ import annotations

import math
import re
import sys
from pathlib import Path
from typing import Any

from obvert.food.choi_okos import CONDUCTIVITY_MODELS, Composition
from obvert.food.criteria import HOLD_PRESETS
from obvert.food.presets import PRESETS
from obvert.spec.errors import SpecError
from obvert.spec.errors import range_check as _range_check
from obvert.spec.model import (
    ApplianceSpec,
    FoodSpec,
    GridSpec,
    MeasuredProperties,
    PlanningSpec,
    PropertyValue,
    SafetySpec,
    Spec,
)
from obvert.spec.section import Section
from obvert.spec.tolerances import tolerances_section
from obvert.spec.units import quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

_NAME = re.compile(r"^[a-z][a-z0-9_]{0,39}$")


#: Ranges of measured properties a food can have: (kind, low, high, unit), in SI units.
#: Conductivity from fat (about 0.2) to ice (2.2 W/(m K)); specific heat from dry solids to
#: water; density from a foamed product to bone (common practice).
MEASURED_RANGES = {
    "conductivity": ("conductivity", 0.05, 3.0, "W/(m*K)"),
    "density": ("density", 300.0, 2000.0, "kg/m^3"),
    "specific_heat": ("specific_heat", 500.0, 6000.0, "J/(kg*K)"),
}


def _property(sec: Section, key: str) -> PropertyValue:
    kind, lo, hi, unit = MEASURED_RANGES[key]
    raw = sec.raw(key)
    path = sec._p(key)

    def value(v: object, where: str) -> float:
        si = quantity(v, where, kind)
        if not math.isfinite(si) or not lo <= si <= hi:
            raise SpecError(where, v, f"{lo:g} to {hi:g} {unit}")
        return si

    if isinstance(raw, str):
        return value(raw, path)
    if not isinstance(raw, list) or len(raw) < 2:
        raise SpecError(path, raw, "a value with a unit, or a list of [temperature, value] pairs")
    pairs = []
    for i, item in enumerate(raw):
        if not isinstance(item, list) or len(item) != 2:
            raise SpecError(f"{path}[{i}]", item, "a pair [temperature, value]")
        t = quantity(item[0], f"{path}[{i}][0]", "temperature")
        if not -40.0 <= t <= 300.0:
            raise SpecError(f"{path}[{i}][0]", item[0], "-40 to 300 degC")
        if pairs and t <= pairs[-1][0]:
            raise SpecError(
                f"{path}[{i}][0]", item[0], "a temperature above the previous pair's (ascending)"
            )
        pairs.append((t, value(item[1], f"{path}[{i}][1]")))
    return tuple(pairs)


def _food(sec: Section) -> FoodSpec:
    name = sec.text("name")
    comp_sec = sec.section("composition", required=False)
    meas_sec = sec.section("measured", required=False)
    if (comp_sec is None) == (meas_sec is None):
        raise SpecError(
            sec.path, sorted(sec.data), "exactly one of [food.composition] or [food.measured]"
        )
    fp = sec.bounded("freezing_point", "temperature", -10.0, 0.0, "degC", None)
    k_model = sec.raw("conductivity_model", "levy_ice")
    if k_model not in CONDUCTIVITY_MODELS:
        allowed = f"one of {list(CONDUCTIVITY_MODELS)}"
        raise SpecError(sec._p("conductivity_model"), k_model, allowed)
    if meas_sec is not None and "conductivity_model" in sec.data:
        raise SpecError(
            sec._p("conductivity_model"),
            k_model,
            "only with [food.composition] (measured properties give the conductivity itself)",
        )
    comp = measured = None
    if comp_sec is not None:
        fr = {k: comp_sec.number(k, 0.0, 1.0, 0.0) for k in ("carbohydrate", "fibre", "ash")}
        try:
            comp = Composition(
                water=comp_sec.number("water", 0.0, 1.0),
                protein=comp_sec.number("protein", 0.0, 1.0),
                fat=comp_sec.number("fat", 0.0, 1.0),
                **fr,
            )
        except ValueError as exc:
            raise SpecError(comp_sec.path, comp_sec.data, str(exc)) from None
        comp_sec.done()
    else:
        assert meas_sec is not None  # noqa: S101 - narrowed above, not user input
        mfp = meas_sec.bounded("freezing_point", "temperature", -10.0, 0.0, "degC", None)
        measured = MeasuredProperties(
            conductivity=_property(meas_sec, "conductivity"),
            density=_property(meas_sec, "density"),
            specific_heat=_property(meas_sec, "specific_heat"),
            freezing_point_c=mfp,
            # at most water's latent heat of fusion, 333.6 kJ/kg (a food is partly water)
            latent_heat_j_per_kg=meas_sec.bounded(
                "latent_heat", "specific_energy", 0.0, 333.6e3, "J/kg", "0 J/kg"
            ),
        )
        meas_sec.done()
    sec.done()
    return FoodSpec(
        name=name,
        composition=comp,
        freezing_point_c=fp,
        measured=measured,
        conductivity_model=str(k_model),
    )


def _axis(sec: Section, key: str, kind: str, lo: float, hi: float, unit: str) -> tuple[float, ...]:
    raw = sec.raw(key)
    path = sec._p(key)
    if not isinstance(raw, list) or not 1 <= len(raw) <= 64:
        raise SpecError(path, raw, f"a list of 1 to 64 values with units ({unit})")
    vals = tuple(
        _range_check(f"{path}[{i}]", quantity(v, f"{path}[{i}]", kind), lo, hi, unit)
        for i, v in enumerate(raw)
    )
    if any(b <= a for a, b in zip(vals, vals[1:], strict=False)):
        raise SpecError(path, raw, "strictly ascending values")
    return vals


def _grid(sec: Section) -> GridSpec:
    t = _axis(sec, "thickness", "length", 0.002, 0.05, "m (2 to 50 mm)")
    s = _axis(sec, "start_temperature", "temperature", -40.0, 30.0, "degC")
    sec.done()
    return GridSpec(thickness_m=t, start_temp_c=s)


APPLIANCE_KINDS = ("flipping_griddle", "clamshell", "flip_then_close")


def _appliance(sec: Section) -> ApplianceSpec:
    kind = sec.text("kind", "flipping_griddle")
    if kind not in APPLIANCE_KINDS:
        raise SpecError(sec._p("kind"), kind, f"one of {list(APPLIANCE_KINDS)}")
    p = sec._p
    htc = "heat_transfer_coefficient"
    plate = sec.bounded("plate_temperature", "temperature", 60.0, 300.0, "degC")
    contact = sec.bounded("contact_coefficient", htc, 10.0, 5000.0, "W/(m^2*K)")
    air_t = sec.bounded("air_temperature", "temperature", -10.0, 200.0, "degC")
    air_h = sec.bounded("air_coefficient", htc, 0.0, 500.0, "W/(m^2*K)")
    gap = sec.bounded("min_event_gap", "time", 0.0, 600.0, "s")
    tick = sec.bounded("tick", "time", 0.001, 1.0, "s")
    if kind == "clamshell":
        flip_air = sec.bounded("flip_air_time", "time", 0.1, 30.0, "s", "1 s")
        max_flips = sec.integer("max_flips", 0, 0, 0)
    else:
        flip_air = sec.bounded("flip_air_time", "time", 0.0, 30.0, "s")
        max_flips = sec.integer("max_flips", 0, 8)
    platen_t = platen_h = None
    if kind == "flipping_griddle":
        for key in ("platen_temperature", "platen_contact_coefficient"):
            if sec.has(key):
                raise SpecError(p(key), sec.data[key], "nothing: a flipping griddle has no platen")
    else:
        platen_t = sec.bounded("platen_temperature", "temperature", 60.0, 300.0, "degC")
        platen_h = sec.bounded("platen_contact_coefficient", htc, 10.0, 5000.0, "W/(m^2*K)")
    out = ApplianceSpec(
        name=sec.text("name"),
        kind=kind,
        plate_temp_c=plate,
        contact_coefficient=contact,
        air_temp_c=air_t,
        air_coefficient=air_h,
        emissivity=sec.number("emissivity", 0.0, 1.0),
        flip_air_s=flip_air,
        min_event_gap_s=gap,
        max_flips=max_flips,
        tick_s=tick,
        platen_temp_c=platen_t,
        platen_coefficient=platen_h,
    )
    sec.done()
    return out


def _safety(sec: Section) -> SafetySpec:
    organism = sec.raw("organism", None)
    cap = sec.qty("lethality_cap", "temperature", None)
    if organism is not None:
        if organism not in PRESETS:
            raise SpecError(sec._p("organism"), organism, f"one of the presets {sorted(PRESETS)}")
        for key in ("d_ref", "t_ref", "z", "source"):
            if sec.has(key):
                raise SpecError(
                    sec._p(key), sec.data[key], "nothing when an organism preset is named"
                )
        p = PRESETS[organism]
        d_ref, t_ref, z, source = p.d_ref_s, p.t_ref_c, p.z_k, p.source
        default_lr: object = p.target_log_reduction
        name = f"{organism}: {p.organism} in {p.matrix}"
    else:
        d_ref = sec.qty("d_ref", "time")
        t_ref = sec.qty("t_ref", "temperature")
        z = sec.qty("z", "temperature_difference")
        source = sec.text("source")
        name = sec.text("organism_name")
        default_lr = ...
        if not (d_ref > 0 and z > 0):
            raise SpecError(sec.path, {"d_ref": d_ref, "z": z}, "positive D and z values")
    lr = sec.number("log_reduction", 0.0, 15.0, default_lr)
    if lr <= 0.0:
        raise SpecError(sec._p("log_reduction"), sec.raw("log_reduction"), "a number > 0 and <= 15")
    min_t = sec.bounded("min_temperature", "temperature", 40.0, 100.0, "degC", None)
    carry = sec.bounded("carry_over", "time", 0.0, 600.0, "s", "0 s")
    cap_c = (
        90.0 if cap is None else _range_check(sec._p("lethality_cap"), cap, t_ref, 150.0, "degC")
    )
    holds = _holds(sec)
    sec.done()
    return SafetySpec(
        name, source, lr, float(d_ref), float(t_ref), float(z), min_t, carry, cap_c, holds
    )


def _holds(sec: Section) -> tuple[tuple[float, float], ...]:
    """``time_at_temperature``: a preset name or a list of ["<temperature>", "<time>"] rows."""
    raw = sec.raw("time_at_temperature", None)
    path = sec._p("time_at_temperature")
    if raw is None:
        return ()
    if isinstance(raw, str):
        if raw not in HOLD_PRESETS:
            raise SpecError(path, raw, f"a list of rows or one of {sorted(HOLD_PRESETS)}")
        return tuple((r.temp_c, r.hold_s) for r in HOLD_PRESETS[raw].rows)
    if not isinstance(raw, list) or not 1 <= len(raw) <= 12:
        raise SpecError(path, raw, 'a list of 1 to 12 ["<temperature>", "<time>"] rows')
    rows = []
    for i, item in enumerate(raw):
        if not isinstance(item, list) or len(item) != 2:
            raise SpecError(f"{path}[{i}]", item, 'a row ["<temperature>", "<time>"]')
        t = quantity(item[0], f"{path}[{i}][0]", "temperature")
        if not 40.0 <= t <= 100.0:
            raise SpecError(f"{path}[{i}][0]", item[0], "40 to 100 degC")
        h = quantity(item[1], f"{path}[{i}][1]", "time")
        if not 0.0 <= h <= 7200.0:
            raise SpecError(f"{path}[{i}][1]", item[1], "0 s to 2 h")
        rows.append((t, h))
    return tuple(rows)


def _planning(sec: Section | None) -> PlanningSpec:
    if sec is None:
        sec = Section({}, "planning")
    out = PlanningSpec(
        flip_cost_s=sec.bounded("flip_cost", "time", 0.0, 600.0, "s", "0 s"),
        spectral_nodes=sec.integer("spectral_nodes", 6, 32, 16),
        lethality_points=_lethality_points(sec),
        elements_per_phase=sec.integer("elements_per_phase", 4, 40, 8),
        reference_cells=sec.integer("reference_cells", 40, 2000, 200),
        reference_step_s=sec.bounded("reference_step", "time", 0.005, 1.0, "s", "50 ms"),
        calibration_rounds=sec.integer("calibration_rounds", 0, 8, 3),
        min_margin_log=sec.number("min_margin", 0.0, 2.0, 0.1),
        reference_refinement=sec.integer("reference_refinement", 2, 4, 2),
    )
    sec.done()
    return out


def _lethality_points(sec: Section) -> int:
    n = sec.integer("lethality_points", 0, 401, 21)
    if 0 < n < 3:
        raise SpecError(sec._p("lethality_points"), n, "0 (at the nodes) or 3 to 401")
    return n


def spec_from_dict(data: dict[str, Any]) -> Spec:
    """Build a :class:`Spec` from a parsed TOML document.

    Raises
    ------
    SpecError
        A field is missing, unknown or holds a value that is not allowed.
    """
    top = Section(data, "")
    table = top.section("table")
    name = table.text("name")
    if not _NAME.match(name):
        raise SpecError(
            "table.name",
            name,
            "lower-case letters, digits and '_', starting with a letter, at most 40",
        )
    title = table.text("title", name)
    table.done()
    food = _food(top.section("food"))
    grid = _grid(top.section("grid"))
    appliance = _appliance(top.section("appliance"))
    safety = _safety(top.section("safety"))
    planning = _planning(top.section("planning", required=False))
    tolerances = tolerances_section(top.section("tolerances", required=False), food)
    out_sec = top.section("outputs", required=False) or Section({}, "outputs")
    targets = out_sec.raw("targets", ["c99", "json"])
    if not isinstance(targets, list) or not targets or not all(isinstance(t, str) for t in targets):
        raise SpecError("outputs.targets", targets, "a non-empty list of target names")
    out_sec.done()
    top.done()
    if safety.min_temp_c is not None and safety.min_temp_c >= appliance.plate_temp_c:
        raise SpecError("safety.min_temperature", safety.min_temp_c, "below the plate temperature")
    return Spec(name, title, food, grid, appliance, safety, planning, tuple(targets), tolerances)


def load_spec(path: str | Path) -> Spec:
    """Read and check a spec TOML file.

    Raises
    ------
    SpecError
        The file cannot be read or parsed, or a field is not allowed.
    """
    p = Path(path)
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise SpecError("file", str(p), f"a readable spec file ({exc.strerror})") from None
    try:
        text = data.decode("utf-8-sig")  # a byte-order mark is harmless: dropped
    except UnicodeDecodeError as exc:
        raise SpecError(
            "file", str(p), f"UTF-8 text (byte {exc.start} is not UTF-8: save the file as UTF-8)"
        ) from None
    return loads_spec(text, str(p))


def loads_spec(text: str, source: str = "<spec>") -> Spec:
    """Parse spec TOML text (``source`` names it in errors)."""
    text = text.removeprefix("\ufeff")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SpecError("file", source, f"valid TOML ({exc})") from None
    if not data:
        raise SpecError(
            "file",
            source,
            "a spec: the file has no keys (sections [table], [food], [grid], "
            "[appliance] and [safety] are required)",
        )
    return spec_from_dict(data)
