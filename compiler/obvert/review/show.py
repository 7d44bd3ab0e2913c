"""What one appliance would run for one measurement, and what the reference predicts for it.

The schedule comes from the table's own lookup rule (:func:`obvert.firmware.lookup`, bit-exact
with the generated C), so it is what the firmware answers for those inputs, cell pad included.
It is then run on the reference model at the measured point under every tolerance scenario
of the spec; the scenario with the smallest final log reduction (the worst) is the one shown.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from obvert.certify.node import judge
from obvert.firmware import EVENT_KINDS, LookupStatus, lookup
from obvert.plan.schedule import Event, Schedule, phases_for
from obvert.problem import Case, problem_of
from obvert.spec import Spec
from obvert.thermal.reference import ReferenceResult, food_frame, simulate

#: What a refused lookup means, in words.
STATUS_WORDS = {
    LookupStatus.NAN: "a measurement is not a number",
    LookupStatus.THICKNESS_BELOW: "thickness below the table's envelope",
    LookupStatus.THICKNESS_ABOVE: "thickness above the table's envelope",
    LookupStatus.START_TEMP_BELOW: "start temperature below the table's envelope",
    LookupStatus.START_TEMP_ABOVE: "start temperature above the table's envelope",
}


@dataclass(frozen=True)
class EventPrediction:
    """The reference's prediction at one event.

    Attributes
    ----------
    kind : str
        Event kind.
    at_s : float
        Event time, s.
    cold_spot_c : float
        Coldest point of the food at the event, degC.
    log_reduction : float
        Smallest log reduction over the food at the event (the cold spot's), log10.
    """

    kind: str
    at_s: float
    cold_spot_c: float
    log_reduction: float


@dataclass(frozen=True)
class Shown:
    """One looked-up schedule and its reference prediction.

    Attributes
    ----------
    thickness_m, start_temp_c : float
        The measured point, m and degC.
    rule : str
        Lookup rule used (``corner`` or ``bilinear``).
    status : int
        Lookup status (0: a schedule was found).
    node, cell : int or None
        What answered (see :class:`obvert.firmware.LookupResult`).
    schedule : Schedule or None
        Event times, s (None when refused).
    scenario : str
        Name of the worst tolerance scenario (empty when refused).
    events : tuple of EventPrediction
        The prediction at each event, in order.
    final_log_reduction : float
        Smallest log reduction at the end (after any credited rest), log10.
    target_log_reduction : float
        Target of the spec, log10.
    passed : bool
        The reference verdict of the worst scenario.
    """

    thickness_m: float
    start_temp_c: float
    rule: str
    status: int
    node: int | None
    cell: int | None
    schedule: Schedule | None
    scenario: str
    events: tuple[EventPrediction, ...]
    final_log_reduction: float
    target_log_reduction: float
    passed: bool


def schedule_of(manifest: dict[str, Any], events: tuple[tuple[int, int], ...]) -> Schedule:
    """A :class:`Schedule` in seconds from lookup events ``(kind code, at_ticks)``."""
    tick = float(manifest["tick_s"])
    return Schedule(tuple(Event(EVENT_KINDS[k], round(at * tick, 9)) for k, at in events))


def run_case(case: Case, schedule: Schedule) -> ReferenceResult:
    """The reference run of ``schedule`` in ``case`` (credited rest included)."""
    phases = phases_for(schedule, case.env, rest_s=case.requirement.rest_s)
    return simulate(
        case.table, case.thickness_m, case.start_temp_c, phases, case.lethality, case.settings
    )


def worst_case(cases: tuple[Case, ...], schedule: Schedule) -> Case:
    """The case whose verdict on ``schedule`` has the smallest log reduction."""
    verdicts = [judge(c, schedule) for c in cases]
    return cases[int(np.argmin([v.min_log_reduction for v in verdicts]))]


def predictions(result: ReferenceResult, schedule: Schedule) -> tuple[EventPrediction, ...]:
    """Cold spot and smallest log reduction at each event time of ``schedule``."""
    temps, lr = food_frame(result)
    out = []
    for e in schedule.events:
        row = max(int(np.searchsorted(result.t_s, e.at_s + 1e-9, side="right")) - 1, 0)
        out.append(EventPrediction(e.kind, e.at_s, float(temps[row].min()), float(lr[row].min())))
    return tuple(out)


def show(
    manifest: dict[str, Any], spec: Spec, thickness_m: float, start_temp_c: float, rule: str
) -> Shown:
    """Look up the schedule for a measured point and predict it on the reference model.

    Parameters
    ----------
    manifest : dict
        A checked manifest.
    spec : Spec
        The spec the table was built from.
    thickness_m : float
        Measured thickness, m.
    start_temp_c : float
        Measured start temperature, degC.
    rule : str
        ``corner`` or ``bilinear`` (the rule of the firmware target).

    Returns
    -------
    Shown
        With ``status != 0`` (no schedule) when the lookup refuses the point.
    """
    res = lookup(manifest, thickness_m, start_temp_c, rule=rule)
    target = float(spec.safety.log_reduction)
    if res.status != 0:
        return Shown(
            thickness_m,
            start_temp_c,
            rule,
            res.status,
            None,
            None,
            None,
            "",
            (),
            0.0,
            target,
            False,
        )
    schedule = schedule_of(manifest, res.events)
    problem = problem_of(spec)
    cases = problem.cases_at(thickness_m, start_temp_c)
    case = worst_case(cases, schedule)
    scenario = problem.scenarios[cases.index(case)].name
    verdict = judge(case, schedule)
    result = run_case(case, schedule)
    return Shown(
        thickness_m,
        start_temp_c,
        rule,
        0,
        res.node,
        res.cell,
        schedule,
        scenario,
        predictions(result, schedule),
        verdict.min_log_reduction,
        target,
        verdict.passed,
    )


def status_text(manifest: dict[str, Any], status: int) -> str:
    """A refused lookup's status in words, with the envelope it refers to."""
    env = manifest["envelope"]
    x0, x1 = (v * 1e3 for v in env["thickness_m"])
    t0, t1 = env["start_temp_c"]
    words = STATUS_WORDS.get(LookupStatus(status), f"status {status}")
    return (
        f"{words} (lookup status {status}; the table covers {x0:g} to {x1:g} mm and "
        f"{t0:g} to {t1:g} degC)"
    )


def show_text(manifest: dict[str, Any], shown: Shown) -> str:
    """Plain-text view of :func:`show`'s answer."""
    head = (
        f"table {manifest['table']['name']}: {shown.thickness_m * 1e3:.2f} mm, "
        f"{shown.start_temp_c:.1f} degC, lookup rule {shown.rule}"
    )
    if shown.status != 0:
        return head + "\nno schedule: " + status_text(manifest, shown.status)
    nodes = manifest["nodes"]
    if shown.node is not None:
        n = nodes[shown.node]
        what = f"node {shown.node} ({n['thickness_m'] * 1e3:.2f} mm, {n['start_temp_c']:.1f} degC)"
    else:
        what = "interpolated between the corners of its cell"
    if shown.cell is not None:
        what += f", cell {shown.cell}"
    lines = [
        head,
        f"answered by {what}",
        f"reference run at the measured point, worst tolerance scenario: {shown.scenario}",
        f"{'event':>13} {'at s':>8} {'cold spot degC':>15} {'log reduction':>14}",
    ]
    for e in shown.events:
        lines.append(f"{e.kind:>13} {e.at_s:8.1f} {e.cold_spot_c:15.1f} {e.log_reduction:14.3f}")
    verdict = "passes" if shown.passed else "FAILS"
    lines.append(
        f"end of cook: smallest log reduction {shown.final_log_reduction:.3f} "
        f"(target {shown.target_log_reduction:g}, margin "
        f"{shown.final_log_reduction - shown.target_log_reduction:+.3f}); reference verdict: "
        f"{verdict}"
    )
    return "\n".join(lines)
