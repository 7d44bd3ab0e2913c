"""Checks of a canonical manifest before anything is rendered from it.

Only the fields the emitter reads are checked; extra fields are allowed and passed through
to the JSON output untouched.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping
from typing import Any

from obvert.firmware.contract import FORMAT_VERSION
from obvert.firmware.lookup import (
    RULES,
    cells_for_rule,
    start_temp_axis_f32,
    thickness_axis_mm_f32,
)

__all__ = ["SUPPORTED_FORMAT_VERSIONS", "ManifestError", "check_manifest", "upgrade_manifest"]

SUPPORTED_FORMAT_VERSIONS = (FORMAT_VERSION,)
_IDENT = re.compile(r"[a-z][a-z0-9_]*\Z")
_HEX64 = re.compile(r"[0-9a-f]{64}\Z")
_NODE_NUMBERS = ("margin_log", "min_log_reduction", "extension_s")
#: A margin this far below zero is rounding of a passing verdict (manifest digits), log10.
_ROUNDING_LOG = 5e-7


class ManifestError(ValueError):
    """The manifest or the target cannot be emitted; the message names field and value."""


def _fail(field: str, value: Any, allowed: str) -> ManifestError:
    return ManifestError(f"manifest field {field} = {value!r}: {allowed}")


def _get(obj: Any, key: str, field: str) -> Any:
    if not isinstance(obj, Mapping):
        raise _fail(field.rsplit(".", 1)[0] or "$", obj, "expected an object")
    if key not in obj:
        raise ManifestError(f"manifest field {field} is missing")
    return obj[key]


def _int(obj: Any, key: str, field: str, lo: int = 0) -> int:
    value = _get(obj, key, field)
    if isinstance(value, bool) or not isinstance(value, int) or value < lo:
        raise _fail(field, value, f"expected an integer >= {lo}")
    return value


def _num(obj: Any, key: str, field: str, *, positive: bool = False) -> float:
    value = _get(obj, key, field)
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise _fail(field, value, "expected a finite number")
    if positive and value <= 0:
        raise _fail(field, value, "expected a number > 0")
    return float(value)


def _text(obj: Any, key: str, field: str) -> str:
    value = _get(obj, key, field)
    if not isinstance(value, str) or not value.strip():
        raise _fail(field, value, "expected non-empty text")
    return value


def check_manifest(manifest: Any) -> None:
    """Raise :class:`ManifestError` unless ``manifest`` has every field the emitter reads.

    Parameters
    ----------
    manifest : dict
        Canonical manifest (see the package documentation for the schema).

    Raises
    ------
    ManifestError
        Naming the first offending field, its value and what is allowed.
    """
    if not isinstance(manifest, dict):
        raise _fail("$", type(manifest).__name__, "expected a dict")
    version = _get(manifest, "format_version", "format_version")
    if version in _UPGRADES and not isinstance(version, bool):
        raise _fail(
            "format_version",
            version,
            f"an older format; this version reads {FORMAT_VERSION}: convert it first with "
            "obvert.firmware.upgrade_manifest (or `obvert upgrade`)",
        )
    if isinstance(version, bool) or version not in SUPPORTED_FORMAT_VERSIONS:
        raise _fail("format_version", version, f"supported {list(SUPPORTED_FORMAT_VERSIONS)}")
    generator = _get(manifest, "generator", "generator")
    _text(generator, "name", "generator.name")
    _text(generator, "version", "generator.version")
    _text(manifest, "caution", "caution")
    table = _get(manifest, "table", "table")
    name = _text(table, "name", "table.name")
    if not _IDENT.match(name):
        raise _fail("table.name", name, "expected [a-z][a-z0-9_]*")
    _text(table, "title", "table.title")
    spec_hash = _text(manifest, "spec_hash", "spec_hash")
    if not _HEX64.match(spec_hash):
        raise _fail("spec_hash", spec_hash, "expected 64 lower-case hex digits (sha256)")
    _get(manifest, "spec", "spec")
    _num(manifest, "tick_s", "tick_s", positive=True)
    _check_axes(manifest)
    _check_info(manifest)
    _check_event_kinds(manifest)
    _check_nodes(manifest)
    _check_cells(manifest)
    _check_tolerances(manifest)


def _check_axes(manifest: Mapping[str, Any]) -> None:
    _get(manifest, "axes", "axes")
    try:
        thickness_axis_mm_f32(manifest)
        start_temp_axis_f32(manifest)
    except ValueError as exc:
        raise ManifestError(f"manifest field {exc}") from None


def _check_info(manifest: Mapping[str, Any]) -> None:
    """Fields only quoted in comments: lookup rule, envelope, safety target."""
    rule = _get(manifest, "lookup_rule", "lookup_rule")
    if _text(rule, "name", "lookup_rule.name") != "conservative_corner":
        raise _fail("lookup_rule.name", rule["name"], "supported: 'conservative_corner'")
    _text(rule, "description", "lookup_rule.description")
    envelope = _get(manifest, "envelope", "envelope")
    for axis in ("thickness_m", "start_temp_c"):
        pair = _get(envelope, axis, f"envelope.{axis}")
        if not isinstance(pair, list) or len(pair) != 2:
            raise _fail(f"envelope.{axis}", pair, "expected [low, high]")
        low = _num({"v": pair[0]}, "v", f"envelope.{axis}[0]")
        high = _num({"v": pair[1]}, "v", f"envelope.{axis}[1]")
        if low > high:
            raise _fail(f"envelope.{axis}", pair, "expected low <= high")
    safety = _get(manifest, "safety", "safety")
    for key in ("target_log_reduction", "d_ref_s", "t_ref_c", "z_k"):
        _num(safety, key, f"safety.{key}")
    _text(safety, "organism", "safety.organism")
    _text(safety, "source", "safety.source")
    if _get(safety, "min_temp_c", "safety.min_temp_c") is not None:
        _num(safety, "min_temp_c", "safety.min_temp_c")


def _check_event_kinds(manifest: Mapping[str, Any]) -> None:
    kinds = _get(manifest, "event_kinds", "event_kinds")
    if not isinstance(kinds, dict) or "done" not in kinds:
        raise _fail("event_kinds", kinds, "expected an object of name: code including 'done'")
    seen: dict[int, str] = {}
    for kind in kinds:
        if not isinstance(kind, str) or not _IDENT.match(kind):
            raise _fail(f"event_kinds.{kind}", kind, "kind names must match [a-z][a-z0-9_]*")
        code = _int(kinds, kind, f"event_kinds.{kind}")
        if code > 255 or code in seen:
            raise _fail(f"event_kinds.{kind}", code, "expected a code 0..255 used once")
        seen[code] = kind


def _check_nodes(manifest: Mapping[str, Any]) -> None:
    n_x = len(manifest["axes"]["thickness_m"])
    n_t = len(manifest["axes"]["start_temp_c"])
    nodes = _get(manifest, "nodes", "nodes")
    if not isinstance(nodes, list) or len(nodes) != n_x * n_t:
        count = len(nodes) if isinstance(nodes, list) else nodes
        raise _fail("nodes", count, f"expected a list of {n_x} * {n_t} = {n_x * n_t} nodes")
    longest = 0
    for k, node in enumerate(nodes):
        longest = max(longest, _check_node(manifest, node, k, n_t))
    max_events = _int(manifest, "max_events", "max_events", lo=1)
    if max_events != longest:
        raise _fail("max_events", max_events, f"the longest node has {longest} events")


def _check_node(manifest: Mapping[str, Any], node: Any, k: int, n_t: int) -> int:
    """Check node ``k``; return its number of events."""
    field = f"nodes[{k}]"
    i, j = divmod(k, n_t)
    for key, want, axis in (("i", i, "thickness_m"), ("j", j, "start_temp_c")):
        got = _int(node, key, f"{field}.{key}")
        if got != want:
            raise _fail(f"{field}.{key}", got, f"node order is i-major: expected {want}")
        value = _num(node, axis, f"{field}.{axis}")
        grid = float(manifest["axes"][axis][want])
        if not math.isclose(value, grid, rel_tol=1e-12, abs_tol=1e-15):
            raise _fail(f"{field}.{axis}", value, f"expected the axis value {grid!r}")
    _check_certificate(manifest, node, field)
    events = _get(node, "events", f"{field}.events")
    if not isinstance(events, list) or not events:
        raise _fail(f"{field}.events", events, "expected a non-empty list ending in 'done'")
    previous = 0
    for n, event in enumerate(events):
        previous = _check_event(manifest, event, f"{field}.events[{n}]", previous)
        is_done = event["kind"] == "done"
        if is_done != (n == len(events) - 1):
            raise _fail(f"{field}.events[{n}].kind", event["kind"], "'done' must be last, once")
    return len(events)


def _check_certificate(manifest: Mapping[str, Any], node: Any, field: str) -> None:
    """The node's certificate on the reference model: present, and passing."""
    for key in _NODE_NUMBERS:
        if not isinstance(node, Mapping) or key not in node:
            raise _fail(
                f"{field}.{key}",
                None,
                "missing: every node needs its certificate from the reference model "
                f"({', '.join(_NODE_NUMBERS)})",
            )
        _num(node, key, f"{field}.{key}")
    margin = float(node["margin_log"])
    if margin < -_ROUNDING_LOG:
        raise _fail(
            f"{field}.margin_log",
            margin,
            "not certified: the margin over the log-reduction target must be >= 0",
        )
    target = float(manifest["safety"]["target_log_reduction"])
    got = float(node["min_log_reduction"])
    if got < target - _ROUNDING_LOG:
        raise _fail(
            f"{field}.min_log_reduction",
            got,
            f"not certified: below the target {target!r} log10",
        )
    if float(node["extension_s"]) < 0.0:
        raise _fail(f"{field}.extension_s", node["extension_s"], "expected >= 0 s")
    hold = node.get("hold_margin_s")
    if hold is not None and _num(node, "hold_margin_s", f"{field}.hold_margin_s") < 0.0:
        raise _fail(
            f"{field}.hold_margin_s",
            hold,
            "not certified: a point of the food misses the time-at-temperature rule",
        )
    required = node.get("required_margin_log")
    if required is not None:  # None: a format-1 table, certified without an error budget
        need = _num(node, "required_margin_log", f"{field}.required_margin_log")
        if margin < need - _ROUNDING_LOG:
            raise _fail(
                f"{field}.margin_log",
                margin,
                f"not certified: below the required margin {need!r} (reference error "
                f"{node.get('reference_error_log')!r} log plus the minimum margin)",
            )


def _check_event(manifest: Mapping[str, Any], event: Any, field: str, previous: int) -> int:
    """Check one event; return its tick (times must not decrease)."""
    kind = _get(event, "kind", f"{field}.kind")
    if not isinstance(kind, str) or kind not in manifest["event_kinds"]:
        raise _fail(f"{field}.kind", kind, f"allowed: {sorted(manifest['event_kinds'])}")
    ticks = _int(event, "at_ticks", f"{field}.at_ticks")
    at_s = _num(event, "at_s", f"{field}.at_s")
    tick_s = float(manifest["tick_s"])
    if abs(ticks * tick_s - at_s) > tick_s * (1.0 + 1e-9):
        raise _fail(
            f"{field}.at_ticks",
            ticks,
            f"is {ticks * tick_s!r} s, more than one tick ({tick_s!r} s) from at_s = {at_s!r}",
        )
    if ticks < previous:
        raise _fail(f"{field}.at_ticks", ticks, f"events must not go back in time ({previous})")
    return ticks


def _check_cells(manifest: Mapping[str, Any]) -> None:
    """Cell lists present in ``cells`` (optional field): shape, rule, pad, margin, centre."""
    cells = manifest.get("cells")
    if cells is None:
        return
    if not isinstance(cells, dict):
        raise _fail("cells", cells, "expected an object keyed by rule name")
    for rule in RULES:
        if rule not in cells or (cells[rule] == [] and _n_cells(manifest) == 0):
            continue  # absent, or an axis of one value: no cells
        try:
            values = cells_for_rule(manifest, rule) or []
        except ValueError as exc:
            raise ManifestError(f"manifest field {exc}") from None
        for k, cell in enumerate(values):
            field = f"cells.{rule}[{k}]"
            margin = _num(cell, "min_margin_log", f"{field}.min_margin_log")
            if margin < -_ROUNDING_LOG:
                raise _fail(
                    f"{field}.min_margin_log",
                    margin,
                    "not certified: the cell's smallest margin must be >= 0",
                )
            corners = _cell_corner_margins(manifest, k, str(cell.get("rule")))
            if margin > min(corners) + _ROUNDING_LOG:
                raise _fail(
                    f"{field}.min_margin_log",
                    margin,
                    f"more than the smallest corner node's margin {min(corners)!r}: a cell's "
                    "margin covers everything its lookup returns, corners included",
                )
            at = _get(cell, "at", f"{field}.at")
            _num(at, "thickness_m", f"{field}.at.thickness_m")
            _num(at, "start_temp_c", f"{field}.at.start_temp_c")


def _cell_corner_margins(manifest: Mapping[str, Any], k: int, rule: str) -> list[float]:
    """Margins of the nodes the lookup returns in cell ``k`` (ci-major) or tends to, log10.

    The corner rule returns the thickest, coldest corner alone; interpolation returns each
    of the four corners' schedules (padded) at or towards that corner.
    """
    n_t = len(manifest["axes"]["start_temp_c"])
    ci, cj = divmod(k, n_t - 1)
    nodes = manifest["nodes"]
    if rule == "corner":
        return [float(nodes[(ci + 1) * n_t + cj]["margin_log"])]
    return [float(nodes[(ci + a) * n_t + cj + b]["margin_log"]) for a in (0, 1) for b in (0, 1)]


def _n_cells(manifest: Mapping[str, Any]) -> int:
    n_x = len(manifest["axes"]["thickness_m"])
    n_t = len(manifest["axes"]["start_temp_c"])
    return (n_x - 1) * (n_t - 1)


def _check_tolerances(manifest: Mapping[str, Any]) -> None:
    """Declared tolerances (optional field): name -> number, [low, high] or null."""
    tolerances = manifest.get("tolerances")
    if tolerances is None:
        return
    if not isinstance(tolerances, dict):
        raise _fail("tolerances", tolerances, "expected an object of name: value")
    for name, value in tolerances.items():
        field = f"tolerances.{name}"
        if not isinstance(name, str) or not _IDENT.match(name):
            raise _fail(field, name, "tolerance names must match [a-z][a-z0-9_]*")
        if value is None:
            continue
        if isinstance(value, list):
            if len(value) != 2:
                raise _fail(field, value, "expected a number, [low, high] or null")
            low = _num({"v": value[0]}, "v", f"{field}[0]")
            high = _num({"v": value[1]}, "v", f"{field}[1]")
            if low > high:
                raise _fail(field, value, "expected low <= high")
            continue
        _num(tolerances, name, field)


def _upgrade_1(manifest: dict[str, Any]) -> dict[str, Any]:
    """Format 1 to 2: names only (``correction_s``, ``z_c``, ``corrected_cook_time_s``)."""
    out = dict(manifest)
    out["format_version"] = 2
    nodes = []
    for node in manifest.get("nodes", []):
        n = dict(node)
        if "correction_s" in n:
            n["extension_s"] = n.pop("correction_s")
        for key in ("reference_error_log", "reference_error_k", "required_margin_log"):
            n.setdefault(key, None)  # format 1 certified without an error budget
        if "candidates" in n:
            n["candidates"] = [
                {
                    ("calibrated_cook_time_s" if k == "corrected_cook_time_s" else k): v
                    for k, v in c.items()
                }
                for c in n["candidates"]
            ]
        nodes.append(n)
    out["nodes"] = nodes
    safety = dict(manifest.get("safety", {}))
    if "z_c" in safety:
        safety["z_k"] = safety.pop("z_c")
    out["safety"] = safety
    summary = dict(manifest.get("summary", {}))
    if "nodes_corrected" in summary:
        summary["nodes_extended"] = summary.pop("nodes_corrected")
    out["summary"] = summary
    return out


_UPGRADES = {1: _upgrade_1}


def upgrade_manifest(manifest: Mapping[str, Any]) -> dict[str, Any]:
    """Convert a manifest of an older format version to the current one.

    Only names change between versions 1 and 2; the certificates are kept as they are and
    are checked again by :func:`check_manifest` (a negative margin is still refused).

    Parameters
    ----------
    manifest : dict
        A manifest of format version 1 or the current one.

    Returns
    -------
    dict
        The manifest in the current format.

    Raises
    ------
    ManifestError
        An unknown format version.
    """
    out = dict(manifest)
    version = out.get("format_version")
    while version != FORMAT_VERSION:
        if isinstance(version, bool) or version not in _UPGRADES:
            raise _fail(
                "format_version", version, f"known versions {sorted({*_UPGRADES, FORMAT_VERSION})}"
            )
        out = _UPGRADES[version](out)
        version = out["format_version"]
    return out
