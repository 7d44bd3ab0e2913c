"""Template context of the C targets, computed from the manifest and the target profile.

Everything a C template needs is decided here: symbol names, the data rows (events padded to
``max_events``), the C types, the number of bytes of const data and the banner text. The
template only lays these out.
"""

from __future__ import annotations

import math
import textwrap
from fractions import Fraction
from typing import Any

from obvert.emitter.cells import (
    bilinear_context,
    cell_bytes,
    corner_pads,
    envelope_lines,
    uses_cells,
)
from obvert.emitter.errors import EmitError
from obvert.emitter.filters import INT32_MAX, INT32_MIN, num
from obvert.emitter.profile import TargetProfile
from obvert.firmware.canonical import canonical_sha256
from obvert.firmware.contract import RULE_TEXT
from obvert.firmware.lookup import (
    LookupStatus,
    start_temp_axis_cc,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
    thickness_axis_um,
)

__all__ = ["c_context"]

_TIME_MAX = {"uint16_t": 2**16 - 1, "uint32_t": 2**32 - 1}
_TIME_BYTES = {"uint16_t": 2, "uint32_t": 4}
_MAX_AXIS = 2**16 - 1  # i, j and node index are uint16_t in the schedule struct
_WRAP = 74
_STATUS_DOC = {
    LookupStatus.OK: "a node was found; *out is filled",
    LookupStatus.NULL_OUT: "out is NULL",
    LookupStatus.NAN: "an input is NaN (binary32 targets only)",
    LookupStatus.THICKNESS_BELOW: "thickness below the first axis value",
    LookupStatus.THICKNESS_ABOVE: "thickness above the last axis value",
    LookupStatus.START_TEMP_BELOW: "start temperature below the first axis value",
    LookupStatus.START_TEMP_ABOVE: "start temperature above the last axis value",
}


def _status_macros(bilinear: bool) -> list[tuple[str, int, str]]:
    """``(macro suffix, value, meaning)`` of each status code."""
    out = []
    for status in LookupStatus:
        suffix = "OK" if status is LookupStatus.OK else f"ERR_{status.name}"
        doc = _STATUS_DOC[status]
        if bilinear and status is LookupStatus.OK:
            doc = "a schedule was found; *out is filled"
        out.append((suffix, int(status), doc))
    return out


def _tick_us(manifest: dict[str, Any]) -> int:
    tick_s = float(manifest["tick_s"])
    tick_us = round(tick_s * 1e6)
    if tick_us < 1 or abs(tick_s * 1e6 - tick_us) > 1e-6 * max(1, tick_us):
        raise EmitError(
            f"manifest field tick_s = {tick_s!r}: a C target needs a whole number of "
            "microseconds >= 1"
        )
    return tick_us


def _check_tick(manifest: dict[str, Any], target: TargetProfile) -> None:
    tick_s = float(manifest["tick_s"])
    if target.tick_s is not None and not math.isclose(tick_s, target.tick_s, rel_tol=1e-12):
        raise EmitError(
            f"manifest field tick_s = {tick_s!r} differs from the target's tick_s = "
            f"{target.tick_s!r} ({target.source}); rebuild the table for the target's tick"
        )


def _margin_mlog(node: dict[str, Any], k: int) -> int:
    """Margin in milli-log10 units, rounded down (never over-states the margin)."""
    value = math.floor(Fraction(node["margin_log"]) * 1000)
    if not INT32_MIN <= value <= INT32_MAX:
        raise EmitError(f"manifest field nodes[{k}].margin_log = {node['margin_log']!r}: too big")
    return value


def _with_pad(codes: list[int], ticks: list[int], pad: int, kinds: dict[str, Any]) -> list[int]:
    """Ticks with ``pad`` added to done and to a platen_open at done's tick."""
    opened = kinds.get("platen_open")
    return [
        t + pad if c == kinds["done"] or (c == opened and t == ticks[-1]) else t
        for c, t in zip(codes, ticks, strict=True)
    ]


def _node_rows(
    manifest: dict[str, Any], target: TargetProfile, pads: list[int]
) -> list[dict[str, Any]]:
    """One row per node (done pad of its corner cell added): padded with copies of done."""
    kinds = manifest["event_kinds"]
    width = int(manifest["max_events"])
    t_max = _TIME_MAX[target.time_type]
    rows = []
    for k, node in enumerate(manifest["nodes"]):
        codes = [int(kinds[e["kind"]]) for e in node["events"]]
        ticks = _with_pad(codes, [int(e["at_ticks"]) for e in node["events"]], pads[k], kinds)
        if ticks[-1] > t_max:
            plus = f" (done pad {pads[k]} included)" if pads[k] else ""
            raise EmitError(
                f"manifest field nodes[{k}].events[-1].at_ticks = {ticks[-1]}{plus}: exceeds "
                f"{target.time_type} ({t_max}) of target {target.name!r}"
            )
        pad = width - len(codes)
        rows.append(
            {
                "index": k,
                "i": int(node["i"]),
                "j": int(node["j"]),
                "count": len(codes),
                "kinds": codes + [codes[-1]] * pad,
                "ticks": ticks + [ticks[-1]] * pad,
                "margin_mlog": _margin_mlog(node, k),
            }
        )
    return rows


def _axes(manifest: dict[str, Any], fixed: bool) -> tuple[list[Any], list[Any]]:
    try:
        if fixed:
            x = [int(v) for v in thickness_axis_um(manifest)]
            t = [int(v) for v in start_temp_axis_cc(manifest)]
        else:
            x = list(thickness_axis_mm_f32(manifest))
            t = list(start_temp_axis_f32(manifest))
    except ValueError as exc:
        raise EmitError(f"manifest field {exc}") from None
    for name, axis in (("thickness_m", x), ("start_temp_c", t)):
        if len(axis) > _MAX_AXIS:
            raise EmitError(f"manifest field axes.{name} has {len(axis)} values; max {_MAX_AXIS}")
    return x, t


def _data_bytes(n_x: int, n_t: int, n_nodes: int, width: int, time_type: str) -> int:
    """Bytes of the const arrays, as ``sizeof`` sums them in the header (no padding)."""
    axes = 4 * (n_x + n_t)  # float or int32_t
    per_node = 1 + width * (1 + _TIME_BYTES[time_type]) + 4  # count, kinds, ticks, margin
    return axes + n_nodes * per_node


def table_bytes(target: TargetProfile, n_x: int, n_t: int, max_events: int) -> int:
    """Const data a table of ``n_x`` by ``n_t`` nodes needs on ``target``, bytes.

    Parameters
    ----------
    target : TargetProfile
        The target.
    n_x, n_t : int
        Thickness and start-temperature nodes.
    max_events : int
        Events of the longest node, done included.

    Returns
    -------
    int
        The sum the generated static asserts check against ``flash_budget_bytes``.
    """
    n_cells = (n_x - 1) * (n_t - 1) if target.lookup == "bilinear" else 0
    data = _data_bytes(n_x, n_t, n_x * n_t, max_events, target.time_type)
    return data + cell_bytes(n_cells, target.time_type)


def _wrap(text: str) -> list[str]:
    return textwrap.wrap(" ".join(str(text).split()), _WRAP) or [""]


def _rule_lines(manifest: dict[str, Any], target: TargetProfile) -> list[str]:
    rule = manifest["lookup_rule"]
    if target.lookup == "bilinear":
        return _wrap(f"Lookup rule of this target: {RULE_TEXT['bilinear']}")
    return _wrap(f"Lookup rule: {rule['name']}: {rule['description']}")


def _banner(
    manifest: dict[str, Any],
    target: TargetProfile,
    fixed: bool,
    cells: list[Any],
    manifest_hash: str,
) -> list[str]:
    """Comment lines of the header banner (no timestamp: the header is reproducible)."""
    gen, table, safety = manifest["generator"], manifest["table"], manifest["safety"]
    env = manifest["envelope"]
    inputs = (
        "int32 thickness in micrometres, int32 start temperature in 0.01 degC"
        if fixed
        else "binary32 thickness in mm, binary32 start temperature in degC"
    )
    min_temp = (
        "no minimum core temperature"
        if safety["min_temp_c"] is None
        else f"minimum core temperature {num(safety['min_temp_c'])} degC"
    )
    lines = [
        *_wrap(f"{table['name']}: {table['title']}"),
        "",
        f"Cook-program lookup table generated by {gen['name']} {gen['version']}.",
        "Generated file: do not edit; rebuild it from the spec instead.",
        *_wrap(f"Target profile: {target.name} ({target.description})"),
        f"Spec sha256:     {manifest['spec_hash']}",
        f"Manifest sha256: {manifest_hash}",
        "",
        "FOOD-SAFETY CAUTION:",
        *_wrap(manifest["caution"]),
        "",
        *_wrap(
            f"Safety target: {num(safety['target_log_reduction'])} log10 reduction of "
            f"{safety['organism']} (D {num(safety['d_ref_s'])} s at {num(safety['t_ref_c'])} "
            f"degC, z {num(safety['z_k'])} K; source: {safety['source']}); {min_temp}."
        ),
    ]
    if uses_cells(manifest, target):
        for line in envelope_lines(manifest, target, cells):
            lines += _wrap(line) if not line.startswith("  ") else [line]
    else:
        lines += _wrap(
            f"Envelope: thickness {num(env['thickness_m'][0])} to {num(env['thickness_m'][1])}"
            f" m, start temperature {num(env['start_temp_c'][0])} to "
            f"{num(env['start_temp_c'][1])} degC."
        )
    lines += [*_rule_lines(manifest, target), *_wrap(f"Lookup inputs: {inputs}.")]
    return lines + _bound_lines(manifest)


def _bound_lines(manifest: dict[str, Any]) -> list[str]:
    """Per-node cook time against the physical limits, when the manifest carries them."""
    nodes = [n for n in manifest["nodes"] if isinstance(n.get("bounds_s"), dict)]
    if not nodes:
        return []
    lines = [
        "",
        "Cook time against its physical limits (reduced model, s): node, planned,",
        "fast-flip limit, two-sided contact limit; certified cook time in ticks is in the data.",
    ]
    for n in nodes:
        b = n["bounds_s"]
        cells = [
            "-" if b.get(k) is None else num(b[k]) for k in ("fast_flip_limit", "two_sided_contact")
        ]
        planned = num(n.get("planned_cook_time_s", n["cook_time_s"]))
        lines.append(
            f"  node {n['i']},{n['j']}: planned {planned}, fast-flip {cells[0]}, "
            f"two-sided {cells[1]}"
        )
    return lines


def _arrays(
    p: str, args: tuple[str, str], axis_type: str, time_type: str, bilinear: bool
) -> list[dict[str, str]]:
    """The const arrays in the order they are defined.

    Each: C name, element type, dimensions (macros, for the ``extern`` declarations), the
    macro counting its rows and the name of its size check.
    """
    pp = p.upper()
    x_arg, t_arg = args
    node_row = f"[{pp}_N_NODES][{pp}_MAX_EVENTS]"
    arrays = [
        (f"{p}_axis_{x_arg}", axis_type,
         f"[{pp}_N_THICKNESS]", f"{pp}_N_THICKNESS", "n_thickness"),
        (f"{p}_axis_{t_arg}", axis_type,
         f"[{pp}_N_START_TEMP]", f"{pp}_N_START_TEMP", "n_start_temp"),
        (f"{p}_event_count", "uint8_t", f"[{pp}_N_NODES]", f"{pp}_N_NODES", "event_count"),
        (f"{p}_event_kind", "uint8_t", node_row, f"{pp}_N_NODES", "event_kind"),
        (f"{p}_event_ticks", time_type, node_row, f"{pp}_N_NODES", "event_ticks"),
        (f"{p}_margin_mlog", "int32_t", f"[{pp}_N_NODES]", f"{pp}_N_NODES", "margin"),
    ]  # fmt: skip
    if bilinear:
        arrays += [
            (f"{p}_cell_rule", "uint8_t", f"[{pp}_N_CELLS]", f"{pp}_N_CELLS", "cell_rule"),
            (f"{p}_cell_pad_ticks", time_type, f"[{pp}_N_CELLS]", f"{pp}_N_CELLS", "cell_pad"),
            (f"{p}_cell_margin_mlog", "int32_t", f"[{pp}_N_CELLS]", f"{pp}_N_CELLS",
             "cell_margin"),
        ]  # fmt: skip
    keys = ("name", "ctype", "dims", "count", "check")
    return [dict(zip(keys, a, strict=True)) for a in arrays]


def _sum_lines(arrays: list[dict[str, str]], per_line: int = 2) -> list[str]:
    """Lines of the ``DATA_BYTES`` macro: ``sizeof`` of every array, continued lines."""
    terms = [f"sizeof({a['name']})" for a in arrays]
    chunks = [" + ".join(terms[k : k + per_line]) for k in range(0, len(terms), per_line)]
    lines = [(" " if k else "(") + chunk for k, chunk in enumerate(chunks)]
    return [line + " + \\" for line in lines[:-1]] + [lines[-1] + ")"]


def _layout(target: TargetProfile) -> dict[str, Any]:
    """Storage classes of the C layout.

    ``split`` defines the data and the lookup once in the ``.c`` file (external linkage,
    declared in the header); ``header_only`` gives every translation unit its own
    ``static`` copy and a ``static inline`` lookup.
    """
    split = target.layout == "split"
    return {
        "split": split,
        "data_storage": "" if split else "static ",
        "lookup_storage": "" if split else "static inline ",
        "helper_storage": "static " if split else "static inline ",
    }


def c_context(
    manifest: dict[str, Any], target: TargetProfile, header_file: str | None = None
) -> dict[str, Any]:
    """Template context of the C files for ``manifest`` on ``target``.

    Parameters
    ----------
    manifest : dict
        A manifest already checked by :func:`obvert.firmware.validate.check_manifest`.
    target : TargetProfile
        The C target.
    header_file : str or None
        File name of the header, as the ``.c`` file includes it; None for
        ``<table name>.h``.

    Returns
    -------
    dict
        Names, data rows and sizes for the template (numbers unformatted: the template
        formats each through a filter).

    Raises
    ------
    EmitError
        If the table does not fit the target (ticks, tick length, byte budget, axis size).
    """
    _check_tick(manifest, target)
    fixed = target.number_format == "fixed"
    prefix = target.prefix_for(manifest["table"]["name"])
    axis_x, axis_t = _axes(manifest, fixed)
    bilinear = target.lookup == "bilinear"
    t_max = _TIME_MAX[target.time_type]
    extra = bilinear_context(manifest, target, t_max) if bilinear else {"cells": []}
    pads = [0] * len(manifest["nodes"]) if bilinear else corner_pads(manifest)
    nodes = _node_rows(manifest, target, pads)
    x_unit, t_unit = ("um", "cdegC") if fixed else ("mm", "degC")
    for row in nodes:
        x, t = axis_x[row["i"]], axis_t[row["j"]]
        row["label"] = f"{num(x)} {x_unit}, {num(t)} {t_unit}"
    width = int(manifest["max_events"])
    data_bytes = _data_bytes(len(axis_x), len(axis_t), len(nodes), width, target.time_type)
    data_bytes += cell_bytes(len(extra["cells"]), target.time_type)
    budget = target.flash_budget_bytes
    if budget is not None and data_bytes > budget:
        raise EmitError(
            f"table {manifest['table']['name']!r} needs {data_bytes} bytes of const data; "
            f"target {target.name!r} allows flash_budget_bytes = {budget} ({target.source})"
        )
    kinds = sorted(manifest["event_kinds"].items(), key=lambda kv: kv[1])
    x_arg = "thickness_um" if fixed else "thickness_mm"
    t_arg = "start_temp_cc" if fixed else "start_temp_c"
    axis_type = "int32_t" if fixed else "float"
    manifest_hash = canonical_sha256(manifest)
    arrays = _arrays(prefix, (x_arg, t_arg), axis_type, target.time_type, bilinear)
    signature = (
        f"int {prefix}_lookup({axis_type} {x_arg}, {axis_type} {t_arg}, {prefix}_schedule_t *out)"
    )
    return {
        "p": prefix,
        "P": prefix.upper(),
        "guard": f"OBVERT_{prefix.upper()}_H",
        "header_file": header_file or f"{manifest['table']['name']}.h",
        "table_id": int(manifest_hash[:8], 16),
        "arrays": arrays,
        "data_bytes_lines": _sum_lines(arrays),
        "lookup_signature": signature,
        "lookup_template": f"c/part/lookup_{target.lookup}.c.j2",
        **_layout(target),
        "banner": _banner(manifest, target, fixed, extra["cells"], manifest_hash),
        "spec_hash": manifest["spec_hash"],
        "format_version": int(manifest["format_version"]),
        "fixed": fixed,
        "axis_type": axis_type,
        "thickness_arg": x_arg,
        "start_temp_arg": t_arg,
        "time_type": target.time_type,
        "tick_us": _tick_us(manifest),
        "axis_thickness": axis_x,
        "axis_start_temp": axis_t,
        "event_kinds": [(name.upper(), int(code)) for name, code in kinds],
        "statuses": _status_macros(bilinear),
        "max_events": width,
        "nodes": nodes,
        "data_bytes": data_bytes,
        "budget": budget,
        "bilinear": bilinear,
        "padded_rows": any(pads),
        "has_platen_open": "platen_open" in manifest["event_kinds"],
        **extra,
    }
