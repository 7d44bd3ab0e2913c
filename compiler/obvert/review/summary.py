"""The build summary printed by the command line (a view of the manifest)."""

from __future__ import annotations

from typing import Any


def _opt(v: float | None) -> str:
    return f"{'-':>8}" if v is None else f"{v:8.1f}"


def _need(n: dict[str, Any]) -> str:
    v = n.get("required_margin_log")
    return f"{'-':>8}" if v is None else f"{v:8.3f}"


def summary(m: dict[str, Any]) -> str:
    """Plain-text build summary of a manifest: nodes, robustness price, cells."""
    cols = (
        "thick mm",
        "start C",
        "flips",
        "cook s",
        "plan s",
        "fix s",
        "margin log",
        "need log",
        "ff lim s",
        "2side s",
    )
    widths = (8, 8, 5, 8, 8, 6, 10, 8, 8, 8)
    head = " ".join(f"{c:>{w}}" for c, w in zip(cols, widths, strict=True)) + "  events"
    lines = [head, "-" * len(head)]
    for n in m["nodes"]:
        ev = ", ".join(f"{e['kind']}@{e['at_s']:.1f}" for e in n["events"])
        lines.append(
            f"{n['thickness_m'] * 1e3:8.2f} {n['start_temp_c']:8.1f} {n['flips']:5d} "
            f"{n['cook_time_s']:8.1f} {n['planned_cook_time_s']:8.1f} {n['extension_s']:6.1f} "
            f"{n['margin_log']:10.3f} {_need(n)} {_opt(n['bounds_s'].get('fast_flip_limit'))} "
            f"{_opt(n['bounds_s'].get('two_sided_contact'))}  {ev}"
        )
    s = m["summary"]
    price = s.get("price_of_robustness")
    if price is not None:
        lines.append("price of robustness (robust plan against the nominal optimum, same events):")
        for n in m["nodes"]:
            if n["price_of_robustness_s"] is not None:
                lines.append(
                    f"  {n['thickness_m'] * 1e3:6.2f} mm {n['start_temp_c']:6.1f} degC: "
                    f"nominal {n['nominal_planned_s']:.1f} s, robust {n['planned_cook_time_s']:.1f}"
                    f" s (+{n['price_of_robustness_s']:.1f} s)"
                )
        lines.append(
            f"  largest +{100 * price['max_fraction']:.1f} %, "
            f"mean +{100 * price['mean_fraction']:.1f} %"
        )
    searched = m["spec"]["planning"].get("method", "collocation") == "search"
    gap = s.get("reduced_model_gap")
    if gap is not None:
        what = (
            "search mesh alone against the done time read off the reference"
            if searched
            else "reduced model alone against the reference-calibrated plan"
        )
        lines.append(
            f"{what}: largest {100 * gap['largest_fraction']:+.3f} %, "
            f"mean {100 * gap['mean_fraction']:+.3f} %"
        )
    for rule, cells in sorted(m.get("cells", {}).items()):
        lines.append(f"cells, {rule} rule (smallest margin, where, pad):")
        for c in cells:
            lines.append(
                f"  cell ({c['ci']}, {c['cj']}) runs {c['rule']:8s} "
                f"margin {c['min_margin_log']:.3f} log at {c['at']['thickness_m'] * 1e3:.2f} mm, "
                f"{c['at']['start_temp_c']:.1f} degC;"
                f" pad {c['done_pad_ticks']} ticks; "
                + (
                    f"{c['samples']} reference runs"
                    if c["samples"]
                    else "covered by its corner node (monotonicity)"
                )
            )
    plan_note = (
        "plan s: done before ticks (event times searched on the search mesh, done read off "
        "the reference with the margin to come); "
        if searched
        else "plan s: optimum before ticks (reduced model, corrected against the reference "
        "unless calibration_rounds = 0); "
    )
    lines.append(
        plan_note + "fix s: extension needed on the reference "
        "model; need log: margin required (the reference's estimated error, measured with finer "
        "cells and with a longer step, plus [planning] min_margin); ff lim s / 2side s: "
        "fast-flip and two-sided-contact limits ("
        + ("search mesh" if searched else "reduced model")
        + ")"
    )
    lines.append(
        f"smallest margin {s['smallest_margin_log']:.3f} log; "
        f"{s['nodes_extended']} node(s) extended by certification"
    )
    return "\n".join(lines)
