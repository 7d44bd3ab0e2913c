"""Jinja2 templates of the emitted files (shipped as package data)."""
