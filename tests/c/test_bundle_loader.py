"""The C reference loader of bundles (target ``c99_bundle_loader``) against the Python side.

Outside references: the C compilers at -std=c99 -Wall -Wextra -Werror -pedantic (ISO/IEC
9899:1999), 32-bit ARM under qemu, cppcheck and ``gcc -fanalyzer``; the CRC-32 check value
0xCBF43926 of "123456789" (the CRC catalogue's CRC-32/ISO-HDLC entry) and Python's
``zlib.crc32``; the lookup answers of ``obvert.firmware.lookup.lookup_fixed`` (the fixed-point
corner rule, itself tested bit-exact against the ``c99_fixed`` target's C).

The bundle is built from the real manifest in ``tests/golden/input`` (the small test spec
through the real pipeline), so no table is compiled here.
"""

from __future__ import annotations

import json
import random
import re
import shutil
import struct
import subprocess
import zlib
from pathlib import Path

import pytest

from obvert.emitter import emit, load_target
from obvert.emitter.bundle import bundle_bytes
from obvert.firmware.bundle import (
    SIGNATURE_BYTES,
    BundleError,
    BundleStatus,
    name_id,
    parse_bundle,
)
from obvert.firmware.lookup import lookup_fixed

from .conftest import Toolchain, build_program
from .manifests import cells_manifest

REAL = Path(__file__).resolve().parents[1] / "golden" / "input" / "test_patty.json"
# RFC 8032 section 7.1, test 1: secret key (a public test key, used only to sign test bundles).
TEST_SEED = bytes.fromhex("9d61b19deffd5a60ba844af492ec2cc44449c5697b326919703bac031cae7f60")
VERSION = 5

MAIN = r"""
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "test_patty_bundle.h"

static uint8_t buf[1 << 16];
static uint8_t work[1 << 16];

static int hex_value(int c)
{
    if (c >= '0' && c <= '9') { return c - '0'; }
    if (c >= 'a' && c <= 'f') { return c - 'a' + 10; }
    return -1;
}

int main(int argc, char **argv)
{
    FILE *f;
    size_t size, n;
    uint32_t installed, model;
    static char line[1 << 17];
    if (argc < 5) { return 2; }
    installed = (uint32_t)strtoul(argv[3], NULL, 0);
    model = (uint32_t)strtoul(argv[4], NULL, 0);
    if (strcmp(argv[2], "crc") == 0) {
        printf("%08lx\n", (unsigned long)test_patty_bundle_crc32((const uint8_t *)argv[1],
                                                                 strlen(argv[1])));
        return 0;
    }
    f = fopen(argv[1], "rb");
    if (f == NULL) { return 3; }
    size = fread(buf, 1, sizeof buf, f);
    fclose(f);
    if (strcmp(argv[2], "check") == 0) {
        printf("%d\n", (int)test_patty_bundle_check(buf, size, installed, model));
    } else if (strcmp(argv[2], "flips") == 0) {
        for (n = 0; n < size * 8u; ++n) {
            memcpy(work, buf, size);
            work[n / 8u] ^= (uint8_t)(1u << (n % 8u));
            printf("%d\n", (int)test_patty_bundle_check(work, size, installed, model));
        }
    } else if (strcmp(argv[2], "truncs") == 0) {
        for (n = 0; n < size; ++n) {
            printf("%d\n", (int)test_patty_bundle_check(buf, n, installed, model));
        }
    } else if (strcmp(argv[2], "hexes") == 0) {
        while (fgets(line, sizeof line, stdin) != NULL) {
            size_t len = 0;
            while (hex_value(line[2 * len]) >= 0 && hex_value(line[2 * len + 1]) >= 0) {
                work[len] = (uint8_t)(hex_value(line[2 * len]) * 16 + hex_value(line[2 * len + 1]));
                ++len;
            }
            printf("%d\n", (int)test_patty_bundle_check(work, len, installed, model));
        }
    } else {
        test_patty_bundle_schedule_t out, sentinel;
        memset(&sentinel, 0xA5, sizeof sentinel);
        while (fgets(line, sizeof line, stdin) != NULL) {
            unsigned long pid;
            long long x, t;
            int status;
            unsigned k;
            if (sscanf(line, "%lu %lld %lld", &pid, &x, &t) != 3) { return 4; }
            memcpy(&out, &sentinel, sizeof out);
            status = test_patty_bundle_lookup(buf, size, (uint32_t)pid, (int32_t)x, (int32_t)t,
                                              &out);
            if (status != TEST_PATTY_BUNDLE_LOOKUP_OK) {
                printf("%d %d\n", status, memcmp(&out, &sentinel, sizeof out) == 0);
                continue;
            }
            printf("0 %lu %u %u %u %lu %ld", (unsigned long)out.node, (unsigned)out.i_thickness,
                   (unsigned)out.j_start_temp, (unsigned)out.n_events,
                   (unsigned long)out.cook_ticks, (long)out.margin_mlog);
            for (k = 0; k < out.n_events; ++k) {
                printf(" %u:%lu", (unsigned)out.kinds[k], (unsigned long)out.at_ticks[k]);
            }
            for (k = out.n_events; k < TEST_PATTY_BUNDLE_MAX_EVENTS; ++k) {
                if (out.kinds[k] != out.kinds[out.n_events - 1u] ||
                    out.at_ticks[k] != out.cook_ticks) {
                    printf(" bad-slot");
                }
            }
            printf("\n");
        }
    }
    return 0;
}
"""


def real_manifest() -> dict:
    return json.loads(REAL.read_text(encoding="utf-8"))


def test_private_pem() -> bytes:
    from cryptography.hazmat.primitives import serialization
    from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey

    key = Ed25519PrivateKey.from_private_bytes(TEST_SEED)
    return key.private_bytes(
        serialization.Encoding.PEM,
        serialization.PrivateFormat.PKCS8,
        serialization.NoEncryption(),
    )


test_private_pem.__test__ = False  # a helper, not a test


def _model(manifest: dict) -> int:
    return name_id(manifest["spec"]["appliance"]["name"])


def _status(data: bytes, installed: int = 0, model: int | None = None) -> int:
    """Python parser's status (the C loader's checks), OK when it parses."""
    try:
        parse_bundle(data, installed_table_version=installed, appliance_model=model)
    except BundleError as exc:
        return int(exc.status)
    return int(BundleStatus.OK)


@pytest.fixture(scope="module")
def bundles() -> dict[str, bytes]:
    m = real_manifest()
    return {
        "signed": bundle_bytes([m], table_version=VERSION, private_key_pem=test_private_pem()),
        "unsigned": bundle_bytes([m], table_version=VERSION),
    }


def _program(toolchain: Toolchain, folder: Path) -> Path:
    files = emit(real_manifest(), load_target("c99_bundle_loader"))
    proc, exe = build_program(toolchain, folder, files, MAIN)
    assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
    return exe


def _run(toolchain: Toolchain, exe: Path, args: list[str], stdin: str = "") -> list[str]:
    return toolchain.run(exe, args, stdin).split()


def test_c_crc32_is_the_standard_crc32(toolchain, tmp_path):
    """CRC-32/ISO-HDLC check value 0xCBF43926 of "123456789" (the CRC catalogue), and zlib."""
    exe = _program(toolchain, tmp_path)
    assert _run(toolchain, exe, ["123456789", "crc", "0", "0"]) == ["cbf43926"]
    assert zlib.crc32(b"123456789") == 0xCBF43926
    text = "field update of a cook table"
    assert _run(toolchain, exe, [text, "crc", "0", "0"]) == [f"{zlib.crc32(text.encode()):08x}"]


@pytest.mark.parametrize("kind", ["signed", "unsigned"])
def test_every_bit_flip_and_truncation_is_refused(toolchain, tmp_path, bundles, kind):
    """Exhaustive: each single-bit flip and each truncation is refused by the C loader, with
    the same status as the Python parser. A signed bundle's signature bytes are the device's
    crypto library's job (the loader does not read them; the Python verifier refuses those
    flips, tests/unit/test_bundle.py); an unsigned bundle's must be zero, so they count."""
    data = bundles[kind]
    model = _model(real_manifest())
    path = tmp_path / "table.bundle"
    path.write_bytes(data)
    exe = _program(toolchain, tmp_path)
    assert _run(toolchain, exe, [str(path), "check", "0", str(model)]) == ["0"]
    flips = [int(s) for s in _run(toolchain, exe, [str(path), "flips", "0", str(model)])]
    assert len(flips) == 8 * len(data)
    checked = 8 * (len(data) - SIGNATURE_BYTES) if kind == "signed" else 8 * len(data)
    accepted = [bit for bit in range(checked) if flips[bit] == 0]
    assert not accepted, f"bits accepted after a flip: {accepted[:10]}"
    if kind == "signed":
        assert set(flips[checked:]) == {0}, "the loader leaves the signature to the device"
    expect = []
    for bit in range(8 * len(data)):
        mutated = bytearray(data)
        mutated[bit // 8] ^= 1 << (bit % 8)
        expect.append(_status(bytes(mutated), 0, model))
    assert flips == expect
    truncs = [int(s) for s in _run(toolchain, exe, [str(path), "truncs", "0", str(model)])]
    assert truncs == [_status(data[:n], 0, model) for n in range(len(data))]
    assert set(truncs) == {int(BundleStatus.TOO_SHORT)}


def _recrc(data: bytearray) -> bytes:
    end = len(data) - 4 - SIGNATURE_BYTES
    data[end : end + 4] = struct.pack("<I", zlib.crc32(bytes(data[:end])))
    return bytes(data)


def test_refusals_each_have_their_status(host_cc, tmp_path, bundles):
    """Older and equal table versions, another model, bad magic, another format version, a
    trailing byte and a changed byte behind a recomputed CRC, each with its own status."""
    data = bundles["signed"]
    model = _model(real_manifest())
    exe = _program(host_cc, tmp_path)
    path = tmp_path / "table.bundle"
    path.write_bytes(data)

    def c_status(installed: int, appliance: int, blob: bytes = data) -> int:
        path.write_bytes(blob)
        return int(_run(host_cc, exe, [str(path), "check", str(installed), str(appliance)])[0])

    assert c_status(VERSION - 1, model) == BundleStatus.OK
    assert c_status(VERSION, model) == BundleStatus.NOT_NEWER
    assert c_status(VERSION + 1, model) == BundleStatus.NOT_NEWER
    assert c_status(0, model ^ 1) == BundleStatus.WRONG_MODEL
    assert c_status(0, model, b"OBVX" + data[4:]) == BundleStatus.BAD_MAGIC
    other = bytearray(data)
    other[4] = 2
    assert c_status(0, model, bytes(other)) == BundleStatus.UNSUPPORTED_VERSION
    assert c_status(0, model, data + b"\0") == BundleStatus.OUT_OF_RANGE
    tick = bytearray(data)
    tick[len(data) - 68 - 24] ^= 0x01  # the first event time of the last node
    changed = _recrc(tick)
    # The CRC matches again: the loader cannot tell (the signature can; tests/unit).
    assert c_status(0, model, changed) == BundleStatus.OK == _status(changed, 0, model)


def test_mutations_behind_a_valid_crc_get_the_python_status(host_cc, tmp_path, bundles):
    """Random byte changes with the CRC recomputed: the C loader's structural checks give the
    same status as the Python parser on every one (and never read outside the bundle: the
    loader is also compiled with -fsanitize=address,undefined where available)."""
    data = bundles["unsigned"]
    model = _model(real_manifest())
    rng = random.Random(13)
    blobs = []
    end = len(data) - 4 - SIGNATURE_BYTES
    for _ in range(3000):
        mutated = bytearray(data)
        for _ in range(rng.randint(1, 3)):
            mutated[rng.randrange(0, end)] = rng.randrange(256)
        blobs.append(_recrc(mutated))
    files = emit(real_manifest(), load_target("c99_bundle_loader"))
    extra: tuple[str, ...] = ()
    if host_cc.name in ("gcc", "clang"):
        probe = subprocess.run(
            [host_cc.cc, "-fsanitize=address,undefined", "-x", "c", "-", "-o", str(tmp_path / "p")],
            input="int main(void){return 0;}\n",
            capture_output=True,
            text=True,
            timeout=60,
        )
        if probe.returncode == 0:
            extra = ("-fsanitize=address,undefined", "-fno-sanitize-recover=all")
    proc, exe = build_program(host_cc, tmp_path, files, MAIN, extra)
    assert proc.returncode == 0, proc.stderr
    path = tmp_path / "table.bundle"
    path.write_bytes(data)
    stdin = "".join(b.hex() + "\n" for b in blobs)
    got = [int(s) for s in _run(host_cc, exe, [str(path), "hexes", "0", str(model)], stdin)]
    assert got == [_status(b, 0, model) for b in blobs]
    assert len(set(got)) >= 3, "the mutations reach several checks"


def _expected_line(manifest: dict, parsed_product, x: int, t: int) -> str:
    r = lookup_fixed(manifest, x, t, rule="corner")
    if r.status != 0:
        return f"{r.status} 1"
    n_t = len(manifest["axes"]["start_temp_c"])
    node = parsed_product.nodes[r.node]
    events = " ".join(f"{k}:{at}" for k, at in r.events)
    return (
        f"0 {r.node} {r.node // n_t} {r.node % n_t} {len(r.events)} {r.events[-1][1]} "
        f"{node.margin_mlog} {events}"
    )


def _queries(manifest: dict, rng: random.Random, n: int) -> list[tuple[int, int]]:
    from obvert.firmware.axes import start_temp_axis_cc, thickness_axis_um

    xs = [int(v) for v in thickness_axis_um(manifest)]
    ts = [int(v) for v in start_temp_axis_cc(manifest)]
    edges_x = sorted({v + d for v in xs for d in (-1, 0, 1)} | {-(2**31), 2**31 - 1, 0})
    edges_t = sorted({v + d for v in ts for d in (-1, 0, 1)} | {-(2**31), 2**31 - 1, 0})
    out = [(x, t) for x in edges_x for t in edges_t]
    while len(out) < n:
        out.append((rng.randint(xs[0] - 500, xs[-1] + 500), rng.randint(ts[0] - 300, ts[-1] + 300)))
    return out


def test_c_lookup_equals_python_lookup(toolchain, tmp_path):
    """Thousands of queries on a bundle of three products (the real table and two synthetic
    ones with platen events): the C answer equals lookup_fixed's on each product's manifest;
    an unknown product id is refused; *out is untouched on every refusal."""
    real = real_manifest()
    synth = [cells_manifest("prod_a"), cells_manifest("prod_b", (0.005, 0.008, 0.02))]
    for m in synth:
        m["spec"]["appliance"] = {"name": real["spec"]["appliance"]["name"]}
    manifests = [real, *synth]
    data = bundle_bytes(manifests, table_version=VERSION)
    parsed = {p.product_id: p for p in parse_bundle(data).products}
    path = tmp_path / "table.bundle"
    path.write_bytes(data)
    exe = _program(toolchain, tmp_path)
    rng = random.Random(2026)
    lines, expect = [], []
    for m in manifests:
        pid = name_id(m["table"]["name"])
        for x, t in _queries(m, rng, 1500):
            lines.append(f"{pid} {x} {t}")
            expect.append(_expected_line(m, parsed[pid], x, t))
    unknown = next(v for v in range(1, 10) if v not in parsed)
    lines.append(f"{unknown} 8000 0")
    expect.append("-7 1")
    got = toolchain.run(exe, [str(path), "lookup", "0", "0"], "\n".join(lines) + "\n")
    assert got.splitlines() == expect
    assert sum(e.startswith("0 ") for e in expect) > 1000


def test_cppcheck_and_gcc_analyzer_find_nothing(tmp_path):
    files = emit(real_manifest(), load_target("c99_bundle_loader"))
    for name, data in files.items():
        (tmp_path / name).write_bytes(data)
    source = str(tmp_path / "test_patty_bundle.c")
    ran = False
    if shutil.which("cppcheck"):
        cmd = ["cppcheck", "--std=c99", "--enable=warning,style,portability",
               "--error-exitcode=1", "-q", f"-I{tmp_path}", source]  # fmt: skip
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
        assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
        ran = True
    if shutil.which("gcc"):
        cmd = ["gcc", "-std=c99", "-fanalyzer", "-Wall", "-Wextra", "-c", source,
               "-o", str(tmp_path / "loader.o")]  # fmt: skip
        proc = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
        if "unrecognized command-line option" not in proc.stderr:
            assert proc.returncode == 0 and not proc.stderr.strip(), proc.stderr
            ran = True
    if not ran:
        pytest.skip("neither cppcheck nor gcc -fanalyzer available")


def test_loader_uses_no_float_and_no_heap():
    files = emit(real_manifest(), load_target("c99_bundle_loader"))
    text = b"".join(files.values()).decode()
    code = re.sub(r"/\*.*?\*/", " ", text, flags=re.DOTALL)
    for word in ("float", "double", "malloc", "calloc", "realloc", "free", "alloca"):
        assert not re.search(rf"\b{word}\b", code), word
    assert re.search(r"\bint32_t\b", code)
    assert "Ed25519" in text and "does NOT check the signature" in text
