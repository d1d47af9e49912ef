"""linearmodels fits (issue 11): a PanelOLS with absorbed entity effects equals, for every
partial-R² quantity, the statsmodels OLS refit with one dummy per entity (the reference), on
the wage panel shipped with linearmodels (Vella and Verbeek 1998, 545 men, 1980-87)."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.formula.api as smf

from sensitivity import from_model
from sensitivity.common.errors import InputError, SensitivityWarning

lm = pytest.importorskip("linearmodels")
COVARIATES = "married + exper + expersq"


@pytest.fixture(scope="module")
def wage():
    from linearmodels.datasets import wage_panel

    return wage_panel.load()


@pytest.fixture(scope="module")
def both(wage):
    panel = wage.set_index(["nr", "year"])
    fe = lm.PanelOLS.from_formula(f"lwage ~ union + {COVARIATES} + EntityEffects", panel).fit()
    ref = smf.ols(f"lwage ~ union + {COVARIATES} + C(nr)", wage).fit()
    return fe, ref


def test_the_within_fit_equals_the_dummies_refit(both):
    fe, ref = both
    ours = from_model(fe, "union", benchmarks=["married", "married:2"])
    theirs = from_model(ref, "union", benchmarks=["married", "married:2"])
    for name in ("estimate", "se", "dof", "t", "robustness_value", "robustness_value_alpha"):
        assert float(getattr(ours, name)) == pytest.approx(float(getattr(theirs, name)), rel=1e-9)
    by_name = {c.name: c for c in theirs.covariates}
    for c in ours.covariates:
        assert c.r2_treatment == pytest.approx(by_name[c.name].r2_treatment, rel=1e-7)
        assert c.r2_outcome == pytest.approx(by_name[c.name].r2_outcome, rel=1e-7)
    assert {c.name for c in ours.covariates} == {"married", "exper", "expersq"}
    for a, b in zip(ours.scenarios, theirs.scenarios, strict=True):
        assert a.estimate == pytest.approx(b.estimate, rel=1e-7)
    assert ours.n == 4360 and ours.outcome == "lwage"
    assert any("Entity effects absorbed" in n for n in ours.notes)


def test_clustered_errors_warn_and_use_the_classical_ones(wage, both):
    panel = wage.set_index(["nr", "year"])
    model = lm.PanelOLS.from_formula(f"lwage ~ union + {COVARIATES} + EntityEffects", panel)
    clustered = model.fit(cov_type="clustered", cluster_entity=True)
    with pytest.warns(SensitivityWarning, match="classical"):
        res = from_model(clustered, "union")
    assert float(res.se) == pytest.approx(float(both[0].std_errors["union"]), rel=1e-12)


def test_a_pooled_fit_equals_statsmodels_ols(wage):
    panel = wage.set_index(["nr", "year"])
    pooled = lm.PooledOLS.from_formula(f"lwage ~ 1 + union + {COVARIATES}", panel).fit()
    ref = smf.ols(f"lwage ~ union + {COVARIATES}", wage).fit()
    ours, theirs = from_model(pooled, "union"), from_model(ref, "union")
    assert float(ours.robustness_value) == pytest.approx(float(theirs.robustness_value), rel=1e-9)
    assert len(ours.covariates) == 3  # the intercept is no covariate


def test_unsupported_fits_and_names(wage, both):
    panel = wage.set_index(["nr", "year"])
    with pytest.raises(InputError, match="`treatment` 'smoking' is not a coefficient"):
        from_model(both[0], "smoking")
    random = lm.RandomEffects.from_formula(f"lwage ~ 1 + union + {COVARIATES}", panel).fit()
    with pytest.raises(InputError, match="linearmodels RandomEffects"):
        from_model(random, "union")
    assert np.isfinite(float(from_model(both[0], "union").robustness_value))
