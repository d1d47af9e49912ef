"""The numerical routines that spare one-number commands scipy's import
(sensitivity/common/numeric.py), against scipy itself: `brent` must give scipy.optimize.brentq's
root to the bit, and `normal_cdf` scipy.special.ndtr's value to within a few units in the last
place, in the tails too."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from scipy.optimize import brentq
from scipy.special import ndtr

from sensitivity.common.numeric import brent, normal_cdf


def _functions():
    """Increasing and decreasing functions of several shapes, with a root in [0, 4]."""
    return [
        lambda x, c: x**3 - c,
        lambda x, c: math.exp(x) - 1 - c,
        lambda x, c: c - math.log1p(x),
        lambda x, c: math.tanh(5 * (x - c / 10)),
        lambda x, c: 1e-200 * (x - c / 3),  # tiny values: a product of two would underflow
        lambda x, c: (x - c / 3) ** 3,  # a flat root
        lambda x, c: math.atan(x - 1) - math.atan(c / 5),
    ]


@given(st.integers(0, 6), st.floats(0.05, 3.9), st.sampled_from([(2e-12, 8.9e-16),
       (1e-12, 1e-14), (1e-300, 1e-15), (1e-6, 1e-6)]))  # fmt: skip
def test_brent_gives_scipys_root_to_the_bit(which, c, tolerances):
    f = _functions()[which]
    xtol, rtol = tolerances
    g = lambda x: f(x, c)  # noqa: E731
    if np.sign(g(0.0)) == np.sign(g(4.0)):
        return
    try:
        want = brentq(g, 0.0, 4.0, xtol=xtol, rtol=rtol)
    except RuntimeError:  # scipy does not converge in 100 steps: neither do we
        with pytest.raises(ValueError, match="did not converge"):
            brent(g, 0.0, 4.0, xtol=xtol, rtol=rtol)
        return
    assert brent(g, 0.0, 4.0, xtol=xtol, rtol=rtol) == want


def test_brent_ends_and_refusals():
    assert brent(lambda x: x, 0.0, 1.0) == 0.0  # a root at an end is that end
    assert brent(lambda x: x - 1, 0.0, 1.0) == 1.0
    with pytest.raises(ValueError, match="different signs"):
        brent(lambda x: x + 1, 0.0, 1.0)
    with pytest.raises(ValueError, match="did not converge"):
        brent(lambda x: x**3 - 0.3, 0.0, 1.0, maxiter=2)


@given(st.floats(-40.0, 9.0))
def test_normal_cdf_is_scipys_to_1e_13(x):
    # the two libraries' error functions differ by up to about 20 units in the last place in
    # the lower tail (at -5 both are within 1.5e-14 of the true 2.8665157187919391e-7,
    # a value recalled from memory): far inside the 1e-12 the numbers are held to
    # (below the smallest normal double, 2.2e-308, both are 0 to every digit: ours is 0)
    assert normal_cdf([x])[0] == pytest.approx(float(ndtr(x)), rel=1e-13, abs=2.3e-308)


def test_normal_cdf_tails_shape_and_nan():
    x = np.array([[-37.5, -20.0, -5.0], [0.0, 1e-300, 8.3]])
    got = normal_cdf(x)
    assert got.shape == x.shape
    np.testing.assert_allclose(got, ndtr(x), rtol=1e-13, atol=0)
    # below the smallest normal double (about -37.5): 0, where the error functions give
    # subnormals that have lost their digits (scipy's down to -38, the C library's further)
    assert normal_cdf(-37.52) == 0.0 < ndtr(-37.52) < 2.3e-308
    assert normal_cdf(-38.4) == ndtr(-38.4) == 0.0
    assert math.isnan(normal_cdf([math.nan])[0])
    assert normal_cdf(math.inf) == 1.0 and normal_cdf(-math.inf) == 0.0
