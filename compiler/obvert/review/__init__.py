"""Views of a manifest for people: the build summary, lookups shown, diffs, checks, reports."""

from obvert.review.check import (
    BandCheck,
    HandProgram,
    check_program,
    check_text,
    load_program,
    parse_program,
)
from obvert.review.diff import Diff, diff, diff_text
from obvert.review.report import SECTIONS, report_html
from obvert.review.show import Shown, show, show_text
from obvert.review.source import (
    ReviewError,
    check_spec_matches,
    measured_point,
    read_manifest,
    spec_of_manifest,
)
from obvert.review.summary import summary

__all__ = [
    "SECTIONS",
    "BandCheck",
    "HandProgram",
    "Diff",
    "ReviewError",
    "Shown",
    "check_program",
    "check_spec_matches",
    "check_text",
    "diff",
    "diff_text",
    "load_program",
    "measured_point",
    "parse_program",
    "read_manifest",
    "report_html",
    "show",
    "show_text",
    "spec_of_manifest",
    "summary",
]
