"""Command line: a thin layer that parses, calls the pure core, prints and writes files.

Exit status of ``obvert build``: 0 built; 2 bad input (nothing written); 1 a node could not
be planned or certified (nothing written).
"""

from __future__ import annotations

import contextlib
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


def write_atomically(out_dir: Path, files: dict[str, bytes]) -> None:
    """Write every file or none: stage in a temporary folder, then rename into place."""
    out_dir.mkdir(parents=True, exist_ok=True)
    with tempfile.TemporaryDirectory(dir=out_dir, prefix=".obvert-") as tmp:
        staged = []
        for name, data in sorted(files.items()):
            path = Path(tmp) / name
            path.write_bytes(data)
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


class _ProgressLine:
    """Prints build progress to stderr: done/total, failed solves, time left, what finished."""

    def __init__(self) -> None:
        self.start = time.monotonic()  # the build starts with its nodes
        self.stage = "nodes"

    def __call__(self, event: Any) -> None:
        if event.stage != self.stage:
            self.stage, self.start = event.stage, time.monotonic()
        elapsed = time.monotonic() - self.start
        left = elapsed / event.done * (event.total - event.done) if event.done else math.nan
        eta = "" if math.isnan(left) else f", about {_duration(left)} left"
        click.echo(
            f"[{event.stage} {event.done}/{event.total}, {event.failures} failed solves"
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
@click.argument("spec_file", required=False, type=click.Path(dir_okay=False, path_type=Path))
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
@click.option("--quiet", is_flag=True, help="Do not print progress.")
def build_cmd(
    spec_file: Path | None,
    out_dir: Path,
    targets: tuple[str, ...],
    jobs: int,
    demo: str,
    scheduler: str | None,
    quiet: bool,
) -> None:
    """Build the cook table of SPEC_FILE (default: the built-in demo) and emit it."""
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
    except (EmitError, ManifestError) as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    click.echo(summary(manifest(table)))
    write_atomically(out_dir, files)
    for name in sorted(files):
        click.echo(f"wrote {out_dir / name}")
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


if __name__ == "__main__":  # pragma: no cover
    main()
