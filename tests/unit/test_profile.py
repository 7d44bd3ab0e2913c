"""Target profiles: built-ins load, unknown keys and bad values are named in the error."""

from __future__ import annotations

import dataclasses

import pytest

from obvert.emitter import OutputSpec, ProfileError, TargetProfile, load_target, loads_target
from obvert.emitter.profile import builtin_targets

GOOD = """
name = "demo"
description = "a test target"
number_format = "float"
time_type = "uint16_t"
flash_budget_bytes = 4096
symbol_prefix = "grill_a"
tick_s = 0.05

[[outputs]]
filename = "{prefix}_table.h"
template = "c/table.h.j2"

[[outputs]]
filename = "{table}.json"
serializer = "canonical_json"
"""


def test_builtins_load():
    assert {"c99", "c99_fixed", "json"} <= set(builtin_targets())
    c99 = load_target("c99")
    assert c99.number_format == "float" and c99.time_type == "uint32_t"
    assert c99.outputs == (
        OutputSpec(filename="{table}.h", template="c/table.h.j2"),
        OutputSpec(filename="{table}.c", template="c/table.c.j2"),
    )
    assert c99.layout == "split"
    assert c99.source == "builtin:c99"
    assert load_target("c99_fixed").number_format == "fixed"
    assert load_target("json").outputs[0].serializer == "canonical_json"


def test_full_profile_parses_every_key():
    p = loads_target(GOOD, "demo.toml")
    assert p == TargetProfile(
        name="demo",
        description="a test target",
        outputs=(
            OutputSpec("{prefix}_table.h", template="c/table.h.j2"),
            OutputSpec("{table}.json", serializer="canonical_json"),
        ),
        number_format="float",
        time_type="uint16_t",
        flash_budget_bytes=4096,
        symbol_prefix="grill_a",
        tick_s=0.05,
        source="demo.toml",
    )
    assert p.prefix_for("harbour_12") == "grill_a"
    assert load_target("c99").prefix_for("harbour_12") == "harbour_12"


SPLIT = """
name = "pair"
description = "data once in a .c file"
layout = "split"

[[outputs]]
filename = "{prefix}.h"
template = "c/table.h.j2"

[[outputs]]
filename = "{prefix}.c"
template = "c/table.c.j2"
"""


def test_layout_key():
    assert loads_target(GOOD, "demo.toml").layout == "header_only"  # the default
    assert loads_target(SPLIT, "pair.toml").layout == "split"
    with pytest.raises(ProfileError, match=r"p\.toml: layout = 'inline': allowed"):
        loads_target(SPLIT.replace('"split"', '"inline"'), "p.toml")


@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        ('template = "c/table.c.j2"', 'template = "c/table.h.j2"', r"found 2 and 0"),
        ('filename = "{prefix}.c"\ntemplate = "c/table.c.j2"\n', 'filename = "{prefix}.json"\n'
         'serializer = "canonical_json"\n', r"layout = 'split' needs exactly one .* found 1 and 0"),
        ('layout = "split"', 'layout = "header_only"', r"layout = 'header_only' allows .* 1 and 1"),
    ],
)  # fmt: skip
def test_layout_needs_its_outputs(old, new, pattern):
    assert old in SPLIT
    with pytest.raises(ProfileError, match=pattern):
        loads_target(SPLIT.replace(old, new), "pair.toml")


def test_profile_is_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        load_target("c99").name = "other"


def test_load_from_path(tmp_path):
    path = tmp_path / "mine.toml"
    path.write_text(GOOD)
    assert load_target(path).source == str(path)
    assert load_target(str(path)).name == "demo"


def test_unknown_top_level_key_names_key_and_file(tmp_path):
    path = tmp_path / "typo.toml"
    path.write_text(GOOD.replace("time_type", "time_typ"))
    with pytest.raises(ProfileError, match=r"typo\.toml: unknown key 'time_typ'"):
        load_target(path)


def test_unknown_output_key_names_key_and_file():
    text = GOOD.replace('template = "c/table.h.j2"', 'templat = "c/table.h.j2"')
    with pytest.raises(ProfileError, match=r"x\.toml: unknown key in outputs\[0\]: 'templat'"):
        loads_target(text, "x.toml")


@pytest.mark.parametrize(
    ("old", "new", "pattern"),
    [
        ('number_format = "float"', 'number_format = "double"', r"number_format = 'double'"),
        ('time_type = "uint16_t"', 'time_type = "uint64_t"', r"time_type = 'uint64_t'"),
        ("flash_budget_bytes = 4096", "flash_budget_bytes = 0", r"flash_budget_bytes = 0"),
        ("flash_budget_bytes = 4096", "flash_budget_bytes = true", r"flash_budget_bytes = True"),
        ('symbol_prefix = "grill_a"', 'symbol_prefix = "Grill-A"', r"symbol_prefix = 'Grill-A'"),
        ("tick_s = 0.05", "tick_s = -1.0", r"tick_s = -1.0"),
        ('name = "demo"', 'name = "9demo"', r"name = '9demo'"),
        ('"{prefix}_table.h"', '"{board}.h"', r"unknown placeholder \{board\}"),
        ('"{prefix}_table.h"', '"../{table}.h"', r"plain file name"),
        ('"{table}.json"', '"{prefix}_table.h"', r"outputs.filename repeated"),
        ('template = "c/table.h.j2"', 'template = "c/table.h"', r"outputs.template"),
        ('serializer = "canonical_json"', 'serializer = "yaml"', r"serializer = 'yaml'"),
    ],
)
def test_bad_values_are_named(old, new, pattern):
    assert old in GOOD
    with pytest.raises(ProfileError, match=pattern):
        loads_target(GOOD.replace(old, new, 1), "bad.toml")


def test_template_and_serializer_are_exclusive():
    both = GOOD.replace('template = "c/table.h.j2"', 'template = "c/table.h.j2"\nserializer = "x"')
    with pytest.raises(ProfileError, match="exactly one of 'template' or 'serializer'"):
        loads_target(both)
    neither = GOOD.replace('template = "c/table.h.j2"', "")
    with pytest.raises(ProfileError, match="exactly one"):
        loads_target(neither)


def test_missing_required_key():
    with pytest.raises(ProfileError, match="required key 'description' is missing"):
        loads_target(GOOD.replace('description = "a test target"', ""), "m.toml")


def test_invalid_toml_is_reported_with_source():
    with pytest.raises(ProfileError, match=r"broken\.toml: not valid TOML"):
        loads_target("name = ", "broken.toml")


def test_unknown_builtin_lists_the_builtins():
    with pytest.raises(ProfileError, match=r"no such built-in target; built-ins: .*c99"):
        load_target("avr8")


def test_missing_file():
    with pytest.raises(ProfileError, match="does not exist"):
        load_target("/nonexistent/target.toml")
