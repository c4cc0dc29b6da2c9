"""Percentile bands: the compiled selection against numpy.percentile (the reference)."""

import numpy as np
import pytest

from rheology.errors import RheologyError
from rheology.uncertainty.bands import column_percentiles


@pytest.mark.parametrize("shape", [(2000, 37), (7, 13), (1, 5), (2, 3), (101, 17)])
def test_equals_numpy_percentile_bit_for_bit(shape):
    """numpy.percentile(a, q, axis=0), default 'linear' method (Hyndman & Fan 1996,
    definition 7), is the reference: the same order statistics and the same lerp."""
    rng = np.random.default_rng(4)
    data = rng.lognormal(size=shape)
    data[:, 0] = 3.0  # all equal
    if shape[1] > 3:
        data[:, 2] = np.round(data[:, 2])  # many ties
    for q in ([10.0, 50.0, 90.0], [0.0, 25.0, 100.0, 99.9, 50.01, 10.0]):
        expected = np.percentile(data, q, axis=0)
        assert np.array_equal(column_percentiles(data, q), expected)


def test_threads_give_the_same_numbers():
    data = np.random.default_rng(5).normal(size=(500, 41))
    one = column_percentiles(data, [10.0, 50.0, 90.0], workers=1)
    two = column_percentiles(data, [10.0, 50.0, 90.0], workers=2)
    assert np.array_equal(one, two)


@pytest.mark.parametrize(
    "data, q, match",
    [(np.ones((0, 3)), [50.0], "non-empty 2-D"), (np.ones((4, 3)), [101.0], "in \\[0, 100\\]")],
)
def test_bad_input_is_named(data, q, match):
    with pytest.raises(RheologyError, match=match):
        column_percentiles(data, q)
