"""The data route fitted once (issue 26): the report from data and a formula, and the E-value
of logistic and Poisson fits by iteratively reweighted least squares in passes over pieces.

References: statsmodels fits of the same formula on the same data read whole by pandas (a
general-purpose library): OLS, Logit and Poisson, with their classical, HC0, HC1 and cluster
covariances; data: the `fair` extramarital affairs data (Fair 1978) and the `star98` data
shipped with statsmodels, and data generated here.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from sensitivity.adapters.models import evalue_from_data, ols_report_from_data
from sensitivity.adapters.statsmodels import partial_r2_from_data

ROOT = Path(__file__).resolve().parent.parent


def _close(a, b, path="", rel=1e-10):
    """Two JSON-ready values equal: numbers to `rel`, the rest exactly."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for key in a:
            _close(a[key], b[key], f"{path}.{key}", rel)
    elif isinstance(a, (list, tuple)):
        assert len(a) == len(b), path
        for i, (u, v) in enumerate(zip(a, b, strict=True)):
            _close(u, v, f"{path}[{i}]", rel)
    elif isinstance(a, float) and isinstance(b, float):
        assert b == pytest.approx(a, rel=rel, abs=1e-300), path
    elif isinstance(a, str) and isinstance(b, str) and a != b:
        # a note's numbers are printed to 3-4 digits: the same text but for a last digit
        assert len(a) == len(b) and sum(u != v for u, v in zip(a, b, strict=True)) <= 1, path
    else:
        assert a == b, path


# --------------------------------------------------------------------------- the report, OLS
@pytest.mark.parametrize("contrast", [1.0, 10.0])
def test_the_report_from_data_fits_once_and_keeps_the_numbers(contrast):
    # Today's report from data: statsmodels' OLS fit for the E-value, the one-pass route for
    # the partial-R² part. Now one pass gives both: the same numbers (to 1e-10) and words.
    data = ROOT / "demo" / "harbourside_bp.csv"
    formula = "sbp ~ commute_min + age + female + smoker + C(shift) + bmi"
    ev = evalue_from_data(data, formula, "commute_min", "ols", contrast=contrast)
    pr2 = partial_r2_from_data(data, formula, "commute_min", contrast=contrast)
    once = ols_report_from_data(data, formula, "commute_min", contrast=contrast)
    _close(
        pr2.to_dict() | {"evalue": ev.to_dict()}, once.to_dict() | {"evalue": once.evalue.to_dict()}
    )
    assert once.evalue.notes == ev.notes or len(once.evalue.notes) == len(ev.notes)
    assert once.evalue.model == ev.model


def test_the_report_command_from_data_writes_the_same_numbers(run, tmp_path):
    data = ROOT / "demo" / "harbourside_bp.csv"
    formula = "sbp ~ commute_min + age + female + smoker + C(shift) + bmi"
    res = run("report", "--data", data, "--formula", formula, "--treatment", "commute_min",
              "--model", "ols", "--contrast", 10, "--out", tmp_path / "r")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    got = json.loads((tmp_path / "r" / "report.json").read_text())["estimates"][0]
    ev = evalue_from_data(data, formula, "commute_min", "ols", contrast=10)
    pr2 = partial_r2_from_data(data, formula, "commute_min", contrast=10)
    assert got["partial_r2"]["robustness_value"] == pytest.approx(pr2.robustness_value, rel=1e-12)
    assert got["evalue"] == pytest.approx(float(ev.evalue), rel=1e-10)
    assert got["evalue_ci"] == pytest.approx(float(ev.evalue_ci), rel=1e-10)
    res = run("report", "--data", data, "--formula", formula, "--treatment", "commute_min",
              "--model", "ols", "--event", "smoker", "--out", tmp_path / "e")  # fmt: skip
    assert res.exit_code == 2
    assert res.stderr == "Error: `event` applies to model cox only; got model ols\n"
