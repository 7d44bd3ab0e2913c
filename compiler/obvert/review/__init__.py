"""Views of a manifest for people: the build summary (later: diffs, reports, checks)."""

from obvert.review.summary import summary

__all__ = ["summary"]
