"""The cook-program spec as frozen dataclasses, SI units (degC for temperatures)."""

from __future__ import annotations

from dataclasses import asdict, dataclass

from obvert.food.choi_okos import Composition

#: A property given as a constant or as (temperature degC, value) pairs.
PropertyValue = float | tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class MeasuredProperties:
    """Measured thermal properties of a food (instead of a composition).

    Attributes
    ----------
    conductivity : float or tuple of (degC, W/(m K))
        Thermal conductivity, W/(m K).
    density : float or tuple of (degC, kg/m^3)
        Density, kg/m^3.
    specific_heat : float or tuple of (degC, J/(kg K))
        Sensible specific heat, J/(kg K).
    freezing_point_c : float | None
        Initial freezing point, degC.
    latent_heat_j_per_kg : float
        Latent heat released on freezing, J/kg of food.
    """

    conductivity: PropertyValue
    density: PropertyValue
    specific_heat: PropertyValue
    freezing_point_c: float | None
    latent_heat_j_per_kg: float


@dataclass(frozen=True)
class FoodSpec:
    """The food product.

    Attributes
    ----------
    name : str
        Product name.
    composition : Composition | None
        Mass fractions (properties by Choi-Okos), or None when ``measured`` is given.
    freezing_point_c : float | None
        Initial freezing point for the composition model, degC (None: from water content).
    measured : MeasuredProperties | None
        Measured properties, or None when ``composition`` is given.
    conductivity_model : str
        Conductivity mixing rule of the composition model (``"levy_ice"``, the default, or
        ``"parallel"``; see :mod:`obvert.food.conductivity`).
    """

    name: str
    composition: Composition | None
    freezing_point_c: float | None
    measured: MeasuredProperties | None
    conductivity_model: str = "levy_ice"


@dataclass(frozen=True)
class GridSpec:
    """Grid nodes of the table; the first and last nodes bound the certified envelope.

    Attributes
    ----------
    thickness_m : tuple of float
        Thickness nodes, ascending, m.
    start_temp_c : tuple of float
        Start-temperature nodes, ascending, degC.
    """

    thickness_m: tuple[float, ...]
    start_temp_c: tuple[float, ...]


@dataclass(frozen=True)
class ApplianceSpec:
    """A contact-cooking appliance: flipping griddle, clamshell, or both.

    Attributes
    ----------
    name : str
        Appliance name.
    kind : str
        ``"flipping_griddle"`` (lower plate, turning arm), ``"clamshell"`` (lower plate and an
        upper platen lowered after an optional sear, raised at done) or ``"flip_then_close"``
        (flips on the lower plate, then the platen closes).
    plate_temp_c : float
        Plate surface setpoint, degC.
    contact_coefficient : float
        Plate-to-food contact heat-transfer coefficient, W/(m^2 K).
    air_temp_c : float
        Air temperature above the food, degC.
    air_coefficient : float
        Convective coefficient to air, W/(m^2 K).
    emissivity : float
        Emissivity of the food surface, -.
    flip_air_s : float
        Time the food spends in the air during a flip, s.
    min_event_gap_s : float
        Minimum time between events (and from loading to the first), s.
    max_flips : int
        Largest number of flips the appliance performs, -.
    tick_s : float
        Firmware timer tick, s.
    platen_temp_c : float | None
        Upper platen setpoint, degC (appliances with a platen only).
    platen_coefficient : float | None
        Platen-to-food contact coefficient, W/(m^2 K) (appliances with a platen only).
    """

    name: str
    kind: str
    plate_temp_c: float
    contact_coefficient: float
    air_temp_c: float
    air_coefficient: float
    emissivity: float
    flip_air_s: float
    min_event_gap_s: float
    max_flips: int
    tick_s: float
    platen_temp_c: float | None = None
    platen_coefficient: float | None = None


@dataclass(frozen=True)
class SafetySpec:
    """The lethality target every point of the food must reach by removal.

    Attributes
    ----------
    organism : str
        Organism (and preset name, when a preset was used).
    source : str
        Where the kinetics were published.
    log_reduction : float
        Required log10 reduction, -.
    d_ref_s : float
        D value at ``t_ref_c``, s.
    t_ref_c : float
        Reference temperature, degC.
    z_k : float
        z value, K.
    min_temp_c : float | None
        Temperature every point must be at or above at removal, degC.
    carry_over_s : float
        Time after removal credited to lethality (food resting in air), s; 0 means none.
    lethality_cap_c : float
        Temperature above which the lethality rate is not increased further, degC.
    time_at_temperature : tuple of (float, float)
        Rows (degC, s) of a time-at-temperature rule: every point of the food must spend at
        least the time at or above the temperature, for one and the same row (empty: none).
    """

    organism: str
    source: str
    log_reduction: float
    d_ref_s: float
    t_ref_c: float
    z_k: float
    min_temp_c: float | None
    carry_over_s: float
    lethality_cap_c: float
    time_at_temperature: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class PlanningSpec:
    """Planner settings.

    Attributes
    ----------
    flip_cost_s : float
        Cook-time equivalent charged per flip when choosing the flip count, s.
    spectral_nodes : int
        Chebyshev nodes of the reduced model (its enthalpy states), -.
    lethality_points : int
        Equally spaced points where the reduced model integrates the log reduction, -.
    elements_per_phase : int
        Collocation elements per phase, -.
    reference_cells : int
        Finite-volume cells of the reference model, -.
    reference_step_s : float
        Largest time step of the reference model, s.
    calibration_rounds : int
        Largest number of rounds of the reference-calibrated correction of each plan
        (:mod:`obvert.certify.calibrate`), -; 0: plans are the reduced model's alone.
    min_margin_log : float
        Margin every certified schedule must keep above the reference model's estimated
        discretisation error, log10 reductions.
    reference_refinement : int
        The error check runs the binding scenario on this many times the cells (same step)
        and on this many times the time step (same cells), -.
    method : str
        ``search`` (event times searched on a coarse finite-volume model) or
        ``collocation`` (optimal control on the reduced model).
    search_cells : int
        Finite-volume cells of the search model, -.
    search_step_s : float
        Largest time step of the search model, s.
    reference_polish : str
        ``off``, or ``last_event``: the chosen plan's last event searched on the reference
        itself (search method only).
    """

    flip_cost_s: float
    spectral_nodes: int
    lethality_points: int
    elements_per_phase: int
    reference_cells: int
    reference_step_s: float
    calibration_rounds: int = 3
    min_margin_log: float = 0.1
    reference_refinement: int = 2
    method: str = "search"
    search_cells: int = 30
    search_step_s: float = 0.5
    reference_polish: str = "off"


@dataclass(frozen=True)
class ToleranceSpec:
    """How far the real appliance and food may stray from nominal; all default to zero.

    Attributes
    ----------
    plate_offset_k : float
        Heated surfaces (plate and platen) may sit this far below their setpoint, K.
    plate_droop_k : float
        Further drop of the heated surfaces when a cold load lands, K; it recovers
        exponentially with time constant ``plate_recovery_s``.
    plate_recovery_s : float
        Recovery time constant of the droop, s.
    contact_low_fraction : float
        Contact coefficients (plate and platen) may be this fraction below nominal, -.
    thickness_error_m : float
        The measured thickness may be off by up to this much either way, m.
    start_temp_error_k : float
        The measured start temperature may be off by up to this much either way, K.
    fat_fraction : tuple of float or None
        Range of the fat mass fraction (composition foods only), -; None: nominal only.
    """

    plate_offset_k: float = 0.0
    plate_droop_k: float = 0.0
    plate_recovery_s: float = 30.0
    contact_low_fraction: float = 0.0
    thickness_error_m: float = 0.0
    start_temp_error_k: float = 0.0
    fat_fraction: tuple[float, float] | None = None

    @property
    def any(self) -> bool:
        """True when at least one tolerance is declared."""
        return bool(
            self.plate_offset_k
            or self.plate_droop_k
            or self.contact_low_fraction
            or self.thickness_error_m
            or self.start_temp_error_k
            or self.fat_fraction is not None
        )


@dataclass(frozen=True)
class Spec:
    """A whole cook-program spec.

    Attributes
    ----------
    name : str
        Table name: C identifier-safe, used for file names and symbol prefixes.
    title : str
        Free-text title.
    food : FoodSpec
        The product.
    grid : GridSpec
        Table grid and envelope.
    appliance : ApplianceSpec
        The appliance.
    safety : SafetySpec
        The lethality target.
    planning : PlanningSpec
        Planner settings.
    targets : tuple of str
        Output target profiles to emit by default.
    tolerances : ToleranceSpec
        Declared tolerances of appliance and food.
    """

    name: str
    title: str
    food: FoodSpec
    grid: GridSpec
    appliance: ApplianceSpec
    safety: SafetySpec
    planning: PlanningSpec
    targets: tuple[str, ...]
    tolerances: ToleranceSpec = ToleranceSpec()

    def to_dict(self) -> dict[str, object]:
        """JSON-safe nested dict of the spec in SI units (tuples become lists)."""
        return _jsonable(asdict(self))


def _jsonable(obj: object) -> object:
    if isinstance(obj, dict):
        return {str(k): _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, float) and obj != obj:
        raise ValueError("NaN in spec")
    return obj
