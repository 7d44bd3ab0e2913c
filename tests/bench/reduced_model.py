"""Benchmark: the reduced spectral model and its planner against the finite-volume reference.

Usage: ``python tests/bench/reduced_model.py [--quick]`` (full: about 20 min on one core;
quick: about 2 min). Method and measured figures: docs/reduced-model.md.

The demo food and appliance (compiler/obvert/demo/griddle_patty.toml) with the
salmonella_beef_7log preset and its 7-log target (no minimum-temperature rule), one flip.
The trusted reference is ``obvert.thermal.reference.simulate`` with 400 cells and 0.02 s
steps (second order in space and time, verified in tests/physics; its own discretisation
error is printed for every case against 200 cells / 0.05 s).

For each thickness and start, and each model variant and node count:

(a) cold-spot error: max over time of |min over slab T_reduced - min over slab T_ref| on a
    fixed schedule (one flip at 45 % of the cook, done at the reference's time-to-target),
    excluding the 2 s after loading, lift-off and landing. ``nodes``: minimum over the
    Chebyshev nodes; ``slab``: minimum of the interpolated field on 201 points; ``hot``: the
    slab error while the reference cold spot is at or above 40 degC (where lethality counts).
(b) error of the smallest log reduction at removal on the same schedule (``nodes``: the model's
    LR states; ``slab``: LR integrated on the 201 points from the interpolated temperature).
(c) cook-time error of the plan: planned done time vs the reference's exact minimum done time
    for the planned flip time (first time the reference's min LR reaches the target,
    interpolated between its 0.02 s steps), with the wall and CPU time of the solve
    (NLP construction included) and its ratio to the stock 12-node / 8-element planner.
"""

from __future__ import annotations

import argparse
import sys
import time
from collections.abc import Callable
from dataclasses import dataclass
from importlib.resources import files

import numpy as np

from obvert.food.factory import food_table
from obvert.food.lethality import LethalityModel
from obvert.food.presets import preset
from obvert.food.table import PropertyTable
from obvert.plan.collocation import Grid
from obvert.plan.ocp import PlanError, Planner, Requirement
from obvert.plan.schedule import Event, Schedule, Surroundings, phases_for
from obvert.spec import load_spec
from obvert.thermal import _spectral_lab as lab
from obvert.thermal.boundary import FaceBC
from obvert.thermal.reference import ReferenceResult, ReferenceSettings, simulate
from obvert.thermal.spectral import SpectralModel, SpectralSettings

TRUSTED = ReferenceSettings(n_cells=400, dt_max_s=0.02)
DEFAULT_REF = ReferenceSettings()  # 200 cells, 0.05 s: what certification uses
FINE = ReferenceSettings(n_cells=800, dt_max_s=0.01)
TARGET_COOK = 1e-3  # relative cook-time error (issue)
TARGET_COLD_K = 0.3  # cold-spot error, K (issue)
FLIP_FRACTION, SETTLE_S, HOT_C, STRIDE = 0.45, 2.0, 40.0, 2
X_FINE = 201


@dataclass(frozen=True)
class Config:
    """What one run measures (thicknesses mm, starts degC, node and element counts)."""

    thicknesses_mm: tuple[float, ...]
    starts_c: tuple[float, ...]
    nodes: tuple[int, ...]
    elements: tuple[int, ...]  # swept at 12 nodes
    lab: bool  # mapped grid, filter, smoothed table, 32/40 nodes
    fine_check: tuple[float, float] | None  # (mm, degC) also checked at 800 cells / 0.01 s


FULL = Config((6, 10, 15, 25), (4, -18), (8, 12, 16, 20, 24), (6, 8, 12, 16), True, (10, -18))
QUICK = Config((6, 10), (4, -18), (12, 24), (8,), False, None)
CASES_QUICK = ((6.0, 4.0), (10.0, -18.0))


@dataclass(frozen=True)
class Setup:
    """Demo food, appliance and target."""

    table: PropertyTable
    lethality: LethalityModel
    env: Surroundings
    requirement: Requirement
    min_gap_s: float


def demo_setup() -> Setup:
    """The demo food and appliance, salmonella_beef_7log with its 7-log target."""
    spec = load_spec(str(files("obvert.demo") / "griddle_patty.toml"))
    a = spec.appliance
    env = Surroundings(
        plate=FaceBC(a.contact_coefficient, a.plate_temp_c),
        air=FaceBC(a.air_coefficient, a.air_temp_c, a.emissivity),
        platen=None,
        flip_air_s=a.flip_air_s,
    )
    org = preset("salmonella_beef_7log")
    req = Requirement(org.target_log_reduction)
    return Setup(food_table(spec.food), org.model(), env, req, a.min_event_gap_s)


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
    """Reduced-model outputs at the reference's (strided) rows."""

    t_s: np.ndarray
    cold_nodes: np.ndarray
    cold_slab: np.ndarray
    lr_nodes: float
    lr_slab: float


def reduced_history(
    model: SpectralModel, su: Setup, t0: float, sch: Schedule, ref: ReferenceResult
) -> History:
    """Simulate ``sch`` on the reduced model (CVODES) at the reference's rows."""
    n = model.n
    interp = lab.interpolation_matrix(model, np.linspace(0.0, model.thickness_m, X_FINE))
    x, start, rows_t, cold_n, fine = model.initial_state(t0), 0.0, [], [], []
    mirrored = False
    for k, ph in enumerate(phases_for(sch, su.env)):
        if ph.flip_before:
            x, mirrored = np.array(model.flip(x)).ravel(), not mirrored
        t_rows = ref.t_s[ref.phase_index == k]
        t_rows = t_rows[t_rows > start][::-1][::STRIDE][::-1]  # keep the phase end
        traj = np.array(
            model.trajectory(ph.face0, ph.face1, (t_rows - start) / ph.duration_s)(x, ph.duration_s)
        )
        temps = np.array(model.temp_of(traj[:n].T.reshape(1, -1))).reshape(-1, n)
        t_fine = temps @ interp.T
        fine.append(t_fine[:, ::-1] if mirrored else t_fine)  # food frame
        rows_t.append(t_rows)
        cold_n.append(temps.min(axis=1))
        x, start = traj[:, -1], start + ph.duration_s
    t_all = np.concatenate([[0.0], *rows_t])
    t_fine = np.vstack([np.full((1, X_FINE), t0), *fine])
    rate = su.lethality.rate(t_fine)
    lr = np.sum(0.5 * (rate[1:] + rate[:-1]) * np.diff(t_all)[:, None], axis=0)
    return History(
        t_all[1:],
        np.concatenate(cold_n),
        t_fine[1:].min(axis=1),
        float(x[n:].min()),
        float(lr.min()),
    )


def field_errors(h: History, ref: ReferenceResult, sch: Schedule, su: Setup) -> dict:
    """(a) and (b) of one reduced run against the trusted reference."""
    cold_ref = np.interp(h.t_s, ref.t_s, ref.temp_c.min(axis=1))
    keep = np.ones(h.t_s.size, dtype=bool)
    events = [0.0] + [e.at_s for e in sch.events[:-1]] + [sch.events[0].at_s + su.env.flip_air_s]
    for e in events:
        keep &= ~((h.t_s > e - 1e-9) & (h.t_s < e + SETTLE_S))
    hot = keep & (cold_ref >= HOT_C)
    lr_ref = float(ref.log_reduction[-1].min())
    return {
        "cold_nodes": float(np.abs(h.cold_nodes - cold_ref)[keep].max()),
        "cold_slab": float(np.abs(h.cold_slab - cold_ref)[keep].max()),
        "cold_hot": float(np.abs(h.cold_slab - cold_ref)[hot].max()) if hot.any() else np.nan,
        "lr_nodes": h.lr_nodes - lr_ref,
        "lr_slab": h.lr_slab - lr_ref,
    }


def plan(planner: Planner, t0: float) -> tuple[float, float, float, float, str]:
    """Solve one flip: (flip s, done s, wall s, CPU s, failure note); NaN when it fails."""
    w, c = time.perf_counter(), time.process_time()
    flip = done = float("nan")
    note = ""
    try:
        res = planner.solve(("flip",), t0)
        flip, done = res.schedule.events[0].at_s, res.cook_time_s
    except PlanError as exc:
        note = str(exc).split(": ", 1)[-1]
    return flip, done, time.perf_counter() - w, time.process_time() - c, note


def models(su: Setup, mm: float, cfg: Config) -> list[tuple[str, int, SpectralModel]]:
    """Model variants for (a)/(b): stock at every node count, lab variants if asked."""
    thick, lm, top = mm * 1e-3, su.lethality, max(cfg.nodes)
    out = [
        ("chebyshev", n, SpectralModel(su.table, thick, lm, SpectralSettings(n))) for n in cfg.nodes
    ]
    if cfg.lab:
        s = SpectralSettings(top)
        out += [
            ("chebyshev", n, SpectralModel(su.table, thick, lm, SpectralSettings(n)))
            for n in (32, 40)
        ]
        out += [
            (
                "mapped a=0.9",
                16,
                lab.MappedSpectralModel(su.table, thick, lm, SpectralSettings(16)),
            ),
            ("mapped a=0.9", top, lab.MappedSpectralModel(su.table, thick, lm, s)),
            ("filter 36/16", top, lab.FilteredSpectralModel(su.table, thick, lm, s)),
            ("smooth 0.5 K", top, SpectralModel(lab.smoothed_table(su.table, 0.5), thick, lm, s)),
            ("smooth 2 K", top, SpectralModel(lab.smoothed_table(su.table, 2.0), thick, lm, s)),
        ]
    return out


def stock_model(su: Setup, mm: float, n: int, mapped: bool = False) -> SpectralModel:
    """Stock (or mapped-grid) reduced model of the demo food."""
    kind = lab.MappedSpectralModel if mapped else SpectralModel
    return kind(su.table, mm * 1e-3, su.lethality, SpectralSettings(n))


def plan_configs(su: Setup, t0: float, cfg: Config) -> list[tuple[str, int, int]]:
    """Planner variants for (c): (model kind, nodes, elements)."""
    out = [("stock", n, 8) for n in cfg.nodes]
    out += [("stock", 12, e) for e in cfg.elements if e != 8]
    if cfg.lab:
        out.append(("stock", max(cfg.nodes), 16))
        if t0 < su.table.freezing_point_c:
            out.append(("mapped", max(cfg.nodes), 8))
    return out


def run_plans(su: Setup, mm: float, t0: float, cfg: Config, say: Callable) -> list[dict]:
    """Solve, then time the done on the model (node and fine rules) and on the reference."""
    out, exact_cache = [], {}
    for kind, n, el in plan_configs(su, t0, cfg):
        model = stock_model(su, mm, n, mapped=kind == "mapped")
        planner = Planner(model, su.env, su.requirement, su.min_gap_s, Grid(el))
        flip, done, wall, cpu, note = plan(planner, t0)
        row = {"kind": kind, "n": n, "el": el, "flip": flip, "done": done, "wall": wall}
        row.update(cpu=cpu, note=note, nodes=np.nan, fine=np.nan, exact=np.nan)
        if np.isfinite(done):
            sch = one_flip(flip, done)
            target = su.requirement.log_reduction
            row["nodes"] = lab.done_on_model(model, su.env, sch, t0, target, points=0)
            row["fine"] = lab.done_on_model(model, su.env, sch, t0, target)
            if round(flip, 6) not in exact_cache:
                exact_cache[round(flip, 6)] = exact_done(su, mm, t0, flip, done)
            row["exact"] = exact_cache[round(flip, 6)]
        out.append(row)
        say(f"  plan {kind} {n}/{el}: {done:.3f} s vs {row['exact']:.3f} s, {wall:.1f} s")
    return out


def redo_done(su: Setup, mm: float, t0: float, cfg: Config, top: dict) -> dict:
    """Done time for the top plan's flip from finer models and from the default reference."""
    out: dict[str, tuple[float, float]] = {}
    if not np.isfinite(top["done"]):
        return out
    sch, target = one_flip(top["flip"], top["done"]), su.requirement.log_reduction
    variants = [("stock", n) for n in ((32, 40) if cfg.lab else ())]
    variants += [("mapped", max(cfg.nodes))] if cfg.lab else []
    for kind, n in variants:
        w = time.perf_counter()
        model = stock_model(su, mm, n, mapped=kind == "mapped")
        done = lab.done_on_model(model, su.env, sch, t0, target)
        out[f"{kind} {n}"] = (done / top["exact"] - 1.0, time.perf_counter() - w)
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
    sch, ref_default = fixed_schedule(su, mm, t0)
    ref = reference(su, mm, t0, sch, TRUSTED)
    out = {"mm": mm, "t0": t0, "schedule": sch, "lr_ref": float(ref.log_reduction[-1].min())}
    out["trust"] = ref_gap(ref_default, ref, sch, su)
    if cfg.fine_check == (mm, t0):
        out["trust_fine"] = ref_gap(ref, reference(su, mm, t0, sch, FINE), sch, su)
    out["fields"] = []
    for label, n, model in models(su, mm, cfg):
        h = reduced_history(model, su, t0, sch, ref)
        out["fields"].append((label, n, field_errors(h, ref, sch, su)))
        say(f"  fields {label} {n}")
    out["plans"] = run_plans(su, mm, t0, cfg, say)
    top = [p for p in out["plans"] if (p["kind"], p["n"], p["el"]) == ("stock", max(cfg.nodes), 8)]
    out["redo"] = redo_done(su, mm, t0, cfg, top[0])
    return out


def _f(v: float, fmt: str) -> str:
    return format(v, fmt) if np.isfinite(v) else "fail".rjust(len(format(1.0, fmt)))


def _pct(a: float, b: float, fmt: str = "+8.3f") -> str:
    return _f(100.0 * (a / b - 1.0), fmt)


def format_case(r: dict) -> str:
    """Tables of one case."""
    sch, tr = r["schedule"], r["trust"]
    lines = [
        f"== {r['mm']:g} mm, start {r['t0']:g} degC: fixed schedule flip {sch.events[0].at_s:.2f}"
        f" s, done {sch.done_s:.2f} s; trusted reference min LR at done {r['lr_ref']:.4f}",
        f"   reference 200 cells/0.05 s vs 400/0.02: cold spot {tr['cold']:.4f} K, "
        f"time-to-target {100 * tr['time']:+.4f} %",
    ]
    if "trust_fine" in r:
        tf = r["trust_fine"]
        lines.append(
            f"   reference 400/0.02 vs 800/0.01: cold spot {tf['cold']:.4f} K, "
            f"time-to-target {100 * tf['time']:+.4f} %"
        )
    base = {n: e for lab_, n, e in r["fields"] if lab_ == "chebyshev"}
    b24 = base[24] if 24 in base else base[max(base)]
    lines += [
        " (a) cold-spot error, K; (b) error of the smallest LR at removal, log10",
        "  model          nodes   nodes    slab  /slab24     hot |  LR nodes   LR slab  /LR24",
    ]
    for label, n, e in r["fields"]:
        lines.append(
            f"  {label:<14} {n:5d} {e['cold_nodes']:7.3f} {e['cold_slab']:7.3f} "
            f"{e['cold_slab'] / b24['cold_slab']:8.2f} {e['cold_hot']:7.3f} | "
            f"{e['lr_nodes']:+9.4f} {e['lr_slab']:+9.4f} {abs(e['lr_slab'] / b24['lr_slab']):6.2f}"
        )
    default = [p for p in r["plans"] if (p["kind"], p["n"], p["el"]) == ("stock", 12, 8)][0]
    lines += [
        " (c) plan with one flip; err: planned done vs the reference's exact done for that flip;",
        "     time: planned vs CVODES on the same model and node rule; fine: CVODES done with",
        "     the LR checked on 801 points, vs the reference",
        "  model   nodes  el   flip s    done s   exact s    err %  /target   time %   fine %"
        "   wall s  x12/8    cpu s",
    ]
    for p in r["plans"]:
        lines.append(
            f"  {p['kind']:<7} {p['n']:5d} {p['el']:3d} {_f(p['flip'], '8.2f')}"
            f" {_f(p['done'], '9.3f')} {_f(p['exact'], '9.3f')} {_pct(p['done'], p['exact'])}"
            f" {_f(abs(p['done'] / p['exact'] - 1.0) / TARGET_COOK, '8.2f')}"
            f" {_pct(p['done'], p['nodes'])} {_pct(p['fine'], p['exact'])} {p['wall']:8.1f}"
            f" {p['wall'] / default['wall']:6.1f} {p['cpu']:8.1f}"
            + (f"  ({p['note']})" if p["note"] else "")
        )
    for name, (err, wall) in r["redo"].items():
        lines.append(
            f"  done for the {max(base) if 24 not in base else 24}-node plan's flip from {name}:"
            f" err {_f(100 * err, '+.4f')} %, {wall:.1f} s"
        )
    return "\n".join(lines)


def format_summary(results: list[dict], top: int) -> str:
    """One line per case at ``top`` nodes and 8 elements, with the targets."""
    lines = [
        f"== summary at {top} nodes, 8 elements (targets: cook time {100 * TARGET_COOK:g} %,"
        f" cold spot {TARGET_COLD_K:g} K); cook-time errors in %",
        "  case           cold slab K  cold hot K   LR slab |  planned  fine-rule  40 nodes"
        "  ref 200/0.05",
    ]
    for r in results:
        e = [e for lab_, n, e in r["fields"] if (lab_, n) == ("chebyshev", top)][0]
        p = [p for p in r["plans"] if (p["kind"], p["n"], p["el"]) == ("stock", top, 8)][0]
        redo = r["redo"]
        n40 = _f(100 * redo["stock 40"][0], "+9.3f") if "stock 40" in redo else "      n/a"
        ref = _f(100 * redo["reference 200/0.05"][0], "+13.4f") if redo else "          n/a"
        lines.append(
            f"  {r['mm']:4g} mm {r['t0']:+4g} degC {e['cold_slab']:10.3f} {e['cold_hot']:11.3f}"
            f" {e['lr_slab']:+9.4f} | {_pct(p['done'], p['exact'])}"
            f" {_pct(p['fine'], p['exact'], '+10.3f')}"
            f" {n40} {ref}"
        )
    return "\n".join(lines)


def run(
    quick: bool,
    say: Callable[[str], None] = lambda _m: None,
    done: Callable[[dict], None] = lambda _r: None,
) -> list[dict]:
    """Measure every case of the quick or full configuration."""
    cfg = QUICK if quick else FULL
    su = demo_setup()
    cases = CASES_QUICK if quick else [(t, s) for t in cfg.thicknesses_mm for s in cfg.starts_c]
    results = []
    for mm, t0 in cases:
        say(f"case {mm:g} mm, {t0:g} degC")
        results.append(run_case(su, mm, t0, cfg, say))
        done(results[-1])
    return results


def main(argv: list[str] | None = None) -> None:
    """Command line: run, print the tables."""
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="2-minute subset")
    ap.add_argument("-v", "--verbose", action="store_true", help="progress on stderr")
    args = ap.parse_args(argv)
    w = time.perf_counter()
    say = (lambda m: print(m, file=sys.stderr, flush=True)) if args.verbose else (lambda _m: None)
    results = run(args.quick, say, lambda r: print(format_case(r), end="\n\n", flush=True))
    print(format_summary(results, max((QUICK if args.quick else FULL).nodes)))
    print(f"(total {time.perf_counter() - w:.0f} s)")


if __name__ == "__main__":
    main()
