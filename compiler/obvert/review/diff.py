"""What changed between two JSON tables, and whether a person has to look at it.

Nodes are matched by their grid point (thickness, start temperature), cells by their rule and
the grid points of their corners, so two tables on different grids still compare where they
overlap. A node or cell is *changed* when its canonical JSON differs in any byte.

A difference *needs review* (``Diff.needs_review``) when any of these holds:

* a node or a cell was added or removed;
* a node got shorter (``cook_time_s`` fell), its margin fell (``margin_log``), or its
  sequence of event kinds changed;
* a cell's ``min_margin_log`` fell or its ``done_pad_ticks`` fell;
* the spec (any key), the tolerances, the safety target, the tick or the axes differ.

A node that only got longer with no smaller margin and the same event kinds, and a cell
whose margin and pad did not fall, are reported but need no review.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from obvert.firmware import canonical_json

Point = tuple[float, float]


@dataclass(frozen=True)
class NodeChange:
    """One node present in both tables whose bytes differ.

    Attributes
    ----------
    thickness_m, start_temp_c : float
        Grid point, m and degC.
    cook_time_change_s : float
        New cook time less old, s.
    margin_change_log : float
        New margin less old, log10.
    kinds_changed : bool
        The sequence of event kinds differs.
    flagged : bool
        Shorter, smaller margin, or other event kinds: needs review.
    """

    thickness_m: float
    start_temp_c: float
    cook_time_change_s: float
    margin_change_log: float
    kinds_changed: bool
    flagged: bool


@dataclass(frozen=True)
class CellChange:
    """One cell present in both tables whose bytes differ.

    Attributes
    ----------
    rule : str
        Cell list (``corner`` or ``bilinear``).
    corners : tuple of float
        ``(thickness low, thickness high, start low, start high)``, m and degC.
    margin_change_log : float
        New ``min_margin_log`` less old, log10.
    pad_change_ticks : int
        New ``done_pad_ticks`` less old.
    flagged : bool
        Margin or pad fell: needs review.
    """

    rule: str
    corners: tuple[float, float, float, float]
    margin_change_log: float
    pad_change_ticks: int
    flagged: bool


@dataclass(frozen=True)
class Diff:
    """Differences between two tables.

    Attributes
    ----------
    nodes_added, nodes_removed : tuple of (float, float)
        Grid points (m, degC) only in the new / only in the old table.
    nodes_changed : tuple of NodeChange
        Nodes in both whose bytes differ.
    cells_added, cells_removed : tuple of (str, tuple of float)
        Cells (rule, corners) only in the new / only in the old table.
    cells_changed : tuple of CellChange
        Cells in both whose bytes differ.
    spec_changes : tuple of (str, object, object)
        Dotted key, old value, new value (``"<absent>"`` when missing on one side).
    other_changes : tuple of (str, object, object)
        The same for the tick, axes, safety and tolerances outside the spec.
    """

    nodes_added: tuple[Point, ...]
    nodes_removed: tuple[Point, ...]
    nodes_changed: tuple[NodeChange, ...]
    cells_added: tuple[tuple[str, tuple[float, ...]], ...]
    cells_removed: tuple[tuple[str, tuple[float, ...]], ...]
    cells_changed: tuple[CellChange, ...]
    spec_changes: tuple[tuple[str, Any, Any], ...]
    other_changes: tuple[tuple[str, Any, Any], ...]

    @property
    def flagged_nodes(self) -> tuple[NodeChange, ...]:
        """Changed nodes that got shorter, lost margin or changed their event kinds."""
        return tuple(n for n in self.nodes_changed if n.flagged)

    @property
    def needs_review(self) -> bool:
        """True when anything listed in the module docstring holds."""
        return bool(
            self.nodes_added
            or self.nodes_removed
            or self.flagged_nodes
            or self.cells_added
            or self.cells_removed
            or any(c.flagged for c in self.cells_changed)
            or self.spec_changes
            or self.other_changes
        )


ABSENT = "<absent>"


def flatten(value: Any, prefix: str = "") -> dict[str, Any]:
    """Nested dicts as ``{"dotted.key": leaf}`` (lists are leaves)."""
    if isinstance(value, dict) and value:
        out: dict[str, Any] = {}
        for k in sorted(value):
            out.update(flatten(value[k], f"{prefix}.{k}" if prefix else str(k)))
        return out
    return {prefix: value}


def key_changes(old: Any, new: Any, prefix: str = "") -> tuple[tuple[str, Any, Any], ...]:
    """Every dotted key whose value differs between ``old`` and ``new``, sorted."""
    a, b = flatten(old, prefix), flatten(new, prefix)
    return tuple(
        (k, a.get(k, ABSENT), b.get(k, ABSENT))
        for k in sorted(set(a) | set(b))
        if a.get(k, ABSENT) != b.get(k, ABSENT)
    )


def _nodes(m: dict[str, Any]) -> dict[Point, dict[str, Any]]:
    return {(n["thickness_m"], n["start_temp_c"]): n for n in m["nodes"]}


def _cells(m: dict[str, Any]) -> dict[tuple[str, tuple[float, ...]], dict[str, Any]]:
    xs, ts = m["axes"]["thickness_m"], m["axes"]["start_temp_c"]
    out = {}
    for rule, cells in sorted(m.get("cells", {}).items()):
        for c in cells:
            ci, cj = c["ci"], c["cj"]
            out[(rule, (xs[ci], xs[ci + 1], ts[cj], ts[cj + 1]))] = c
    return out


def _kinds(node: dict[str, Any]) -> tuple[str, ...]:
    return tuple(e["kind"] for e in node["events"])


def diff(old: dict[str, Any], new: dict[str, Any]) -> Diff:
    """Compare two checked manifests.

    Parameters
    ----------
    old, new : dict
        Manifests (the old and the new table).

    Returns
    -------
    Diff
        Everything added, removed and changed; see :attr:`Diff.needs_review`.
    """
    a, b = _nodes(old), _nodes(new)
    changed = []
    for p in sorted(set(a) & set(b)):
        if canonical_json(a[p]) == canonical_json(b[p]):
            continue
        dt = b[p]["cook_time_s"] - a[p]["cook_time_s"]
        dm = b[p]["margin_log"] - a[p]["margin_log"]
        kinds = _kinds(a[p]) != _kinds(b[p])
        changed.append(NodeChange(p[0], p[1], dt, dm, kinds, dt < 0 or dm < 0 or kinds))
    ca, cb = _cells(old), _cells(new)
    cells = []
    for k in sorted(set(ca) & set(cb)):
        if canonical_json(ca[k]) == canonical_json(cb[k]):
            continue
        dm = cb[k]["min_margin_log"] - ca[k]["min_margin_log"]
        dp = cb[k]["done_pad_ticks"] - ca[k]["done_pad_ticks"]
        corners = (k[1][0], k[1][1], k[1][2], k[1][3])
        cells.append(CellChange(k[0], corners, dm, dp, dm < 0 or dp < 0))
    other = []
    for key in ("tick_s", "axes", "safety", "tolerances"):
        other.extend(key_changes(old.get(key, ABSENT), new.get(key, ABSENT), key))
    return Diff(
        nodes_added=tuple(sorted(set(b) - set(a))),
        nodes_removed=tuple(sorted(set(a) - set(b))),
        nodes_changed=tuple(changed),
        cells_added=tuple(sorted(set(cb) - set(ca))),
        cells_removed=tuple(sorted(set(ca) - set(cb))),
        cells_changed=tuple(cells),
        spec_changes=key_changes(old["spec"], new["spec"], "spec"),
        other_changes=tuple(other),
    )


def _pt(p: Point) -> str:
    return f"{p[0] * 1e3:.2f} mm, {p[1]:.1f} degC"


def _cell(rule: str, c: tuple[float, ...]) -> str:
    return f"{rule} cell {c[0] * 1e3:.2f}-{c[1] * 1e3:.2f} mm, {c[2]:.1f} to {c[3]:.1f} degC"


def diff_text(d: Diff) -> str:
    """Plain-text view of a :class:`Diff`; flagged lines start with ``!``."""
    lines = []
    for p in d.nodes_added:
        lines.append(f"! node added   {_pt(p)}")
    for p in d.nodes_removed:
        lines.append(f"! node removed {_pt(p)}")
    for n in d.nodes_changed:
        mark = "!" if n.flagged else " "
        why = []
        if n.cook_time_change_s < 0:
            why.append("shorter")
        if n.margin_change_log < 0:
            why.append("margin fell")
        if n.kinds_changed:
            why.append("event kinds changed")
        lines.append(
            f"{mark} node changed {_pt((n.thickness_m, n.start_temp_c))}: cook time "
            f"{n.cook_time_change_s:+.1f} s, margin {n.margin_change_log:+.3f} log"
            + (f" ({', '.join(why)})" if why else "")
        )
    for rule, c in d.cells_added:
        lines.append(f"! cell added   {_cell(rule, c)}")
    for rule, c in d.cells_removed:
        lines.append(f"! cell removed {_cell(rule, c)}")
    for c in d.cells_changed:
        mark = "!" if c.flagged else " "
        lines.append(
            f"{mark} cell changed {_cell(c.rule, c.corners)}: margin "
            f"{c.margin_change_log:+.3f} log, pad {c.pad_change_ticks:+d} ticks"
        )
    for key, a, b in (*d.spec_changes, *d.other_changes):
        lines.append(f"! {key}: {a!r} -> {b!r}")
    if d.nodes_changed:
        big_t = max(d.nodes_changed, key=lambda n: (abs(n.cook_time_change_s), n.thickness_m))
        big_m = max(d.nodes_changed, key=lambda n: (abs(n.margin_change_log), n.thickness_m))
        lines.append(
            f"largest change in cook time {big_t.cook_time_change_s:+.1f} s at "
            f"{_pt((big_t.thickness_m, big_t.start_temp_c))}; largest change in margin "
            f"{big_m.margin_change_log:+.3f} log at {_pt((big_m.thickness_m, big_m.start_temp_c))}"
        )
    n_flag = len(d.flagged_nodes)
    lines.append(
        f"{len(d.nodes_added)} node(s) added, {len(d.nodes_removed)} removed, "
        f"{len(d.nodes_changed)} changed ({n_flag} flagged); {len(d.cells_added)} cell(s) "
        f"added, {len(d.cells_removed)} removed, {len(d.cells_changed)} changed; "
        f"{len(d.spec_changes)} spec key(s) changed"
    )
    lines.append("needs review" if d.needs_review else "nothing needs review")
    return "\n".join(lines)
