"""Benchmark: code and data size of the generated C on a Cortex-M0 class target.

Usage: ``python tests/bench/firmware_size.py [--cc arm-none-eabi-gcc] [--opt=-Os]``

Compiles, to object files only (no linking), with ``-mcpu=cortex-m0 -mthumb -ffreestanding``
and ``-std=c99 -Wall -Wextra -Werror -pedantic``:

* the catalogue of the two real small products in tests/golden/input (``test_patty``, 2 x 2
  nodes, and ``test_slider``, 2 x 1 nodes): the bundle loader, the catalogue lookup and the
  compiled-in bundle (``test_menu.c``);
* the bundle loader alone (target ``c99_bundle_loader``: code, no data);
* the plain integer-only table of one product (target ``c99_fixed``: its lookup and data),
  and the same with bilinear interpolation (``c99_fixed_bilinear``);

and prints ``.text``, ``.rodata``, ``.data`` and ``.bss`` of each object (from
``arm-none-eabi-size -A``; sections of one kind summed, e.g. ``.rodata.str1.1``). Exits 0
with a message, printing no figures, when the tool chain is missing (Debian:
``apt-get install gcc-arm-none-eabi``). Figures of a run are recorded in docs/bundle.md,
"Size on a Cortex-M0 class target".
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path

import obvert
from obvert.emitter import emit, load_target

INPUT = Path(__file__).resolve().parents[1] / "golden" / "input"
PRODUCTS = ("test_patty", "test_slider")
TARGET_FLAGS = ("-mcpu=cortex-m0", "-mthumb", "-ffreestanding")
WARNINGS = ("-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic")
KINDS = (".text", ".rodata", ".data", ".bss")


@dataclass(frozen=True)
class ObjectSize:
    """Section sizes of one compiled object file, bytes."""

    #: What was compiled (a name for the table).
    label: str
    #: The C file compiled.
    source: str
    #: Bytes of code (``.text*``).
    text: int
    #: Bytes of read-only data (``.rodata*``), in flash.
    rodata: int
    #: Bytes of initialised data (``.data*``), in flash and RAM.
    data: int
    #: Bytes of zero-initialised data (``.bss*``), in RAM.
    bss: int


def manifests() -> list[dict]:
    """The stored real manifests of the two small products."""
    return [json.loads((INPUT / f"{p}.json").read_text(encoding="utf-8")) for p in PRODUCTS]


def sources() -> dict[str, tuple[str, dict[str, bytes]]]:
    """What to compile: label -> (the .c file to compile, every file it needs)."""
    ms = manifests()
    first = ms[0]
    out = {
        "catalogue (2 products, 6 nodes)": (
            "test_menu.c",
            obvert.emit_catalogue("test_menu", ms, table_version=1),
        ),
        "bundle loader alone": (
            "test_patty_bundle.c",
            emit(first, load_target("c99_bundle_loader")),
        ),
        "c99_fixed table (4 nodes)": ("test_patty.c", emit(first, load_target("c99_fixed"))),
        "c99_fixed_bilinear table (4 nodes)": (
            "test_patty.c",
            emit(first, load_target("c99_fixed_bilinear")),
        ),
    }
    return out


def version(cc: str) -> str:
    """First line of ``cc --version``."""
    proc = subprocess.run([cc, "--version"], capture_output=True, text=True, check=True)
    return proc.stdout.splitlines()[0].strip()


def section_sizes(size_tool: str, obj: Path) -> dict[str, int]:
    """Bytes per section kind of ``obj`` (``.text``, ``.rodata``, ``.data``, ``.bss``)."""
    proc = subprocess.run([size_tool, "-A", str(obj)], capture_output=True, text=True, check=True)
    sums = dict.fromkeys(KINDS, 0)
    for line in proc.stdout.splitlines():
        parts = line.split()
        if len(parts) < 2 or not parts[1].isdigit():
            continue
        for kind in KINDS:
            if parts[0] == kind or parts[0].startswith(kind + "."):
                sums[kind] += int(parts[1])
    return sums


def measure(cc: str = "arm-none-eabi-gcc", opt: str = "-Os") -> list[ObjectSize]:
    """Compile every source for Cortex-M0 and return its section sizes.

    Raises
    ------
    RuntimeError
        A source does not compile without warnings (the compiler's messages attached).
    """
    size_tool = cc.replace("gcc", "size")
    out = []
    with tempfile.TemporaryDirectory(prefix="obvert-size-") as tmp:
        for k, (label, (source, files)) in enumerate(sources().items()):
            folder = Path(tmp) / str(k)
            folder.mkdir()
            for name, data in files.items():
                (folder / name).write_bytes(data)
            obj = folder / "unit.o"
            cmd = [cc, *WARNINGS, *TARGET_FLAGS, opt, "-c", str(folder / source), "-o", str(obj)]
            proc = subprocess.run(cmd, capture_output=True, text=True)
            if proc.returncode != 0 or proc.stderr.strip():
                raise RuntimeError(f"{label}: {' '.join(cmd)} failed:\n{proc.stderr}")
            s = section_sizes(size_tool, obj)
            out.append(ObjectSize(label, source, s[".text"], s[".rodata"], s[".data"], s[".bss"]))
    return out


def table(rows: list[ObjectSize]) -> str:
    """The figures as a Markdown table."""
    lines = [
        "| object | file | .text | .rodata | .data | .bss |",
        "|---|---|---:|---:|---:|---:|",
    ]
    for r in rows:
        lines.append(f"| {r.label} | {r.source} | {r.text} | {r.rodata} | {r.data} | {r.bss} |")
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    """Print the size table, or why it cannot be measured here."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cc", default="arm-none-eabi-gcc", help="bare-metal Arm C compiler")
    parser.add_argument("--opt", default="-Os", help="optimisation flag (default -Os)")
    args = parser.parse_args(argv)
    if not shutil.which(args.cc) or not shutil.which(args.cc.replace("gcc", "size")):
        print(
            f"skipped: {args.cc} (and its size tool) not found; on Debian or Ubuntu: "
            "apt-get install gcc-arm-none-eabi"
        )
        return 0
    print(f"compiler: {version(args.cc)}")
    print(f"flags: {' '.join((*WARNINGS, *TARGET_FLAGS, args.opt))} -c (objects, not linked)")
    print(table(measure(args.cc, args.opt)))
    return 0


if __name__ == "__main__":
    sys.exit(main())
