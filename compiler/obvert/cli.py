"""Command line: a thin layer that parses, calls the pure core, prints and writes files.

Exit status of ``obvert build``: 0 built; 2 bad input (nothing written); 1 a node could not
be planned or certified (nothing written; with ``--catalogue``, in any product: no product's
table and no part of the catalogue). ``obvert verify``: 0 the bundle passes; 1 it is
refused (the reason printed); 2 a file cannot be read or the key is not a key.
"""

from __future__ import annotations

import contextlib
import dataclasses
import math
import os
import signal
import sys
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import click

from obvert.about import CAUTION, __version__

DEMOS = ("clamshell", "griddle", "griddle_line")


def write_atomically(
    out_dir: Path, files: dict[str, bytes], private: frozenset[str] = frozenset()
) -> None:
    """Write every file or none: stage in a temporary folder, then rename into place.

    Files named in ``private`` are made readable by the owner only (mode 0600) before they
    appear under their names.
    """
    out_dir.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(dir=out_dir, prefix=".obvert-") as tmp:
        staged = []
        for name, data in sorted(files.items()):
            path = Path(tmp) / name
            path.write_bytes(data)
            if name in private:
                path.chmod(0o600)
            staged.append((path, out_dir / name))
        for src, dst in staged:
            os.replace(src, dst)


class _Terminated(BaseException):
    """SIGTERM arrived: unwinds the build like Ctrl-C, so that workers are stopped."""


@contextlib.contextmanager
def _terminate_as_exception() -> Iterator[None]:
    def handler(_signum: int, _frame: object) -> None:
        raise _Terminated()

    previous = signal.signal(signal.SIGTERM, handler)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _writable_folder(out_dir: Path) -> str:
    """Why files could not be written into ``out_dir`` (empty: they can); creates nothing."""
    here = out_dir.resolve()
    while not here.exists():
        here = here.parent
    if not here.is_dir():
        return f"{str(here)!r} is a file, not a folder"
    try:  # a probe file, removed at once: permissions alone say nothing to root
        with tempfile.TemporaryFile(dir=here):
            pass
    except OSError as exc:
        return f"cannot write in {str(here)!r} ({exc.strerror})"
    return ""


def _profiles(given: tuple[str, ...], spec: Any) -> list[Any]:
    """The target profiles to build, checked before any work.

    Parameters
    ----------
    given : tuple of str
        The ``--target`` options (empty: the spec's ``outputs.targets``).
    spec : Spec
        The loaded spec.

    Returns
    -------
    list of TargetProfile
        One profile per target.

    Raises
    ------
    SpecError
        A target that does not exist or is malformed (naming ``--target`` or
        ``outputs.targets[i]``), or two targets that write the same file.
    """
    from obvert.api import output_names
    from obvert.emitter import EmitError, ProfileError, load_target
    from obvert.emitter.profile import builtin_targets
    from obvert.spec import SpecError

    names = list(given or spec.targets)
    profiles = []
    for i, name in enumerate(names):
        field = "--target" if given else f"outputs.targets[{i}]"
        try:
            profiles.append(load_target(name))
        except ProfileError as exc:
            if "/" in name or name.endswith(".toml"):  # a file: its own problem, one "allowed"
                why = str(exc).replace("allowed", "accepted")
                raise SpecError(field, name, f"a readable, valid target file ({why})") from None
            builtins = ", ".join(builtin_targets())
            raise SpecError(
                field, name, f"a built-in target ({builtins}) or the path of a target .toml file"
            ) from None
    try:
        output_names(spec, profiles)
    except EmitError as exc:
        field = "--target" if given else "outputs.targets"
        raise SpecError(field, names, f"targets that write different files ({exc})") from None
    return profiles


def _bundle_key(table_version: int | None, sign_key: Path | None) -> bytes | None:
    """The signing key's PEM bytes, checked before any work (None: no key given).

    Raises
    ------
    SpecError
        ``--sign-key`` without ``--table-version``, or a key file that cannot be read or is
        not an unencrypted Ed25519 private key in PEM.
    """
    from obvert.emitter import EmitError
    from obvert.emitter.bundle import signing_key
    from obvert.spec import SpecError

    if sign_key is None:
        return None
    if table_version is None:
        raise SpecError("--sign-key", str(sign_key), "given together with --table-version")
    try:
        pem = sign_key.read_bytes()
    except OSError as exc:
        raise SpecError("--sign-key", str(sign_key), f"a readable file ({exc.strerror})") from None
    try:
        signing_key(pem)
    except EmitError as exc:
        raise SpecError("--sign-key", str(sign_key), f"an Ed25519 private key ({exc})") from None
    return pem


class _ProgressLine:
    """Prints build progress to stderr: done/total, failed solves, time left, what finished."""

    def __init__(self, label: str = "") -> None:
        self.start = time.monotonic()  # the build starts with its nodes
        self.stage = "nodes"
        self.label = f"{label} " if label else ""

    def __call__(self, event: Any) -> None:
        if event.stage != self.stage:
            self.stage, self.start = event.stage, time.monotonic()
        elapsed = time.monotonic() - self.start
        left = elapsed / event.done * (event.total - event.done) if event.done else math.nan
        eta = "" if math.isnan(left) else f", about {_duration(left)} left"
        click.echo(
            f"[{self.label}{event.stage} {event.done}/{event.total}, {event.failures} failed solves"
            f"{eta}] {event.message}",
            err=True,
        )


def _duration(s: float) -> str:
    return f"{s:.0f} s" if s < 90 else f"{s / 60:.0f} min"


@contextlib.contextmanager
def _executor(scheduler: str | None) -> Iterator[Any]:
    """A Dask client's executor for ``scheduler``, or None (local processes)."""
    if scheduler is None:
        yield None
        return
    try:
        from distributed import Client
    except ImportError:
        click.echo(
            "error: --scheduler needs the Dask distributed package: pip install 'obvert[dask]'",
            err=True,
        )
        sys.exit(2)
    try:
        client = Client(scheduler, timeout=30)
    except (OSError, TimeoutError, ValueError) as exc:
        click.echo(f"error: --scheduler {scheduler!r}: cannot connect: {exc}", err=True)
        sys.exit(2)
    try:
        yield client.get_executor()
    finally:
        client.close()


@click.group()
@click.version_option(__version__, prog_name="obvert")
def main() -> None:
    """Compile certified cook programs for automated contact-cooking appliances.

    Output is an engineering aid: validate every table by measurement on the real
    appliance; it defers to local food codes, HACCP plans and food-safety professionals.
    """


@main.command("build")
@click.argument(
    "spec_files",
    nargs=-1,
    metavar="[SPEC_FILE]...",
    type=click.Path(dir_okay=False, path_type=Path),
)
@click.option(
    "--out",
    "out_dir",
    default="build",
    show_default=True,
    type=click.Path(file_okay=False, path_type=Path),
    help="Folder for the emitted files.",
)
@click.option(
    "--target",
    "targets",
    multiple=True,
    help="Target profile name or .toml path (repeatable); default: the spec's outputs.targets.",
)
@click.option(
    "--jobs",
    type=click.IntRange(1, 256),
    default=lambda: os.cpu_count() or 1,
    show_default="number of CPUs",
    help="Worker processes (one thickness row each); the output does not depend on it.",
)
@click.option(
    "--demo",
    type=click.Choice(DEMOS),
    default="griddle",
    show_default=True,
    help="Built-in demo to build when no SPEC_FILE is given (invented kitchen and products).",
)
@click.option(
    "--scheduler",
    metavar="ADDRESS",
    default=None,
    help="Run the work on a Dask distributed cluster at ADDRESS (e.g. tcp://10.0.0.5:8786) "
    "instead of local processes; the output is the same byte for byte.",
)
@click.option(
    "--table-version",
    type=click.IntRange(0, 2**32 - 1),
    default=None,
    help="Also write <table>.bundle, a field-update bundle with this table version (uint32; "
    "appliances accept only a newer one). Unsigned without --sign-key.",
)
@click.option(
    "--sign-key",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Ed25519 private key (PEM, from 'obvert keygen') that signs the bundle; needs "
    "--table-version.",
)
@click.option(
    "--catalogue",
    metavar="NAME",
    default=None,
    help="Build every SPEC_FILE (products of one appliance) and also write the catalogue "
    "NAME.h, NAME.c (the bundle compiled in, NAME_catalogue_lookup by product id), "
    "NAME.bundle and NAME.json (every product's table); needs --table-version. A SPEC_FILE "
    "may instead be a catalogue file ([catalogue] name, [[product]] spec).",
)
@click.option(
    "--flash-budget",
    type=click.IntRange(1, 2**32 - 1),
    default=None,
    help="Most bytes the catalogue's compiled-in bundle may take (default: the c99_fixed "
    "target's flash_budget_bytes, 65536); a static assert in NAME.c holds it.",
)
@click.option("--quiet", is_flag=True, help="Do not print progress.")
def build_cmd(
    spec_files: tuple[Path, ...],
    out_dir: Path,
    targets: tuple[str, ...],
    jobs: int,
    demo: str,
    scheduler: str | None,
    table_version: int | None,
    sign_key: Path | None,
    catalogue: str | None,
    flash_budget: int | None,
    quiet: bool,
) -> None:
    """Build the cook table of SPEC_FILE (default: the built-in demo) and emit it.

    With --catalogue NAME, build the tables of several SPEC_FILEs (products of one appliance
    and tick) in one run and also write their catalogue.
    """
    from obvert.spec import SpecError, is_catalogue_file, load_catalogue_file

    menus = [path for path in spec_files if is_catalogue_file(path)]
    if menus:
        if catalogue is not None or len(spec_files) > 1:
            click.echo(
                f"error: SPEC_FILE: {menus[0]} is a catalogue file: allowed alone, "
                "without other spec files and without --catalogue (it names its catalogue in "
                "[catalogue] name); nothing was built",
                err=True,
            )
            sys.exit(2)
        try:
            menu = load_catalogue_file(menus[0])
        except SpecError as exc:
            click.echo(f"error: catalogue file {menus[0]}: {exc}; nothing was built", err=True)
            sys.exit(2)
        catalogue, spec_files = menu.name, menu.specs
        if flash_budget is None:  # --flash-budget wins over the file's
            flash_budget = menu.flash_budget_bytes
    if catalogue is not None:
        _build_catalogue(
            _Catalogue(catalogue, spec_files, table_version, sign_key, flash_budget),
            out_dir,
            targets,
            jobs,
            demo,
            scheduler,
            quiet,
        )
        return
    if len(spec_files) > 1:
        click.echo(
            f"error: SPEC_FILE: {len(spec_files)} files given "
            f"({', '.join(map(str, spec_files))}): allowed one spec file, or several with "
            "--catalogue NAME (one catalogue for one appliance); nothing was built",
            err=True,
        )
        sys.exit(2)
    if flash_budget is not None:
        click.echo(
            "error: --flash-budget applies to a catalogue only (with --catalogue NAME); a "
            "single table's budget is its target's flash_budget_bytes; nothing was built",
            err=True,
        )
        sys.exit(2)
    _build_one(
        spec_files[0] if spec_files else None,
        out_dir,
        targets,
        jobs,
        demo,
        scheduler,
        table_version,
        sign_key,
        quiet,
    )


def _build_one(
    spec_file: Path | None,
    out_dir: Path,
    targets: tuple[str, ...],
    jobs: int,
    demo: str,
    scheduler: str | None,
    table_version: int | None,
    sign_key: Path | None,
    quiet: bool,
) -> None:
    """``obvert build`` of one spec (or the demo): its table for the chosen targets."""
    from obvert.api import budget_check, compile_table, demo_spec, emit
    from obvert.emitter import EmitError, ProfileError
    from obvert.firmware import ManifestError
    from obvert.problem.model import sequences
    from obvert.review.summary import summary
    from obvert.spec import SpecError, load_spec
    from obvert.table import BuildError, CellCertificationError, manifest

    try:
        spec = load_spec(spec_file) if spec_file is not None else demo_spec(demo)
        profiles = _profiles(targets, spec)
        problem = _writable_folder(out_dir)
        if problem:
            raise SpecError("--out", str(out_dir), f"a folder that can be written ({problem})")
        warnings = budget_check(spec, profiles)
        key_pem = _bundle_key(table_version, sign_key)
    except (SpecError, ProfileError, EmitError) as exc:
        click.echo(f"error: {exc}; nothing was built", err=True)
        sys.exit(2)
    for w in warnings:
        click.echo(f"warning: {w}", err=True)
    if not quiet:
        n_x, n_t = len(spec.grid.thickness_m), len(spec.grid.start_temp_c)
        n_seq = len(sequences(spec))
        click.echo(
            f"work: {n_x} x {n_t} = {n_x * n_t} nodes, up to {n_seq} event sequences each, "
            f"on {jobs} worker process(es)",
            err=True,
        )
    if spec_file is None and not quiet:
        click.echo(
            f"no spec given: building the built-in {demo} demo (invented product and appliance)",
            err=True,
        )
    progress = None if quiet else _ProgressLine()
    try:
        with _executor(scheduler) as executor, _terminate_as_exception():
            table = compile_table(
                spec, profiles, progress=progress, jobs=jobs, executor=executor, isolate=True
            )
    except (BuildError, CellCertificationError) as exc:
        click.echo(f"error: {exc}", err=True)
        click.echo("nothing was written", err=True)
        sys.exit(1)
    except KeyboardInterrupt:
        click.echo("interrupted (Ctrl-C): every worker stopped, nothing was written", err=True)
        sys.exit(130)
    except _Terminated:
        click.echo("terminated (SIGTERM): every worker stopped, nothing was written", err=True)
        sys.exit(143)
    try:
        files = emit(table, profiles)
        if table_version is not None:
            from obvert.emitter.bundle import bundle_bytes

            m = manifest(table)
            data = bundle_bytes([m], table_version=table_version, private_key_pem=key_pem)
            files[f"{m['table']['name']}.bundle"] = data
    except (EmitError, ManifestError) as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    click.echo(summary(manifest(table)))
    if table_version is not None and key_pem is None:
        click.echo(
            f"note: the bundle (table version {table_version}) is UNSIGNED: appliances and "
            "'obvert verify' refuse it unless told to accept unsigned bundles",
            err=True,
        )
    write_atomically(out_dir, files)
    for name in sorted(files):
        click.echo(f"wrote {out_dir / name}")
    click.echo(f"caution: {CAUTION}")


@dataclasses.dataclass(frozen=True)
class _Catalogue:
    """What ``obvert build --catalogue`` was asked for."""

    #: Catalogue name: file stem and C prefix.
    name: str
    #: The products' spec files, in the order given (none: the demo).
    spec_files: tuple[Path, ...]
    #: Table version of the catalogue's bundle (None: not given, refused).
    table_version: int | None
    #: Ed25519 private key file signing the bundle (None: unsigned).
    sign_key: Path | None
    #: Flash budget of the compiled-in bundle, bytes (None: the c99_fixed target's).
    flash_budget: int | None


def _build_catalogue(
    ask: _Catalogue,
    out_dir: Path,
    targets: tuple[str, ...],
    jobs: int,
    demo: str,
    scheduler: str | None,
    quiet: bool,
) -> None:
    """``obvert build --catalogue``: every product's table, then the catalogue of them all.

    Everything is checked before any work; a product that fails stops the run and nothing
    is written, neither its tables nor the catalogue.
    """
    from obvert.api import (
        budget_check,
        catalogue_check,
        compile_table,
        demo_spec,
        emit,
        emit_catalogue,
        output_names,
    )
    from obvert.emitter import EmitError, ProfileError
    from obvert.emitter.catalogue import CATALOGUE_NAME_RULE, check_catalogue_name
    from obvert.firmware import ManifestError
    from obvert.firmware.bundle import parse_bundle
    from obvert.review.summary import summary
    from obvert.spec import SpecError, load_spec
    from obvert.spec.errors import MISSING
    from obvert.table import BuildError, CellCertificationError, manifest

    name = ask.name
    specs: dict[str, Any] = {}
    profiles: dict[str, list[Any]] = {}
    source = ""
    try:
        try:
            check_catalogue_name(name)
        except EmitError:
            raise SpecError(
                "--catalogue", name, f"a catalogue name, {CATALOGUE_NAME_RULE}"
            ) from None
        if ask.table_version is None or ask.table_version < 1:
            raise SpecError(
                "--table-version",
                MISSING if ask.table_version is None else ask.table_version,
                "an integer from 1 to 4294967295 (a catalogue's bundle carries it)",
            )
        for path in ask.spec_files or (None,):
            source = str(path) if path is not None else f"<demo {demo}>"
            if source in specs:
                raise SpecError("SPEC_FILE", source, "each spec file once")
            specs[source] = load_spec(path) if path is not None else demo_spec(demo)
            profiles[source] = _profiles(targets, specs[source])
        source = ""
        problem = _writable_folder(out_dir)
        if problem:
            raise SpecError("--out", str(out_dir), f"a folder that can be written ({problem})")
        budget, warnings = catalogue_check(specs, ask.flash_budget)
        owner = {f"{name}{ext}": f"catalogue {name}" for ext in (".h", ".c", ".bundle", ".json")}
        for src, spec in specs.items():
            warnings += [f"{src}: {w}" for w in budget_check(spec, profiles[src])]
            for file in output_names(spec, profiles[src]):
                other = owner.setdefault(file, f"product {spec.name} ({src})")
                if other != f"product {spec.name} ({src})":
                    raise SpecError(
                        "--catalogue" if other.startswith("catalogue") else "table.name",
                        name if other.startswith("catalogue") else spec.name,
                        f"names whose files do not clash ({file} is written by {other} and by "
                        f"product {spec.name} ({src}))",
                    )
        key_pem = _bundle_key(ask.table_version, ask.sign_key)
    except (SpecError, ProfileError, EmitError) as exc:
        where = f"spec {source}: " if source else ""
        click.echo(f"error: {where}{exc}; nothing was built", err=True)
        sys.exit(2)
    for w in warnings:
        click.echo(f"warning: {w}", err=True)
    tables = []
    current = ""
    try:
        with _executor(scheduler) as executor, _terminate_as_exception():
            for k, (src, spec) in enumerate(specs.items()):
                current = f"product {k + 1}/{len(specs)} {spec.name} ({src})"
                if not quiet:
                    n_x, n_t = len(spec.grid.thickness_m), len(spec.grid.start_temp_c)
                    click.echo(
                        f"{current}: {n_x} x {n_t} = {n_x * n_t} nodes on {jobs} worker "
                        "process(es)",
                        err=True,
                    )
                progress = None if quiet else _ProgressLine(spec.name)
                tables.append(
                    compile_table(
                        spec,
                        profiles[src],
                        progress=progress,
                        jobs=jobs,
                        executor=executor,
                        isolate=True,
                    )
                )
    except (BuildError, CellCertificationError) as exc:
        click.echo(f"error: {current}: {exc}", err=True)
        click.echo(f"nothing was written: no product's table and no catalogue {name!r}", err=True)
        sys.exit(1)
    except KeyboardInterrupt:
        click.echo("interrupted (Ctrl-C): every worker stopped, nothing was written", err=True)
        sys.exit(130)
    except _Terminated:
        click.echo("terminated (SIGTERM): every worker stopped, nothing was written", err=True)
        sys.exit(143)
    files: dict[str, bytes] = {}
    try:
        for src, table in zip(specs, tables, strict=True):
            current = f"product {table.spec.name} ({src})"
            files.update(emit(table, profiles[src]))
        current = f"catalogue {name}"
        files.update(
            emit_catalogue(
                name,
                tables,
                table_version=ask.table_version,
                private_key_pem=key_pem,
                flash_budget_bytes=budget,
            )
        )
    except (EmitError, ManifestError) as exc:
        click.echo(f"error: {current}: {exc}; nothing was written", err=True)
        sys.exit(2)
    for src, table in zip(specs, tables, strict=True):
        click.echo(f"product {table.spec.name} ({src}):")
        click.echo(summary(manifest(table)))
    bundle = parse_bundle(files[f"{name}.bundle"])
    signed = "signed" if key_pem is not None else "UNSIGNED"
    if key_pem is None:
        click.echo(
            f"note: the catalogue's bundle (table version {ask.table_version}) is UNSIGNED: "
            "appliances and 'obvert verify' refuse it unless told to accept unsigned bundles",
            err=True,
        )
    write_atomically(out_dir, files)
    for file in sorted(files):
        click.echo(f"wrote {out_dir / file}")
    click.echo(
        f"catalogue {name}: {len(bundle.products)} products, {bundle.node_count} nodes, table "
        f"version {ask.table_version}, {signed}; bundle {len(files[f'{name}.bundle'])} bytes "
        f"of the flash budget {budget}"
    )
    click.echo(f"caution: {CAUTION}")


@main.command("upgrade")
@click.argument("old", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--out",
    "out_file",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Where to write the manifest in the current format (JSON).",
)
def upgrade_cmd(old: Path, out_file: Path) -> None:
    """Convert a JSON table of an older format version to the current one, and check it."""
    import json

    from obvert.firmware import ManifestError, canonical_json, check_manifest, upgrade_manifest

    try:
        data = json.loads(old.read_text("utf-8"))
        new = upgrade_manifest(data)
        check_manifest(new)
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
        click.echo(f"error: {old}: cannot read a JSON table: {exc}", err=True)
        sys.exit(2)
    except ManifestError as exc:
        click.echo(f"error: {old}: {exc}", err=True)
        sys.exit(2)
    write_atomically(out_file.parent, {out_file.name: canonical_json(new)})
    click.echo(f"wrote {out_file} (format version {new['format_version']})")


def _table_and_spec(table: Path, spec_file: Path | None) -> tuple[dict[str, Any], Any]:
    """The manifest of ``table`` and its spec (``spec_file``, or read back from the table)."""
    from obvert.review import ReviewError, check_spec_matches, read_manifest, spec_of_manifest
    from obvert.spec import SpecError, load_spec

    try:
        m = read_manifest(table)
        if spec_file is None:
            return m, spec_of_manifest(m, str(table))
        spec = load_spec(spec_file)
        check_spec_matches(spec, m, str(table))
        return m, spec
    except (ReviewError, SpecError) as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)


_SPEC_OPTION = click.option(
    "--spec",
    "spec_file",
    default=None,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The spec TOML the table was built from (default: the spec stored in the table).",
)


@main.command("show")
@click.argument("table", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--thickness", required=True, help='Measured thickness with its unit, e.g. "12 mm".')
@click.option("--start", required=True, help='Measured start temperature, e.g. "-18 degC".')
@click.option(
    "--rule",
    type=click.Choice(["corner", "bilinear"]),
    default="corner",
    show_default=True,
    help="Lookup rule of the firmware target (c99: corner, c99_bilinear: bilinear).",
)
@_SPEC_OPTION
def show_cmd(table: Path, thickness: str, start: str, rule: str, spec_file: Path | None) -> None:
    """Print the schedule TABLE (JSON) gives one measurement, with reference predictions.

    The cold-spot temperature and log reduction at each event come from a reference run of
    the looked-up schedule at the measured point, in the worst tolerance scenario. Exit 1
    when the measurement is outside the table's envelope, 2 on a bad file or value.
    """
    from obvert.review import ReviewError, measured_point, show, show_text

    m, spec = _table_and_spec(table, spec_file)
    try:
        x, t = measured_point(thickness, start)
        shown = show(m, spec, x, t, rule)
    except (ReviewError, ValueError) as exc:
        click.echo(f"error: {table}: {exc}", err=True)
        sys.exit(2)
    click.echo(show_text(m, shown))
    click.echo(f"caution: {CAUTION}")
    if shown.status != 0:
        sys.exit(1)


@main.command("diff")
@click.argument("old", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("new", type=click.Path(dir_okay=False, path_type=Path))
def diff_cmd(old: Path, new: Path) -> None:
    """Compare two JSON tables: nodes, cells and spec keys added, removed and changed.

    Lines starting with "!" need review. Exit 0 when nothing needs review (identical, or
    nodes only longer with no smaller margin and the same event kinds), 1 when something
    does (a node or cell added or removed, a node shorter, with less margin or other event
    kinds, a cell with less margin or pad, any spec, tolerance, safety, tick or axis change;
    docs/review.md), 2 on a bad file.
    """
    from obvert.review import ReviewError, diff, diff_text, read_manifest

    try:
        a, b = read_manifest(old), read_manifest(new)
    except ReviewError as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    d = diff(a, b)
    click.echo(diff_text(d))
    sys.exit(1 if d.needs_review else 0)


@main.command("check")
@click.argument("program", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--spec",
    "spec_file",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Spec TOML: food, appliance, safety target, tolerances and reference settings.",
)
@click.option(
    "--table",
    "table",
    default=None,
    type=click.Path(dir_okay=False, path_type=Path),
    help="A certified JSON table built from the same spec, to compare done times with.",
)
@click.option(
    "--rule",
    type=click.Choice(["corner", "bilinear"]),
    default="corner",
    show_default=True,
    help="Lookup rule of the table for the comparison.",
)
def check_cmd(program: Path, spec_file: Path, table: Path | None, rule: str) -> None:
    """Check a hand-made cook PROGRAM (TOML bands, docs/review.md) on the reference model.

    Each band is simulated at its thickest and coldest corner under the spec's tolerance
    scenarios. Exit 0 when every band is safe, 1 when any band is not, 2 on a bad file.
    """
    from obvert.review import ReviewError, check_program, check_text, load_program
    from obvert.spec import SpecError, load_spec

    try:
        spec = load_spec(spec_file)
        prog = load_program(program, spec.appliance.tick_s)
    except (ReviewError, SpecError) as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    m = None
    if table is not None:
        m, _ = _table_and_spec(table, spec_file)
    try:
        checks = check_program(spec, prog, m, rule)
    except ValueError as exc:  # e.g. a band outside the food's property range
        click.echo(f"error: {program}: {exc}", err=True)
        sys.exit(2)
    click.echo(check_text(prog, checks))
    click.echo(f"caution: {CAUTION}")
    sys.exit(0 if all(c.safe for c in checks) else 1)


@main.command("report")
@click.argument("table", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--out",
    "out_file",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="Where to write the report (one self-contained HTML file).",
)
@_SPEC_OPTION
def report_cmd(table: Path, out_file: Path, spec_file: Path | None) -> None:
    """Write a self-contained HTML review report of TABLE (JSON) with plots and a sign-off.

    The same table gives the same bytes. Exit 2 on a bad file.
    """
    from obvert.review import report_html

    m, spec = _table_and_spec(table, spec_file)
    try:
        data = report_html(m, spec)
    except ValueError as exc:
        click.echo(f"error: {table}: {exc}", err=True)
        sys.exit(2)
    write_atomically(out_file.parent, {out_file.name: data})
    click.echo(f"wrote {out_file}")
    click.echo(f"caution: {CAUTION}")


KEY_FILE = "bundle_signing_key.pem"
PUBLIC_KEY_FILE = "bundle_signing_key.pub.pem"


@main.command("keygen")
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False, path_type=Path),
    help=f"Folder for {KEY_FILE} (private, mode 0600) and {PUBLIC_KEY_FILE}.",
)
def keygen_cmd(out_dir: Path) -> None:
    """Make an Ed25519 key pair for signing bundles; never overwrites a key."""
    from obvert.emitter.bundle import new_key_pair

    existing = [name for name in (KEY_FILE, PUBLIC_KEY_FILE) if (out_dir / name).exists()]
    if existing:
        click.echo(
            f"error: {out_dir / existing[0]} exists; keygen never overwrites a key (move it "
            "away or choose another --out)",
            err=True,
        )
        sys.exit(2)
    problem = _writable_folder(out_dir)
    if problem:
        click.echo(f"error: --out {str(out_dir)!r}: cannot write there ({problem})", err=True)
        sys.exit(2)
    private, public = new_key_pair()
    write_atomically(
        out_dir, {KEY_FILE: private, PUBLIC_KEY_FILE: public}, private=frozenset({KEY_FILE})
    )
    click.echo(f"wrote {out_dir / KEY_FILE} (private: keep it secret, off the appliances)")
    click.echo(f"wrote {out_dir / PUBLIC_KEY_FILE} (public: provision it in the appliances)")


@main.command("bundle")
@click.argument("tables", nargs=-1, required=True, type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--out",
    "out_file",
    required=True,
    type=click.Path(dir_okay=False, path_type=Path),
    help="The bundle file to write.",
)
@click.option(
    "--table-version",
    required=True,
    type=click.IntRange(0, 2**32 - 1),
    help="Table version of the bundle (uint32; appliances accept only a newer one).",
)
@click.option(
    "--sign-key",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Ed25519 private key (PEM) that signs the bundle; without it the bundle is unsigned.",
)
@click.option(
    "--c-catalogue",
    "catalogue",
    metavar="NAME",
    default=None,
    help="Also write NAME.h and NAME.c beside the bundle: the bundle compiled in as const data "
    "with the loader and NAME_catalogue_lookup(product_id, ...); and NAME.json, every "
    "product's table in one file.",
)
@click.option(
    "--flash-budget",
    type=click.IntRange(1, 2**32 - 1),
    default=None,
    help="Most bytes the catalogue's compiled-in bundle may take (default: the c99_fixed "
    "target's flash_budget_bytes, 65536).",
)
def bundle_cmd(
    tables: tuple[Path, ...],
    out_file: Path,
    table_version: int,
    sign_key: Path | None,
    catalogue: str | None,
    flash_budget: int | None,
) -> None:
    """Put several built tables (JSON manifests, one per product) into one bundle.

    All tables must be for the same appliance and tick; each product's id is derived from its
    table name (docs/bundle.md). The C loader answers lookups by product id from the bundle.
    """
    import json

    from obvert.emitter import EmitError
    from obvert.emitter.bundle import bundle_bytes
    from obvert.firmware import ManifestError, check_manifest
    from obvert.spec import SpecError

    try:
        key_pem = _bundle_key(table_version, sign_key)
        if catalogue is None and flash_budget is not None:
            raise SpecError("--flash-budget", flash_budget, "only with --c-catalogue NAME")
        if catalogue is not None:
            inputs = {p.resolve() for p in tables}
            for ext in (".h", ".c", ".json"):
                path = out_file.parent / f"{catalogue}{ext}"
                if path.resolve() in inputs:
                    raise SpecError(
                        "--c-catalogue", catalogue, f"a name whose {path} is not an input table"
                    )
    except SpecError as exc:
        click.echo(f"error: {exc}; nothing was written", err=True)
        sys.exit(2)
    manifests = []
    for path in tables:
        try:
            m = json.loads(_read(path, "table").decode("utf-8"))
            check_manifest(m)
        except (UnicodeDecodeError, json.JSONDecodeError) as exc:
            click.echo(f"error: table {path}: not a JSON table ({exc})", err=True)
            sys.exit(2)
        except ManifestError as exc:
            click.echo(f"error: table {path}: {exc}", err=True)
            sys.exit(2)
        manifests.append(m)
    try:
        if catalogue is None:
            files = {
                out_file.name: bundle_bytes(
                    manifests, table_version=table_version, private_key_pem=key_pem
                )
            }
        else:
            from obvert.emitter.catalogue import catalogue_files

            files = catalogue_files(
                catalogue,
                manifests,
                table_version=table_version,
                private_key_pem=key_pem,
                flash_budget_bytes=flash_budget,
            )
            files[out_file.name] = files.pop(f"{catalogue}.bundle")
    except (EmitError, ManifestError) as exc:
        click.echo(f"error: {exc}; nothing was written", err=True)
        sys.exit(2)
    write_atomically(out_file.parent, files)
    for name in sorted(files):
        if name != out_file.name:
            click.echo(f"wrote {out_file.parent / name}")
    signed = "signed" if key_pem is not None else "UNSIGNED"
    click.echo(
        f"wrote {out_file} ({len(manifests)} products, table version {table_version}, {signed})"
    )
    click.echo(f"caution: {CAUTION}")


def _read(path: Path, what: str) -> bytes:
    """Bytes of ``path``; exit 2 naming the file and the problem when it cannot be read."""
    try:
        return path.read_bytes()
    except OSError as exc:
        click.echo(f"error: {what} {path}: cannot read it ({exc.strerror})", err=True)
        sys.exit(2)


@main.command("verify")
@click.argument("bundle_file", type=click.Path(dir_okay=False, path_type=Path))
@click.option(
    "--public-key",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="Ed25519 public key (PEM) the bundle must be signed with.",
)
@click.option("--allow-unsigned", is_flag=True, help="Accept a bundle whose header says unsigned.")
@click.option(
    "--installed-table-version",
    type=click.IntRange(0, 2**32 - 1),
    default=None,
    help="Refuse the bundle unless its table version is above this one.",
)
@click.option(
    "--appliance",
    default=None,
    help="Appliance name (as in the spec); refuse a bundle made for another model.",
)
def verify_cmd(
    bundle_file: Path,
    public_key: Path | None,
    allow_unsigned: bool,
    installed_table_version: int | None,
    appliance: str | None,
) -> None:
    """Check a bundle (layout, CRC-32, Ed25519 signature) and print what it holds.

    Exit 0 when it passes, 1 when it is refused (the reason is printed), 2 when a file
    cannot be read or the key is not an Ed25519 public key.
    """
    from obvert.firmware.bundle import BundleError, BundleStatus, name_id, verify_bundle

    data = _read(bundle_file, "bundle")
    key = _read(public_key, "public key") if public_key is not None else None
    model = name_id(appliance) if appliance is not None else None
    try:
        bundle = verify_bundle(
            data,
            key,
            allow_unsigned=allow_unsigned,
            installed_table_version=installed_table_version,
            appliance_model=model,
        )
    except BundleError as exc:
        if exc.status is BundleStatus.WRONG_KEY and key is None:
            click.echo(f"error: {bundle_file} is signed: give --public-key to check it", err=True)
            sys.exit(2)
        hint = ""
        if exc.status is BundleStatus.UNSIGNED:
            hint = " (use --allow-unsigned to accept it)"
        click.echo(
            f"error: {bundle_file}: refused, {exc.status.name.lower().replace('_', ' ')}: "
            f"{exc}{hint}",
            err=True,
        )
        sys.exit(1)
    except ValueError as exc:
        click.echo(f"error: public key {public_key}: {exc}", err=True)
        sys.exit(2)
    for line in _bundle_lines(bundle_file, len(data), bundle, appliance):
        click.echo(line)
    click.echo(f"caution: {CAUTION}")


def _bundle_lines(path: Path, size: int, bundle: Any, appliance: str | None) -> list[str]:
    """What ``obvert verify`` prints about a bundle that passed."""
    signed = f"signed, key id {bundle.key_id.hex()}" if bundle.signed else "UNSIGNED"
    model = f"0x{bundle.appliance_model:08x}" + (f" ({appliance})" if appliance else "")
    lines = [
        f"bundle {path}: {size} bytes, bundle format version {bundle.format_version}, {signed}, "
        f"crc32 0x{bundle.crc:08x}: OK",
        f"table version: {bundle.table_version}",
        f"appliance model: {model}",
        f"tick: {bundle.tick_us} us",
        f"products: {len(bundle.products)}",
    ]
    for p in bundle.products:
        x_lo, x_hi, t_lo, t_hi = p.envelope
        lines.append(
            f"  product 0x{p.product_id:08x}: envelope thickness {x_lo} to {x_hi} um, start "
            f"temperature {t_lo} to {t_hi} (0.01 degC); axes {len(p.thickness_um)} x "
            f"{len(p.start_temp_cc)}, {len(p.nodes)} nodes, up to {p.max_events} events"
        )
    lines.append(f"nodes: {bundle.node_count}")
    return lines


if __name__ == "__main__":  # pragma: no cover
    main()
