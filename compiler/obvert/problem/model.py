"""A spec turned into physics, once: surroundings, kinetics, target, scenarios, settings.

Every later stage (planning, calibration, certification of nodes and cells) reads the same
:class:`Problem`, so the food's property tables are built once per build and every default
(the reduced model's size, the reference's mesh) has one home: the spec.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from obvert.food.criteria import HoldRule, Requirement
from obvert.food.lethality import LethalityModel
from obvert.food.table import PropertyTable
from obvert.problem.scenarios import Scenario, nominal, scenarios
from obvert.spec.model import Spec
from obvert.thermal.boundary import FaceBC, Surroundings
from obvert.thermal.reference import ReferenceSettings
from obvert.thermal.spectral import SpectralModel, SpectralSettings


@dataclass(frozen=True)
class Case:
    """One food on one appliance: everything a reference run of a schedule needs.

    Attributes
    ----------
    table : PropertyTable
        Food properties.
    thickness_m : float
        Slab thickness, m.
    start_temp_c : float
        Uniform start temperature, degC.
    env : Surroundings
        Plate, air, platen.
    lethality : LethalityModel
        Kinetics.
    requirement : Requirement
        Target.
    settings : ReferenceSettings
        Reference discretisation.
    """

    table: PropertyTable
    thickness_m: float
    start_temp_c: float
    env: Surroundings
    lethality: LethalityModel
    requirement: Requirement
    settings: ReferenceSettings


@dataclass(frozen=True)
class Problem:
    """The physics of one spec.

    Attributes
    ----------
    spec : Spec
        The spec it was made from.
    env : Surroundings
        Plate, air and platen as declared (nominal).
    lethality : LethalityModel
        Kinetics of the safety target.
    requirement : Requirement
        What every point must reach.
    reference : ReferenceSettings
        Discretisation of the reference model.
    spectral : SpectralSettings
        Settings of the reduced model.
    scenarios : tuple of Scenario
        The scenarios every schedule must pass (the worst corner of the tolerances, one per
        end of a fat range; the nominal one when no tolerances are declared).
    nominal : Scenario or None
        The nominal scenario when tolerances are declared (for the price of robustness).
    sequences : tuple of tuple of str
        Event sequences (before done) the planner tries, in order.
    search : ReferenceSettings
        Mesh of the finite-volume model the event-time search runs on (coarser than the
        reference's).
    """

    spec: Spec
    env: Surroundings
    lethality: LethalityModel
    requirement: Requirement
    reference: ReferenceSettings
    spectral: SpectralSettings
    scenarios: tuple[Scenario, ...]
    nominal: Scenario | None
    sequences: tuple[tuple[str, ...], ...]
    search: ReferenceSettings

    def cases_at(self, thickness_m: float, start_temp_c: float) -> tuple[Case, ...]:
        """Reference cases of every scenario behind a *measured* point (m, degC)."""
        return tuple(self.case(s, thickness_m, start_temp_c) for s in self.scenarios)

    def search_cases_at(self, thickness_m: float, start_temp_c: float) -> tuple[Case, ...]:
        """The cases of :meth:`cases_at` on the search mesh."""
        return tuple(
            replace(c, settings=self.search) for c in self.cases_at(thickness_m, start_temp_c)
        )

    def case(self, scenario: Scenario, thickness_m: float, start_temp_c: float) -> Case:
        """The reference case of ``scenario`` behind a measured point (m, degC)."""
        return Case(
            scenario.table,
            thickness_m + scenario.thickness_offset_m,
            start_temp_c + scenario.start_offset_k,
            scenario.env,
            self.lethality,
            self.requirement,
            self.reference,
        )

    def reduced_model(self, scenario: Scenario, thickness_m: float) -> SpectralModel:
        """The reduced model of ``scenario`` for a measured thickness (m)."""
        thick = thickness_m + scenario.thickness_offset_m
        return SpectralModel(scenario.table, thick, self.lethality, self.spectral)


def surroundings(spec: Spec) -> Surroundings:
    """Plate, air and flip conditions of the spec's appliance, as declared."""
    a = spec.appliance
    return Surroundings(
        plate=FaceBC(a.contact_coefficient, a.plate_temp_c),
        air=FaceBC(a.air_coefficient, a.air_temp_c, a.emissivity),
        platen=None
        if a.platen_temp_c is None or a.platen_coefficient is None
        else FaceBC(a.platen_coefficient, a.platen_temp_c),
        flip_air_s=a.flip_air_s,
    )


def sequences(spec: Spec) -> tuple[tuple[str, ...], ...]:
    """Event sequences (before done) the planner tries for the spec's appliance."""
    a = spec.appliance
    flips = [("flip",) * n for n in range(a.max_flips + 1)]
    if a.kind == "flipping_griddle":
        return tuple(flips)
    closes = [(*f, "platen_close") for f in flips]
    return tuple(closes if a.kind == "clamshell" else flips + closes)


def problem_of(spec: Spec) -> Problem:
    """Turn a checked spec into physics (property tables built here, once).

    Parameters
    ----------
    spec : Spec
        A spec from :func:`obvert.spec.load_spec`.

    Returns
    -------
    Problem
        Everything the planner and the certifier read.
    """
    env = surroundings(spec)
    s, p = spec.safety, spec.planning
    return Problem(
        spec=spec,
        env=env,
        lethality=LethalityModel(s.d_ref_s, s.t_ref_c, s.z_k, cap_c=s.lethality_cap_c),
        requirement=Requirement(
            s.log_reduction,
            s.min_temp_c,
            s.carry_over_s,
            tuple(HoldRule(t, h) for t, h in s.time_at_temperature),
        ),
        reference=ReferenceSettings(p.reference_cells, p.reference_step_s),
        spectral=SpectralSettings(p.spectral_nodes, lethality_points=p.lethality_points),
        scenarios=scenarios(spec, env),
        nominal=nominal(spec, env) if spec.tolerances.any else None,
        sequences=sequences(spec),
        search=ReferenceSettings(p.search_cells, p.search_step_s),
    )
