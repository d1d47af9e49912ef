"""pyfixest feols fits (issue 11): every partial-R² quantity equals the statsmodels OLS refit
with one dummy per absorbed level (the reference), on the wage panel shipped with linearmodels
(Vella and Verbeek 1998), whatever standard errors the fit reported."""

from __future__ import annotations

import numpy as np
import pytest
import statsmodels.formula.api as smf

from sensitivity import from_model
from sensitivity.adapters.pyfixest import absorbed_levels
from sensitivity.common.errors import InputError, SensitivityWarning

pf = pytest.importorskip("pyfixest")
pytest.importorskip("linearmodels")
COVARIATES = "married + expersq + hours"


@pytest.fixture(scope="module")
def wage():
    from linearmodels.datasets import wage_panel

    return wage_panel.load()


@pytest.fixture(scope="module")
def reference(wage):
    fit = smf.ols(f"lwage ~ union + {COVARIATES} + C(nr) + C(year)", wage).fit()
    return from_model(fit, "union", benchmarks=["married", "married:2"])


@pytest.mark.parametrize("vcov", ["iid", "hetero", {"CRV1": "nr"}])
def test_a_two_way_fit_equals_the_dummies_refit(wage, reference, vcov):
    fit = pf.feols(f"lwage ~ union + {COVARIATES} | nr + year", data=wage, vcov=vcov)
    if vcov == "iid":
        res = from_model(fit, "union", benchmarks=["married", "married:2"])
    else:
        with pytest.warns(SensitivityWarning, match="classical"):
            res = from_model(fit, "union", benchmarks=["married", "married:2"])
    for name in ("estimate", "se", "dof", "robustness_value", "robustness_value_alpha"):
        assert float(getattr(res, name)) == pytest.approx(float(getattr(reference, name)),
                                                          rel=1e-7)  # fmt: skip
    theirs = {c.name: c for c in reference.covariates}
    for c in res.covariates:
        assert c.r2_treatment == pytest.approx(theirs[c.name].r2_treatment, rel=1e-7)
        assert c.r2_outcome == pytest.approx(theirs[c.name].r2_outcome, rel=1e-7)
    for a, b in zip(res.scenarios, reference.scenarios, strict=True):
        assert a.estimate == pytest.approx(b.estimate, rel=1e-7)
    assert res.n == 4360 and any("nr + year" in n for n in res.notes)


def test_a_fit_without_fixed_effects_equals_statsmodels(wage):
    fit = pf.feols(f"lwage ~ union + {COVARIATES}", data=wage)
    ref = from_model(smf.ols(f"lwage ~ union + {COVARIATES}", wage).fit(), "union")
    res = from_model(fit, "union")
    assert float(res.robustness_value) == pytest.approx(float(ref.robustness_value), rel=1e-9)
    assert float(res.dof) == float(ref.dof) and len(res.covariates) == 3


def test_the_absorbed_rank_counts_components_by_brute_force():
    # Two effects that split into two unconnected blocks: rank of the dummy matrix by SVD.
    codes = np.array([[0, 0], [0, 1], [1, 0], [2, 2], [3, 2], [3, 3]])
    dummies = np.hstack([np.eye(4)[codes[:, 0]], np.eye(4)[codes[:, 1]]])
    assert absorbed_levels(codes) == np.linalg.matrix_rank(dummies) == 6


def test_unsupported_fits_and_names(wage):
    fit = pf.feols(f"lwage ~ union + {COVARIATES} | nr", data=wage)
    with pytest.raises(InputError, match="`treatment` 'smoking' is not a coefficient"):
        from_model(fit, "smoking")
    three = pf.feols(f"lwage ~ union + {COVARIATES} | nr + year + occupation", data=wage)
    with pytest.raises(InputError, match="more than two fixed effects"):
        from_model(three, "union")
