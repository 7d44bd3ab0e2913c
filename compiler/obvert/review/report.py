"""One self-contained HTML review report of a table (plots inline as base64 PNG, no network).

Plots are drawn with matplotlib's Agg canvas directly (no pyplot, no global backend), at a
fixed size and DPI, with PNG metadata cleared, so the same table gives the same bytes. The
report holds no time stamp: the reviewer writes the date in its sign-off block.
"""

from __future__ import annotations

import base64
import html
import io
from collections.abc import Callable
from typing import Any

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from obvert.about import CAUTION, __version__
from obvert.firmware import canonical_json, canonical_sha256
from obvert.firmware.lookup import node_events
from obvert.problem import problem_of
from obvert.review.diff import flatten
from obvert.review.show import run_case, schedule_of, worst_case
from obvert.spec import Spec
from obvert.thermal.reference import food_frame

#: Section headings, in order (the tests look for each in the rendered page).
SECTIONS = (
    "Caution",
    "Cook time",
    "Smallest margin",
    "Schedules",
    "Worst node on the reference",
    "Cook time against its limits",
    "Price of robustness",
    "Spec",
    "Tolerances",
    "Hashes",
    "Sign-off",
)

DPI = 100
_PNG_METADATA = {"Software": None}
_KIND_STYLE = {
    "flip": ("tab:orange", "v"),
    "platen_close": ("tab:blue", "s"),
    "platen_open": ("tab:cyan", "D"),
    "done": ("tab:red", "o"),
}


def _png(draw: Callable[[Figure], None], size: tuple[float, float] = (6.4, 4.0)) -> str:
    """A figure drawn by ``draw`` as a base64 PNG ``data:`` URI (deterministic bytes)."""
    fig = Figure(figsize=size, dpi=DPI)
    FigureCanvasAgg(fig)
    draw(fig)
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata=_PNG_METADATA)
    return "data:image/png;base64," + base64.b64encode(buf.getvalue()).decode("ascii")


def _grid(m: dict[str, Any], key: str) -> np.ndarray:
    """Node values of ``key`` as an array (thickness index, start-temperature index)."""
    n_x, n_t = len(m["axes"]["thickness_m"]), len(m["axes"]["start_temp_c"])
    return np.array([n[key] for n in m["nodes"]], dtype=float).reshape(n_x, n_t)


def _heat_map(m: dict[str, Any], key: str, label: str, fmt: str, cmap: str) -> str:
    values = _grid(m, key)
    xs = [v * 1e3 for v in m["axes"]["thickness_m"]]
    ts = m["axes"]["start_temp_c"]

    def draw(fig: Figure) -> None:
        ax = fig.add_subplot()
        im = ax.imshow(values.T, origin="lower", cmap=cmap, aspect="auto")
        ax.set_xticks(range(len(xs)), [f"{v:g}" for v in xs])
        ax.set_yticks(range(len(ts)), [f"{v:g}" for v in ts])
        ax.set_xlabel("thickness, mm")
        ax.set_ylabel("start temperature, degC")
        for i in range(values.shape[0]):
            for j in range(values.shape[1]):
                ax.text(i, j, format(values[i, j], fmt), ha="center", va="center", fontsize=9)
        fig.colorbar(im, ax=ax, label=label)

    return _png(draw)


def _chosen_nodes(m: dict[str, Any]) -> list[int]:
    """The four corners of the grid and the node of smallest margin, without repeats."""
    n_x, n_t = len(m["axes"]["thickness_m"]), len(m["axes"]["start_temp_c"])
    worst = int(np.argmin([n["margin_log"] for n in m["nodes"]]))
    corners = [0, n_t - 1, (n_x - 1) * n_t, n_x * n_t - 1]
    return sorted({*corners, worst})


def _node_label(n: dict[str, Any]) -> str:
    return f"{n['thickness_m'] * 1e3:g} mm, {n['start_temp_c']:g} degC"


def _timelines(m: dict[str, Any], chosen: list[int]) -> str:
    def draw(fig: Figure) -> None:
        ax = fig.add_subplot()
        for row, k in enumerate(chosen):
            n = m["nodes"][k]
            ax.hlines(row, 0.0, n["cook_time_s"], color="0.6", lw=6)
            for e in n["events"]:
                colour, marker = _KIND_STYLE[e["kind"]]
                ax.plot([e["at_s"]], [row], marker=marker, color=colour, ms=9, ls="none")
                ax.annotate(
                    f"{e['at_s']:.1f}", (e["at_s"], row), xytext=(0, 8),
                    textcoords="offset points", ha="center", fontsize=8,
                )  # fmt: skip
        ax.set_yticks(range(len(chosen)), [_node_label(m["nodes"][k]) for k in chosen])
        ax.set_ylim(-0.7, len(chosen) - 0.3)
        ax.set_xlabel("time from loading, s")
        handles = [
            ax.plot([], [], marker=mk, color=c, ls="none", label=kind)[0]
            for kind, (c, mk) in _KIND_STYLE.items()
        ]
        ax.legend(handles=handles, loc="lower right", fontsize=8)

    return _png(draw, (6.4, 0.8 + 0.7 * len(chosen)))


def _worst_run(m: dict[str, Any], spec: Spec) -> tuple[str, str, str]:
    """Plots of the node of smallest margin run on the reference: temperatures, log reduction."""
    k = int(np.argmin([n["margin_log"] for n in m["nodes"]]))
    node = m["nodes"][k]
    schedule = schedule_of(m, node_events(m, k))
    problem = problem_of(spec)
    cases = problem.cases_at(node["thickness_m"], node["start_temp_c"])
    case = worst_case(cases, schedule)
    scenario = problem.scenarios[cases.index(case)].name
    res = run_case(case, schedule)
    temps, lr = food_frame(res)
    step = max(1, res.t_s.size // 400)
    t, x = res.t_s[::step], res.x_m * 1e3
    target = problem.requirement.log_reduction

    def draw_temp(fig: Figure) -> None:
        ax = fig.add_subplot()
        mesh = ax.pcolormesh(t, x, temps[::step].T, shading="nearest", cmap="inferno")
        for e in schedule.events:
            ax.axvline(e.at_s, color="w", lw=0.8, ls="--")
        ax.set_xlabel("time from loading, s")
        ax.set_ylabel("depth from the face first on the plate, mm")
        fig.colorbar(mesh, ax=ax, label="temperature, degC")

    def draw_lr(fig: Figure) -> None:
        ax = fig.add_subplot()
        ax.plot(res.t_s, lr.min(axis=1), color="tab:red", label="cold spot (smallest)")
        ax.axhline(target, color="k", ls="--", lw=1, label=f"target {target:g} log")
        for e in schedule.events:
            ax.axvline(e.at_s, color="0.6", lw=0.8, ls=":")
        ax.set_ylim(0.0, 2.0 * target)
        ax.set_xlabel("time from loading, s")
        ax.set_ylabel("log reduction, log10")
        ax.legend(loc="upper left", fontsize=8)

    caption = (
        f"node {k} ({_node_label(node)}), margin {node['margin_log']:.3f} log; reference run "
        f"of its schedule at the node in scenario {scenario}"
    )
    return caption, _png(draw_temp), _png(draw_lr)


def _limits(m: dict[str, Any]) -> str:
    nodes = m["nodes"]

    def draw(fig: Figure) -> None:
        ax = fig.add_subplot()
        idx = np.arange(len(nodes))
        ax.bar(idx, [n["cook_time_s"] for n in nodes], color="0.7", label="cook time")
        for key, colour, marker in (
            ("fast_flip_limit", "tab:green", "_"),
            ("two_sided_contact", "tab:purple", "x"),
        ):
            ys = [n["bounds_s"].get(key) for n in nodes]
            pts = [(i, y) for i, y in zip(idx, ys, strict=True) if y is not None]
            if pts:
                ax.plot(*zip(*pts, strict=True), marker=marker, ms=14, mew=2, ls="none",
                        color=colour, label=key.replace("_", " "))  # fmt: skip
        ax.set_xticks(idx, [_node_label(n) for n in nodes], rotation=30, ha="right", fontsize=8)
        ax.set_ylabel("time, s")
        ax.legend(fontsize=8)

    return _png(draw, (6.4, 4.4))


def _e(v: object) -> str:
    return html.escape(str(v))


def _rows(pairs: list[tuple[str, object]]) -> str:
    return "\n".join(f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in pairs)


def _price_table(m: dict[str, Any]) -> str:
    rows = [
        (
            _node_label(n),
            f"{n['nominal_planned_s']:.1f} s",
            f"{n['planned_cook_time_s']:.1f} s",
            f"+{n['price_of_robustness_s']:.1f} s",
        )
        for n in m["nodes"]
        if n.get("price_of_robustness_s") is not None
    ]
    if not rows:
        return "<p>No tolerances declared: the plan is the nominal one (no price).</p>"
    body = "\n".join("<tr>" + "".join(f"<td>{_e(c)}</td>" for c in r) + "</tr>" for r in rows)
    price = m["summary"].get("price_of_robustness") or {}
    tail = ""
    if price:
        tail = (
            f"<p>Largest +{100 * price['max_fraction']:.1f} %, "
            f"mean +{100 * price['mean_fraction']:.1f} %.</p>"
        )
    return (
        "<table><tr><th>node</th><th>nominal plan</th><th>robust plan</th><th>price</th></tr>"
        f"{body}</table>{tail}"
    )


_STYLE = """
body { font-family: sans-serif; max-width: 60em; margin: 2em auto; color: #111; }
h1 { border-bottom: 2px solid #333; }
h2 { margin-top: 2em; border-bottom: 1px solid #999; }
table { border-collapse: collapse; margin: 0.5em 0; }
th, td { border: 1px solid #bbb; padding: 0.2em 0.6em; text-align: left; }
.caution { background: #fff3cd; border: 2px solid #c77c00; padding: 0.8em; }
.signoff td { height: 2.2em; min-width: 22em; }
img { max-width: 100%; }
"""


def report_html(m: dict[str, Any], spec: Spec) -> bytes:
    """The review report of a table as one self-contained HTML document.

    Parameters
    ----------
    m : dict
        A checked manifest.
    spec : Spec
        The spec it was built from (for the reference run of the worst node).

    Returns
    -------
    bytes
        UTF-8 HTML; the same inputs give the same bytes.
    """
    chosen = _chosen_nodes(m)
    time_map = _heat_map(m, "cook_time_s", "cook time, s", ".1f", "viridis")
    margin_map = _heat_map(m, "margin_log", "margin, log10", ".3f", "RdYlGn")
    caption, temp_png, lr_png = _worst_run(m, spec)
    name = m["table"]["name"]
    tol = m.get("tolerances") or {}
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        f"<title>Review report: {_e(name)}</title><style>{_STYLE}</style></head><body>",
        f"<h1>Review report: {_e(m['table']['title'])} ({_e(name)})</h1>",
        f"<p>Generated by obvert {_e(__version__)} from the table; format version "
        f"{_e(m['format_version'])}; {len(m['nodes'])} nodes; tick {m['tick_s']:g} s.</p>",
        f'<h2>{SECTIONS[0]}</h2><p class="caution">{_e(CAUTION)}</p>',
        f"<h2>{SECTIONS[1]}</h2><p>Cook time (done) of each node, s.</p>",
        f'<img alt="cook time map" src="{time_map}">',
        f"<h2>{SECTIONS[2]}</h2><p>Certified margin of each node over the target, log10 "
        f"(smallest {m['summary']['smallest_margin_log']:.3f}).</p>",
        f'<img alt="margin map" src="{margin_map}">',
        f"<h2>{SECTIONS[3]}</h2><p>Events of the grid's corners and of the node of smallest "
        "margin, s from loading.</p>",
        f'<img alt="schedules" src="{_timelines(m, chosen)}">',
        f"<h2>{SECTIONS[4]}</h2><p>{_e(caption)}.</p>",
        f'<img alt="temperature across the thickness" src="{temp_png}">',
        f'<img alt="cold-spot log reduction" src="{lr_png}">',
        f"<h2>{SECTIONS[5]}</h2><p>Cook time of each node against its fast-flip and "
        "two-sided-contact limits (lower bounds of the cook time).</p>",
        f'<img alt="cook time and limits" src="{_limits(m)}">',
        f"<h2>{SECTIONS[6]}</h2>{_price_table(m)}",
        f"<h2>{SECTIONS[7]}</h2><table>{_rows(list(flatten(m['spec']).items()))}</table>",
        f"<h2>{SECTIONS[8]}</h2>",
        f"<table>{_rows(sorted(tol.items()))}</table>" if tol else "<p>None declared.</p>",
        f"<h2>{SECTIONS[9]}</h2><table>"
        + _rows(
            [
                ("spec_hash (sha256 of the spec's canonical JSON)", m["spec_hash"]),
                ("sha256 of the table's canonical JSON", canonical_sha256(m)),
                ("canonical JSON bytes", len(canonical_json(m))),
            ]
        )
        + "</table>",
        f'<h2>{SECTIONS[10]}</h2><table class="signoff">'
        + "".join(f"<tr><th>{k}</th><td></td></tr>" for k in ("Reviewer", "Date", "Decision"))
        + "</table>",
        "</body></html>",
        "",
    ]
    return "\n".join(parts).encode("utf-8")
