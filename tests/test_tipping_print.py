"""Issue 19: an exact tipping set prints so that it never overstates: an end that starts a
reached piece is rounded up, one that stops it down, at the printed digits, in exact decimal
arithmetic on the double (see also tests/test_tipping_exact.py for the printed table)."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.tipping.present import round_outward

values = st.floats(1e-300, 1e300) | st.floats(-1e300, -1e-300)


@given(values, st.sampled_from([3, 4]))
def test_rounding_outward_never_overstates(value, digits):
    up, down = round_outward(value, digits, +1), round_outward(value, digits, -1)
    near = round_outward(value, digits, 0)
    assert down <= value <= up  # exactly, not within a tolerance
    assert down <= near <= up
    for x in (up, down, near):
        assert float(f"{x:.{digits}g}") == x  # prints as itself at these digits


@pytest.mark.parametrize(
    "value, digits, direction, shown",
    [(3.0003, 4, 1, 3.001), (0.375, 3, 1, 0.375), (0.375, 3, -1, 0.375),
     (0.3749999977, 3, 1, 0.375), (0.3749999977, 3, -1, 0.374),
     (2.9996, 4, -1, 2.999), (-1.23456, 4, 1, -1.234), (9.9996, 4, 1, 10.0)],
)  # fmt: skip
def test_examples(value, digits, direction, shown):
    assert round_outward(value, digits, direction) == shown
