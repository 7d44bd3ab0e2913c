"""Minimum-time cook planning on the reduced model with CasADi and IPOPT.

For a fixed event sequence (say two flips then done) the decision variables are the dwell
times between events; each phase is transcribed by Radau collocation
(:mod:`obvert.plan.collocation`, :mod:`obvert.plan._nlp`). Constraints at removal: the log
reduction at every lethality point reaches the target, and, if asked, every point is at or
above the minimum temperature; consecutive events are at least the appliance's minimum gap
apart. :class:`Requirement`, :class:`Member` and :class:`PlanError` live in
:mod:`obvert.plan.problem` and are re-exported here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import casadi as ca
import numpy as np

from obvert.plan._nlp import DWELL_SCALE_S, Transcription, phase_specs
from obvert.plan.collocation import BlockCache, Grid, PhaseBlock
from obvert.plan.modifier import Modifier
from obvert.plan.problem import Member, PlanError, Requirement, Solution, predict
from obvert.plan.schedule import Schedule, Surroundings
from obvert.plan.schedule import Sequence as EventSequence
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel


@dataclass(frozen=True)
class PlanResult:
    """Outcome of one minimum-time solve.

    Attributes
    ----------
    schedule : Schedule
        Optimal schedule in continuous time, s.
    cook_time_s : float
        Done time, s.
    min_log_reduction : float
        Smallest node log reduction at removal on the reduced model.
    solver_status : str
        IPOPT's return status.
    dwell_s : tuple of float
        Time on the plate before each event, s.
    member_log_reduction : tuple of float
        Per scenario, the smallest log reduction over the lethality points at removal on
        the reduced model (uncorrected), log10.
    member_temp_c : tuple of float
        Per scenario, the coldest lethality point at removal on the reduced model, degC.
    bias : tuple of (float, float)
        Per scenario, the target correction at the solution (:class:`Modifier` shift):
        (log10 of the factor on the log reduction, kelvin on the removal temperature);
        zeros when uncorrected.
    iterations : int
        IPOPT iterations of the start that produced this result.
    solution : Solution or None
        The primal-dual point, to start a neighbouring node from (``neighbours`` of
        :meth:`Planner.solve`); picklable.
    """

    schedule: Schedule
    cook_time_s: float
    min_log_reduction: float
    solver_status: str
    dwell_s: tuple[float, ...]
    member_log_reduction: tuple[float, ...] = ()
    member_temp_c: tuple[float, ...] = ()
    bias: tuple[tuple[float, float], ...] = ()
    iterations: int = 0
    solution: Solution | None = field(default=None, compare=False, repr=False)


#: IPOPT return statuses of a solve stopped by an interrupt (Ctrl-C in this process).
INTERRUPTED = ("User_Requested_Stop",)

__all__ = ["Member", "PlanError", "PlanResult", "Planner", "Requirement", "Solution"]


class Planner:
    """Minimum-time planner for one slab thickness on one appliance.

    With ``extra`` scenarios the plan is robust: one schedule (shared event times) must
    meet the target in the main scenario and in every extra one at once.

    Parameters
    ----------
    model : SpectralModel
        Reduced model of the slab.
    env : Surroundings
        Plate, air and platen conditions.
    requirement : Requirement
        Safety target at removal.
    min_gap_s : float
        Minimum time between consecutive events (and from loading to the first), s.
    grid : Grid
        Collocation elements per phase.
    extra : sequence of Member
        Further scenarios the same schedule must satisfy (same flip air time).
    evaluation : str
        How the collocation equations are evaluated (:data:`obvert.plan.collocation.EVALUATIONS`).
    """

    def __init__(
        self,
        model: SpectralModel,
        env: Surroundings,
        requirement: Requirement,
        min_gap_s: float,
        grid: Grid | None = None,
        extra: tuple[Member, ...] = (),
        evaluation: str = "mx",
    ) -> None:
        self.model = model
        self.env = env
        self.members = (Member(model, env), *extra)
        for k, mem in enumerate(self.members):
            if mem.env.flip_air_s != env.flip_air_s:
                raise ValueError(f"extra[{k - 1}].env.flip_air_s differs from the main scenario")
        self.req = requirement
        self.min_gap_s = float(min_gap_s)
        self.grid = grid or Grid()
        self.hessian = "exact"
        self.blocks = BlockCache([mem.model for mem in self.members], self.grid, evaluation)
        self._traj: dict[tuple[int, FaceBC, FaceBC], ca.Function] = {}
        self._nlps: dict[tuple[str, ...], Transcription] = {}
        #: Every solution by (sequence, start, its dwells in s): NLP primal point, LR scales,
        #: and the bound and constraint multipliers (a start at those dwells reuses them).
        self._solutions: dict[tuple[tuple[str, ...], float, tuple[float, ...]], tuple] = {}

    def block(self, k: int, face0: FaceBC, face1: FaceBC) -> PhaseBlock:
        """Collocation block of scenario ``k`` for a pair of face conditions (cached)."""
        return self.blocks.block(k, face0, face1)

    def _trajectory(self, k: int, face0: FaceBC, face1: FaceBC) -> ca.Function:
        key = (k, face0, face1)
        if key not in self._traj:
            model = self.members[k].model
            self._traj[key] = model.trajectory(face0, face1, self.grid.stage_times())
        return self._traj[key]

    def _simulate(
        self, k: int, kinds: tuple[str, ...], start_temp_c: float, dwell: np.ndarray
    ) -> tuple[list[np.ndarray], list[np.ndarray], np.ndarray, np.ndarray]:
        """Scenario ``k`` on the reduced model (CVODES), a drooping plate as in the collocation.

        Returns the stage states per phase, the food-frame LR after each phase, the final
        LR and the temperatures at removal, all at the lethality points.
        """
        mem = self.members[k]
        model, n = mem.model, mem.model.n
        x = model.initial_state(start_temp_c + mem.start_offset_k)
        stages, lr, flipped, t_rem = [], np.zeros(model.m), False, np.zeros(model.m)
        lr_after: list[np.ndarray] = []
        elapsed = 0.0
        for ph in phase_specs(kinds, mem.env, self.req.rest_s):
            if ph.flip_before:
                x, flipped = np.array(model.flip(x)).ravel(), not flipped
            dur = float(dwell[ph.dwell_index]) if ph.dwell_index is not None else ph.fixed_s
            traj = np.array(self._trajectory(k, ph.face0, ph.face1)(x, dur, elapsed))
            elapsed += dur
            stages.append(traj[:n, :].T.ravel())
            lr_lab = traj[n:, -1] - x[n:]
            lr = lr + (lr_lab[::-1] if flipped else lr_lab)
            lr_after.append(lr.copy())
            x = traj[:, -1]
            if ph.is_removal:
                t_rem = np.array(model.lethality_temps(model.temperatures(x))).ravel()
        return stages, lr_after, lr, t_rem

    def _meets(
        self, kinds: tuple[str, ...], start_temp_c: float, dwell: np.ndarray, mod: Modifier
    ) -> bool:
        bias = mod.shift(dwell)
        for k in range(len(self.members)):
            _, _, lr, t_rem = self._simulate(k, kinds, start_temp_c, dwell)
            if np.log10(lr.min()) < np.log10(self.req.log_reduction) + bias[k, 0]:
                return False
            floor = self.req.min_temp_c
            if floor is not None and t_rem.min() < floor + bias[k, 1]:
                return False
        return True

    def _modifier(self, kinds: tuple[str, ...], mod: Modifier | None) -> Modifier:
        """``mod``, or no correction; checked against the scenarios and dwells."""
        n, nd = len(self.members), len(kinds) + 1
        if mod is None:
            return Modifier.zero(n, nd)
        if np.shape(mod.offset) != (n, 2) or np.size(mod.at_dwell_s) != nd:
            raise ValueError(
                f"modifier for {np.shape(mod.offset)[0]} scenarios and "
                f"{np.size(mod.at_dwell_s)} dwells: allowed {n} scenarios and {nd} dwells"
            )
        return mod

    # -- public ----------------------------------------------------------------------
    def lower_bounds(self, kinds: tuple[str, ...]) -> np.ndarray:
        """Smallest allowed dwell before each event, s (minimum gap less any flip air time)."""
        return self._sequence(kinds).lower_bounds()

    def _sequence(self, kinds: tuple[str, ...]) -> EventSequence:
        return EventSequence(kinds, self.min_gap_s, self.env.flip_air_s)

    def feasible_guess(
        self, kinds: tuple[str, ...], start_temp_c: float, mod: Modifier | None = None
    ) -> np.ndarray:
        """Equal dwells, scaled by bisection until the reduced model meets the target, s."""
        mod = self._modifier(kinds, mod)
        lb = self.lower_bounds(kinds)
        n = lb.size

        def dw(total: float) -> np.ndarray:
            return np.maximum(np.full(n, total / n), lb)

        lo, hi = 0.0, 60.0
        while not self._meets(kinds, start_temp_c, dw(hi), mod):
            lo, hi = hi, hi * 2.0
            if hi > 7200.0:
                raise PlanError(f"sequence {kinds}: target not reached within 2 h of cooking")
        while hi - lo > 0.02 * hi:
            mid = 0.5 * (lo + hi)
            lo, hi = (lo, mid) if self._meets(kinds, start_temp_c, dw(mid), mod) else (mid, hi)
        return dw(hi)

    def solve(
        self,
        kinds: tuple[str, ...],
        start_temp_c: float,
        seeds: tuple[np.ndarray, ...] = (),
        modifier: Modifier | None = None,
        warm: bool = False,
        neighbours: Sequence[Solution] = (),
    ) -> PlanResult:
        """Minimum-time schedule for the event sequence ``kinds`` (``done`` implied).

        IPOPT starts from the feasible equal-dwell guess and from each seed (dwell vectors,
        s, e.g. the solution with one flip fewer with its last dwell split); the fastest
        converged solution wins. A start that fails is skipped; if all fail, PlanError.

        ``modifier`` corrects the targets per scenario (:mod:`obvert.plan.modifier`, fitted
        by :mod:`obvert.certify.calibrate`): the model's log reduction must reach the target
        times ``10**shift[k, 0]`` and its removal temperature the floor plus ``shift[k, 1]``
        kelvin, the shift being affine in the dwells. With ``warm`` the seeds
        are taken to be near the optimum: IPOPT starts from them alone, and from the
        equal-dwell guess only if they all fail.

        ``neighbours`` (continuation): solutions (:attr:`PlanResult.solution`) of
        neighbouring nodes with the same sequence, scenarios and grid, e.g. the previous
        start temperature of the same thickness. IPOPT then starts from their primal-dual
        point, predicted by :func:`obvert.plan.problem.predict` (dwells scaled with the
        thickness squared, extrapolated linearly along the start temperature from two
        neighbours), with at most :data:`~obvert.plan._nlp.WARM_MAX_ITER` iterations. If
        that fails (e.g. across the freezing point), the predicted dwells are a seed as with
        ``warm`` (states re-simulated, a cold IPOPT start), and the cold starts above run only
        if that fails too.
        """
        if kinds not in self._nlps:
            self._nlps[kinds] = Transcription(
                self.members, self.req, kinds, self.blocks, self.hessian
            )
        tr = self._nlps[kinds]
        b = self._modifier(kinds, modifier)
        lb = self.lower_bounds(kinds)
        errors: list[str] = []
        if neighbours:
            pred = predict(
                neighbours, kinds, self.model.thickness_m, start_temp_c, tr.n_dwell, tr.time_blocks
            )
            d0 = np.clip(pred.primal[: tr.n_dwell] * DWELL_SCALE_S, lb, None)
            ub = np.full(lb.size, max(1.5 * float(d0.sum()), lb.max() + 1.0))
            try:
                return self._solve_from(tr, start_temp_c, d0, lb, ub, b, point=pred)
            except PlanError as exc:
                errors.append(f"start from {len(neighbours)} neighbour(s): {exc}")
            # the predicted dwells alone (states re-simulated), before the full cold starts
            seeds = (d0, *seeds)
            warm = True
        if warm and seeds:
            # a near-optimal seed (a correction round): skip the cold start unless it fails
            ub = np.full(lb.size, max(1.5 * float(np.sum(seeds[0])), lb.max() + 1.0))
            best = self._best(tr, start_temp_c, seeds, lb, ub, b, errors)
            if best is not None:
                return best
        guess = self.feasible_guess(kinds, start_temp_c, b)
        ub = np.full(lb.size, max(guess.sum(), lb.max() + 1.0))
        # seeds already tried (and failed) as warm starts are not tried again
        starts = (guess,) if warm and seeds else (guess, *seeds)
        best = self._best(tr, start_temp_c, starts, lb, ub, b, errors)
        if best is None:
            raise PlanError("; ".join(errors))
        return best

    def _best(
        self,
        tr: Transcription,
        start_temp_c: float,
        starts: Sequence[np.ndarray],
        lb: np.ndarray,
        ub: np.ndarray,
        mod: Modifier,
        errors: list[str],
    ) -> PlanResult | None:
        """Fastest converged solve over ``starts``; failures are appended to ``errors``."""
        best: PlanResult | None = None
        for start in starts:
            x0 = np.clip(np.asarray(start, dtype=float), lb, ub)
            try:
                res = self._solve_from(tr, start_temp_c, x0, lb, ub, mod)
            except PlanError as exc:
                errors.append(str(exc))
                continue
            if best is None or res.cook_time_s < best.cook_time_s - 1e-6:
                best = res
        return best

    def _solve_from(
        self,
        tr: Transcription,
        start_temp_c: float,
        start: np.ndarray,
        lb: np.ndarray,
        ub: np.ndarray,
        mod: Modifier,
        point: Solution | None = None,
    ) -> PlanResult:
        kinds = tr.kinds
        bias0 = mod.shift(start)
        frac = self.grid.fractions()
        # a start at an earlier solution of this sequence and start temperature: IPOPT then
        # starts from that whole primal-dual point (states included), not a re-simulation
        last = point or self._solutions.get((kinds, start_temp_c, tuple(float(v) for v in start)))
        warm = last is not None
        w0, lbx, ubx = [start / DWELL_SCALE_S], [lb / DWELL_SCALE_S], [ub / DWELL_SCALE_S]
        p, scales = [], []
        for k, (mem, lay) in enumerate(zip(self.members, tr.layouts, strict=True)):
            t0 = start_temp_c + mem.start_offset_k
            if warm:
                scale = last.lr_scale[k]
            else:
                stages, lr_after, _, _ = self._simulate(k, kinds, start_temp_c, start)
                scale = np.maximum(lr_after[-1], self.req.log_reduction * 10.0 ** bias0[k, 0])
                free = [ph.dwell_index for ph in tr.phases if ph.dwell_index is not None]
                w0 += [*[start[i] * frac for i in free], *[v / scale for v in lr_after], *stages]
            scales.append(scale)
            p += [mem.model.initial_state(t0)[: mem.model.n], scale, mod.parameters(k)]
            lbx += [np.zeros(lay.n_h), np.full(lay.n_lr, 1e-300), np.full(lay.n_z, -0.05)]
            ubx += [np.full(lay.n_h, ub.max()), np.full(lay.n_lr, np.inf), np.full(lay.n_z, 1.05)]
        n_ineq = tr.n_g - tr.n_res
        args = {
            "p": np.concatenate(p),
            "lbx": np.concatenate(lbx),
            "ubx": np.concatenate(ubx),
            "lbg": np.zeros(tr.n_g),
            "ubg": np.concatenate([np.zeros(tr.n_res), np.full(n_ineq, np.inf)]),
        }
        if warm:
            solver = tr.warm_solver
            x0 = np.clip(last.primal, args["lbx"], args["ubx"])
            sol = solver(x0=x0, lam_x0=last.lam_x, lam_g0=last.lam_g, **args)
        else:
            solver = tr.solver
            sol = solver(x0=np.concatenate(w0), **args)
        status = str(solver.stats()["return_status"])
        if status in INTERRUPTED:
            # Ctrl-C reached the solver, which stopped and returned: never a failed candidate
            raise KeyboardInterrupt(f"sequence {kinds}: the solve was interrupted ({status})")
        w = np.array(sol["x"]).ravel()
        g = np.array(sol["g"]).ravel()
        viol = max(np.abs(g[: tr.n_res]).max(), -min(g[tr.n_res :].min(), 0.0))
        if status not in ("Solve_Succeeded", "Solved_To_Acceptable_Level") or viol > 1e-6:
            raise PlanError(
                f"sequence {kinds}, start {start_temp_c:g} degC: IPOPT returned {status} "
                f"(largest constraint violation {viol:.3g})"
            )
        dwell = w[: lb.size] * DWELL_SCALE_S
        duals = (np.array(sol["lam_x"]).ravel(), np.array(sol["lam_g"]).ravel())
        key = (kinds, start_temp_c, tuple(float(v) for v in dwell))
        solution = Solution(
            kinds,
            self.model.thickness_m,
            float(start_temp_c),
            dwell.copy(),
            w.copy(),
            np.array(scales, dtype=float),
            *duals,
        )
        self._solutions[key] = solution
        lr, t_rem = (np.array(v).ravel() for v in tr.outcome_of(w, np.concatenate(p)))
        schedule = self.schedule_of(kinds, dwell)
        return PlanResult(
            schedule,
            schedule.done_s,
            float(lr.min()),
            status,
            tuple(float(v) for v in dwell),
            tuple(float(v) for v in lr),
            tuple(float(v) for v in t_rem),
            tuple((float(a), float(b)) for a, b in mod.shift(dwell)),
            int(solver.stats()["iter_count"]),
            solution,
        )

    def schedule_of(self, kinds: tuple[str, ...], dwell: np.ndarray) -> Schedule:
        """Event times from the dwell before each event and before done, s."""
        seq = self._sequence(kinds)
        head = [float(v) for v in dwell[: len(kinds)]]
        _, t_end, _ = seq.events(head)
        return seq.schedule(head, t_end + float(dwell[len(kinds)]))
