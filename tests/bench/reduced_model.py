"""Benchmark: the reduced spectral model and its planner against the finite-volume reference.

Usage: ``nice -n 10 python tests/bench/reduced_model.py [--quick] [-v] [--case MM,DEGC]...
[--plan N/P/S/E[/cA][/gG][/rN][/mapped]]...`` (full: 35 min on two shared cores; quick: about 3
min; ``--case`` keeps only those cases, ``--plan`` plans those configurations instead, after
the default). Method and measured figures: docs/reduced-model.md.

The demo food and appliance (compiler/obvert/demo/griddle_patty.toml) with the
salmonella_beef_7log preset and its 7-log target (no minimum-temperature rule), one flip.
The trusted reference is ``obvert.thermal.reference.simulate`` with 400 cells and 0.02 s
steps (second order in space and time, verified in tests/physics; its own discretisation
error is printed for every case against 200 cells / 0.05 s).

A configuration is written ``nodes/points/stencil eE``: Chebyshev nodes (the model's states,
one enthalpy each), lethality points (quadrature outputs where the log reduction is
integrated, not states; 0: at the nodes), nodes each point interpolates from (0: the
global polynomial), Radau elements per phase; ``cA``: points clustered mid-slab
(lab ``lethality_layout`` with alpha A); ``gG``: element grading G (default 1.35);
``rN``: the plan corrected against the reference (200 cells / 0.05 s, what the build uses)
for up to N rounds (obvert.table.calibrate; no suffix: the reduced model's plan alone);
``mapped``: the lab's mapped grid. The default is what the build uses (the spec's
[planning] defaults, SpectralSettings' stencil, correction_rounds).

(a) cold-spot error: max over time of |min over slab T_reduced - min over slab T_ref| on a
    fixed schedule (one flip at 45 % of the cook, done at the reference's time-to-target),
    excluding the 2 s after loading, lift-off and landing. ``nodes``: minimum over the
    nodes; ``slab``: minimum of the interpolated field on 201 points; ``hot``: the slab
    error while the reference cold spot is at or above 40 degC (where lethality counts).
(b) error of the smallest log reduction at removal on the same schedule, per point rule:
    LR integrated (trapezoid, on the reference's rows) from the model's temperatures at the
    rule's points; ``own``: the model's own LR states at the default rule (a check of that
    quadrature); ``slab``: the global polynomial on 201 points.
(c) cook-time error of the plan: planned done time vs the reference's exact minimum done time
    for the planned flip time (first time the reference's min LR reaches the target,
    interpolated between its 0.02 s steps), with the wall and CPU time of the one-flip
    solve (NLP construction included; seeded, as the build does, by the zero-flip optimum
    with its dwell split) and their ratios to the default configuration in the same run.
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass, replace
from importlib.resources import files
from pathlib import Path
from typing import Any

import numpy as np

from obvert.food.factory import food_table
from obvert.food.lethality import LethalityModel
from obvert.food.presets import preset
from obvert.food.table import PropertyTable
from obvert.plan.collocation import Grid
from obvert.plan.ocp import PlanError, Planner, Requirement
from obvert.plan.schedule import Event, Schedule, Surroundings, phases_for
from obvert.spec import load_spec
from obvert.table.calibrate import calibrate
from obvert.table.certify import Case
from obvert.thermal import _spectral_lab as lab
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceResult, ReferenceSettings, simulate
from obvert.thermal.spectral import SpectralModel, SpectralSettings

_REPORT_SPEC = importlib.util.spec_from_file_location(
    "obvert_bench_reduced_model_report", Path(__file__).with_name("reduced_model_report.py")
)
report = importlib.util.module_from_spec(_REPORT_SPEC)
_REPORT_SPEC.loader.exec_module(report)
TARGET_COOK, TARGET_COLD_K, MAX_STATES = report.TARGET_COOK, report.TARGET_COLD_K, report.MAX_STATES

TRUSTED = ReferenceSettings(n_cells=400, dt_max_s=0.02)
DEFAULT_REF = ReferenceSettings()  # 200 cells, 0.05 s: what certification uses
FINE = ReferenceSettings(n_cells=800, dt_max_s=0.01)
FLIP_FRACTION, SETTLE_S, HOT_C, STRIDE = 0.45, 2.0, 40.0, 2
X_FINE = 201


@dataclass(frozen=True)
class Variant:
    """One reduced-model configuration (see the module docstring for the notation)."""

    nodes: int = 16
    points: int = 21
    stencil: int = 4
    elements: int = 8
    alpha: float = 0.0  # lethality layout, 0: equally spaced
    mapped: bool = False
    grading: float = Grid().grading  # ratio of consecutive element lengths
    rounds: int = 0  # reference-calibrated correction rounds (0: the model's plan alone)

    @property
    def rule(self) -> str:
        """Point rule only: ``points/stencil`` (``nodes`` for the node rule)."""
        if not self.points:
            return "nodes"
        return f"{self.points}/{self.stencil}" + (f" c{self.alpha:g}" if self.alpha else "")

    @property
    def label(self) -> str:
        """Full configuration."""
        rule = f"{self.points}/{self.stencil}" if self.points else "0"
        tail = (f" c{self.alpha:g}" if self.alpha else "") + (" mapped" if self.mapped else "")
        tail += f" g{self.grading:g}" if self.grading != Grid().grading else ""
        tail += f" r{self.rounds}" if self.rounds else ""
        return f"{self.nodes}/{rule} e{self.elements}{tail}"

    @classmethod
    def parse(cls, text: str) -> Variant:
        """From ``nodes/points/stencil/elements[/cALPHA][/gGRADING][/rROUNDS][/mapped]``."""
        part = text.split("/")
        if len(part) < 4 or not all(x.isdigit() for x in part[:4]):
            raise ValueError(f"plan {text!r}: allowed nodes/points/stencil/elements[/cA][/gG][/rN]")
        v = cls(*(int(x) for x in part[:4]))
        for x in part[4:]:
            key = {"c": "alpha", "g": "grading", "r": "rounds", "m": "mapped"}.get(x[:1], "")
            if not key or (key == "mapped") != (x == "mapped"):
                raise ValueError(f"plan {text!r}: {x!r} is not cA, gG, rN or mapped")
            value = {"mapped": True, "rounds": int(x[1:]) if x[1:].isdigit() else -1}.get(key)
            v = replace(v, **{key: float(x[1:]) if value is None else value})
            if v.rounds < 0:
                raise ValueError(f"plan {text!r}: {x!r}: rounds must be a whole number")
        return v


def _v(nodes: int, points: int, stencil: int = 4, **kw: Any) -> Variant:
    return Variant(nodes, points, stencil, **kw)


RULES = (_v(16, 0), _v(16, 11), _v(16, 21), _v(16, 31), _v(16, 41), _v(16, 21, 0))
RULES += (_v(16, 41, 0), _v(16, 21, alpha=0.9), _v(16, 31, alpha=0.9))
PLANS = (_v(16, 21, rounds=3), _v(16, 21), _v(12, 21, rounds=3), _v(16, 0), _v(16, 31))
PLANS += (_v(16, 41), _v(12, 21), _v(24, 21))
PLANS += (_v(16, 21, 0), _v(16, 21, alpha=0.9), _v(24, 41))
PLANS_EXTRA = (_v(8, 21), _v(20, 21), _v(16, 11), _v(16, 41, 0), _v(12, 41))
PLANS_EXTRA += (_v(16, 31, alpha=0.9), _v(16, 21, alpha=0.95), _v(16, 21, elements=16))
PLANS_EXTRA += (_v(16, 21, mapped=True),)


@dataclass(frozen=True)
class Config:
    """What one run measures (cases as (mm, degC); plans_extra only on extra_cases)."""

    cases: tuple[tuple[float, float], ...]
    nodes: tuple[int, ...]
    rules: tuple[Variant, ...]
    plans: tuple[Variant, ...]
    plans_extra: tuple[Variant, ...]
    extra_cases: tuple[tuple[float, float], ...]
    lab: bool  # mapped grid, filter, smoothed table, 32/40 nodes
    fine_check: tuple[float, float] | None  # (mm, degC) also checked at 800 cells / 0.01 s


CASES_QUICK = ((6.0, 4.0), (10.0, -18.0))
CASES_ALL = tuple((mm, t0) for mm in (6.0, 10.0, 15.0, 25.0) for t0 in (4.0, -18.0))
FULL = Config(
    CASES_ALL, (8, 12, 16, 20, 24), RULES, PLANS, PLANS_EXTRA, CASES_QUICK, True, (10, -18)
)
QUICK_RULES = (_v(16, 0), _v(16, 21), _v(16, 41))
QUICK_PLANS = (_v(16, 21, rounds=3), _v(16, 21), _v(16, 41))
QUICK = Config(CASES_QUICK, (16, 24), QUICK_RULES, QUICK_PLANS, (), (), False, (10, -18))


@dataclass(frozen=True)
class Setup:
    """Demo food, appliance, target and the build's default configuration."""

    table: PropertyTable
    lethality: LethalityModel
    env: Surroundings
    requirement: Requirement
    min_gap_s: float
    default: Variant


def demo_setup() -> Setup:
    """The demo food and appliance, salmonella_beef_7log with its 7-log target."""
    spec = load_spec(str(files("obvert.demo") / "griddle_patty.toml"))
    a, pl = spec.appliance, spec.planning
    env = Surroundings(
        plate=FaceBC(a.contact_coefficient, a.plate_temp_c),
        air=FaceBC(a.air_coefficient, a.air_temp_c, a.emissivity),
        platen=None,
        flip_air_s=a.flip_air_s,
    )
    org = preset("salmonella_beef_7log")
    req = Requirement(org.target_log_reduction)
    default = Variant(
        pl.spectral_nodes,
        pl.lethality_points,
        SpectralSettings().lethality_stencil,
        pl.elements_per_phase,
        rounds=pl.correction_rounds,
    )
    return Setup(food_table(spec.food), org.model(), env, req, a.min_event_gap_s, default)


def make_model(su: Setup, mm: float, v: Variant) -> SpectralModel:
    """Reduced model of configuration ``v`` for a ``mm`` thick slab."""
    st = SpectralSettings(v.nodes, lethality_points=v.points, lethality_stencil=v.stencil)
    args = (su.table, mm * 1e-3, su.lethality, st)
    if v.mapped:
        return lab.MappedSpectralModel(*args)
    if v.alpha:
        return lab.ClusteredSpectralModel(*args, alpha=v.alpha)
    return SpectralModel(*args)


def one_flip(flip_s: float, done_s: float) -> Schedule:
    """Schedule with one flip and removal, s."""
    return Schedule((Event("flip", flip_s), Event("done", done_s)))


def reference(su: Setup, mm: float, t0: float, sch: Schedule, rs: ReferenceSettings):
    """Reference run of a schedule."""
    return simulate(su.table, mm * 1e-3, t0, phases_for(sch, su.env), su.lethality, rs)


def crossing(res: ReferenceResult, target: float) -> float | None:
    """First time in the last phase at which the min LR reaches ``target``, s (interpolated)."""
    sel = res.phase_index == res.phase_index[-1]
    t, lr = res.t_s[sel], res.log_reduction[sel].min(axis=1)
    i = int(np.argmax(lr >= target))
    if lr[i] < target or i == 0:
        return None
    return float(np.interp(target, lr[i - 1 : i + 1], t[i - 1 : i + 1]))


def exact_done(
    su: Setup, mm: float, t0: float, flip_s: float, guess_s: float, rs: ReferenceSettings = TRUSTED
) -> float:
    """Reference's minimum done time for a flip at ``flip_s``, s."""
    horizon = max(guess_s * 1.04 + 2.0, flip_s + su.env.flip_air_s + 5.0)
    while True:
        done = crossing(reference(su, mm, t0, one_flip(flip_s, horizon), rs), 7.0)
        if done is not None:
            return done
        horizon *= 1.4


def fixed_schedule(su: Setup, mm: float, t0: float) -> tuple[Schedule, ReferenceResult]:
    """Flip at 45 % of the cook, done at the reference's time-to-target (secant, 200 cells)."""
    guess = 1.1e6 * (mm * 1e-3) ** 2 * (2.0 if t0 < su.table.freezing_point_c else 1.0) + 30.0

    def gap(total: float) -> float:
        return exact_done(su, mm, t0, FLIP_FRACTION * total, 1.5 * total, DEFAULT_REF) - total

    a, ga = guess, gap(guess)
    b = a + ga
    gb = gap(b)
    while abs(gb) > 1e-3:
        a, ga, b = b, gb, b - gb * (b - a) / (gb - ga)
        gb = gap(b)
    sch = one_flip(FLIP_FRACTION * b, b)
    return sch, reference(su, mm, t0, sch, DEFAULT_REF)


@dataclass(frozen=True)
class History:
    """Reduced-model outputs at the reference's (strided) rows, t = 0 first."""

    t_s: np.ndarray
    temps: np.ndarray  # node temperatures, degC, lab frame, (rows, n)
    mirrored: np.ndarray
    cold_slab: np.ndarray
    lr_own: float  # smallest of the model's own LR states at removal


def reduced_history(
    model: SpectralModel, su: Setup, t0: float, sch: Schedule, ref: ReferenceResult
) -> History:
    """Simulate ``sch`` on the reduced model (CVODES) at the reference's rows."""
    n = model.n
    interp = lab.interpolation_matrix(model, np.linspace(0.0, model.thickness_m, X_FINE))
    x, start, rows_t, temps, mir = model.initial_state(t0), 0.0, [[0.0]], [], [[False]]
    temps.append(np.full((1, n), t0))
    for k, ph in enumerate(phases_for(sch, su.env)):
        if ph.flip_before:
            x = np.array(model.flip(x)).ravel()
        t_rows = ref.t_s[ref.phase_index == k]
        t_rows = t_rows[t_rows > start][::-1][::STRIDE][::-1]  # keep the phase end
        traj = np.array(
            model.trajectory(ph.face0, ph.face1, (t_rows - start) / ph.duration_s)(x, ph.duration_s)
        )
        temps.append(np.array(model.temp_of(traj[:n].T.reshape(1, -1))).reshape(-1, n))
        rows_t.append(t_rows)
        mir.append(np.full(t_rows.size, bool(ref.mirrored[ref.phase_index == k][-1])))
        x, start = traj[:, -1], start + ph.duration_s
    t_nodes = np.vstack(temps)
    return History(
        np.concatenate(rows_t),
        t_nodes,
        np.concatenate(mir),
        (t_nodes @ interp.T).min(axis=1),
        float(x[n:].min()),
    )


def rule_lr(h: History, model: SpectralModel, v: Variant, lm: LethalityModel) -> float:
    """Smallest LR at removal at the points of rule ``v`` (trapezoid on the rows), log10."""
    if v.points:
        x = lab.lethality_layout(model.thickness_m, v.points, v.alpha)
        tp = h.temps @ lab.point_matrix(model, x, v.stencil).T
    else:
        tp = h.temps.copy()
    tp[h.mirrored] = tp[h.mirrored, ::-1]  # food frame (layouts are symmetric)
    rate = lm.rate(tp)
    return float(np.sum(0.5 * (rate[1:] + rate[:-1]) * np.diff(h.t_s)[:, None], axis=0).min())


def field_errors(h: History, model: SpectralModel, ref: ReferenceResult, su: Setup, cfg) -> dict:
    """(a) and (b) of one reduced run against the trusted reference."""
    t = h.t_s[1:]
    cold_ref = np.interp(t, ref.t_s, ref.temp_c.min(axis=1))
    keep = np.ones(t.size, dtype=bool)
    flip = ref.t_s[np.argmax(ref.phase_index == 1)]
    for e in (0.0, flip, flip + su.env.flip_air_s):
        keep &= ~((t > e - 1e-9) & (t < e + SETTLE_S))
    hot = keep & (cold_ref >= HOT_C)
    lr_ref = float(ref.log_reduction[-1].min())
    slab = np.abs(h.cold_slab[1:] - cold_ref)
    worst = int(np.argmax(np.where(keep, slab, -1.0)))
    lr = {v.rule: rule_lr(h, model, v, su.lethality) - lr_ref for v in cfg.rules}
    lr["slab"] = rule_lr(h, model, _v(model.n, X_FINE, 0), su.lethality) - lr_ref
    return {
        "cold_nodes": float(np.abs(h.temps[1:].min(axis=1) - cold_ref)[keep].max()),
        "cold_slab": float(slab[keep].max()),
        "cold_hot": float(slab[hot].max()) if hot.any() else np.nan,
        "worst": (float(t[worst]), float(cold_ref[worst])),
        "lr_own": h.lr_own - lr_ref,
        "lr": lr,
    }


def field_models(su: Setup, mm: float, cfg: Config) -> list[tuple[str, SpectralModel]]:
    """Models for (a)/(b): stock at every node count, lab variants if asked."""
    d = su.default
    out = [(f"chebyshev {n}", make_model(su, mm, replace(d, nodes=n))) for n in cfg.nodes]
    if cfg.lab:
        s24 = SpectralSettings(24, lethality_points=d.points, lethality_stencil=d.stencil)
        args = (mm * 1e-3, su.lethality, s24)
        out += [(f"chebyshev {n}", make_model(su, mm, replace(d, nodes=n))) for n in (32, 40)]
        out += [
            (f"mapped {n}", make_model(su, mm, replace(d, nodes=n, mapped=True))) for n in (16, 24)
        ]
        out += [
            ("filter 24", lab.FilteredSpectralModel(su.table, *args)),
            ("smooth0.5K 24", SpectralModel(lab.smoothed_table(su.table, 0.5), *args)),
            ("smooth2K 24", SpectralModel(lab.smoothed_table(su.table, 2.0), *args)),
        ]
    return out


def plan(su: Setup, mm: float, t0: float, v: Variant) -> tuple[SpectralModel, dict]:
    """Zero-flip seed solve, then the timed one-flip solve; NaN times when it fails."""
    model = make_model(su, mm, v)
    planner = Planner(
        model, su.env, su.requirement, su.min_gap_s, Grid(v.elements, grading=v.grading)
    )
    row = {"v": v, "flip": np.nan, "done": np.nan, "model_done": np.nan, "note": ""}
    try:
        d0 = planner.solve((), t0).dwell_s[0]
        seeds: tuple[np.ndarray, ...] = (np.array([0.5 * d0, 0.5 * d0 - su.env.flip_air_s]),)
    except PlanError:
        seeds = ()
    w, c = time.perf_counter(), time.process_time()
    try:
        res = planner.solve(("flip",), t0, seeds)
        row.update(model_done=res.cook_time_s)
        if v.rounds:
            case = Case(su.table, mm * 1e-3, t0, su.env, su.lethality, su.requirement, DEFAULT_REF)
            cal = calibrate(planner, ("flip",), t0, [case], res, v.rounds)
            res = cal.result
            row["note"] = cal.note[:60] if not cal.note.startswith("converged") else ""
        row.update(flip=res.schedule.events[0].at_s, done=res.cook_time_s)
    except PlanError as exc:
        row["note"] = str(exc).split(": ", 1)[-1][:60]
    row.update(wall=time.perf_counter() - w, cpu=time.process_time() - c)
    return model, row


def run_plans(su: Setup, mm: float, t0: float, variants, say: Callable) -> list[dict]:
    """Solve, then time the done on the model (own and fine rules) and on the reference."""
    out, exact_cache = [], {}
    for v in variants:
        model, row = plan(su, mm, t0, v)
        row.update(own=np.nan, fine=np.nan, exact=np.nan)
        if np.isfinite(row["done"]):
            flip, done = row["flip"], row["done"]
            sch, target = one_flip(flip, done), su.requirement.log_reduction
            row["own"] = lab.done_on_model(model, su.env, sch, t0, target, points=0)
            row["fine"] = lab.done_on_model(model, su.env, sch, t0, target)
            if round(flip, 4) not in exact_cache:
                exact_cache[round(flip, 4)] = exact_done(su, mm, t0, flip, done)
            row["exact"] = exact_cache[round(flip, 4)]
        out.append(row)
        say(f"  plan {v.label}: {row['done']:.3f} s vs {row['exact']:.3f} s, {row['wall']:.1f} s")
    return out


def redo_done(su: Setup, mm: float, t0: float, cfg: Config, top: dict) -> dict:
    """Done time for the default plan's flip from finer models and from the default reference."""
    out: dict[str, tuple[float, float]] = {}
    if not np.isfinite(top["done"]):
        return out
    sch, target = one_flip(top["flip"], top["done"]), su.requirement.log_reduction
    for n in (32, 40) if cfg.lab else ():
        w = time.perf_counter()
        done = lab.done_on_model(
            make_model(su, mm, replace(su.default, nodes=n)), su.env, sch, t0, target
        )
        out[f"{n} nodes, fine rule"] = (done / top["exact"] - 1.0, time.perf_counter() - w)
    w = time.perf_counter()
    done = exact_done(su, mm, t0, top["flip"], top["done"], DEFAULT_REF)
    out["reference 200/0.05"] = (done / top["exact"] - 1.0, time.perf_counter() - w)
    return out


def ref_gap(coarse: ReferenceResult, fine: ReferenceResult, sch: Schedule, su: Setup) -> dict:
    """Discretisation gap of the reference: cold spot (K) and time-to-target (relative)."""
    t = fine.t_s
    keep = np.ones(t.size, dtype=bool)
    for e in (0.0, sch.events[0].at_s, sch.events[0].at_s + su.env.flip_air_s):
        keep &= ~((t > e - 1e-9) & (t < e + SETTLE_S))
    cold = np.interp(t, coarse.t_s, coarse.temp_c.min(axis=1)) - fine.temp_c.min(axis=1)

    def ttt(res: ReferenceResult) -> float:
        lr = res.log_reduction.min(axis=1)
        slope = (lr[-1] - lr[-11]) / (res.t_s[-1] - res.t_s[-11])
        return float(res.t_s[-1] - (lr[-1] - 7.0) / slope)

    return {"cold": float(np.abs(cold[keep]).max()), "time": ttt(coarse) / ttt(fine) - 1.0}


def run_case(su: Setup, mm: float, t0: float, cfg: Config, say: Callable[[str], None]) -> dict:
    """All measurements of one thickness and start."""
    w = time.perf_counter()
    sch, ref_default = fixed_schedule(su, mm, t0)
    ref = reference(su, mm, t0, sch, TRUSTED)
    out = {"mm": mm, "t0": t0, "schedule": sch, "lr_ref": float(ref.log_reduction[-1].min())}
    out["trust"] = ref_gap(ref_default, ref, sch, su)
    if cfg.fine_check == (mm, t0):
        out["trust_fine"] = ref_gap(ref, reference(su, mm, t0, sch, FINE), sch, su)
    out["fields"] = []
    for label, model in field_models(su, mm, cfg):
        h = reduced_history(model, su, t0, sch, ref)
        out["fields"].append((label, model.n, field_errors(h, model, ref, su, cfg)))
        say(f"  fields {label}")
    extra = cfg.plans_extra if (mm, t0) in cfg.extra_cases else ()
    variants = (su.default, *[v for v in (*cfg.plans, *extra) if v != su.default])
    out["plans"] = run_plans(su, mm, t0, variants, say)
    out["redo"] = redo_done(su, mm, t0, cfg, out["plans"][0])
    out["wall"] = time.perf_counter() - w
    return out


def run(
    quick: bool,
    say: Callable[[str], None] = lambda _m: None,
    done: Callable[[dict], None] = lambda _r: None,
    cases: tuple[tuple[float, float], ...] = (),
    plans: tuple[Variant, ...] = (),
) -> list[dict]:
    """Measure every case of the quick or full configuration (or only ``cases``; with
    ``plans``, those configurations instead of the configured ones, on every case)."""
    cfg = QUICK if quick else FULL
    if cases:
        cfg = replace(cfg, cases=cases)
    if plans:
        cfg = replace(cfg, plans=plans, plans_extra=())
    su = demo_setup()
    results = []
    for mm, t0 in cfg.cases:
        say(f"case {mm:g} mm, {t0:g} degC")
        results.append(run_case(su, mm, t0, cfg, say))
        done(results[-1])
    return results


def main(argv: list[str] | None = None) -> None:
    """Command line: run, print the tables."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="two cases, few configurations")
    ap.add_argument("-v", "--verbose", action="store_true", help="progress on stderr")
    ap.add_argument("--case", action="append", default=[], help="only MM,DEGC (repeatable)")
    ap.add_argument(
        "--plan", action="append", default=[], help="only N/P/S/E[/cA][/gG][/mapped] (repeatable)"
    )
    args = ap.parse_args(argv)
    cases = tuple(tuple(float(x) for x in c.split(",")) for c in args.case)
    plans = tuple(Variant.parse(t) for t in args.plan)
    w = time.perf_counter()
    say = (lambda m: print(m, file=sys.stderr, flush=True)) if args.verbose else (lambda _m: None)
    show = lambda r: print(report.format_case(r), end="\n\n", flush=True)  # noqa: E731
    results = run(args.quick, say, show, cases, plans)  # type: ignore[arg-type]
    print(report.format_summary(results, demo_setup()))
    print(f"(total {time.perf_counter() - w:.0f} s)")


if __name__ == "__main__":
    main()
