"""Planner cost: cold against neighbour-started solves, and the evaluation cost per build.

Run from the repository root (long; not part of any test run)::

    OMP_NUM_THREADS=1 python tests/bench/plan_solve.py --thickness 9 --start -18,-6 --flips 2

For one thickness of the demo spec (``compiler/obvert/demo/griddle_patty.toml``, its
``[tolerances]`` scenarios) and each flip count up to ``--flips``, it solves the first start
temperature cold (as the grid sweep does: the equal-dwell guess and the (n-1)-flip optimum
with its last dwell split), then every further start temperature twice: cold, and from the
previous node's solution (``Planner.solve(..., neighbours=...)``). It prints CPU seconds,
IPOPT iterations (of the start that won), the optimum and the spread between the two.

``--evaluation`` also times the NLP's constraint Jacobian and Lagrangian Hessian
evaluations of the two element builds (``mx``, the baseline, and ``sx``) at the same point
in the same run, and prints their ratio. Figures are ratios within one run; machine load
moves absolute times.
"""

from __future__ import annotations

import argparse
import time
from importlib.resources import files

import numpy as np

from obvert.plan.collocation import BlockCache, Grid
from obvert.plan.ocp import Member, PlanError, Planner, PlanResult
from obvert.spec import load_spec


def _planner(spec, thick_m: float, evaluation: str = "mx"):
    from obvert.problem import problem_of

    problem = problem_of(spec)
    req, scens = problem.requirement, problem.scenarios
    members = [Member(problem.reduced_model(s, thick_m), s.env) for s in scens]
    grid = Grid(spec.planning.elements_per_phase)
    planner = Planner(
        members[0].model,
        members[0].env,
        req,
        spec.appliance.min_event_gap_s,
        grid,
        extra=tuple(members[1:]),
        evaluation=evaluation,
    )
    return planner, scens[0].start_offset_k


def _split_last(dwell: tuple[float, ...], air: float) -> np.ndarray:
    last = dwell[-1]
    return np.array([*dwell[:-1], 0.5 * last, max(0.5 * last - air, 0.0)])


def _timed(fn) -> tuple[PlanResult | None, float, str]:
    c = time.process_time()
    try:
        res = fn()
    except PlanError as exc:
        return None, time.process_time() - c, str(exc)[:160]
    return res, time.process_time() - c, res.solver_status


def _evaluation_ratio(spec, thick_m: float, kinds: tuple[str, ...], repeat: int) -> None:
    """Jacobian and Hessian evaluation CPU of the two builds at one point, same run."""
    from obvert.plan._nlp import Transcription

    out = {}
    for ev in ("mx", "sx"):
        planner, _ = _planner(spec, thick_m, ev)
        models = [m.model for m in planner.members]
        tr = Transcription(
            planner.members, planner.req, kinds, BlockCache(models, planner.grid, ev)
        )
        for name in ("nlp_jac_g", "nlp_hess_l"):
            f = tr.solver.get_function(name)
            rng = np.random.default_rng(0)
            args = [rng.uniform(0.2, 0.6, (f.size1_in(i), f.size2_in(i))) for i in range(f.n_in())]
            f(*args)
            c = time.process_time()
            for _ in range(repeat):
                f(*args)
            out[(ev, name)] = (time.process_time() - c) / repeat
    for name in ("nlp_jac_g", "nlp_hess_l"):
        mx, sx = out[("mx", name)], out[("sx", name)]
        print(f"  {name}: mx {mx * 1e3:.1f} ms, sx {sx * 1e3:.1f} ms, sx/mx {sx / mx:.2f}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--thickness", type=float, default=9.0, help="mm")
    ap.add_argument("--start", default="-18,-6", help="start temperatures, degC, comma-separated")
    ap.add_argument("--flips", type=int, default=2)
    ap.add_argument("--evaluation", action="store_true", help="also time mx against sx")
    args = ap.parse_args()
    spec = load_spec(str(files("obvert.demo") / "griddle_patty.toml"))
    thick = args.thickness * 1e-3
    temps = [float(v) for v in args.start.split(",")]
    air = spec.appliance.flip_air_s
    if args.evaluation:
        print(f"evaluation cost, {args.thickness:g} mm, one flip (20 evaluations each)")
        _evaluation_ratio(spec, thick, ("flip",), 20)
    planner, off = _planner(spec, thick)
    print("mm  degC flips | cold: CPU s  iter  cook s | neighbour: CPU s  iter  cook s | spread s")
    prev_node: dict[int, PlanResult] = {}
    for j, t0 in enumerate(temps):
        prev: PlanResult | None = None
        for n in range(args.flips + 1):
            kinds = ("flip",) * n
            seeds = () if prev is None else (_split_last(prev.dwell_s, air),)
            cold, c_cpu, c_note = _timed(lambda: planner.solve(kinds, t0 + off, seeds))  # noqa: B023
            row = f"{args.thickness:4g} {t0:5g} {n:3d} | "
            row += (
                f"{c_cpu:7.2f} {cold.iterations:4d} {cold.cook_time_s:9.3f} | "
                if cold
                else f"{c_cpu:7.2f} FAIL {c_note} | "
            )
            nb = prev_node.get(n)
            if j > 0 and nb is not None and nb.solution is not None:
                warm, w_cpu, w_note = _timed(
                    lambda: planner.solve(kinds, t0 + off, neighbours=(nb.solution,))  # noqa: B023
                )
                if warm:
                    spread = abs(warm.cook_time_s - cold.cook_time_s) if cold else float("nan")
                    row += f"{w_cpu:7.2f} {warm.iterations:4d} {warm.cook_time_s:9.3f} | "
                    row += f"{spread:.1e}"
                else:
                    row += f"{w_cpu:7.2f} FAIL {w_note}"
            print(row, flush=True)
            prev = cold
            if cold is not None:
                prev_node[n] = cold


if __name__ == "__main__":
    main()
