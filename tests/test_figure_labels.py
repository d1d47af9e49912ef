"""Issue 19: a user's text reaches a figure only through `output.figures.plot_label`.

matplotlib took 23 s to lay out a 100,000-character label, printed raw missing-glyph
warnings for a CJK label, read the text between two dollar signs as mathematics ("$5 to $10"
lost its dollars; "$\\frac{$" was an internal error), and drew control characters. Every
family's figure is drawn here with hostile text in every field a result carries (treatment,
outcome, labels, benchmark names, the screen's source), and every string handed to
matplotlib is checked: bounded, one line per line, no control character, no mathematics,
every glyph in the font. Time is never asserted; the bound on the text is.
"""

from __future__ import annotations

import dataclasses
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import sensitivity as s
from sensitivity.output.figures import _glyphs, plot_label

ROOT = Path(__file__).resolve().parent.parent
MARK = "Zq9"  # found in the drawn text: the hostile field did reach the figure
HOSTILE = (
    f"{MARK} a\rb\nc\x1b[31m\x07 😀 中文 ☃ $x^2$ $\\frac{{1}}{{ price $5 to $10 "
    "<b>bold</b> [x](javascript:alert(1)) _lead " + "x" * 100_000
)
LONGEST = 400  # our own titles run to two lines; a user's text adds at most 120 characters


def _check(text: str) -> None:
    from matplotlib import cbook

    assert len(text) <= LONGEST, len(text)
    assert not cbook.is_math_text(text), text
    glyphs = _glyphs()
    for line in text.split("\n"):
        bad = [c for c in line if ord(c) < 32 or 0x7F <= ord(c) < 0xA0 or ord(c) not in glyphs]
        assert not bad, (line[:80], bad)


@pytest.fixture
def drawn_text(monkeypatch):
    """Every string matplotlib is given as text while the test draws."""
    from matplotlib import text as mtext

    seen: list[str] = []
    original = mtext.Text.set_text

    def record(self, value):
        seen.append("" if value is None else str(value))
        return original(self, value)

    monkeypatch.setattr(mtext.Text, "set_text", record)
    return seen


def _named(result, **fields):
    return dataclasses.replace(result, **fields)


# ------------------------------------------------------------------ one builder a family
def _evalues():
    res = s.evalue("rr", 2.0, (1.5, 2.7))
    from sensitivity.evalues.figures import forest_figure

    forest = s.evalue("hr", 0.7, (0.6, 0.86), outcome="rare")
    return [f.draw for f in res.document().figures] + [
        lambda paths: forest_figure([(HOSTILE, res), (HOSTILE[::-1], forest)], paths)
    ]


def _partial_r2():
    from sensitivity.partial_r2.core import benchmark_scenarios
    from sensitivity.partial_r2.result import CovariateStrength

    r = s.partial_r2_summary(0.5, 0.1, 2000)
    cov = CovariateStrength(HOSTILE, (HOSTILE,), 0.3, 0.5)  # far out: named on the edge
    with warnings.catch_warnings():  # its outcome side is capped at 1, with a warning
        warnings.simplefilter("ignore", s.SensitivityWarning)
        r = r.with_scenarios(benchmark_scenarios(0.5, 0.1, 2000, cov, [(1, 1)], 0.05))
    r = _named(r, treatment=HOSTILE, outcome=HOSTILE)
    return [f.draw for f in r.document().figures]


def _debiased():
    import pandas as pd

    from sensitivity.debiased import debiased_fit

    rng = np.random.default_rng(0)
    xs = rng.normal(size=(240, 2))
    d = (0.5 * xs[:, 0] + rng.normal(size=240) > 0).astype(int)
    y = d + xs @ [1.0, 0.5] + rng.normal(size=240)
    frame = pd.DataFrame({"y": y, "d": d, "x0": xs[:, 0], "x1": xs[:, 1]})
    fit = debiased_fit(frame, "d", "y", ["x0", "x1"], learner="linear", folds=2)
    r = _named(fit.bounds([(0.05, 0.05)]), treatment=HOSTILE, outcome=HOSTILE)
    return [f.draw for f in r.document().figures]


def _pooling():
    from sensitivity.pooling import pool_estimates

    y = np.array([0.30, 0.10, 0.45, 0.22, 0.05, 0.38])
    se = np.array([0.10, 0.12, 0.15, 0.09, 0.11, 0.20])
    labels = [HOSTILE[: 50 + k] + str(k) for k in range(len(y))]
    r = pool_estimates(y, se, threshold=1.1, labels=[HOSTILE, *labels[1:]])
    return [f.draw for f in r.document().figures]


def _weighting():
    rng = np.random.default_rng(2)
    x = rng.normal(size=(300, 2))
    a = (rng.uniform(size=300) < 1 / (1 + np.exp(-0.6 * x[:, 0]))).astype(float)
    y = x[:, 0] + 0.5 * a + rng.normal(size=300)
    r = s.weighting_bounds(y, a, covariates=np.c_[np.ones(300), x], lam=[1, 1.5], resamples=50,
                           seed=1, names=(HOSTILE, HOSTILE))  # fmt: skip
    return [f.draw for f in r.document().figures]


def _matched():
    r = s.rosenbaum_bounds(discordant=30, treated_events=22)
    return [f.draw for f in r.document().figures]


def _simulate():
    priors = {"prevalence_treated": "fixed:0.5", "prevalence_control": "fixed:0.2",
              "outcome_effect": "fixed:2"}  # fmt: skip
    r = s.simulate("rr", 2.0, (1.5, 3.0), draws=500, seed=1, **priors)
    return [f.draw for f in r.document().figures]


def _stability():
    r = s.coefficient_stability(0.5, 0.1, 0.4, 0.3, var_outcome=1.0, var_treatment=1.0,
                                var_treatment_residual=0.5)  # fmt: skip
    return [f.draw for f in r.document().figures]


def _tipping():
    g = s.bounding_grid("rr", 2.0, (1.5, 3.0))
    b = s.binary_confounder_grid("rr", 2.0, (1.5, 3.0), prevalence_control=0.2)
    return [f.draw for f in (*g.document().figures, *b.document().figures)]


def _screen():
    import polars as pl

    from sensitivity.screen.figures import screen_figure

    table = pl.DataFrame({"scale": ["rr", "or", "hr"], "estimate": ["2", "1.5", "0.7"],
                          "outcome": ["", "rare", "rare"], "study": [HOSTILE] * 3})  # fmt: skip
    summary = s.screen_summary(table, source=HOSTILE)
    return [lambda paths: screen_figure(summary, paths)]


BUILDERS = {
    "evalues": _evalues, "partial_r2": _partial_r2, "debiased": _debiased,
    "pooling": _pooling, "weighting": _weighting, "matched": _matched, "simulate": _simulate,
    "stability": _stability, "tipping": _tipping, "screen": _screen,
}  # fmt: skip
#: Families whose results carry a user's text into a figure (the rest draw numbers only).
CARRY_TEXT = {"evalues", "partial_r2", "debiased", "pooling"}


def test_every_family_with_figures_is_driven_here():
    folders = {p.parent.name for p in (ROOT / "sensitivity").glob("*/figures.py")}
    assert folders - {"output"} == set(BUILDERS)


@pytest.mark.parametrize("family", sorted(BUILDERS))
def test_every_figure_draws_hostile_text_as_bounded_safe_text(family, drawn_text, tmp_path):
    draws = BUILDERS[family]()
    assert draws, family
    for k, draw in enumerate(draws):
        draw([tmp_path / f"{family}{k}.png", tmp_path / f"{family}{k}.svg"])
    for text in drawn_text:
        _check(text)
    if family in CARRY_TEXT:
        assert any(MARK in t for t in drawn_text), family


@settings(max_examples=300, deadline=None)
@given(
    st.lists(
        st.one_of(
            st.text(max_size=30),
            st.sampled_from(["$", "\\", "\\$", "\r", "\n", "\x1b[31m", "😀", "中", "_", "…"]),
        ),
        max_size=12,
    ),
    st.integers(5, 200),
)
def test_plot_label_is_short_plain_drawable_text(parts, limit):
    label = plot_label("".join(parts), limit)
    assert len(label.replace("\\$", "$")) <= limit
    _check(label)


def test_plot_label_keeps_dollars_as_dollars_when_drawn(tmp_path):
    from sensitivity.output.figures import new_figure, save_figure

    fig, ax = new_figure((3, 2))
    shown = ax.set_title(plot_label("price $5 to $10"))
    save_figure(fig, [tmp_path / "d.png"])
    assert shown._preprocess_math(shown.get_text()) == ("price $5 to $10", False)
