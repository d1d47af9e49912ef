"""Issue 19: log-axis tick labels never run together ("1.251.5" on a narrow panel)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st


@settings(max_examples=25, deadline=None)
@given(st.floats(1.5, 8), st.floats(1.01, 1e4))
def test_neighbouring_ticks_are_at_least_0_45_inch_apart(width, top):
    from sensitivity.output.figures import log_ticks, pyplot

    plt = pyplot()
    fig, ax = plt.subplots(figsize=(width, 2.5))
    try:
        log_ticks(ax, 1.0, top)
        ticks = [t for t in ax.get_xticks() if 1.0 <= t <= top]
        span = np.log10(top) - np.log10(1.0)
        inches = ax.get_position().width * width
        gaps = np.diff(np.log10(ticks)) / span * inches
        assert np.all(gaps >= 0.45 - 1e-9)
    finally:
        plt.close(fig)


def test_the_bounding_colour_bar_names_its_scale(tmp_path):
    from sensitivity import bounding_grid

    g = bounding_grid("hr", 1.38, (1.12, 1.70), outcome="rare")
    fig = next(f for f in g.document().figures)
    fig.draw([tmp_path / "b.svg"])
    assert "Worst-case bound on the HR" in (tmp_path / "b.svg").read_text()


def test_a_far_scenario_does_not_squeeze_the_partial_r2_contour(tmp_path):
    """Issue 19: a benchmark at (43%, 100%) no longer stretches the axes to 99% (the region
    where the conclusion changes lies below 25%); it sits on the edge and is named."""
    import warnings

    from sensitivity import partial_r2_summary
    from sensitivity.common.errors import SensitivityWarning
    from sensitivity.partial_r2.core import benchmark_scenarios
    from sensitivity.partial_r2.figures import FAR, _beyond, _r2_limits
    from sensitivity.partial_r2.result import CovariateStrength

    warnings.simplefilter("ignore", SensitivityWarning)
    r = partial_r2_summary(0.5, 0.1, 2000)
    cov = CovariateStrength("C(region)", ("region",), 0.3, 0.5)
    r = r.with_scenarios(benchmark_scenarios(0.5, 0.1, 2000, cov, [(1, 1)], 0.05))
    xlim, ylim = _r2_limits(r, None)
    assert xlim <= FAR * max(2 * r.robustness_value, 0.05)
    points, text = _beyond(r, xlim, ylim)
    assert points[0] == (xlim, ylim) and text.startswith("Beyond the axes, drawn on their edge: 1")
    fig = r.document().figures[0]
    fig.draw([tmp_path / "c.svg"])
    assert "Beyond the axes" in (tmp_path / "c.svg").read_text()
