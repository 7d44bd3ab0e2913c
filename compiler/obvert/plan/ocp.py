"""Minimum-time cook planning on the reduced model with CasADi and IPOPT.

For a fixed event sequence (say two flips then done) the decision variables are the dwell
times between events. Each dwell is integrated implicitly (BDF, CVODES) on the spectral
model with the dwell as a parameter, so IPOPT gets exact sensitivities. Constraints at
removal: the log reduction at every node reaches the target, and, if asked, every node is
at or above the minimum temperature; consecutive events are at least the appliance's minimum
gap apart.
"""

from __future__ import annotations

from dataclasses import dataclass

import casadi as ca
import numpy as np

from obvert.plan.collocation import Grid, PhaseBlock
from obvert.plan.schedule import Event, Schedule, Surroundings
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel


@dataclass(frozen=True)
class Requirement:
    """What the food must reach by removal.

    Attributes
    ----------
    log_reduction : float
        Log reduction every point must reach, log10 units.
    min_temp_c : float | None
        Temperature every point must be at or above at removal, degC (None: no such rule).
    rest_s : float
        Carry-over time after removal credited to lethality, s (0: no credit).
    """

    log_reduction: float
    min_temp_c: float | None = None
    rest_s: float = 0.0


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
    """

    schedule: Schedule
    cook_time_s: float
    min_log_reduction: float
    solver_status: str
    dwell_s: tuple[float, ...]


#: Dwell decision variables are in units of this many seconds (keeps IPOPT steps balanced).
DWELL_SCALE_S = 100.0

#: Wall-clock budget of one IPOPT solve, s; a solve that needs longer counts as failed.
SOLVE_BUDGET_S = 90.0


class PlanError(RuntimeError):
    """A minimum-time problem could not be solved."""


@dataclass(frozen=True)
class _PhaseSpec:
    face0: FaceBC
    face1: FaceBC
    flip_before: bool
    dwell_index: int | None  # decision variable index, or None for a fixed duration
    fixed_s: float
    is_removal: bool  # the phase that ends when the food leaves the plate


class _Transcription:
    """The NLP of one event sequence on one model (built once, solved per start temperature)."""

    def __init__(self, planner: Planner, kinds: tuple[str, ...]) -> None:
        self.kinds = kinds
        model, env, req = planner.model, planner.env, planner.req
        self.phases = _phase_specs(kinds, env, req.rest_s)
        self.n_dwell = len(kinds) + 1
        n = model.n
        x0 = ca.MX.sym("x0", n)
        dwell_scaled = ca.MX.sym("dwell_scaled", self.n_dwell)
        dwell = DWELL_SCALE_S * dwell_scaled
        blocks = [planner.block(ph.face0, ph.face1) for ph in self.phases]
        stages = [ca.MX.sym(f"z{i}", b.n_stage_vars) for i, b in enumerate(blocks)]
        x, flipped, lr_food = x0, False, ca.DM.zeros(n)
        res, t_removal = [], None
        rev = list(range(n - 1, -1, -1))
        frac = ca.DM(planner.grid.fractions()).T
        h_vars, lr_vars = [], []
        for ph, blk, z in zip(self.phases, blocks, stages, strict=True):
            if ph.flip_before:
                x, flipped = x[rev], not flipped
            if ph.dwell_index is not None:
                h = ca.MX.sym(f"h{len(h_vars)}", 1, planner.grid.elements)
                h_vars.append(h)
                res.append(ca.vec(h - dwell[ph.dwell_index] * frac) / DWELL_SCALE_S)
            else:
                h = ph.fixed_s * frac
            r, lr_lab, x, t_end = blk.equations(x, z, h)
            res.append(r)
            # Accumulated log reduction as variables: keeps the Hessian local to each element.
            lr_var = ca.MX.sym(f"lr{len(lr_vars)}", n)
            lr_vars.append(lr_var)
            res.append(
                (lr_var - lr_food - (lr_lab[rev] if flipped else lr_lab)) / req.log_reduction
            )
            lr_food = lr_var
            if ph.is_removal:
                t_removal = t_end
        g = [ca.vertcat(*res), ca.log10(lr_food / req.log_reduction)]
        if req.min_temp_c is not None:
            g.append((t_removal - req.min_temp_c) / 10.0)
        self.n_res = int(g[0].shape[0])
        w = ca.vertcat(dwell_scaled, *[ca.vec(h) for h in h_vars], *lr_vars, *stages)
        self.n_h = sum(int(h.numel()) for h in h_vars)
        self.n_lr = n * len(lr_vars)
        self.lr_of = ca.Function("lr_of", [w, x0], [lr_food])
        nlp = {"x": w, "p": x0, "f": ca.sum1(dwell_scaled), "g": ca.vertcat(*g)}
        opts = {
            "ipopt.print_level": int(__import__("os").environ.get("OBVERT_IPOPT_PRINT", "0")),
            "ipopt.sb": "yes",
            "print_time": bool(__import__("os").environ.get("OBVERT_IPOPT_PRINT")),
            "show_eval_warnings": False,
            "ipopt.tol": 1e-7,
            "ipopt.constr_viol_tol": 1e-8,
            "ipopt.acceptable_tol": 1e-5,
            "ipopt.acceptable_constr_viol_tol": 1e-8,
            "ipopt.acceptable_iter": 5,
            "ipopt.max_iter": 300,
            "ipopt.max_wall_time": SOLVE_BUDGET_S,
            "ipopt.mu_strategy": "adaptive",
            "ipopt.mumps_pivot_order": 0,
            "ipopt.print_timing_statistics": "yes"
            if __import__("os").environ.get("OBVERT_IPOPT_PRINT")
            else "no",
            "ipopt.hessian_approximation": planner.hessian,
        }
        self.solver = ca.nlpsol("plan", "ipopt", nlp, opts)
        self.n_g = int(nlp["g"].shape[0])


def _phase_specs(kinds: tuple[str, ...], env: Surroundings, rest_s: float) -> list[_PhaseSpec]:
    """Phases of an event sequence: a free dwell before each event, fixed flip air times."""
    out: list[_PhaseSpec] = []
    top = env.air
    for k, kind in enumerate((*kinds, "done")):
        out.append(_PhaseSpec(env.plate, top, False, k, 0.0, kind == "done"))
        if kind == "flip":
            out.append(_PhaseSpec(env.air, env.air, True, None, env.flip_air_s, False))
        elif kind == "platen_close":
            if env.platen is None:
                raise PlanError("the sequence closes a platen but the appliance has none")
            top = env.platen
        elif kind == "platen_open":
            top = env.air
    if rest_s > 0.0:
        out.append(_PhaseSpec(env.air, env.air, False, None, rest_s, False))
    return out


class Planner:
    """Minimum-time planner for one slab thickness on one appliance.

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
    """

    def __init__(
        self,
        model: SpectralModel,
        env: Surroundings,
        requirement: Requirement,
        min_gap_s: float,
        grid: Grid | None = None,
    ) -> None:
        self.model = model
        self.env = env
        self.req = requirement
        self.min_gap_s = float(min_gap_s)
        self.grid = grid or Grid()
        self.hessian = "exact"
        self._blocks: dict[tuple[FaceBC, FaceBC], PhaseBlock] = {}
        self._traj: dict[tuple[FaceBC, FaceBC], ca.Function] = {}
        self._nlps: dict[tuple[str, ...], _Transcription] = {}
        self._warm: dict[tuple[str, ...], tuple[np.ndarray, np.ndarray, np.ndarray]] = {}

    def block(self, face0: FaceBC, face1: FaceBC) -> PhaseBlock:
        """Collocation block for a pair of face conditions (cached)."""
        key = (face0, face1)
        if key not in self._blocks:
            self._blocks[key] = PhaseBlock(self.model, face0, face1, self.grid)
        return self._blocks[key]

    def _trajectory(self, face0: FaceBC, face1: FaceBC) -> ca.Function:
        key = (face0, face1)
        if key not in self._traj:
            self._traj[key] = self.model.trajectory(face0, face1, self.grid.stage_times())
        return self._traj[key]

    def _simulate(
        self, kinds: tuple[str, ...], start_temp_c: float, dwell: np.ndarray
    ) -> tuple[list[np.ndarray], np.ndarray, np.ndarray]:
        """Reduced-model simulation (CVODES): stage states, food-frame LR, removal temps."""
        n = self.model.n
        x = self.model.initial_state(start_temp_c)
        stages, lr, flipped, t_rem = [], np.zeros(n), False, np.zeros(n)
        lr_after: list[np.ndarray] = []
        for ph in _phase_specs(kinds, self.env, self.req.rest_s):
            if ph.flip_before:
                x, flipped = np.array(self.model.flip(x)).ravel(), not flipped
            dur = float(dwell[ph.dwell_index]) if ph.dwell_index is not None else ph.fixed_s
            traj = np.array(self._trajectory(ph.face0, ph.face1)(x, dur))
            stages.append(traj[:n, :].T.ravel())
            lr_lab = traj[n:, -1] - x[n:]
            lr = lr + (lr_lab[::-1] if flipped else lr_lab)
            lr_after.append(lr.copy())
            x = traj[:, -1]
            if ph.is_removal:
                t_rem = np.array(self.model.temperatures(x)).ravel()
        self._last_lr_after = lr_after
        return stages, lr, t_rem

    def _meets(self, kinds: tuple[str, ...], start_temp_c: float, dwell: np.ndarray) -> bool:
        _, lr, t_rem = self._simulate(kinds, start_temp_c, dwell)
        ok = lr.min() >= self.req.log_reduction
        if self.req.min_temp_c is not None:
            ok = ok and t_rem.min() >= self.req.min_temp_c
        return bool(ok)

    # -- public ----------------------------------------------------------------------
    def lower_bounds(self, kinds: tuple[str, ...]) -> np.ndarray:
        """Smallest allowed dwell before each event, s (minimum gap less any flip air time)."""
        lb = [self.min_gap_s]
        for prev in kinds:
            air = self.env.flip_air_s if prev == "flip" else 0.0
            lb.append(max(self.min_gap_s - air, 0.0))
        return np.array(lb)

    def feasible_guess(self, kinds: tuple[str, ...], start_temp_c: float) -> np.ndarray:
        """Equal dwells, scaled by bisection until the reduced model meets the target, s."""
        lb = self.lower_bounds(kinds)
        n = lb.size

        def dw(total: float) -> np.ndarray:
            return np.maximum(np.full(n, total / n), lb)

        lo, hi = 0.0, 60.0
        while not self._meets(kinds, start_temp_c, dw(hi)):
            lo, hi = hi, hi * 2.0
            if hi > 7200.0:
                raise PlanError(f"sequence {kinds}: target not reached within 2 h of cooking")
        while hi - lo > 0.02 * hi:
            mid = 0.5 * (lo + hi)
            lo, hi = (lo, mid) if self._meets(kinds, start_temp_c, dw(mid)) else (mid, hi)
        return dw(hi)

    def solve(
        self,
        kinds: tuple[str, ...],
        start_temp_c: float,
        seeds: tuple[np.ndarray, ...] = (),
    ) -> PlanResult:
        """Minimum-time schedule for the event sequence ``kinds`` (``done`` implied).

        IPOPT starts from the feasible equal-dwell guess and from each seed (dwell vectors,
        s, e.g. the solution with one flip fewer with its last dwell split); the fastest
        converged solution wins. A start that fails is skipped; if all fail, PlanError.
        """
        if kinds not in self._nlps:
            self._nlps[kinds] = _Transcription(self, kinds)
        tr = self._nlps[kinds]
        guess = self.feasible_guess(kinds, start_temp_c)
        lb = self.lower_bounds(kinds)
        ub = np.full(lb.size, max(guess.sum(), lb.max() + 1.0))
        best: PlanResult | None = None
        errors: list[str] = []
        for start in (guess, *seeds):
            start = np.clip(np.asarray(start, dtype=float), lb, ub)
            try:
                res = self._solve_from(tr, start_temp_c, start, lb, ub)
            except PlanError as exc:
                errors.append(str(exc))
                continue
            if best is None or res.cook_time_s < best.cook_time_s - 1e-6:
                best = res
        if best is None:
            raise PlanError("; ".join(errors))
        return best

    def _solve_from(
        self,
        tr: _Transcription,
        start_temp_c: float,
        start: np.ndarray,
        lb: np.ndarray,
        ub: np.ndarray,
    ) -> PlanResult:
        kinds = tr.kinds
        x0 = self.model.initial_state(start_temp_c)[: self.model.n]
        stages, _, _ = self._simulate(kinds, start_temp_c, start)
        frac = self.grid.fractions()
        h0 = [start[ph.dwell_index] * frac for ph in tr.phases if ph.dwell_index is not None]
        lr0 = list(self._last_lr_after)
        w0 = np.concatenate([start / DWELL_SCALE_S, *h0, *lr0, *stages])
        n_z = w0.size - lb.size - tr.n_h - tr.n_lr
        lbx = np.concatenate(
            [lb / DWELL_SCALE_S, np.zeros(tr.n_h), np.full(tr.n_lr, 1e-300), np.full(n_z, -0.05)]
        )
        ubx = np.concatenate(
            [
                ub / DWELL_SCALE_S,
                np.full(tr.n_h, ub.max()),
                np.full(tr.n_lr, np.inf),
                np.full(n_z, 1.05),
            ]
        )
        lbg = np.concatenate([np.zeros(tr.n_res), np.zeros(tr.n_g - tr.n_res)])
        ubg = np.concatenate([np.zeros(tr.n_res), np.full(tr.n_g - tr.n_res, np.inf)])
        sol = tr.solver(x0=w0, p=x0, lbx=lbx, ubx=ubx, lbg=lbg, ubg=ubg)
        status = str(tr.solver.stats()["return_status"])
        w = np.array(sol["x"]).ravel()
        g = np.array(sol["g"]).ravel()
        viol = max(np.abs(g[: tr.n_res]).max(), -min(g[tr.n_res :].min(), 0.0))
        if status not in ("Solve_Succeeded", "Solved_To_Acceptable_Level") or viol > 1e-6:
            raise PlanError(
                f"sequence {kinds}, start {start_temp_c:g} degC: IPOPT returned {status} "
                f"(largest constraint violation {viol:.3g})"
            )
        dwell = w[: lb.size] * DWELL_SCALE_S
        lr = np.array(tr.lr_of(w, x0)).ravel()
        schedule = self.schedule_of(kinds, dwell)
        return PlanResult(schedule, schedule.done_s, float(lr.min()), status, tuple(dwell))

    def schedule_of(self, kinds: tuple[str, ...], dwell: np.ndarray) -> Schedule:
        """Event times from the dwell before each event, s."""
        events, t, closed = [], 0.0, False
        for k, kind in enumerate((*kinds, "done")):
            t += float(dwell[k])
            if kind == "done" and closed:
                events.append(Event("platen_open", t))  # the platen rises when the food is done
            events.append(Event(kind, t))
            if kind == "flip":
                t += self.env.flip_air_s
            closed = {"platen_close": True, "platen_open": False}.get(kind, closed)
        return Schedule(tuple(events))
