"""Every section and key a spec may hold: kind, unit, default, allowed range and meaning.

This table is the one source of the loader's checks (:mod:`obvert.spec.section` reads the
ranges, choices and defaults from it) and of the reference ``docs/spec.md``
(``python -m obvert.spec.reference > docs/spec.md``). Ranges are inclusive and written in
the unit the user types; the loader converts them with the same unit parser as the values.

Where a range is physical, its reason is noted beside it: a published source where there is
one, "from memory" for a value recalled but not verified, "common practice" for a fact of
the trade.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

from obvert.food.choi_okos import CONDUCTIVITY_MODELS
from obvert.food.presets import PRESETS


class _Required:
    """Marker of a key without a default (singleton :data:`REQUIRED`)."""

    def __repr__(self) -> str:
        return "REQUIRED"


#: The default of a key that must be given.
REQUIRED = _Required()

#: Kinds that are not quantities with a unit.
PLAIN_KINDS = ("number", "integer", "text", "choice", "section", "property")


@dataclass(frozen=True)
class Key:
    """One key of a spec section.

    Attributes
    ----------
    section : str
        Dotted path of the section that holds it (``""`` for the top level).
    name : str
        Key name as written in the file.
    kind : str
        A quantity kind of :data:`obvert.spec.units.KINDS` (a string with a unit), or one of
        :data:`PLAIN_KINDS`: ``"number"``, ``"integer"``, ``"text"``, ``"choice"`` (a text
        from ``choices``), ``"section"`` (a sub-table) or ``"property"`` (a quantity or a
        table of ``[temperature, value]`` pairs).
    meaning : str
        One line of what the key means.
    unit : str
        Unit of ``lo``, ``hi`` and of the example, as typed (``"degC"``); empty for plain
        kinds without a unit.
    lo, hi : float or None
        Inclusive range in ``unit`` (None: unbounded on that side).
    default : object
        The default as it would be typed in TOML, :data:`REQUIRED`, or None (absent means
        "not set").
    default_doc : str
        How the default reads in the reference when it depends on other keys.
    choices : tuple of str
        Allowed texts of a ``"choice"`` key.
    count : tuple of int or None
        For a list of values: least and most entries; None for a single value.
    example : str
        A valid value as typed in TOML (for messages and the reference).
    note : str
        Further conditions, and the reason for the range.
    """

    section: str
    name: str
    kind: str
    meaning: str
    unit: str = ""
    lo: float | None = None
    hi: float | None = None
    default: object = REQUIRED
    default_doc: str = ""
    choices: tuple[str, ...] = ()
    count: tuple[int, int] | None = None
    example: str = ""
    note: str = ""

    @property
    def path(self) -> str:
        """Dotted path of the key, as in the file (``appliance.plate_temperature``)."""
        return f"{self.section}.{self.name}" if self.section else self.name

    def range_text(self) -> str:
        """The allowed range as typed, e.g. ``"from 60 degC to 300 degC"`` ("" if none)."""
        u = f" {self.unit}" if self.unit else ""
        if self.lo is not None and self.hi is not None:
            return f"from {self.lo:g}{u} to {self.hi:g}{u}"
        if self.lo is not None:
            return f"at least {self.lo:g}{u}"
        if self.hi is not None:
            return f"at most {self.hi:g}{u}"
        return ""


def _s(section: str, name: str, meaning: str, required: bool = True) -> Key:
    return Key(section, name, "section", meaning, default=REQUIRED if required else None)


_T = "temperature"
_D = "temperature_difference"
_H = "heat_transfer_coefficient"
_HU = "W/(m^2*K)"
_PLATE_T = "surface setpoints of contact cooking, about 150 to 230 degC (common practice)"
_CONTACT = "plate-to-food contact coefficients of a few hundred W/(m^2*K) (from memory)"

#: Every key of a spec, section by section, in the order of the reference.
KEY_LIST: tuple[Key, ...] = (
    _s("", "table", "Name and title of the table."),
    _s("", "food", "The food product: a composition or measured properties."),
    _s("", "grid", "Grid nodes of the table; the first and last bound the envelope."),
    _s("", "appliance", "The appliance: plate, optional platen, flips, timer."),
    _s("", "safety", "The lethality target every point of the food must reach."),
    _s("", "planning", "Settings of the planner and of the reference model.", False),
    _s("", "tolerances", "How far appliance and food may stray from nominal.", False),
    _s("", "outputs", "Output targets built by default.", False),
    # [table]
    Key(
        "table",
        "name",
        "text",
        "Table name: file names and C symbol prefixes.",
        example='"brinecliff_patty"',
        note="lower-case letters, digits and '_', starting with a letter, at most 40",
    ),
    Key(
        "table",
        "title",
        "text",
        "Free-text title.",
        default=None,
        default_doc="the name",
        example='"80/20 patty on griddle 2"',
    ),
    # [food]
    Key("food", "name", "text", "Product name.", example='"80/20 griddle patty"'),
    Key(
        "food",
        "freezing_point",
        _T,
        "Initial freezing point of the composition model.",
        unit="degC",
        lo=-10.0,
        hi=0.0,
        default=None,
        default_doc="from the water content",
        example='"-1.7 degC"',
        note="foods freeze below water's 0 degC; meats about -1 to -3 degC (common practice)",
    ),
    Key(
        "food",
        "conductivity_model",
        "choice",
        "Conductivity mixing rule of the composition model.",
        default="levy_ice",
        choices=tuple(sorted(CONDUCTIVITY_MODELS)),
        example='"levy_ice"',
        note="only with [food.composition]",
    ),
    _s("food", "composition", "Mass fractions; exactly one of composition or measured.", False),
    _s("food", "measured", "Measured properties; exactly one of composition or measured.", False),
    # [food.composition]
    *(
        Key(
            "food.composition",
            name,
            "number",
            f"Mass fraction of {name}.",
            lo=0.0,
            hi=1.0,
            default=REQUIRED if name in ("water", "protein", "fat") else 0.0,
            example=example,
            note="the six fractions sum to 1 within 0.01",
        )
        for name, example in (
            ("water", "0.62"),
            ("protein", "0.172"),
            ("fat", "0.19"),
            ("carbohydrate", "0.0"),
            ("fibre", "0.0"),
            ("ash", "0.018"),
        )
    ),
    # [food.measured]
    Key(
        "food.measured",
        "conductivity",
        "property",
        "Thermal conductivity, constant or a table of [temperature, value] pairs.",
        unit="W/(m*K)",
        lo=0.05,
        hi=3.0,
        example='"0.45 W/(m*K)"',
        note="from fat (about 0.2) to ice (2.2 W/(m*K)) with margin (common practice)",
    ),
    Key(
        "food.measured",
        "density",
        "property",
        "Density, constant or a table of [temperature, value] pairs.",
        unit="kg/m^3",
        lo=300.0,
        hi=2000.0,
        example='"1050 kg/m^3"',
        note="from a foamed product to bone (common practice)",
    ),
    Key(
        "food.measured",
        "specific_heat",
        "property",
        "Sensible specific heat, constant or a table of [temperature, value] pairs.",
        unit="J/(kg*K)",
        lo=500.0,
        hi=6000.0,
        example='"3500 J/(kg*K)"',
        note="from dry solids to water, 4.18 kJ/(kg*K), with margin (common practice)",
    ),
    Key(
        "food.measured",
        "freezing_point",
        _T,
        "Initial freezing point.",
        unit="degC",
        lo=-10.0,
        hi=0.0,
        default=None,
        default_doc="none (no freezing)",
        example='"-1.5 degC"',
    ),
    Key(
        "food.measured",
        "latent_heat",
        "specific_energy",
        "Latent heat released on freezing, per kg of food.",
        unit="kJ/kg",
        lo=0.0,
        hi=333.6,
        default="0 J/kg",
        example='"230 kJ/kg"',
        note="at most water's latent heat of fusion, 333.6 kJ/kg (a food is partly water)",
    ),
    # [grid]
    Key(
        "grid",
        "thickness",
        "length",
        "Thickness nodes, strictly ascending.",
        unit="mm",
        lo=2.0,
        hi=50.0,
        count=(1, 64),
        example='["6 mm", "9 mm", "12 mm"]',
        note="contact-cooked portions, thin slices to thick steaks (common practice)",
    ),
    Key(
        "grid",
        "start_temperature",
        _T,
        "Start-temperature nodes, strictly ascending.",
        unit="degC",
        lo=-40.0,
        hi=30.0,
        count=(1, 64),
        example='["-18 degC", "-6 degC", "4 degC"]',
        note="deep-frozen to a warm kitchen; the property tables start at -40 degC",
    ),
    # [appliance]
    Key("appliance", "name", "text", "Appliance name.", example='"turning-arm griddle 2"'),
    Key(
        "appliance",
        "kind",
        "choice",
        "flipping_griddle (turning arm), clamshell (platen) or flip_then_close (both).",
        default="flipping_griddle",
        choices=("clamshell", "flip_then_close", "flipping_griddle"),
        example='"flipping_griddle"',
    ),
    Key(
        "appliance",
        "plate_temperature",
        _T,
        "Lower plate surface setpoint.",
        unit="degC",
        lo=60.0,
        hi=300.0,
        example='"190 degC"',
        note=_PLATE_T,
    ),
    Key(
        "appliance",
        "contact_coefficient",
        _H,
        "Plate-to-food contact heat-transfer coefficient.",
        unit=_HU,
        lo=10.0,
        hi=5000.0,
        example='"450 W/(m^2*K)"',
        note=_CONTACT,
    ),
    Key(
        "appliance",
        "air_temperature",
        _T,
        "Air temperature above the food.",
        unit="degC",
        lo=-10.0,
        hi=200.0,
        example='"30 degC"',
    ),
    Key(
        "appliance",
        "air_coefficient",
        _H,
        "Convective coefficient to the air.",
        unit=_HU,
        lo=0.0,
        hi=500.0,
        example='"12 W/(m^2*K)"',
        note="still air about 5 to 25 W/(m^2*K) (common practice)",
    ),
    Key(
        "appliance",
        "emissivity",
        "number",
        "Emissivity of the food surface.",
        lo=0.0,
        hi=1.0,
        example="0.9",
    ),
    Key(
        "appliance",
        "flip_air_time",
        "time",
        "Time the food spends in the air during a flip.",
        unit="s",
        lo=0.0,
        hi=30.0,
        default_doc="required; 1 s on a clamshell",
        example='"1.5 s"',
    ),
    Key(
        "appliance",
        "min_event_gap",
        "time",
        "Least time between events (and from loading to the first).",
        unit="s",
        lo=0.0,
        hi=600.0,
        example='"10 s"',
    ),
    Key(
        "appliance",
        "max_flips",
        "integer",
        "Largest number of flips the appliance performs.",
        lo=0,
        hi=8,
        default_doc="required; 0 on a clamshell",
        example="2",
        note="only 0 on a clamshell (it does not flip)",
    ),
    Key(
        "appliance",
        "tick",
        "time",
        "Firmware timer tick; every event time is a whole number of ticks.",
        unit="s",
        lo=0.001,
        hi=1.0,
        example='"100 ms"',
    ),
    Key(
        "appliance",
        "platen_temperature",
        _T,
        "Upper platen surface setpoint.",
        unit="degC",
        lo=60.0,
        hi=300.0,
        default_doc="required with a platen",
        example='"200 degC"',
        note="only on a clamshell or flip_then_close; " + _PLATE_T,
    ),
    Key(
        "appliance",
        "platen_contact_coefficient",
        _H,
        "Platen-to-food contact heat-transfer coefficient.",
        unit=_HU,
        lo=10.0,
        hi=5000.0,
        default_doc="required with a platen",
        example='"350 W/(m^2*K)"',
        note="only on a clamshell or flip_then_close; " + _CONTACT,
    ),
    # [safety]
    Key(
        "safety",
        "organism",
        "choice",
        "Organism preset: published kinetics and a default log reduction.",
        default=None,
        default_doc="none: give d_ref, t_ref, z, source and organism_name",
        choices=tuple(sorted(PRESETS)),
        example=f'"{sorted(PRESETS)[0]}"',
    ),
    Key(
        "safety",
        "organism_name",
        "text",
        "Organism of custom kinetics.",
        default_doc="required without a preset",
        example='"house strain"',
        note="only without a preset",
    ),
    Key(
        "safety",
        "d_ref",
        "time",
        "Decimal reduction time at t_ref (custom kinetics).",
        unit="s",
        lo=0.1,
        hi=36000.0,
        default_doc="required without a preset",
        example='"1.5 min"',
        note="only without a preset; vegetative pathogens: seconds to minutes near 60 degC "
        "(from memory); 10 h bounds anything a contact cook can reach",
    ),
    Key(
        "safety",
        "t_ref",
        _T,
        "Reference temperature of d_ref (custom kinetics).",
        unit="degC",
        lo=40.0,
        hi=130.0,
        default_doc="required without a preset",
        example='"60 degC"',
        note="only without a preset; reference temperatures of 50 to 121.1 degC are in use "
        "(common practice)",
    ),
    Key(
        "safety",
        "z",
        _D,
        "Temperature rise that divides the D value by ten (custom kinetics).",
        unit="K",
        lo=1.0,
        hi=40.0,
        default_doc="required without a preset",
        example='"5.5 K"',
        note="only without a preset; vegetative bacteria about 4 to 8 K, spores about 10 K "
        "(from memory)",
    ),
    Key(
        "safety",
        "source",
        "text",
        "Where the custom kinetics were published.",
        default_doc="required without a preset",
        example='"our lab, 2026"',
        note="only without a preset",
    ),
    Key(
        "safety",
        "log_reduction",
        "number",
        "Required log10 reduction at every point of the food.",
        lo=0.001,
        hi=15.0,
        default_doc="the preset's; required without a preset",
        example="7",
        note="targets of 5 to 12 are in use (common practice)",
    ),
    Key(
        "safety",
        "min_temperature",
        _T,
        "Temperature every point must reach by removal.",
        unit="degC",
        lo=40.0,
        hi=100.0,
        default=None,
        default_doc="none",
        example='"71 degC"',
        note="below appliance.plate_temperature",
    ),
    Key(
        "safety",
        "carry_over",
        "time",
        "Time after removal credited to lethality (resting in air).",
        unit="s",
        lo=0.0,
        hi=600.0,
        default="0 s",
        example='"30 s"',
    ),
    Key(
        "safety",
        "lethality_cap",
        _T,
        "Temperature above which the lethality rate grows no further.",
        unit="degC",
        lo=40.0,
        hi=150.0,
        default="90 degC",
        example='"90 degC"',
        note="at least t_ref (or the preset's reference temperature)",
    ),
    Key(
        "safety",
        "time_at_temperature",
        "text",
        "Time-at-temperature rule: every point at least T for t, one row of the table for all.",
        default=None,
        default_doc="none",
        example='"food_code_2017_comminuted"',
        note=(
            "a preset (food_code_2017_comminuted, food_code_2013_comminuted, "
            'food_code_2017_poultry) or a list of 1 to 12 rows ["<temperature>", "<time>"], '
            "40 to 100 degC, 0 s to 2 h (0 s: reached at all)"
        ),
    ),
    # [planning]
    Key(
        "planning",
        "flip_cost",
        "time",
        "Cook-time equivalent charged per flip when choosing the flip count.",
        unit="s",
        lo=0.0,
        hi=600.0,
        default="0 s",
        example='"3 s"',
    ),
    Key(
        "planning",
        "method",
        "choice",
        "How event times are planned: direct search on the finite-volume model, or "
        "optimal control (collocation) on the reduced model.",
        default="search",
        choices=("search", "collocation"),
        example='"search"',
        note="search: docs/speed.md; collocation reads spectral_nodes, lethality_points, "
        "elements_per_phase and calibration_rounds",
    ),
    Key(
        "planning",
        "search_cells",
        "integer",
        "Finite-volume cells of the model the event-time search runs on.",
        lo=8,
        hi=400,
        default=30,
        example="30",
    ),
    Key(
        "planning",
        "search_step",
        "time",
        "Largest time step of the model the event-time search runs on.",
        unit="s",
        lo=0.01,
        hi=2.0,
        default="0.5 s",
        example='"0.5 s"',
    ),
    Key(
        "planning",
        "reference_polish",
        "choice",
        "Search the time of the chosen plan's last event on the reference itself (golden "
        "section over 2 s either way, about 8 reference read-offs per node: about twice the "
        "build time), or not.",
        default="off",
        choices=("off", "last_event"),
        example='"last_event"',
        note="search only; the search mesh's own optimum can be a tick slower: docs/speed.md",
    ),
    Key(
        "planning",
        "spectral_nodes",
        "integer",
        "Chebyshev nodes of the reduced model.",
        lo=6,
        hi=32,
        default=16,
        example="16",
    ),
    Key(
        "planning",
        "lethality_points",
        "integer",
        "Points where the reduced model integrates the log reduction (0: at its nodes).",
        lo=0,
        hi=401,
        default=21,
        example="21",
        note="0, or 3 and more",
    ),
    Key(
        "planning",
        "elements_per_phase",
        "integer",
        "Collocation elements per phase.",
        lo=4,
        hi=40,
        default=8,
        example="8",
    ),
    Key(
        "planning",
        "reference_cells",
        "integer",
        "Finite-volume cells of the reference model.",
        lo=40,
        hi=2000,
        default=200,
        example="200",
    ),
    Key(
        "planning",
        "reference_step",
        "time",
        "Largest time step of the reference model.",
        unit="s",
        lo=0.005,
        hi=1.0,
        default="50 ms",
        example='"50 ms"',
    ),
    Key(
        "planning",
        "calibration_rounds",
        "integer",
        "Rounds of the reference-calibrated correction of each plan (0: none).",
        lo=0,
        hi=8,
        default=3,
        example="3",
    ),
    Key(
        "planning",
        "min_margin",
        "number",
        "Log10 margin every schedule must keep above the reference's estimated error.",
        lo=0.0,
        hi=2.0,
        default=0.1,
        example="0.1",
        note="measured per node on finer cells and at a longer step (docs/certification.md)",
    ),
    Key(
        "planning",
        "reference_refinement",
        "integer",
        "The error check runs this many times the cells, and this many times the step.",
        lo=2,
        hi=4,
        default=2,
        example="2",
    ),
    # [tolerances]
    Key(
        "tolerances",
        "plate_offset",
        _D,
        "Heated surfaces may sit this far below their setpoint.",
        unit="K",
        lo=0.0,
        hi=60.0,
        default="0 K",
        example='"4 K"',
    ),
    Key(
        "tolerances",
        "plate_droop",
        _D,
        "Further drop of the heated surfaces when a cold load lands.",
        unit="K",
        lo=0.0,
        hi=60.0,
        default="0 K",
        example='"10 K"',
    ),
    Key(
        "tolerances",
        "plate_recovery",
        "time",
        "Recovery time constant of the droop.",
        unit="s",
        lo=0.1,
        hi=600.0,
        default=None,
        default_doc="30 s",
        example='"30 s"',
        note="only with plate_droop above 0 K",
    ),
    Key(
        "tolerances",
        "contact_low",
        "number",
        "Contact coefficients may be this fraction below nominal.",
        lo=0.0,
        hi=0.5,
        default=0.0,
        example="0.1",
    ),
    Key(
        "tolerances",
        "thickness_error",
        "length",
        "The measured thickness may be off by this much either way.",
        unit="mm",
        lo=0.0,
        hi=5.0,
        default="0 mm",
        example='"0.3 mm"',
    ),
    Key(
        "tolerances",
        "start_temp_error",
        _D,
        "The measured start temperature may be off by this much either way.",
        unit="K",
        lo=0.0,
        hi=10.0,
        default="0 K",
        example='"1 K"',
    ),
    Key(
        "tolerances",
        "fat_fraction",
        "number",
        "Range [low, high] of the fat mass fraction.",
        lo=0.0,
        hi=0.9,
        default=None,
        default_doc="nominal fat only",
        count=(2, 2),
        example="[0.15, 0.25]",
        note="low <= high, holding the nominal fat; only with [food.composition]",
    ),
    # [outputs]
    Key(
        "outputs",
        "targets",
        "text",
        "Target profiles built when the command line names none.",
        default=("c99", "json"),
        count=(1, 16),
        example='["c99", "json"]',
        note="built-in target names or paths of target .toml files",
    ),
)

#: The temperatures of a tabulated measured property, [temperature, value] pairs.
PAIR_TEMPERATURE = Key(
    "food.measured",
    "<pair temperature>",
    _T,
    "Temperature of a [temperature, value] pair of a tabulated property.",
    unit="degC",
    lo=-40.0,
    hi=300.0,
    count=(2, 200),
    example='"20 degC"',
    note="strictly ascending; the property tables span -40 degC to 300 degC",
)

#: The keys by (section, name).
KEYS: Mapping[tuple[str, str], Key] = MappingProxyType({(k.section, k.name): k for k in KEY_LIST})

#: The sections, in the order of the reference ("" is the top level).
SECTIONS: tuple[str, ...] = tuple(dict.fromkeys(k.section for k in KEY_LIST))


def keys_of(section: str) -> tuple[Key, ...]:
    """The keys a section may hold, in the order of the reference."""
    return tuple(k for k in KEY_LIST if k.section == section)
