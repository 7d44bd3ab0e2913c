"""Command line: a thin layer that parses, calls the pure core, prints and writes files.

Exit status of ``obvert build``: 0 built; 2 bad input (nothing written); 1 a node could not
be planned or certified (nothing written).
"""

from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

import click

from obvert.about import CAUTION, __version__

DEMOS = ("clamshell", "griddle")


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
@click.option("--quiet", is_flag=True, help="Do not print progress.")
def build_cmd(
    spec_file: Path | None,
    out_dir: Path,
    targets: tuple[str, ...],
    jobs: int,
    demo: str,
    quiet: bool,
) -> None:
    """Build the cook table of SPEC_FILE (default: the built-in demo) and emit it."""
    from obvert.api import compile_table, demo_spec, emit
    from obvert.emitter import EmitError, ProfileError, load_target
    from obvert.firmware import ManifestError
    from obvert.review.summary import summary
    from obvert.spec import SpecError, load_spec
    from obvert.table import BuildError, CellCertificationError, manifest

    try:
        spec = load_spec(spec_file) if spec_file is not None else demo_spec(demo)
        profiles = [load_target(t) for t in (targets or spec.targets)]
    except (SpecError, ProfileError) as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    if spec_file is None and not quiet:
        click.echo(
            f"no spec given: building the built-in {demo} demo (invented product and appliance)",
            err=True,
        )
    progress = None if quiet else (lambda msg: click.echo(msg, err=True))
    try:
        table = compile_table(spec, profiles, progress=progress, jobs=jobs)
    except (BuildError, CellCertificationError) as exc:
        click.echo(f"error: {exc}", err=True)
        click.echo("nothing was written", err=True)
        sys.exit(1)
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


if __name__ == "__main__":  # pragma: no cover
    main()
