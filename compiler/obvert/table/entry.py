"""A planned schedule turned into a certified table entry (shared by both planners)."""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from obvert.certify.node import Certificate, CertificationError, ErrorBudget, certify
from obvert.firmware.contract import to_ticks
from obvert.plan.schedule import Schedule
from obvert.problem.model import Case, Problem
from obvert.table.model import Node


class BuildError(RuntimeError):
    """A grid node could not be planned or certified; nothing may be emitted."""


def node_name(at: tuple[float, float]) -> str:
    """How messages name the node at (thickness m, start degC)."""
    return f"node (thickness {at[0] * 1e3:g} mm, start {at[1]:g} degC)"


def certified_node(
    problem: Problem,
    cases: Sequence[Case],
    ij: tuple[int, int],
    at: tuple[float, float],
    ticked: Schedule,
    planned_s: float,
    **fields: Any,
) -> tuple[Node, Certificate]:
    """Certify the tick-quantised ``ticked`` on the reference and make the node.

    Parameters
    ----------
    problem : Problem
        The spec's physics.
    cases : sequence of Case
        The node's reference cases (every tolerance scenario).
    ij : (int, int)
        Grid indices.
    at : (float, float)
        Thickness, m, and start temperature, degC.
    ticked : Schedule
        The plan with event times in whole ticks, s.
    planned_s : float
        Done time of the plan before ticks, s.
    **fields
        Further :class:`Node` fields (candidates, limits, notes).

    Raises
    ------
    BuildError
        The schedule cannot be certified, or an event is not a whole tick.
    """
    spec = problem.spec
    a, p = spec.appliance, spec.planning
    cell = node_name(at)
    try:
        budget = ErrorBudget(p.min_margin_log, p.reference_refinement)
        cert = certify(cases, ticked, a.tick_s, budget=budget)
    except CertificationError as exc:
        raise BuildError(f"{cell}: {exc}") from None
    for ev in cert.schedule.events:  # every emitted time is a whole tick
        if abs(to_ticks(ev.at_s, a.tick_s) * a.tick_s - ev.at_s) > 1e-9:
            raise BuildError(f"{cell}: event {ev.kind} at {ev.at_s} s is not a whole tick")
    node = Node(
        i=ij[0],
        j=ij[1],
        thickness_m=at[0],
        start_temp_c=at[1],
        schedule=cert.schedule,
        planned_cook_time_s=planned_s,
        extension_s=cert.extension_s,
        reference_error_log=cert.error.log if cert.error else 0.0,
        reference_error_k=cert.error.temp_k if cert.error else 0.0,
        required_margin_log=cert.required_margin_log,
        min_log_reduction=cert.verdict.min_log_reduction,
        margin_log=cert.margin_log,
        min_temp_at_removal_c=cert.verdict.min_temp_at_removal_c,
        hold_margin_s=cert.verdict.hold_margin_s,
        **fields,
    )
    return node, cert
