"""Benchmark: a whole build's speed, and the plans against the brute-force optimum.

Usage: ``python tests/bench/build_speed.py [--quick] [--jobs N] [--skip-brute-force]``

Printed, all in one run (figures are ratios against baselines measured in the same run):

* the demo build (the production-size demo ``griddle_line``: 10 thicknesses by 8 start
  temperatures, up to 4 flips, tolerances on; or a 2 x 2 corner of it with ``--quick``):
  wall time and nodes; then every row again in this process, each node's own CPU time in
  units of one reference run of that node's certified schedule (the least CPU time of three
  runs of the schedule at the spec's reference settings), and the whole build (wall time
  times jobs) in the same units;
* cold against warm: one node of the demo (12 mm from -14 degC) searched for 2 and for 4
  flips from evenly spaced flips and from the prediction of its two neighbours at -18 and
  -10 degC (continuation; simplex, and the trust region the build uses), in runs of the
  search mesh and seconds;
* for two nodes of the demo (10 mm from 4 degC with one flip, and with two flips), the
  brute-force optimum on the reference model: every flip time on a grid (2 s, then 0.1 s
  around the best; for two flips a 4 s grid, then coordinate refinement), the earliest
  passing done of each found by certification (one long reference run read off, confirmed
  by exact runs), against the cook time of the table's plan for the same flip count
  (planned, calibrated and certified at the same single scenario), the relative gap and
  the ratio of the brute force's time to the plan's; the plan with and without
  ``[planning] reference_polish = "last_event"`` (the last event searched on the reference);
* with ``--polish``, also the demo build with that setting (wall time and node costs).

Figures of a run are recorded in docs/speed.md.
"""

from __future__ import annotations

import argparse
import time
from dataclasses import replace

import obvert
from obvert.certify.node import CertificationError, certify, judge
from obvert.plan.schedule import Event, Schedule
from obvert.problem import problem_of
from obvert.table import ProgressEvent


def _spec(quick: bool, demo: str) -> obvert.Spec:
    if quick:
        return obvert.demo_spec(
            demo, thickness=["6 mm", "12 mm"], start_temperature=["-18 degC", "4 degC"]
        )
    return obvert.demo_spec(demo)


def build_figures(spec: obvert.Spec, jobs: int) -> None:
    rows: list[tuple[float, int, float]] = []
    last = [time.perf_counter()]

    def on_progress(event: ProgressEvent) -> None:
        now = time.perf_counter()
        rows.append((now - last[0], event.done, event.total))
        last[0] = now

    t0 = time.perf_counter()
    table = obvert.compile_table(spec, ["json"], progress=on_progress, jobs=jobs)
    wall = time.perf_counter() - t0
    n = len(table.nodes)
    print(f"demo build: {n} nodes, {wall:.1f} s wall on {jobs} job(s), {wall / n:.2f} s per node")
    node_costs(spec, table, wall * jobs)


def node_costs(spec: obvert.Spec, table: obvert.CookTable, build_core_s: float) -> None:
    """Each node's own CPU time (the rows again, in this process) over one reference run.

    One reference run is the least CPU time of three runs of the node's certified schedule
    (single runs of a tenth of a second are noisy on a shared machine). ``build_core_s``
    (the build's wall time times its jobs) is put in the same units: the whole build's cost
    in reference runs per node, a figure the machine's speed of the day does not move.
    """
    import statistics

    import obvert.table.searched as searched

    spent: dict[tuple[int, int], float] = {}
    plain = searched._node

    def timed(problem, i, j, *args):  # noqa: ANN001, ANN202 (a benchmark's wrapper)
        t1 = time.process_time()
        try:
            return plain(problem, i, j, *args)
        finally:
            spent[(i, j)] = time.process_time() - t1

    problem = problem_of(spec)
    searched._node = timed
    try:
        for i in range(len(spec.grid.thickness_m)):
            searched.search_row(problem, i)
    finally:
        searched._node = plain
    n_t = len(spec.grid.start_temp_c)
    ratios = []
    all_once = 0.0
    for node in table.nodes:
        case = problem.cases_at(node.thickness_m, node.start_temp_c)[0]
        times = []
        for _ in range(3):
            t1 = time.process_time()
            judge(case, node.schedule)
            times.append(time.process_time() - t1)
        one = min(times)
        all_once += one
        cpu = spent[(node.i, node.j)]
        ratios.append(cpu / one)
        print(
            f"  {node.thickness_m * 1e3:5.1f} mm {node.start_temp_c:6.1f} degC: "
            f"{node.schedule.flips} flip(s), cook {node.schedule.done_s:7.1f} s, node "
            f"{cpu:6.2f} s CPU, one reference run {one:.3f} s: {cpu / one:6.1f} reference runs"
        )
    print(
        f"node cost in reference runs of itself: median {statistics.median(ratios):.1f}, "
        f"min {min(ratios):.1f}, max {max(ratios):.1f} ({len(ratios)} nodes of {n_t} per row); "
        f"{sum(r <= 10.0 for r in ratios)} nodes at or below 10"
    )
    print(
        f"one reference run of every node: {all_once:.1f} s CPU in all; the whole build (wall "
        f"times jobs, {build_core_s:.1f} s) is {build_core_s / all_once:.1f} reference runs "
        "per node"
    )


def _earliest_done(cases, flips: tuple[float, ...], tick: float, done_guess: float) -> float | None:
    events = tuple(Event("flip", f) for f in flips)
    start = max(done_guess, (flips[-1] if flips else 0.0) + 12.0)
    sched = Schedule((*events, Event("done", round(start / tick) * tick)))
    try:
        return certify(cases, sched, tick, max_extension=3.0).schedule.done_s
    except (CertificationError, ValueError):
        return None


def brute_force(
    cases, n_flips: int, tick: float, horizon: float
) -> tuple[float, tuple[float, ...], float]:
    """The shortest certified cook over flip times on a grid, refined; (done, flips, seconds)."""
    t0 = time.perf_counter()
    best: tuple[float, tuple[float, ...]] = (float("inf"), ())

    def consider(flips: tuple[float, ...]) -> None:
        nonlocal best
        d = _earliest_done(cases, flips, tick, 0.5 * horizon)
        if d is not None and d < best[0]:
            best = (d, flips)

    if n_flips == 1:
        for f in range(10, int(horizon), 2):
            consider((float(f),))
        f0 = best[1][0]
        for k in range(-20, 21):
            consider((round(f0 + 0.1 * k, 1),))
    else:
        for f1 in range(10, int(horizon), 4):
            for f2 in range(f1 + 12, int(horizon), 4):
                consider((float(f1), float(f2)))
        for step in (1.0, 0.2, 0.1):
            for _ in range(3):
                f1, f2 = best[1]
                for d1 in (-2, -1, 1, 2):
                    consider((round(f1 + d1 * step, 1), f2))
                f1, f2 = best[1]
                for d2 in (-2, -1, 1, 2):
                    consider((f1, round(f2 + d2 * step, 1)))
    return best[0], best[1], time.perf_counter() - t0


def optimum_figures(spec: obvert.Spec) -> None:
    spec1 = obvert.demo_spec("griddle", thickness=["10 mm"], start_temperature=["4 degC"])
    spec1 = replace(spec1, tolerances=type(spec1.tolerances)())  # one scenario: nominal
    tick = spec1.appliance.tick_s
    cases = list(problem_of(spec1).cases_at(0.010, 4.0))
    for flips in (1, 2):
        s = replace(spec1, appliance=replace(spec1.appliance, max_flips=flips))
        s = replace(s, planning=replace(s.planning, flip_cost_s=0.0))
        plans = []
        for polish in ("off", "last_event"):
            sp = replace(s, planning=replace(s.planning, reference_polish=polish))
            t0 = time.perf_counter()
            table = obvert.compile_table(sp, ["json"])
            plan_s = time.perf_counter() - t0
            node = table.nodes[0]
            # the plan's flip times with done found as the brute force finds it (no error
            # budget), so that the gap measures the plan, not the safety margin
            plan_flips = tuple(e.at_s for e in node.schedule.events if e.kind == "flip")
            plan_done = _earliest_done(cases, plan_flips, tick, node.schedule.done_s - 5.0)
            plans.append((polish, node, plan_flips, plan_done, plan_s))
        done, at, brute_s = brute_force(cases, flips, tick, 1.2 * plans[0][1].schedule.done_s)
        for polish, node, plan_flips, plan_done, plan_s in plans:
            gap = plan_done / done - 1.0
            print(
                f"10 mm from 4 degC, up to {flips} flip(s), reference_polish = {polish}: table "
                f"{node.schedule.done_s:.1f} s with its error budget, plan's flips {plan_flips} "
                f"alone {plan_done:.1f} s ({plan_s:.1f} s to build); brute force {done:.1f} s "
                f"(flips at {at}, {brute_s:.0f} s); gap {100 * gap:+.3f} %; brute force / plan "
                f"time {brute_s / plan_s:.0f}x"
            )


def warm_figures(spec: obvert.Spec) -> None:
    from obvert.search import Sequence, search_events
    from obvert.search.events import predict

    problem = problem_of(spec)
    a = spec.appliance
    thick = 0.012
    for flips in (2, 4):
        seq = Sequence(("flip",) * flips, a.min_event_gap_s, a.flip_air_s)
        history = []
        for t0 in (-18.0, -10.0):
            cases = problem.search_cases_at(thick, t0)
            cold = tuple(250.0 / (flips + 1) for _ in range(flips))
            history.append((t0, search_events(cases, seq, cold, 300.0).dwell_s))
        cases = problem.search_cases_at(thick, -14.0)
        figures = []
        for name, start, near in (
            ("cold start (simplex)", tuple(250.0 / (flips + 1) for _ in range(flips)), False),
            ("warm start (simplex)", tuple(predict(history, -14.0)), False),
            ("warm start (trust region, as the build)", tuple(predict(history, -14.0)), True),
        ):
            t1 = time.perf_counter()
            res = search_events(cases, seq, start, 300.0, near=near)
            figures.append((name, res.runs, time.perf_counter() - t1, res.done_s))
        cold_s = figures[0][2]
        print(
            f"12 mm from -14 degC, {flips} flips: "
            + "; ".join(
                f"{name} {runs} runs {sec:.2f} s (done {done:.2f} s, time {cold_s / sec:.1f}x "
                "below cold)"
                for name, runs, sec, done in figures
            )
        )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true", help="a 2 x 2 corner of the demo")
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--skip-brute-force", action="store_true")
    ap.add_argument(
        "--demo", default="griddle_line", help="built-in demo (griddle: 3 x 3, up to 2 flips)"
    )
    ap.add_argument(
        "--polish", action="store_true", help='also build with reference_polish = "last_event"'
    )
    args = ap.parse_args()
    spec = _spec(args.quick, args.demo)
    build_figures(spec, args.jobs)
    if args.polish:
        print('with [planning] reference_polish = "last_event":')
        polished = replace(spec, planning=replace(spec.planning, reference_polish="last_event"))
        build_figures(polished, args.jobs)
    warm_figures(spec)
    if not args.skip_brute_force:
        optimum_figures(spec)


if __name__ == "__main__":
    main()
