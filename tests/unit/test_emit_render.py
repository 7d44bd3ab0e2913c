"""emit(): manifest checks, target limits, strict templates and the number filters.

Outside references: IEEE 754-2019 binary32 (numpy.float32) for the float literals; ISO/IEC
9899:1999 section 6.4.4.2 (floating constants) and 6.4.9 (comments) for what a literal and
a comment may contain. Compile-and-run checks of the header are in tests/c.
"""

from __future__ import annotations

import copy
import importlib.util
import json
import re
from pathlib import Path

import jinja2
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from obvert.emitter import EmitError, TargetProfile, emit, load_target
from obvert.emitter.filters import c_comment, c_float, c_int, c_string, c_uint, num
from obvert.emitter.profile import OutputSpec
from obvert.emitter.render import environment, render_template
from obvert.firmware import ManifestError

_SPEC = importlib.util.spec_from_file_location(
    "obvert_tests_manifest_unit", Path(__file__).resolve().parents[1] / "conftest_manifest.py"
)
_MOD = importlib.util.module_from_spec(_SPEC)
_SPEC.loader.exec_module(_MOD)
C99 = load_target("c99")
HEADER = "synthetic_grill.h"


def manifest():
    return _MOD.synthetic_manifest()


def c_target(**changes) -> TargetProfile:
    fields = {
        "name": "t",
        "description": "test",
        "outputs": (OutputSpec("{prefix}.h", "c/table.h.j2"),),
    }
    fields.update(changes)
    return TargetProfile(**fields)


def _broken(path: str, value):
    """Synthetic manifest with the field at ``path`` (dots, [n]) set or deleted."""
    m = manifest()
    parts = re.findall(r"[^.\[\]]+", path)
    obj = m
    for p in parts[:-1]:
        obj = obj[int(p)] if isinstance(obj, list) else obj[p]
    last = int(parts[-1]) if isinstance(obj, list) else parts[-1]
    if value is KeyError:
        del obj[last]
    else:
        obj[last] = value
    return m


@pytest.mark.parametrize(
    ("path", "value", "pattern"),
    [
        ("tick_s", KeyError, r"tick_s is missing"),
        ("tick_s", 0.0, r"tick_s = 0.0: expected a number > 0"),
        ("format_version", 3, r"format_version = 3: supported \[2\]"),
        ("format_version", 1, r"format_version = 1: an older format.*upgrade_manifest"),
        ("nodes.4.margin_log", -0.002, r"nodes\[4\].margin_log = -0.002: not certified"),
        ("nodes.4.min_log_reduction", 6.9, r"nodes\[4\].min_log_reduction = 6.9: not certified"),
        ("nodes.2.margin_log", KeyError, r"nodes\[2\].margin_log = None: missing: every node"),
        ("nodes.2.extension_s", -1.0, r"nodes\[2\].extension_s = -1.0: expected >= 0 s"),
        ("nodes.0.margin_log", 0.05, r"nodes\[0\].margin_log = 0.05: .* required margin 0.06"),
        ("table.name", "Grill-A", r"table.name = 'Grill-A'"),
        ("spec_hash", "abc", r"spec_hash = 'abc'"),
        ("axes.thickness_m", [0.009, 0.006, 0.012, 0.015], r"axes.thickness_m\[0\] and \[1\]"),
        ("nodes.3.i", 0, r"nodes\[3\].i = 0: node order is i-major: expected 1"),
        ("nodes.3.thickness_m", 0.0091, r"nodes\[3\].thickness_m = 0.0091"),
        ("nodes.0.events.2.kind", "flip", r"nodes\[0\].events\[2\].kind = 'flip'"),
        ("nodes.0.events.0.kind", "sear", r"nodes\[0\].events\[0\].kind = 'sear'"),
        ("nodes.0.events.0.at_ticks", 9999, r"nodes\[0\].events\[0\].at_ticks = 9999: is"),
        ("nodes.0.events.1.at_ticks", -1, r"at_ticks = -1: expected an integer >= 0"),
        ("nodes.0.margin_log", float("nan"), r"nodes\[0\].margin_log = nan"),
        ("max_events", 5, r"max_events = 5: the longest node has 4 events"),
        ("event_kinds.flip", 0, r"event_kinds.flip = 0: expected a code 0..255 used once"),
        ("lookup_rule.name", "nearest", r"lookup_rule.name = 'nearest'"),
        ("safety.organism", KeyError, r"safety.organism is missing"),
        ("nodes", [], r"nodes = 0: expected a list of 4 \* 3 = 12 nodes"),
        ("summary.extra", float("inf"), r"not canonical JSON: \$\.summary\.extra = inf"),
        ("summary.extra", np.float64(1.0), r"\$\.summary\.extra .* float64"),
    ],
)
def test_bad_manifest_names_field_and_value(path, value, pattern):
    with pytest.raises(ManifestError, match=pattern):
        emit(_broken(path, value), C99)


def test_extra_fields_are_tolerated_and_kept_in_json():
    m = manifest()
    plain = emit(m, C99)[HEADER]
    m2 = copy.deepcopy(m)
    m2["new_top"] = {"x": 1}
    m2["nodes"][0]["new_field"] = 3.5
    m2["nodes"][0]["events"][0]["note"] = "x"
    files = emit(m2, load_target("json"))
    assert json.loads(files["synthetic_grill.json"])["nodes"][0]["new_field"] == 3.5
    # The header changes only in its manifest hash line and the table id taken from it.
    diff = [
        (a, b)
        for a, b in zip(plain.splitlines(), emit(m2, C99)[HEADER].splitlines(), strict=True)
        if a != b
    ]
    assert len(diff) == 2 and diff[0][0].startswith(b" * Manifest sha256:")
    assert diff[1][0].startswith(b"#define SYNTHETIC_GRILL_TABLE_ID 0x")


def test_tick_must_be_whole_microseconds_for_c_only():
    m = _broken("tick_s", 2.5e-7)
    for node in m["nodes"]:
        for e in node["events"]:
            e["at_s"] = e["at_ticks"] * 2.5e-7
    with pytest.raises(EmitError, match=r"tick_s = 2.5e-07: a C target needs a whole number"):
        emit(m, C99)
    assert emit(m, load_target("json"))  # JSON has no tick unit to honour


def test_target_tick_must_match():
    with pytest.raises(EmitError, match=r"tick_s = 0.1 differs from the target's tick_s = 0.01"):
        emit(manifest(), c_target(tick_s=0.01))
    assert emit(manifest(), c_target(tick_s=0.1))


def test_time_type_limits():
    header = emit(manifest(), c_target(time_type="uint16_t"))["synthetic_grill.h"]
    assert b"static const uint16_t synthetic_grill_event_ticks[]" in header
    m = manifest()
    last = m["nodes"][5]["events"][-1]
    last["at_ticks"], last["at_s"] = 70000, 7000.0
    with pytest.raises(
        EmitError, match=r"nodes\[5\].events\[-1\].at_ticks = 70000: exceeds uint16"
    ):
        emit(m, c_target(time_type="uint16_t"))


def test_flash_budget_is_checked_in_python():
    # 4*(4+3) axes + 12 nodes * (1 + 4*(1+4) + 4) bytes = 328 bytes
    assert emit(manifest(), c_target(flash_budget_bytes=328))
    with pytest.raises(EmitError, match=r"needs 328 bytes .* flash_budget_bytes = 327"):
        emit(manifest(), c_target(flash_budget_bytes=327))


def test_symbol_prefix_renames_everything():
    files = emit(manifest(), c_target(symbol_prefix="grill_b"))
    text = files["grill_b.h"].decode()
    assert "#ifndef OBVERT_GRILL_B_H" in text
    assert "static inline int grill_b_lookup(float thickness_mm, float start_temp_c," in text
    code = re.sub(r"/\*.*?\*/", "", text, flags=re.S)
    assert "synthetic_grill" not in code.lower()


def test_fixed_target_has_no_floating_point():
    files = emit(manifest(), load_target("c99_fixed"))
    assert sorted(files) == ["synthetic_grill.c", HEADER]
    for text in (data.decode() for data in files.values()):
        assert not re.search(r"\b(float|double)\b", text)
    assert (
        "int synthetic_grill_lookup(int32_t thickness_um, int32_t start_temp_cc, "
        "synthetic_grill_schedule_t *out);" in files[HEADER].decode()
    )


def test_table_id_and_header_name_reach_the_source():
    """The .c file includes the header by its output file name and checks its table id."""
    target = c_target(
        layout="split",
        outputs=(OutputSpec("{prefix}_tab.h", "c/table.h.j2"), OutputSpec("x.c", "c/table.c.j2")),
        symbol_prefix="grill_b",
    )
    files = emit(manifest(), target)
    source, header = files["x.c"].decode(), files["grill_b_tab.h"].decode()
    assert '#include "grill_b_tab.h"\n' in source
    table_id = re.search(r"#define GRILL_B_TABLE_ID (0x[0-9A-F]{8}UL)\n", header).group(1)
    assert f"GRILL_B_TABLE_ID != {table_id}\n" in source
    sha = re.search(r"Manifest sha256: ([0-9a-f]{64})", header).group(1)
    assert int(table_id[2:10], 16) == int(sha[:8], 16)
    assert "static" not in header  # declarations only: the data and the lookup are in x.c


def test_strict_environment():
    env = environment()
    with pytest.raises(EmitError, match="printed 1.5 .* directly"):
        env.from_string("{{ 1.5 }}").render()
    with pytest.raises(jinja2.UndefinedError):
        env.from_string("{{ missing }}").render()
    assert env.from_string("{{ 1.5 | num }}").render() == "1.5"
    with pytest.raises(EmitError, match="template 'c/none.h.j2' not found"):
        render_template("c/none.h.j2", {})


@settings(max_examples=500, deadline=None)
@given(st.floats(allow_nan=False, allow_infinity=False, width=32))
def test_float_literal_reads_back_exactly(x):
    text = c_float(x)
    assert re.fullmatch(r"-?[0-9]+\.[0-9]+(e[+-][0-9]+)?f|-?[0-9]\.[0-9]+e[+-][0-9]+f", text), text
    assert np.float32(text[:-1]).tobytes() == np.float32(x).tobytes()


def test_literal_filters():
    assert c_float(np.float32(0.1)) == "0.1f" and c_float(6.0) == "6.0f"
    assert c_float(-0.0) == "-0.0f"
    assert c_int(-(2**31)) == "(-2147483647 - 1)" and c_int(-63) == "-63"
    assert c_uint(100000, "UL") == "100000UL"
    for bad, fn in ((-1, c_uint), (2**31, c_int), (1.0, c_int), (float("inf"), c_float)):
        with pytest.raises((TypeError, ValueError)):
            fn(bad)
    assert c_comment("a */ b /* c ?? d\n e") == "a * / b / * c ? ? d  e"
    assert c_comment("caf\u00e9 \u2264 5") == "cafe ? 5"
    assert c_string('a"b\\c?') == '"a\\"b\\\\c\\077"'
    assert num(None) == "none" and num(0.1) == "0.1" and num(3) == "3"
