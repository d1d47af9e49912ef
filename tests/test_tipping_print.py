"""Issue 19: an exact tipping set prints so that it never overstates: its lower end rounded
up, its upper end down, at the printed digits; a closed-form value prints as itself."""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.tipping.present import round_outward

values = st.floats(1e-6, 1e6) | st.floats(-1e6, -1e-6)


@given(values, st.sampled_from([3, 4]))
def test_rounding_outward_never_overstates(value, digits):
    up, down = round_outward(value, digits, +1), round_outward(value, digits, -1)
    assert up >= value * (1 - 1e-9) - 1e-300 if value > 0 else up >= value * (1 + 1e-9)
    assert down <= value * (1 + 1e-9) if value > 0 else down <= value * (1 - 1e-9)
    assert float(f"{up:.{digits}g}") == up and float(f"{down:.{digits}g}") == down


@pytest.mark.parametrize(
    "value, digits, direction, shown",
    [(3.0003, 4, 1, 3.001), (0.3749999977, 3, 1, 0.375), (0.375, 3, -1, 0.375),
     (2.9996, 4, -1, 2.999), (-1.23456, 4, 1, -1.234)],
)  # fmt: skip
def test_examples(value, digits, direction, shown):
    assert round_outward(value, digits, direction) == shown
