"""Target profiles: which files to write for a firmware target, and how.

A profile is data in a TOML file (``targets/*.toml``)::

    name = "c99"
    description = "Header-only C99 table, float inputs"
    number_format = "float"        # "float" or "fixed" (integer-only firmware)
    time_type = "uint32_t"         # C type of event times in ticks: "uint16_t" or "uint32_t"
    flash_budget_bytes = 65536     # optional: upper bound on the const data, bytes
    symbol_prefix = "grill_a"      # optional: C symbol prefix, default the table name
    tick_s = 0.1                   # optional: firmware tick, s; the table must match it
    lookup = "corner"              # optional: "corner" (default) or "bilinear" lookup rule
    layout = "split"               # optional: "split" (.c + .h) or "header_only" (default)

    [[outputs]]
    filename = "{table}.h"         # placeholders: {table}, {prefix}
    template = "c/table.h.j2"      # a Jinja2 template of package obvert.templates ...
    # serializer = "canonical_json"  # ... or a built-in serializer (exactly one of the two)

    [[outputs]]                    # layout "split" only: the data and the lookup, once
    filename = "{table}.c"
    template = "c/table.c.j2"

Unknown keys are an error naming the key and the file. A ``split`` target lists exactly one
``c/table.h.j2`` and one ``c/table.c.j2`` output; a ``header_only`` target lists no
``c/table.c.j2`` output.
"""

from __future__ import annotations

import math
import os
import re
import string
import sys
from dataclasses import dataclass
from importlib import resources
from pathlib import Path
from typing import Any

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - Python 3.10 only
    import tomli as tomllib

__all__ = ["OutputSpec", "ProfileError", "TargetProfile", "load_target", "loads_target"]

NUMBER_FORMATS = ("float", "fixed")
LOOKUP_RULES = ("corner", "bilinear")
TIME_TYPES = ("uint16_t", "uint32_t")
LAYOUTS = ("header_only", "split")
#: Templates of the C layouts: the header (both layouts) and the source (``split`` only).
C_HEADER_TEMPLATE = "c/table.h.j2"
C_SOURCE_TEMPLATE = "c/table.c.j2"
SERIALIZERS = ("canonical_json",)
FILENAME_FIELDS = ("table", "prefix")
_IDENT = re.compile(r"[a-z][a-z0-9_]*\Z")
_TEMPLATE = re.compile(r"[a-z0-9_]+(/[a-z0-9_]+)*\.[a-z0-9]+\.j2\Z")
_FILENAME = re.compile(r"[A-Za-z0-9_.{}-]+\Z")
_TOP_KEYS = (
    "name",
    "description",
    "number_format",
    "time_type",
    "flash_budget_bytes",
    "symbol_prefix",
    "tick_s",
    "lookup",
    "layout",
    "outputs",
)
_OUTPUT_KEYS = ("filename", "template", "serializer")


class ProfileError(ValueError):
    """A target profile is invalid; the message names the file, the key and the value."""


@dataclass(frozen=True)
class OutputSpec:
    """One file a target writes.

    Attributes
    ----------
    filename : str
        File-name pattern; ``{table}`` and ``{prefix}`` are replaced by the table name and
        the C symbol prefix. A plain file name (no directories).
    template : str or None
        Template name inside package ``obvert.templates``, ``<dir>/<name>.<ext>.j2``.
    serializer : str or None
        Built-in serializer instead of a template; ``"canonical_json"`` writes the manifest.
    """

    filename: str
    template: str | None = None
    serializer: str | None = None

    def __post_init__(self) -> None:
        _check_filename(self.filename, "outputs.filename")
        if (self.template is None) == (self.serializer is None):
            raise ProfileError(
                f"output {self.filename!r}: give exactly one of 'template' or 'serializer'"
            )
        if self.template is not None and not _TEMPLATE.match(self.template):
            raise ProfileError(
                f"outputs.template = {self.template!r}: expected '<dir>/<name>.<ext>.j2' "
                "(lower-case letters, digits, '_')"
            )
        if self.serializer is not None and self.serializer not in SERIALIZERS:
            raise ProfileError(
                f"outputs.serializer = {self.serializer!r}: allowed {list(SERIALIZERS)}"
            )


@dataclass(frozen=True)
class TargetProfile:
    """A firmware target: its files, number representation, C types and limits.

    Attributes
    ----------
    name : str
        Profile name, ``[a-z][a-z0-9_]*``.
    description : str
        One line on what the target is for.
    outputs : tuple of OutputSpec
        Files to write, in order; at least one.
    number_format : str
        ``"float"`` (lookup on binary32 mm and degC) or ``"fixed"`` (integer-only: int32
        micrometres and centi-degrees Celsius).
    time_type : str
        C type holding event times in ticks, ``"uint16_t"`` or ``"uint32_t"``.
    flash_budget_bytes : int or None
        Upper bound on the bytes of const table data, bytes; None for no bound.
    symbol_prefix : str or None
        C symbol prefix ``[a-z][a-z0-9_]*``; None to use the table name.
    tick_s : float or None
        Firmware timer tick the target runs at, s; None to accept the table's tick.
    lookup : str
        Lookup rule of the generated C: ``"corner"`` (conservative corner) or
        ``"bilinear"`` (interpolation in the cell, see ``obvert.firmware.lookup``).
    layout : str
        Where the C data and lookup live: ``"split"`` (defined once in a ``.c`` file,
        declared ``extern`` in the header: one copy per firmware) or ``"header_only"``
        (``static const`` data and a ``static inline`` lookup in the header, for tiny
        tables).
    source : str
        Where the profile was read from (file path or ``builtin:<name>``), for messages.
    """

    name: str
    description: str
    outputs: tuple[OutputSpec, ...]
    number_format: str = "float"
    time_type: str = "uint32_t"
    flash_budget_bytes: int | None = None
    symbol_prefix: str | None = None
    tick_s: float | None = None
    lookup: str = "corner"
    layout: str = "header_only"
    source: str = "<python>"

    def __post_init__(self) -> None:
        where = self.source
        if not isinstance(self.name, str) or not _IDENT.match(self.name):
            raise ProfileError(f"{where}: name = {self.name!r}: expected [a-z][a-z0-9_]*")
        if not isinstance(self.description, str):
            raise ProfileError(f"{where}: description = {self.description!r}: expected text")
        _check_choice(self.number_format, NUMBER_FORMATS, "number_format", where)
        _check_choice(self.time_type, TIME_TYPES, "time_type", where)
        _check_choice(self.lookup, LOOKUP_RULES, "lookup", where)
        _check_choice(self.layout, LAYOUTS, "layout", where)
        self._check_optional_fields(where)
        self._check_outputs(where)

    def _check_optional_fields(self, where: str) -> None:
        budget = self.flash_budget_bytes
        if budget is not None and (not _is_int(budget) or budget <= 0):
            raise ProfileError(
                f"{where}: flash_budget_bytes = {budget!r}: expected a positive integer"
            )
        prefix = self.symbol_prefix
        if prefix is not None and (not isinstance(prefix, str) or not _IDENT.match(prefix)):
            raise ProfileError(f"{where}: symbol_prefix = {prefix!r}: expected [a-z][a-z0-9_]*")
        tick = self.tick_s
        if tick is not None and (
            isinstance(tick, bool)
            or not isinstance(tick, (int, float))
            or not math.isfinite(tick)
            or tick <= 0
        ):
            raise ProfileError(f"{where}: tick_s = {tick!r}: expected a positive number of s")

    def _check_outputs(self, where: str) -> None:
        if not isinstance(self.outputs, tuple) or not self.outputs:
            raise ProfileError(f"{where}: outputs: expected at least one [[outputs]] table")
        names = [o.filename for o in self.outputs]
        dupes = sorted({n for n in names if names.count(n) > 1})
        if dupes:
            raise ProfileError(f"{where}: outputs.filename repeated: {dupes}")
        templates = [o.template for o in self.outputs]
        n_header = templates.count(C_HEADER_TEMPLATE)
        n_source = templates.count(C_SOURCE_TEMPLATE)
        if self.layout == "split" and (n_header, n_source) != (1, 1):
            raise ProfileError(
                f"{where}: layout = 'split' needs exactly one output with template "
                f"{C_HEADER_TEMPLATE!r} and one with {C_SOURCE_TEMPLATE!r}; found "
                f"{n_header} and {n_source}"
            )
        if self.layout == "header_only" and (n_header > 1 or n_source):
            raise ProfileError(
                f"{where}: layout = 'header_only' allows at most one output with template "
                f"{C_HEADER_TEMPLATE!r} and none with {C_SOURCE_TEMPLATE!r}; found "
                f"{n_header} and {n_source}"
            )

    def prefix_for(self, table_name: str) -> str:
        """C symbol prefix used for table ``table_name``."""
        return self.symbol_prefix if self.symbol_prefix is not None else table_name


def _is_int(value: Any) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _check_choice(value: Any, allowed: tuple[str, ...], key: str, where: str) -> None:
    if value not in allowed:
        raise ProfileError(f"{where}: {key} = {value!r}: allowed {list(allowed)}")


def _check_filename(pattern: Any, key: str) -> None:
    if not isinstance(pattern, str) or not _FILENAME.match(pattern) or pattern.startswith("."):
        raise ProfileError(
            f"{key} = {pattern!r}: expected a plain file name of letters, digits, '_', '-', "
            "'.' and placeholders"
        )
    for _, field, spec, conv in string.Formatter().parse(pattern):
        if field is not None and (field not in FILENAME_FIELDS or spec or conv):
            raise ProfileError(
                f"{key} = {pattern!r}: unknown placeholder {{{field}}}; allowed "
                + ", ".join("{" + f + "}" for f in FILENAME_FIELDS)
            )


def _check_keys(table: dict[str, Any], allowed: tuple[str, ...], where: str, what: str) -> None:
    for key in table:
        if key not in allowed:
            raise ProfileError(
                f"{where}: unknown key {what}{key!r}; allowed keys: {', '.join(allowed)}"
            )


def _outputs(raw: Any, where: str) -> tuple[OutputSpec, ...]:
    if not isinstance(raw, list) or not all(isinstance(o, dict) for o in raw):
        raise ProfileError(f"{where}: outputs = {raw!r}: expected an array of [[outputs]] tables")
    specs = []
    for n, table in enumerate(raw):
        _check_keys(table, _OUTPUT_KEYS, where, f"in outputs[{n}]: ")
        if "filename" not in table:
            raise ProfileError(f"{where}: outputs[{n}] has no 'filename'")
        try:
            specs.append(OutputSpec(**table))
        except ProfileError as exc:
            raise ProfileError(f"{where}: outputs[{n}]: {exc}") from None
    return tuple(specs)


def loads_target(text: str, source: str = "<string>") -> TargetProfile:
    """Parse a target profile from TOML text.

    Parameters
    ----------
    text : str
        TOML document.
    source : str
        Name of the document used in error messages (a path or ``builtin:<name>``).

    Returns
    -------
    TargetProfile
        The validated profile.

    Raises
    ------
    ProfileError
        On TOML syntax errors, unknown or missing keys and invalid values.
    """
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{source}: not valid TOML: {exc}") from None
    _check_keys(raw, _TOP_KEYS, source, "")
    for key in ("name", "description", "outputs"):
        if key not in raw:
            raise ProfileError(f"{source}: required key {key!r} is missing")
    fields = dict(raw)
    fields["outputs"] = _outputs(raw["outputs"], source)
    return TargetProfile(source=source, **fields)


def builtin_targets() -> tuple[str, ...]:
    """Names of the built-in target profiles (``targets/*.toml``)."""
    root = resources.files("obvert.targets")
    return tuple(sorted(p.name[:-5] for p in root.iterdir() if p.name.endswith(".toml")))


def load_target(name_or_path: str | os.PathLike[str]) -> TargetProfile:
    """Load a target profile by built-in name (``"c99"``) or from a TOML file path.

    Parameters
    ----------
    name_or_path : str or path-like
        A built-in profile name (``[a-z][a-z0-9_]*``, see :func:`builtin_targets`) or the
        path of a ``.toml`` file.

    Returns
    -------
    TargetProfile
        The validated profile.

    Raises
    ------
    ProfileError
        If no such built-in or file exists, or the profile is invalid.
    """
    text_name = os.fspath(name_or_path)
    if isinstance(name_or_path, str) and _IDENT.match(text_name):
        resource = resources.files("obvert.targets").joinpath(f"{text_name}.toml")
        if not resource.is_file():
            raise ProfileError(
                f"target {text_name!r}: no such built-in target; built-ins: "
                f"{', '.join(builtin_targets())}; or give the path of a .toml file"
            )
        return loads_target(resource.read_text(encoding="utf-8"), f"builtin:{text_name}")
    path = Path(text_name)
    if not path.is_file():
        raise ProfileError(f"target file {text_name!r} does not exist")
    return loads_target(path.read_text(encoding="utf-8"), str(path))
