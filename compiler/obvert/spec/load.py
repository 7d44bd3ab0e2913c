"""Reading a spec TOML file into a :class:`~obvert.spec.model.Spec`.

Every dimensional value carries its unit ("12 mm"). Unknown keys are errors. Every error
names the field path, the value and what is allowed.
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path
from typing import Any

from obvert.food.choi_okos import Composition
from obvert.food.criteria import HOLD_PRESETS
from obvert.food.presets import PRESETS
from obvert.spec.errors import MISSING, SpecError, toml_text
from obvert.spec.keys import PAIR_TEMPERATURE, REQUIRED, keys_of
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
from obvert.spec.section import Section, check_value, describe
from obvert.spec.tolerances import tolerances_section
from obvert.spec.units import quantity

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

_NAME = re.compile(r"^[a-z][a-z0-9_]{0,39}$")

#: Quantity kind of each measured property.
_PROPERTY_KINDS = {
    "conductivity": "conductivity",
    "density": "density",
    "specific_heat": "specific_heat",
}


def _property(sec: Section, name: str) -> PropertyValue:
    key = sec.key(name)
    kind = _PROPERTY_KINDS[name]
    raw = sec.raw(name)
    path = sec._p(name)
    if isinstance(raw, str):
        return float(check_value(key, raw, path, kind))
    lo, hi = PAIR_TEMPERATURE.count or (2, 2)
    if not isinstance(raw, list) or not lo <= len(raw) <= hi:
        raise SpecError(
            path,
            raw,
            f"{describe(key)}, or a list of {lo} to {hi} [temperature, value] pairs",
        )
    pairs: list[tuple[float, float]] = []
    for i, item in enumerate(raw):
        where = f"{path}[{i}]"
        if not isinstance(item, list) or len(item) != 2:
            raise SpecError(
                where,
                item,
                'a pair [temperature, value] such as ["20 degC", ' + (key.example + "]"),
            )
        t = float(check_value(PAIR_TEMPERATURE, item[0], f"{where}[0]"))
        if pairs and t <= pairs[-1][0]:
            raise SpecError(
                f"{where}[0]",
                item[0],
                f"a temperature above the previous pair's {toml_text(raw[i - 1][0])} "
                "(strictly ascending)",
            )
        pairs.append((t, float(check_value(key, item[1], f"{where}[1]", kind))))
    return tuple(pairs)


def _food(sec: Section) -> FoodSpec:
    name = sec.get("name")
    fp = sec.get("freezing_point")
    comp_sec = sec.optional_section("composition")
    meas_sec = sec.optional_section("measured")
    if comp_sec is None and meas_sec is None:
        raise SpecError(
            "food.composition", MISSING, "[food.composition] or [food.measured] (one is required)"
        )
    if comp_sec is not None and meas_sec is not None:
        raise SpecError(
            "food.measured", sec.data["measured"], "only without [food.composition] (one of them)"
        )
    if meas_sec is not None and sec.has("conductivity_model"):
        raise SpecError(
            sec._p("conductivity_model"),
            sec.data["conductivity_model"],
            "only with [food.composition] (measured properties give the conductivity itself)",
        )
    k_model = sec.get("conductivity_model")
    comp = measured = None
    if comp_sec is not None:
        fr = {k.name: comp_sec.get(k.name) for k in keys_of("food.composition")}
        comp_sec.done()
        total = sum(fr.values())
        if abs(total - 1.0) > 0.01:
            raise SpecError(
                comp_sec.path,
                comp_sec.data,
                f"mass fractions that sum to 1 within 0.01 (these sum to {total:.4g})",
            )
        try:
            comp = Composition(**fr)
        except ValueError as exc:  # pragma: no cover - every field is checked above
            raise SpecError(comp_sec.path, comp_sec.data, f"a composition ({exc})") from None
    elif meas_sec is not None:
        measured = MeasuredProperties(
            conductivity=_property(meas_sec, "conductivity"),
            density=_property(meas_sec, "density"),
            specific_heat=_property(meas_sec, "specific_heat"),
            freezing_point_c=meas_sec.get("freezing_point"),
            latent_heat_j_per_kg=meas_sec.get("latent_heat"),
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


def _axis(sec: Section, name: str) -> tuple[float, ...]:
    vals = sec.values(name) or ()
    for i in range(1, len(vals)):
        if vals[i] <= vals[i - 1]:
            raw = sec.data[name]
            raise SpecError(
                f"{sec._p(name)}[{i}]",
                raw[i],
                f"a value above the previous one, {toml_text(raw[i - 1])} (strictly ascending)",
            )
    return tuple(float(v) for v in vals)


def _grid(sec: Section) -> GridSpec:
    t = _axis(sec, "thickness")
    s = _axis(sec, "start_temperature")
    sec.done()
    return GridSpec(thickness_m=t, start_temp_c=s)


def _appliance(sec: Section) -> ApplianceSpec:
    kind = sec.get("kind")
    if kind == "clamshell":
        flip_air = sec.get("flip_air_time", "1 s")
        max_flips = sec.get("max_flips", 0)
        if max_flips != 0:
            raise SpecError(
                sec._p("max_flips"), sec.data["max_flips"], "0 on a clamshell (it does not flip)"
            )
    else:
        flip_air = sec.get("flip_air_time")
        max_flips = sec.get("max_flips")
    platen_t = platen_h = None
    if kind == "flipping_griddle":
        for key in ("platen_temperature", "platen_contact_coefficient"):
            if sec.has(key):
                raise SpecError(
                    sec._p(key),
                    sec.data[key],
                    'only on kind = "clamshell" or "flip_then_close" (a flipping griddle '
                    "has no platen)",
                )
    else:
        platen_t = sec.get("platen_temperature")
        platen_h = sec.get("platen_contact_coefficient")
    out = ApplianceSpec(
        name=sec.get("name"),
        kind=kind,
        plate_temp_c=sec.get("plate_temperature"),
        contact_coefficient=sec.get("contact_coefficient"),
        air_temp_c=sec.get("air_temperature"),
        air_coefficient=sec.get("air_coefficient"),
        emissivity=sec.get("emissivity"),
        flip_air_s=flip_air,
        min_event_gap_s=sec.get("min_event_gap"),
        max_flips=max_flips,
        tick_s=sec.get("tick"),
        platen_temp_c=platen_t,
        platen_coefficient=platen_h,
    )
    sec.done()
    return out


_CUSTOM_KINETICS = ("d_ref", "t_ref", "z", "source", "organism_name")


def _safety(sec: Section) -> SafetySpec:
    organism = sec.get("organism")
    if organism is not None:
        for key in _CUSTOM_KINETICS:
            if sec.has(key):
                raise SpecError(
                    sec._p(key),
                    sec.data[key],
                    f"only without an organism preset (organism = {json.dumps(organism)} "
                    "sets the kinetics)",
                )
        p = PRESETS[organism]
        d_ref, t_ref, z, source = p.d_ref_s, p.t_ref_c, p.z_k, p.source
        lr = sec.get("log_reduction", p.target_log_reduction)
        name = f"{organism}: {p.organism} in {p.matrix}"
    else:
        d_ref = sec.get("d_ref")
        t_ref = sec.get("t_ref")
        z = sec.get("z")
        source = sec.get("source")
        name = sec.get("organism_name")
        lr = sec.get("log_reduction")
    min_t = sec.get("min_temperature")
    carry = sec.get("carry_over")
    cap_c = sec.get("lethality_cap")
    if cap_c < t_ref:
        raise SpecError(
            sec._p("lethality_cap"),
            sec.raw("lethality_cap"),
            f"a temperature at least the reference temperature t_ref, {t_ref:g} degC",
        )
    holds = _holds(sec)
    sec.done()
    return SafetySpec(
        name, source, lr, float(d_ref), float(t_ref), float(z), min_t, carry, cap_c, holds
    )


def _holds(sec: Section) -> tuple[tuple[float, float], ...]:
    """``time_at_temperature``: a preset name or a list of ["<temperature>", "<time>"] rows."""
    raw = sec.raw("time_at_temperature")
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
    n = sec.get("lethality_points")
    if 0 < n < 3:
        key = sec.key("lethality_points")
        raise SpecError(sec._p("lethality_points"), n, f"0 (at the nodes) or 3 to {key.hi:g}")
    out = PlanningSpec(
        flip_cost_s=sec.get("flip_cost"),
        spectral_nodes=sec.get("spectral_nodes"),
        lethality_points=n,
        elements_per_phase=sec.get("elements_per_phase"),
        reference_cells=sec.get("reference_cells"),
        reference_step_s=sec.get("reference_step"),
        calibration_rounds=sec.get("calibration_rounds"),
        min_margin_log=sec.get("min_margin"),
        reference_refinement=sec.get("reference_refinement"),
        method=sec.get("method"),
        search_cells=sec.get("search_cells"),
        search_step_s=sec.get("search_step"),
        reference_polish=sec.get("reference_polish"),
    )
    sec.done()
    return out


def spec_from_dict(data: dict[str, Any]) -> Spec:
    """Build a :class:`Spec` from a parsed TOML document.

    Raises
    ------
    SpecError
        A field is missing, unknown or holds a value that is not allowed.
    """
    top = Section(data, "")
    for sec_key in keys_of(""):  # every required section, before any of their keys
        if sec_key.default is REQUIRED and sec_key.name not in data:
            raise SpecError(
                sec_key.name, MISSING, f"a section [{sec_key.name}] (the section is required)"
            )
    table = top.section("table")
    name = table.get("name")
    if not _NAME.match(name):
        raise SpecError("table.name", name, describe(table.key("name")))
    title = table.get("title") or name
    table.done()
    food = _food(top.section("food"))
    grid = _grid(top.section("grid"))
    appliance = _appliance(top.section("appliance"))
    safety = _safety(top.section("safety"))
    planning = _planning(top.optional_section("planning"))
    tolerances = tolerances_section(top.optional_section("tolerances"), food)
    out_sec = top.optional_section("outputs") or Section({}, "outputs")
    targets = out_sec.values("targets")
    out_sec.done()
    top.done()
    if safety.min_temp_c is not None and safety.min_temp_c >= appliance.plate_temp_c:
        raise SpecError(
            "safety.min_temperature",
            data["safety"]["min_temperature"],
            "a temperature below appliance.plate_temperature, "
            + toml_text(data["appliance"]["plate_temperature"]),
        )
    return Spec(
        name, title, food, grid, appliance, safety, planning, tuple(targets or ()), tolerances
    )


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
        raise SpecError("file", source, f"valid TOML ({_toml_problem(exc, text)})") from None
    except RecursionError:
        raise SpecError("file", source, "valid TOML (arrays or tables nested too deep)") from None
    if not data:
        raise SpecError(
            "file",
            source,
            "a spec: the file has no keys (sections [table], [food], [grid], "
            "[appliance] and [safety] are required)",
        )
    return spec_from_dict(data)


def _toml_problem(exc: Exception, text: str) -> str:
    """The TOML parser's message, with the offending line quoted when it names one."""
    msg = str(exc)
    m = re.search(r"at line (\d+)", msg)
    if m is None:
        return msg
    lines = text.splitlines()
    n = int(m.group(1))
    if not 1 <= n <= len(lines):
        return msg
    line = lines[n - 1].strip()
    line = line if len(line) <= 80 else line[:77] + "..."
    return f"{msg}: {line}" + (" (a key given twice?)" if "overwrite" in msg else "")
