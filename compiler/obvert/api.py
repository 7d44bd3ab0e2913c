"""The public API: load a spec, compile its certified table, emit it for firmware targets.

Each function is one core call; the command line (:mod:`obvert.cli`) is a thin layer over
these. Nothing here writes files: :func:`emit` returns ``{filename: bytes}``.
"""

from __future__ import annotations

import sys
from collections.abc import Mapping, Sequence
from concurrent.futures import Executor
from importlib import resources
from typing import Any

from obvert.emitter import EmitError, TargetProfile, load_target, table_bytes
from obvert.emitter import emit as _emit_one
from obvert.emitter.catalogue import catalogue_budget, catalogue_files
from obvert.firmware.bundle import (
    DIRECTORY_ENTRY_BYTES,
    HEADER_BYTES,
    TRAILER_BYTES,
    name_id,
    product_block_bytes,
)
from obvert.spec import Spec, SpecError, loads_spec, spec_from_dict
from obvert.spec.errors import toml_text
from obvert.table import CookTable, Progress, manifest
from obvert.table import compile_table as _compile

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

Targets = TargetProfile | str | Sequence[TargetProfile | str]

#: Built-in demo specs (an invented kitchen and its products), by name.
DEMOS = {
    "griddle": "griddle_patty.toml",
    "griddle_line": "griddle_line.toml",
    "clamshell": "clamshell_patty.toml",
}


def demo_text(name: str) -> str:
    """TOML text of the built-in demo spec ``name`` (see :data:`DEMOS`)."""
    if name not in DEMOS:
        raise SpecError("demo", name, f"one of {sorted(DEMOS)}")
    return resources.files("obvert.demo").joinpath(DEMOS[name]).read_text("utf-8")


def demo_spec(
    name: str = "griddle",
    *,
    thickness: Sequence[str] | None = None,
    start_temperature: Sequence[str] | None = None,
) -> Spec:
    """The built-in demo spec ``name``, optionally on a smaller grid.

    Parameters
    ----------
    name : str
        ``griddle`` or ``clamshell`` (an invented kitchen and products).
    thickness, start_temperature : sequence of str, optional
        Grid nodes with units (``"10 mm"``, ``"4 degC"``) replacing the demo's.

    Returns
    -------
    Spec
        The checked spec.

    Examples
    --------
    >>> import obvert
    >>> obvert.demo_spec("clamshell").appliance.kind
    'clamshell'
    """
    text = demo_text(name)
    if thickness is None and start_temperature is None:
        return loads_spec(text, f"<demo {name}>")
    data = tomllib.loads(text)
    if thickness is not None:
        data["grid"]["thickness"] = list(thickness)
    if start_temperature is not None:
        data["grid"]["start_temperature"] = list(start_temperature)
    return spec_from_dict(data)


def _profiles(targets: Targets | None, spec: Spec | None) -> list[TargetProfile]:
    if targets is None:
        if spec is None:
            raise ValueError("targets: none given and no spec to take outputs.targets from")
        targets = spec.targets
    if isinstance(targets, TargetProfile | str):
        targets = [targets]
    return [t if isinstance(t, TargetProfile) else load_target(t) for t in targets]


def output_names(spec: Spec, targets: Targets | None = None) -> dict[str, str]:
    """The file each target will write for ``spec``, checked for clashes before any work.

    Parameters
    ----------
    spec : Spec
        The spec to be built.
    targets : TargetProfile, str or sequence of them, optional
        Default: the spec's ``outputs.targets``.

    Returns
    -------
    dict of str to str
        File name to the target that writes it.

    Raises
    ------
    EmitError
        Two different targets would write the same file name.
    ProfileError
        A target that does not exist or is malformed.
    """
    owner: dict[str, TargetProfile] = {}
    for prof in _profiles(targets, spec):
        names = {"table": spec.name, "prefix": prof.prefix_for(spec.name)}
        for out in prof.outputs:
            name = out.filename.format(**names)
            other = owner.get(name)
            if other is not None and other != prof:
                raise EmitError(
                    f"targets {other.name!r} and {prof.name!r} both write {name!r}: "
                    "build them into different --out folders, or choose one"
                )
            owner[name] = prof
    return {name: prof.name for name, prof in owner.items()}


def _event_counts(spec: Spec) -> tuple[int, int]:
    """Fewest and most events a node of ``spec`` can have (done included)."""
    a = spec.appliance
    fewest = 1 if a.kind != "clamshell" else 3  # done; or close, open and done
    most = a.max_flips + (1 if a.kind == "flipping_griddle" else 3)
    return fewest, most


def budget_check(spec: Spec, targets: Targets | None = None) -> list[str]:
    """Check a spec's grid against the targets' byte budgets before any work.

    Parameters
    ----------
    spec : Spec
        The spec to be built.
    targets : TargetProfile, str or sequence of them, optional
        Default: the spec's ``outputs.targets``.

    Returns
    -------
    list of str
        Warnings: targets whose budget the table may exceed with its longest schedules.

    Raises
    ------
    EmitError
        The table cannot fit a target's budget even with the shortest schedules.
    """
    n_x, n_t = len(spec.grid.thickness_m), len(spec.grid.start_temp_c)
    fewest, most = _event_counts(spec)
    warnings = []
    for prof in _profiles(targets, spec):
        budget = prof.flash_budget_bytes
        if budget is None:
            continue
        low = table_bytes(prof, n_x, n_t, fewest)
        if low > budget:
            raise EmitError(
                f"grid: {n_x} x {n_t} nodes need at least {low} bytes on target {prof.name!r}, "
                f"whose flash_budget_bytes = {budget}: use fewer grid nodes or a larger budget"
            )
        high = table_bytes(prof, n_x, n_t, most)
        if high > budget:
            warnings.append(
                f"target {prof.name!r}: the table may need up to {high} bytes against "
                f"flash_budget_bytes = {budget} (checked again after the build)"
            )
    return warnings


def compile_table(
    spec: Spec,
    targets: Targets | None = None,
    *,
    progress: Progress | None = None,
    jobs: int = 1,
    executor: Executor | None = None,
    isolate: bool = False,
) -> CookTable:
    """Plan and certify every node of ``spec``, and every cell the targets' lookups use.

    Parameters
    ----------
    spec : Spec
        From :func:`load_spec`.
    targets : TargetProfile, str or sequence of them, optional
        The targets the table will be emitted for (default: the spec's
        ``outputs.targets``); their lookup rules decide which cells are certified.
    progress : callable, optional
        Called with an :class:`obvert.table.ProgressEvent` as work proceeds (nodes done,
        total, failed candidate solves, a one-line message).
    jobs : int
        Local worker processes (1: in this process).
    executor : concurrent.futures.Executor, optional
        Runs the work instead, e.g. ``distributed.Client(address).get_executor()``. The
        result does not depend on ``jobs`` or ``executor``.
    isolate : bool
        Run even one job in a worker process, so that an interrupt (Ctrl-C, SIGTERM) of
        this process stops the work within moments (a solver here may swallow Ctrl-C).

    Returns
    -------
    CookTable
        Certified nodes and cells.

    Raises
    ------
    BuildError, CellCertificationError
        A node or a cell could not be planned or certified (nothing may be emitted).
    ProfileError
        A target that does not exist or is malformed.

    Examples
    --------
    >>> import obvert
    >>> spec = obvert.demo_spec("clamshell", thickness=["9 mm"], start_temperature=["4 degC"])
    >>> table = obvert.compile_table(spec, ["c99"])
    >>> [round(node.margin_log, 3) >= 0.0 for node in table.nodes]
    [True]
    """
    rules = sorted({"corner", *(p.lookup for p in _profiles(targets, spec))})
    return _compile(spec, rules, progress, jobs=jobs, executor=executor, isolate=isolate)


def emit(table: CookTable | Mapping[str, Any], targets: Targets | None = None) -> dict[str, bytes]:
    """Render a table (or its manifest) for one or several targets.

    Parameters
    ----------
    table : CookTable or dict
        A compiled table, or a manifest (e.g. read back from the JSON output).
    targets : TargetProfile, str or sequence of them, optional
        Target profiles or built-in names (default: the table's spec's ``outputs.targets``).

    Returns
    -------
    dict of str to bytes
        Every output file, by file name.

    Raises
    ------
    ManifestError
        The manifest is not certified, not in the current format, or malformed.
    EmitError
        A target cannot represent the table, or two targets write one file name.

    Examples
    --------
    >>> import obvert
    >>> spec = obvert.demo_spec("clamshell", thickness=["9 mm"], start_temperature=["4 degC"])
    >>> files = obvert.emit(obvert.compile_table(spec, ["c99", "json"]), ["c99", "json"])
    >>> sorted(files)
    ['brinecliff_press.c', 'brinecliff_press.h', 'brinecliff_press.json']
    """
    m = manifest(table) if isinstance(table, CookTable) else dict(table)
    spec = table.spec if isinstance(table, CookTable) else None
    if targets is None and spec is None:
        targets = list(m.get("spec", {}).get("targets", [])) or None
    files: dict[str, bytes] = {}
    owner: dict[str, str] = {}
    for prof in _profiles(targets, spec):
        for name, data in _emit_one(m, prof).items():
            if name in files and files[name] != data:
                raise EmitError(
                    f"targets {owner[name]!r} and {prof.name!r} both write {name!r} "
                    "with different contents; choose one of them"
                )
            files[name], owner[name] = data, prof.name
    return files


class CatalogueSpecError(SpecError):
    """A field that several specs of one catalogue must agree on; the message names each file.

    Parameters
    ----------
    path : str
        Dotted path of the field, e.g. ``appliance.name``.
    by_file : dict of str to object
        The value in each file (in the order given).
    allowed : str
        What the field accepts across the files.
    """

    def __init__(self, path: str, by_file: Mapping[str, object], allowed: str) -> None:
        super().__init__(path, dict(by_file), allowed)
        listed = ", ".join(f"{toml_text(v)} in {src}" for src, v in by_file.items())
        self.args = (f"{path} = {listed}: allowed {allowed}",)


def _bundle_bytes_bound(specs: Sequence[Spec], most: bool) -> int:
    """Bytes of the bundle of ``specs`` with the fewest (or most) events per node."""
    total = HEADER_BYTES + TRAILER_BYTES
    for spec in specs:
        n_x, n_t = len(spec.grid.thickness_m), len(spec.grid.start_temp_c)
        width = _event_counts(spec)[1 if most else 0]
        total += DIRECTORY_ENTRY_BYTES + product_block_bytes(n_x, n_t, width)
    return total


def catalogue_check(
    specs: Mapping[str, Spec], flash_budget_bytes: int | None = None
) -> tuple[int, list[str]]:
    """Check before any work that several specs can make one catalogue.

    Parameters
    ----------
    specs : dict of str to Spec
        Each spec by where it came from (its file), in the order given.
    flash_budget_bytes : int, optional
        Byte budget of the catalogue's compiled-in bundle (default: the ``c99_fixed``
        target's ``flash_budget_bytes``).

    Returns
    -------
    (int, list of str)
        The budget in bytes, and warnings: the bundle may exceed the budget with the longest
        schedules (checked again after the build).

    Raises
    ------
    SpecError
        Specs for different appliance names or ticks, two specs with one table name (or
        product id), naming the files and the field; a bad budget.
    EmitError
        The bundle cannot fit the budget even with the shortest schedules.
    """
    if not specs:
        raise SpecError("SPEC_FILE", [], "at least one spec for a catalogue")
    try:
        budget = catalogue_budget(flash_budget_bytes)
    except EmitError as exc:
        raise SpecError("--flash-budget", flash_budget_bytes, f"a positive size ({exc})") from None
    appliances = {src: s.appliance.name for src, s in specs.items()}
    if len(set(appliances.values())) > 1:
        raise CatalogueSpecError(
            "appliance.name",
            appliances,
            "the same appliance name in every spec of a catalogue (one bundle is for one "
            "appliance model)",
        )
    ticks = {src: f"{s.appliance.tick_s * 1e3:g} ms" for src, s in specs.items()}
    if len(set(ticks.values())) > 1:
        raise CatalogueSpecError(
            "appliance.tick",
            ticks,
            "the same tick in every spec of a catalogue (one bundle, one tick)",
        )
    for what, key in (("table name", lambda s: s.name), ("product id", lambda s: name_id(s.name))):
        seen: dict[object, str] = {}
        for src, s in specs.items():
            other = seen.setdefault(key(s), src)
            if other != src:
                raise CatalogueSpecError(
                    "table.name",
                    {other: specs[other].name, src: s.name},
                    f"a different {what} in every spec of a catalogue (each product's id is "
                    "derived from its table name)",
                )
    low = _bundle_bytes_bound(list(specs.values()), most=False)
    if low > budget:
        raise EmitError(
            f"catalogue: {len(specs)} products need at least {low} bytes of bundle, above the "
            f"flash budget of {budget} bytes: use fewer products or grid nodes, or a larger "
            "budget (--flash-budget)"
        )
    high = _bundle_bytes_bound(list(specs.values()), most=True)
    warnings = []
    if high > budget:
        warnings.append(
            f"catalogue: the bundle may need up to {high} bytes against the flash budget of "
            f"{budget} bytes (checked again after the build)"
        )
    return budget, warnings


def emit_catalogue(
    name: str,
    tables: Sequence[CookTable | Mapping[str, Any]],
    *,
    table_version: int,
    private_key_pem: bytes | None = None,
    flash_budget_bytes: int | None = None,
) -> dict[str, bytes]:
    """The catalogue of several products' tables for one appliance.

    Parameters
    ----------
    name : str
        Catalogue name: file stem and C prefix (``[a-z][a-z0-9_]*``).
    tables : sequence of CookTable or dict
        The products' compiled tables (or their manifests), all for one appliance and tick.
    table_version : int
        Table version of the catalogue's bundle, 1 to 2**32 - 1.
    private_key_pem : bytes, optional
        Ed25519 private key (PEM) signing the bundle; None: unsigned.
    flash_budget_bytes : int, optional
        Most bytes the compiled-in bundle may take (default: the ``c99_fixed`` target's).

    Returns
    -------
    dict of str to bytes
        ``<name>.h`` and ``<name>.c`` (the bundle compiled in, with its loader and
        ``<name>_catalogue_lookup``), ``<name>.bundle`` and ``<name>.json`` (every product's
        manifest); the same inputs give the same bytes.

    Raises
    ------
    EmitError
        A bad name or budget, a bundle over the budget, tables for different appliances or
        ticks, or repeated product ids.
    ManifestError
        A table that is not certified or not in the current format.
    """
    manifests = [manifest(t) if isinstance(t, CookTable) else dict(t) for t in tables]
    return catalogue_files(
        name,
        manifests,
        table_version=table_version,
        private_key_pem=private_key_pem,
        flash_budget_bytes=flash_budget_bytes,
    )
