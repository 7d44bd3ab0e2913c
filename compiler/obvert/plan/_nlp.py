"""The nonlinear program of one event sequence (internal to :mod:`obvert.plan.ocp`).

Everything it needs comes in as arguments (the scenarios, the requirement, the collocation
blocks); it imports nothing from the planner.

Decision variables: the dwell before each event (shared by every scenario), then for each
scenario its element lengths, accumulated log reductions per phase, and collocation stage
states. Constraints: collocation residuals of every scenario, the log-reduction target at
every lethality point of every scenario, and the removal temperature rule if asked.
"""

from __future__ import annotations

import math
import os
from collections.abc import Sequence
from dataclasses import dataclass

import casadi as ca

from obvert.plan.collocation import BlockCache
from obvert.plan.problem import Member, PlanError, Requirement
from obvert.plan.schedule import Surroundings
from obvert.thermal.boundary import FaceBC

__all__ = ["DWELL_SCALE_S", "PlanError", "Transcription", "phase_specs"]

#: Dwell decision variables are in units of this many seconds (keeps IPOPT steps balanced).
DWELL_SCALE_S = 100.0

#: Wall-clock safety net of one IPOPT solve, s (iterations are capped first, so results do
#: not depend on machine speed; a solve that needs longer counts as failed).
SOLVE_BUDGET_S = 900.0


@dataclass(frozen=True)
class PhaseSpec:
    """One phase of an event sequence: fixed faces, free dwell or fixed duration."""

    face0: FaceBC
    face1: FaceBC
    flip_before: bool
    dwell_index: int | None  # decision variable index, or None for a fixed duration
    fixed_s: float
    is_removal: bool  # the phase that ends when the food leaves the plate


def phase_specs(kinds: tuple[str, ...], env: Surroundings, rest_s: float) -> list[PhaseSpec]:
    """Phases of an event sequence: a free dwell before each event, fixed flip air times."""
    out: list[PhaseSpec] = []
    top = env.air
    for k, kind in enumerate((*kinds, "done")):
        out.append(PhaseSpec(env.plate, top, False, k, 0.0, kind == "done"))
        if kind == "flip":
            out.append(PhaseSpec(env.air, env.air, True, None, env.flip_air_s, False))
        elif kind == "platen_close":
            if env.platen is None:
                raise PlanError("the sequence closes a platen but the appliance has none")
            top = env.platen
        elif kind == "platen_open":
            top = env.air
    if rest_s > 0.0:
        out.append(PhaseSpec(env.air, env.air, False, None, rest_s, False))
    return out


@dataclass(frozen=True)
class MemberLayout:
    """Sizes of one scenario's block of decision variables."""

    n_h: int
    n_lr: int
    n_z: int


class _MemberEquations:
    """Collocation equations of one scenario under shared dwell variables."""

    def __init__(
        self,
        blocks: BlockCache,
        req: Requirement,
        k: int,
        mem: Member,
        kinds: tuple[str, ...],
        dwell: ca.MX,
    ) -> None:
        model, grid = mem.model, blocks.grid
        n, m = model.n, model.m
        self.x0 = ca.MX.sym(f"x0_{k}", n)
        #: Scale of the log reduction at each lethality point (a parameter of the NLP).
        self.scale = ca.MX.sym(f"lr_scale_{k}", m)
        #: Affine correction of the targets (parameters, see obvert.plan.modifier): offset
        #: (log10, K), slope per second of each dwell, and the dwells it is taken at.
        nd = len(kinds) + 1
        self.mod = ca.MX.sym(f"mod_{k}", 2 + 3 * nd)
        off, at = self.mod[:2], self.mod[2 + 2 * nd :]
        slope = ca.reshape(self.mod[2 : 2 + 2 * nd], nd, 2).T  # rows: log10, K
        #: The shift (log10, K) as a function of the dwell variables.
        self.shift = off + ca.mtimes(slope, dwell - at)
        phases = phase_specs(kinds, mem.env, req.rest_s)
        x, flipped, lr_food = self.x0, False, None
        t_abs: ca.MX | float = 0.0
        rev, rev_lr = list(range(n - 1, -1, -1)), list(range(m - 1, -1, -1))
        frac = ca.DM(grid.fractions()).T
        self.res: list[ca.MX] = []
        h_vars: list[ca.MX] = []
        lr_vars: list[ca.MX] = []
        stages: list[ca.MX] = []
        self.t_removal: ca.MX | None = None
        for i, ph in enumerate(phases):
            blk = blocks.block(k, ph.face0, ph.face1)
            z = ca.MX.sym(f"z{k}_{i}", blk.n_stage_vars)
            stages.append(z)
            if ph.flip_before:
                x, flipped = x[rev], not flipped
            if ph.dwell_index is not None:
                h = ca.MX.sym(f"h{k}_{len(h_vars)}", 1, grid.elements)
                h_vars.append(h)
                self.res.append(ca.vec(h - dwell[ph.dwell_index] * frac) / DWELL_SCALE_S)
                length: ca.MX | float = dwell[ph.dwell_index]
            else:
                h, length = ph.fixed_s * frac, ph.fixed_s
            r, lr_lab, x, t_end = blk.equations(x, z, h, t_abs)
            t_abs = t_abs + length
            self.res.append(r)
            # Accumulated log reduction as variables, each point in units of its own
            # scale (a parameter: the guess's final value, at least the target), so that
            # points near a face, with reductions of 1e5, and the cold spot, near the
            # target, are equally well scaled; this keeps the Hessian local to each element.
            v = ca.MX.sym(f"lr{k}_{len(lr_vars)}", m)
            lr_vars.append(v)
            gain = lr_lab[rev_lr] if flipped else lr_lab
            prev = 0.0 if lr_food is None else lr_food
            self.res.append(v - prev - gain / self.scale)
            lr_food = v
            if ph.is_removal:
                self.t_removal = t_end
        #: log10 of the log reduction at every lethality point at the end.
        self.log_lr = ca.log10(lr_food * self.scale)
        self.w = [*[ca.vec(h) for h in h_vars], *lr_vars, *stages]
        self.layout = MemberLayout(
            sum(int(h.numel()) for h in h_vars),
            m * len(lr_vars),
            sum(int(z.numel()) for z in stages),
        )


class Transcription:
    """The NLP of one event sequence over all scenarios (built once, solved per start).

    Parameters
    ----------
    members : sequence of Member
        The scenarios, main one first (their models must be those of ``blocks``).
    requirement : Requirement
        Safety target at removal.
    kinds : tuple of str
        Events before done.
    blocks : BlockCache
        Collocation blocks of the scenarios (shared between sequences).
    hessian : str
        IPOPT's ``hessian_approximation``: ``"exact"`` or ``"limited-memory"``.
    """

    def __init__(
        self,
        members: Sequence[Member],
        requirement: Requirement,
        kinds: tuple[str, ...],
        blocks: BlockCache,
        hessian: str = "exact",
    ) -> None:
        self.kinds = kinds
        req = requirement
        self.phases = phase_specs(kinds, members[0].env, req.rest_s)
        self.n_dwell = len(kinds) + 1
        dwell_scaled = ca.MX.sym("dwell_scaled", self.n_dwell)
        dwell = DWELL_SCALE_S * dwell_scaled
        eqs = [_MemberEquations(blocks, req, k, mem, kinds, dwell) for k, mem in enumerate(members)]
        res = [r for me in eqs for r in me.res]
        ineq = [me.log_lr - math.log10(req.log_reduction) - me.shift[0] for me in eqs]
        if req.min_temp_c is not None:
            ineq += [(me.t_removal - req.min_temp_c - me.shift[1]) / 10.0 for me in eqs]
        g = ca.vertcat(*res, *ineq)
        self.n_res = int(ca.vertcat(*res).shape[0])
        self.layouts = [me.layout for me in eqs]
        #: Where each scenario's element lengths (s) sit in the primal vector.
        self.time_blocks: list[slice] = []
        at = self.n_dwell
        for lay in self.layouts:
            self.time_blocks.append(slice(at, at + lay.n_h))
            at += lay.n_h + lay.n_lr + lay.n_z
        w = ca.vertcat(dwell_scaled, *[v for me in eqs for v in me.w])
        p = ca.vertcat(*[ca.vertcat(me.x0, me.scale, me.mod) for me in eqs])
        #: Per scenario, the smallest log reduction over the points and the coldest point at
        #: removal on the reduced model (uncorrected), as functions of the solution.
        self.outcome_of = ca.Function(
            "outcome_of",
            [w, p],
            [
                ca.vertcat(*[ca.mmin(10.0**me.log_lr) for me in eqs]),
                ca.vertcat(*[ca.mmin(me.t_removal) for me in eqs]),
            ],
        )
        nlp = {"x": w, "p": p, "f": ca.sum1(dwell_scaled), "g": g}
        self.solver = ca.nlpsol("plan", "ipopt", nlp, _options(hessian))
        self._nlp, self._hessian = nlp, hessian
        self.n_g = int(g.shape[0])

    @property
    def warm_solver(self) -> ca.Function:
        """The same NLP, for a start at a previous solution with its multipliers.

        Built on first use; IPOPT's warm-start initialisation, small initial barrier.
        """
        if not hasattr(self, "_warm"):
            opts = {**_options(self._hessian), **WARM_OPTIONS, "ipopt.max_iter": WARM_MAX_ITER}
            self._warm = ca.nlpsol("plan_warm", "ipopt", self._nlp, opts)
        return self._warm


#: Iteration cap of a warm start: a start near the optimum needs a handful; one that has
#: not converged by then is abandoned for the cold starts.
WARM_MAX_ITER = 25

#: Iteration cap of a cold start (bounds the cost of a failure; iterations, not wall time,
#: so that results do not depend on machine speed).
COLD_MAX_ITER = 300

#: IPOPT options of a warm start (primal and dual point of a nearby solved problem).
WARM_OPTIONS: dict[str, object] = {
    "ipopt.warm_start_init_point": "yes",
    "ipopt.mu_init": 1e-6,
    "ipopt.warm_start_bound_push": 1e-9,
    "ipopt.warm_start_bound_frac": 1e-9,
    "ipopt.warm_start_slack_bound_push": 1e-9,
    "ipopt.warm_start_slack_bound_frac": 1e-9,
    "ipopt.warm_start_mult_bound_push": 1e-9,
}


def _options(hessian: str) -> dict[str, object]:
    verbose = os.environ.get("OBVERT_IPOPT_PRINT")
    return {
        "ipopt.print_level": int(verbose or "0"),
        "ipopt.sb": "yes",
        "print_time": bool(verbose),
        "show_eval_warnings": False,
        "ipopt.tol": 1e-7,
        "ipopt.constr_viol_tol": 1e-8,
        "ipopt.acceptable_tol": 1e-5,
        "ipopt.acceptable_constr_viol_tol": 1e-8,
        "ipopt.acceptable_iter": 5,
        "ipopt.max_iter": COLD_MAX_ITER,
        "ipopt.max_wall_time": SOLVE_BUDGET_S,
        "ipopt.mu_strategy": "adaptive",
        "ipopt.mumps_pivot_order": 0,
        "ipopt.print_timing_statistics": "yes" if verbose else "no",
        "ipopt.hessian_approximation": hessian,
    }
