"""The compiled cook table: certified nodes and cells, as Python values."""

from __future__ import annotations

from dataclasses import dataclass

from obvert.certify.cells import CellResult
from obvert.plan.schedule import Schedule
from obvert.spec.model import Spec

#: How a candidate's note starts when the sequence was left out on purpose, not tried.
NOT_SEARCHED = "not searched: "


@dataclass(frozen=True)
class Candidate:
    """One flip count tried at a node.

    Attributes
    ----------
    flips : int
        Number of flips.
    planned_cook_time_s : float | None
        Minimum cook time on the planner's model, s (None: the solve failed, or the
        sequence was not searched).
    note : str
        Solver status, or why it failed; starts with :data:`NOT_SEARCHED` when the
        sequence was left out on purpose.
    sequence : tuple of str
        The events before done that were planned.
    calibrated_cook_time_s : float | None
        Cook time after the reference-calibrated correction, s (None: not corrected, as
        for candidates far from the best).
    """

    flips: int
    planned_cook_time_s: float | None
    note: str
    sequence: tuple[str, ...] = ()
    calibrated_cook_time_s: float | None = None

    @property
    def failed(self) -> bool:
        """The sequence was tried and gave no plan (one left out on purpose did not fail)."""
        return self.planned_cook_time_s is None and not self.note.startswith(NOT_SEARCHED)


@dataclass(frozen=True)
class Node:
    """A certified table entry.

    Attributes
    ----------
    i, j : int
        Indices on the thickness and start-temperature axes.
    thickness_m : float
        Node thickness, m.
    start_temp_c : float
        Node start temperature, degC.
    schedule : Schedule
        Certified schedule, event times in whole ticks, s.
    planned_cook_time_s : float
        Cook time of the chosen plan before quantisation, s.
    extension_s : float
        Extension of the done time that certification needed, s.
    reference_error_log : float
        Estimated discretisation error of the reference's smallest log reduction at the
        certified schedule (Richardson, binding scenario), log10.
    reference_error_k : float
        Same for the coldest temperature at removal, K.
    required_margin_log : float
        The margin certification demanded: the error plus the spec's minimum, log10.
    min_log_reduction : float
        Smallest reference-model log reduction over the slab, log10.
    margin_log : float
        ``min_log_reduction`` minus the target, log10 (>= 0).
    min_temp_at_removal_c : float
        Coldest point at removal on the reference model, degC.
    hold_margin_s : float or None
        Time-at-temperature rule: the smallest spare time over every point for the best
        row, s (None: no such rule).
    candidates : tuple of Candidate
        Every flip count tried.
    bounds_s : tuple of (str, float or None)
        Physical limits of the cook time on the reduced model (see obvert.plan.bounds), s.
    nominal_planned_s : float or None
        Cook time the same event sequence would need at nominal conditions (no
        tolerances), s; None when no tolerances are declared (the plan is nominal). The
        search planner estimates it on its search mesh, carried to the reference by the
        robust plan's ratio of reference to search-mesh done time.
    model_planned_s : float or None
        Cook time of the chosen sequence on the reduced model before the
        reference-calibrated correction, s (None: no correction asked).
    calibration_note : str
        How the correction ended (rounds, the model-reference gap).
    planned_dwell_s : tuple of float
        Time on the plate before each event of the chosen plan, before ticks, s.
    """

    i: int
    j: int
    thickness_m: float
    start_temp_c: float
    schedule: Schedule
    planned_cook_time_s: float
    extension_s: float
    reference_error_log: float
    reference_error_k: float
    required_margin_log: float
    min_log_reduction: float
    margin_log: float
    min_temp_at_removal_c: float
    hold_margin_s: float | None
    candidates: tuple[Candidate, ...]
    bounds_s: tuple[tuple[str, float | None], ...] = ()
    nominal_planned_s: float | None = None
    model_planned_s: float | None = None
    calibration_note: str = ""
    planned_dwell_s: tuple[float, ...] = ()


@dataclass(frozen=True)
class CookTable:
    """A certified cook table: the spec and one node per grid point (i-major).

    Attributes
    ----------
    spec : Spec
        The spec it was built from.
    nodes : tuple of Node
        Entries, index ``i * n_temps + j``.
    cells : tuple of (str, tuple of CellResult)
        Per lookup rule, the certified cells (empty until :mod:`obvert.table.compile`
        has certified them).
    """

    spec: Spec
    nodes: tuple[Node, ...]
    cells: tuple[tuple[str, tuple[CellResult, ...]], ...] = ()
