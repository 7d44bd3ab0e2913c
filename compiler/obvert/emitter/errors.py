"""Errors of the emit layer."""


class EmitError(ValueError):
    """A checked manifest cannot be rendered for a target (a value out of its range, a clash)."""
