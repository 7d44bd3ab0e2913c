"""Affine target corrections (obvert.plan.modifier): shapes, values, errors."""

from __future__ import annotations

import numpy as np
import pytest

from obvert.plan.modifier import Modifier


def test_shift_is_affine_in_the_dwells() -> None:
    """shift(d) = offset + slope @ (d - at): exact for any d (linear algebra)."""
    off = np.array([[0.01, -0.2], [0.03, 0.1]])
    slope = np.arange(12, dtype=float).reshape(2, 2, 3) * 1e-3
    at = np.array([30.0, 20.0, 10.0])
    mod = Modifier(off, slope, at)
    d = np.array([31.0, 19.5, 12.0])
    assert np.allclose(mod.shift(at), off, rtol=0.0, atol=1e-15)
    expected = off + np.einsum("kij,j->ki", slope, d - at)
    assert np.allclose(mod.shift(d), expected, rtol=0.0, atol=1e-15)


def test_parameters_are_offset_slope_rows_then_dwells() -> None:
    """The NLP reads [offset (2), slope row 0, slope row 1, at] per scenario."""
    slope = np.array([[[1.0, 2.0], [3.0, 4.0]]])
    mod = Modifier(np.array([[0.5, 0.6]]), slope, np.array([7.0, 8.0]))
    assert mod.parameters(0).tolist() == [0.5, 0.6, 1.0, 2.0, 3.0, 4.0, 7.0, 8.0]


def test_zero_is_no_correction() -> None:
    mod = Modifier.zero(2, 3)
    assert np.array_equal(mod.shift(np.array([1.0, 2.0, 3.0])), np.zeros((2, 2)))


@pytest.mark.parametrize(
    ("off", "slope", "at", "match"),
    [
        (np.zeros((1, 3)), np.zeros((1, 2, 2)), np.zeros(2), "offset shape"),
        (np.zeros((1, 2)), np.zeros((1, 2, 3)), np.zeros(2), "slope shape"),
        (np.array([[np.nan, 0.0]]), np.zeros((1, 2, 2)), np.zeros(2), "finite"),
    ],
)
def test_bad_shapes_and_values_are_named(off, slope, at, match) -> None:
    with pytest.raises(ValueError, match=match):
        Modifier(off, slope, at)
