"""``obvert check``: a hand-made cook program judged on the reference model.

The spec is tests/cli/small_spec.toml; the table compared with is the committed real build
of it, tests/golden/input/test_patty.json (no table is compiled here). The hand programs
are invented (a line of the invented Brinecliff kitchen).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from obvert import CAUTION
from obvert.certify.node import judge_all
from obvert.cli import main
from obvert.problem import problem_of
from obvert.review import ReviewError, check_program, parse_program
from obvert.spec import load_spec

HERE = Path(__file__).parent
SPEC = HERE / "small_spec.toml"
TABLE = HERE.parent / "golden" / "input" / "test_patty.json"

#: The table's own schedule at 10 mm, -18 degC with done cut from 186.6 s to 160 s.
SHORT = """
[program]
name = "brinecliff line 2, hand-timed"

[[band]]
thickness = ["6 mm", "10 mm"]
start_temperature = ["-18 degC", "4 degC"]
events = [
  { kind = "flip", at_s = 53.0 },
  { kind = "flip", at_s = 138.7 },
  { kind = "done", at_s = 160.0 },
]
"""


def test_a_short_hand_program_is_caught_and_the_extension_makes_it_pass() -> None:
    spec = load_spec(SPEC)
    prog = parse_program(SHORT, spec.appliance.tick_s)
    (c,) = check_program(spec, prog)
    assert not c.safe and not c.reference_passed and c.margin_log < 0
    assert c.corner == (0.010, -18.0)
    assert c.extension_s is not None and c.extension_s > 0
    # the suggested done time passes on the reference at the worst corner (every scenario) ...
    cases = problem_of(spec).cases_at(*c.corner)
    fixed = prog.bands[0].schedule.with_done(160.0 + c.extension_s)
    verdict = judge_all(cases, fixed)
    assert verdict.passed
    assert verdict.min_log_reduction - 7.0 >= c.required_margin_log
    # ... and it is the shortest: one tick less fails the certified margin
    shorter = judge_all(cases, fixed.with_done(fixed.done_s - spec.appliance.tick_s))
    assert shorter.min_log_reduction - 7.0 < c.required_margin_log


def test_check_cli_fails_the_short_band_and_compares_with_the_table(tmp_path: Path) -> None:
    prog = tmp_path / "line2.toml"
    ok_band = SHORT.split("[[band]]")[1].replace("160.0", "186.6")
    prog.write_text(SHORT + "\n[[band]]" + ok_band)
    args = ["check", str(prog), "--spec", str(SPEC), "--table", str(TABLE)]
    res = CliRunner().invoke(main, args)
    assert res.exit_code == 1, res.output
    out = res.stdout
    assert "band 0" in out and "FAIL" in out and "extend done by 26.6 s (to 186.6 s)" in out
    # the table was certified with the same spec's budget: its node schedule passes as is
    assert "  PASS" in out.split("band 1")[1]
    assert "the certified table runs done at 186.6 s" in out
    assert "1 band(s) unsafe" in out and f"caution: {CAUTION}" in out


def test_a_safe_program_exits_0(tmp_path: Path) -> None:
    prog = tmp_path / "ok.toml"
    prog.write_text(SHORT.replace("160.0", "190.0"))
    res = CliRunner().invoke(main, ["check", str(prog), "--spec", str(SPEC)])
    assert res.exit_code == 0, res.output
    assert "every band is safe" in res.stdout


@pytest.mark.parametrize(
    ("edit", "named"),
    [
        (('"10 mm"]', '"10 kg"]'), "band[0].thickness[1]"),
        (("at_s = 160.0", "at_s = 160.05"), "band[0].events[2].at_s"),
        (('kind = "done"', 'kind = "serve"'), "band[0].events[2].kind"),
        (('["6 mm", "10 mm"]', '["10 mm", "6 mm"]'), "band[0].thickness"),
        (("[program]", "[programme]"), "programme"),
    ],
)
def test_bad_program_names_the_field(edit: tuple[str, str], named: str) -> None:
    with pytest.raises(ReviewError, match=named.replace("[", r"\[").replace("]", r"\]")):
        parse_program(SHORT.replace(*edit), 0.1, "p.toml")


def test_bad_file_exits_2_naming_it(tmp_path: Path) -> None:
    bad = tmp_path / "garbled.toml"
    bad.write_text("[[band]\n")
    res = CliRunner().invoke(main, ["check", str(bad), "--spec", str(SPEC)])
    assert res.exit_code == 2 and "garbled.toml" in res.stderr and "not TOML" in res.stderr
    assert "Traceback" not in res.output
    res = CliRunner().invoke(main, ["check", str(tmp_path / "none.toml"), "--spec", str(SPEC)])
    assert res.exit_code == 2 and "none.toml" in res.stderr


def test_check_help() -> None:
    res = CliRunner().invoke(main, ["check", "--help"])
    assert res.exit_code == 0 and "--spec" in res.stdout and "--table" in res.stdout


def test_the_example_in_docs_review_md_reads_and_passes() -> None:
    doc = (HERE.parents[1] / "docs" / "review.md").read_text("utf-8")
    example = doc.split("```toml\n")[1].split("```")[0]
    spec = load_spec(SPEC)
    prog = parse_program(example, spec.appliance.tick_s, "docs/review.md")
    assert prog.name == "brinecliff line 2" and len(prog.bands) == 1
    assert [e.kind for e in prog.bands[0].schedule.events] == ["flip", "flip", "done"]
    (c,) = check_program(spec, prog)
    assert c.safe and c.extension_s == 0.0


def test_a_band_is_judged_under_the_tolerance_scenarios() -> None:
    """Under declared tolerances the worst scenario binds: the extension it needs passes there,
    and the nominal conditions alone pass it with room to spare."""
    spec = load_spec(HERE / "tolerance_spec.toml")
    prog = parse_program(SHORT, spec.appliance.tick_s)
    (c,) = check_program(spec, prog)
    assert c.scenario == "worst" and c.corner == (0.010, -18.0)
    assert not c.safe and c.extension_s is not None and c.extension_s > 0
    problem = problem_of(spec)
    fixed = prog.bands[0].schedule.with_done(160.0 + c.extension_s)
    assert judge_all(problem.cases_at(*c.corner), fixed).passed
    nominal = problem.case(problem.nominal, *c.corner)
    assert judge_all((nominal,), fixed).min_log_reduction > 7.0 + c.required_margin_log


def test_a_band_no_extension_can_save_is_said_so(tmp_path: Path) -> None:
    """Flips timed for 10 mm on a 12 mm band: done alone cannot rescue it (still short of the
    target at twice the done time), and the output says so."""
    prog = tmp_path / "thick.toml"
    prog.write_text(SHORT.replace('"10 mm"', '"12 mm"'))
    res = CliRunner().invoke(
        main, ["check", str(prog), "--spec", str(HERE / "tolerance_spec.toml")]
    )
    assert res.exit_code == 1, res.output
    assert "FAIL" in res.stdout
    assert "no extension of done up to twice its time makes this band safe" in res.stdout
