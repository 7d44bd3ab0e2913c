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
for up to N rounds (obvert.certify.calibrate; no suffix: the reduced model's plan alone);
``mapped``: the lab's mapped grid. The default is what the build uses (the spec's
[planning] defaults, SpectralSettings' stencil, calibration_rounds).

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
import spectral_lab as lab  # tests/bench is on sys.path

from obvert.certify.calibrate import calibrate
from obvert.food.lethality import LethalityModel
from obvert.food.presets import preset
from obvert.food.table import PropertyTable
from obvert.plan.collocation import Grid
from obvert.plan.ocp import PlanError, Planner, Requirement
from obvert.plan.schedule import Surroundings
from obvert.problem import Case
from obvert.problem.foods import food_table
from obvert.spec import load_spec
from obvert.thermal.boundary import FaceBC
from obvert.thermal.spectral import SpectralModel, SpectralSettings


def _sibling(name: str) -> Any:
    """Load tests/bench/``name``.py (this folder is not a package), registered in
    ``sys.modules`` so that its dataclasses can look their module up."""
    spec = importlib.util.spec_from_file_location(
        f"obvert_bench_{name}", Path(__file__).with_name(f"{name}.py")
    )
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod
    spec.loader.exec_module(mod)
    return mod


report = _sibling("reduced_model_report")
fields = _sibling("reduced_model_fields")
refs = _sibling("reduced_model_reference")
TARGET_COOK, TARGET_COLD_K, MAX_STATES = report.TARGET_COOK, report.TARGET_COLD_K, report.MAX_STATES
TRUSTED, DEFAULT_REF, FINE = refs.TRUSTED, refs.DEFAULT_REF, refs.FINE
one_flip, reference, exact_done = refs.one_flip, refs.reference, refs.exact_done
fixed_schedule = refs.fixed_schedule


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
        rounds=pl.calibration_rounds,
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


def run_case(su: Setup, mm: float, t0: float, cfg: Config, say: Callable[[str], None]) -> dict:
    """All measurements of one thickness and start."""
    w = time.perf_counter()
    sch, ref_default = fixed_schedule(su, mm, t0)
    ref = reference(su, mm, t0, sch, TRUSTED)
    out = {"mm": mm, "t0": t0, "schedule": sch, "lr_ref": float(ref.log_reduction[-1].min())}
    out["trust"] = fields.ref_gap(ref_default, ref, sch, su.env.flip_air_s)
    if cfg.fine_check == (mm, t0):
        out["trust_fine"] = fields.ref_gap(
            ref, reference(su, mm, t0, sch, FINE), sch, su.env.flip_air_s
        )
    out["fields"] = []
    for label, model in field_models(su, mm, cfg):
        h = fields.reduced_history(model, su.env, t0, sch, ref)
        err = fields.field_errors(h, model, ref, t0, su.env.flip_air_s, cfg.rules, su.lethality)
        out["fields"].append((label, model.n, err))
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
