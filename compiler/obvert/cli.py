"""Command line: a thin layer that parses, calls the pure core, prints and writes files.

Exit status of ``obvert build``: 0 built; 2 bad input (nothing written); 1 a node could not
be planned or certified (nothing written).
"""

from __future__ import annotations

import os
import sys
import tempfile
from importlib import resources
from pathlib import Path

import click

from obvert import CAUTION, __version__
from obvert.emit import EmitError, ProfileError, emit, load_target
from obvert.spec import SpecError, load_spec, loads_spec
from obvert.summary import summary
from obvert.table.build import BuildError
from obvert.table.compile import CellCertificationError, compile_table
from obvert.table.manifest import manifest

DEMOS = {"griddle": "griddle_patty.toml", "clamshell": "clamshell_patty.toml"}


def _demo_spec_text(name: str) -> str:
    return resources.files("obvert.demo").joinpath(DEMOS[name]).read_text("utf-8")


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
    type=click.Choice(sorted(DEMOS)),
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
    try:
        spec = (
            load_spec(spec_file)
            if spec_file is not None
            else loads_spec(_demo_spec_text(demo), f"<demo {demo}>")
        )
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
    rules = sorted({"corner", *(p.lookup for p in profiles)})
    try:
        table = compile_table(spec, rules, progress, jobs=jobs)
    except (BuildError, CellCertificationError) as exc:
        click.echo(f"error: {exc}", err=True)
        click.echo("nothing was written", err=True)
        sys.exit(1)
    m = manifest(table)
    files: dict[str, bytes] = {}
    try:
        for prof in profiles:
            for name, data in emit(m, prof).items():
                if name in files and files[name] != data:
                    raise EmitError(f"two targets write different contents to {name!r}")
                files[name] = data
    except EmitError as exc:
        click.echo(f"error: {exc}", err=True)
        sys.exit(2)
    click.echo(summary(m))
    write_atomically(out_dir, files)
    for name in sorted(files):
        click.echo(f"wrote {out_dir / name}")
    click.echo(f"caution: {CAUTION}")


if __name__ == "__main__":  # pragma: no cover
    main()
