"""Tables of the reduced-model benchmark (tests/bench/reduced_model.py): per case and summary.

Kept apart from the measurements so that each file stays short; the targets are the issue's
("measure the reduced model against the reference") and are imported by the benchmark.
"""

from __future__ import annotations

from typing import Any

import numpy as np

TARGET_COOK = 1e-3  # relative cook-time error (issue)
TARGET_COLD_K = 0.3  # cold-spot error, K (issue)
MAX_STATES = 24  # enthalpy nodes allowed (issue)


def _f(v: float, fmt: str) -> str:
    return format(v, fmt) if np.isfinite(v) else "fail".rjust(len(format(1.0, fmt)))


def _pct(a: float, b: float, fmt: str = "+8.3f") -> str:
    return _f(100.0 * (a / b - 1.0), fmt)


def format_case(r: dict) -> str:
    """Tables of one case."""
    sch, tr = r["schedule"], r["trust"]
    lines = [
        f"== {r['mm']:g} mm, start {r['t0']:g} degC: fixed schedule flip {sch.events[0].at_s:.2f}"
        f" s, done {sch.done_s:.2f} s; trusted reference min LR at done {r['lr_ref']:.4f}"
        f" (case {r['wall']:.0f} s)",
        f"   reference 200 cells/0.05 s vs 400/0.02: cold spot {tr['cold']:.4f} K, "
        f"time-to-target {100 * tr['time']:+.4f} %, thaw {tr['thaw_s']:+.3f} s",
    ]
    if "trust_fine" in r:
        tf = r["trust_fine"]
        lines.append(
            f"   reference 400/0.02 vs 800/0.01: cold spot {tf['cold']:.4f} K, "
            f"time-to-target {100 * tf['time']:+.4f} %, thaw {tf['thaw_s']:+.3f} s"
        )
    rules = list(r["fields"][0][2]["lr"])
    lines += [
        " (a) cold-spot error, K | (b) error of the smallest LR at removal, log reductions",
        "  model          nodes    slab    at s  Tref C     hot  thaw s  K/s |     own"
        + "".join(f" {k:>9}" for k in rules),
    ]
    for label, _n, e in r["fields"]:
        lines.append(
            f"  {label:<14} {e['cold_nodes']:5.3f} {e['cold_slab']:7.3f} {e['worst'][0]:7.1f}"
            f" {e['worst'][1]:7.2f} {e['cold_hot']:7.3f} {e['thaw']['shift_s']:+7.3f}"
            f" {e['thaw']['rise_k_per_s']:4.1f} |"
            f" {e['lr_own']:+7.3f}" + "".join(f" {e['lr'][k]:+9.4f}" for k in rules)
        )
    default = r["plans"][0]
    lines += [
        " (c) plan with one flip; err: planned done vs the reference's exact done for that flip;",
        "     own: planned vs CVODES on the same model and rule; fine: CVODES done with the",
        "     LR checked on 801 points (global polynomial), vs the reference",
        "  configuration        flip s    done s   exact s    err %   own %  fine %"
        "   wall s  xwall    cpu s   xcpu",
    ]
    for p in r["plans"]:
        lines.append(
            f"  {p['v'].label:<18} {_f(p['flip'], '8.2f')} {_f(p['done'], '9.3f')}"
            f" {_f(p['exact'], '9.3f')} {_pct(p['done'], p['exact'])}"
            f" {_pct(p['done'], p['own'], '+7.3f')} {_pct(p['fine'], p['exact'], '+7.3f')}"
            f" {p['wall']:8.1f} {p['wall'] / default['wall']:6.2f} {p['cpu']:8.1f}"
            f" {p['cpu'] / default['cpu']:6.2f}" + (f"  ({p['note']})" if p["note"] else "")
        )
    for name, (err, wall) in r["redo"].items():
        lines.append(
            f"  done for the default plan's flip from {name}: {100 * err:+.4f} %, {wall:.1f} s"
        )
    return "\n".join(lines)


def _plan_err(r: dict, v: Any) -> tuple[float, float, float]:
    """(err %, wall ratio, CPU ratio) of variant ``v`` in case ``r`` (NaN if absent)."""
    hit = [p for p in r["plans"] if p["v"] == v]
    if not hit:
        return np.nan, np.nan, np.nan
    p, d = hit[0], r["plans"][0]
    return 100.0 * (p["done"] / p["exact"] - 1.0), p["wall"] / d["wall"], p["cpu"] / d["cpu"]


def format_summary(results: list[dict], su: Any) -> str:
    """Key figures over all cases: (a) per node count, (b) per rule, (c) per configuration."""
    heads = "".join(f" {r['mm']:>3g}mm{r['t0']:+4g}" for r in results)
    lines = [
        f"== summary (targets: cook time {100 * TARGET_COOK:g} %, cold spot {TARGET_COLD_K:g}"
        f" K, at most {MAX_STATES} states); default {su.default.label}",
        " (a) cold-spot error of the interpolated field (slab), K",
        "  model         " + heads + "      max",
    ]
    for label, _n, _e in results[0]["fields"]:
        v = [[e for lab_, _n, e in r["fields"] if lab_ == label][0]["cold_slab"] for r in results]
        lines.append(f"  {label:<14}" + "".join(f" {x:9.3f}" for x in v) + f" {max(v):8.3f}")
    lines += [
        f" (b) LR error at {su.default.nodes} nodes, log reductions, per rule",
        "  rule          " + heads,
    ]
    fields = [
        [e for lab_, _n, e in r["fields"] if lab_ == f"chebyshev {su.default.nodes}"][0]
        for r in results
    ]
    for k in results[0]["fields"][0][2]["lr"]:
        lines.append(f"  {k:<14}" + "".join(f" {f['lr'][k]:+9.4f}" for f in fields))
    lines += [
        " (c) planned cook-time error, %; wall and CPU time of the solve / default (median)",
        "  configuration     " + heads + "   max|e|  xwall   xcpu  target",
    ]
    seen: list[Any] = []
    for r in results:
        seen += [p["v"] for p in r["plans"] if p["v"] not in seen]
    for v in seen:
        e, wr, cr = np.array([_plan_err(r, v) for r in results]).T
        ok = v.nodes <= MAX_STATES and np.all(np.abs(e[np.isfinite(e)]) <= 100 * TARGET_COOK)
        ok_s = "met" if ok and np.isfinite(e).sum() == len(results) else "-" if not ok else "n/a"
        lines.append(
            f"  {v.label:<18}"
            + "".join(f" {_f(x, '+9.3f') if x == x else '      n/a'}" for x in e)
            + f" {np.nanmax(np.abs(e)):8.3f} {np.nanmedian(wr):6.2f}"
            + f" {np.nanmedian(cr):6.2f}  {ok_s}"
        )
    return "\n".join(lines)
