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
import statsmodels.formula.api as smf
from hypothesis import given, settings
from hypothesis import strategies as st

import sensitivity.adapters.batches as batches
import sensitivity.adapters.files as files
from sensitivity.adapters.glm import evalue_one_pass, glm_one_pass
from sensitivity.adapters.models import (
    _evalue_of_results,
    evalue_from_data,
    evalue_from_model,
    fit,
    ols_report_from_data,
)
from sensitivity.adapters.statsmodels import partial_r2_from_data
from sensitivity.common.errors import InputError

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
    _close(once.evalue.model, ev.model)  # the coefficient and its se to 1e-10


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
    assert res.stderr == "Error: `--event` applies to model cox only; got model ols\n"


# --------------------------------------------------------------------------- GLMs in passes


def _statsmodels(frame, formula, model, errors=None, groups=None):
    """The reference: statsmodels' Logit or Poisson fit, with the chosen covariance."""
    options = {}
    if errors == "hc0":
        options = {"cov_type": "HC0"}
    elif errors == "cluster":
        options = {"cov_type": "cluster", "cov_kwds": {"groups": groups}}
    return getattr(smf, model)(formula, frame).fit(disp=0, **options)


def _agrees(got, ref, rel=1e-8):
    assert got.names == list(ref.params.index)
    assert np.allclose(got.params, ref.params, rtol=rel, atol=1e-12)
    assert np.allclose(np.sqrt(np.diag(got.cov)), ref.bse, rtol=rel, atol=1e-14)
    assert got.cov_type == ref.cov_type
    assert got.n == int(ref.nobs)


@pytest.fixture(scope="module")
def spector():
    # Spector & Mazzeo (1980), shipped with statsmodels: 32 students, a binary GRADE outcome
    # and a binary PSI (teaching method) treatment.
    return sm.datasets.spector.load_pandas().data


@pytest.fixture(scope="module")
def randhie():
    # The RAND Health Insurance Experiment extract shipped with statsmodels (20,190 rows):
    # doctor visits (counts) and a binary individual deductible plan (idp).
    return sm.datasets.randhie.load_pandas().data


@pytest.mark.parametrize("errors", [None, "hc0"])
def test_logit_on_the_shipped_spector_data_equals_statsmodels(spector, errors, monkeypatch):
    monkeypatch.setattr(batches, "BATCH_ROWS", 7)  # five pieces
    formula = "GRADE ~ PSI + GPA + TUCE"
    got = glm_one_pass(spector, formula, "PSI", "logit", errors=errors)
    _agrees(got, _statsmodels(spector, formula, "logit", errors))


@pytest.mark.parametrize("errors", [None, "hc0", "cluster"])
def test_poisson_on_the_shipped_randhie_data_equals_statsmodels(randhie, errors, tmp_path,
                                                                 monkeypatch):  # fmt: skip
    monkeypatch.setattr(files, "CHUNK_BYTES", 1 << 16)  # dozens of pieces of the file
    path = tmp_path / "randhie.csv"
    frame = randhie.assign(site=(np.arange(len(randhie)) // 97) % 61)
    frame.to_csv(path, index=False)
    formula = "mdvis ~ idp + lncoins + lpi + fmde + physlm + disea + hlthg + hlthf + hlthp"
    spec = "cluster:site" if errors == "cluster" else errors
    got = glm_one_pass(path, formula, "idp", "poisson", errors=spec)
    _agrees(got, _statsmodels(frame, formula, "poisson", errors, frame["site"]))


@pytest.mark.parametrize("model", ["logit", "poisson"])
def test_the_evalue_from_data_keeps_the_in_memory_result(randhie, model):
    # The whole E-value result (estimate, interval, E-values, words, overlap) as the
    # statsmodels fit gave it before this route: numbers to 1e-8, words the same.
    frame = randhie.assign(any_visit=(randhie["mdvis"] > 0).astype(int))
    outcome = "any_visit" if model == "logit" else "mdvis"
    formula = f"{outcome} ~ idp + lncoins + lpi + physlm + disea + C(hlthg)"
    before = evalue_from_model(fit(frame, formula, model), "idp", contrast=2.0)
    now = evalue_one_pass(frame, formula, "idp", model, contrast=2.0)
    _close(before.to_dict(), now.to_dict(), rel=1e-8)
    assert before.notes == now.notes
    assert now.overlap is not None


def test_generated_data_with_text_levels_missing_cells_and_clusters(tmp_path, monkeypatch):
    rng = np.random.default_rng(4)
    n = 3000
    frame = pd.DataFrame({"x": rng.normal(size=n), "g": rng.choice(["north", "south", "east"], n),
                          "clinic": rng.choice([f"c{i}" for i in range(25)], n)})  # fmt: skip
    frame["t"] = rng.binomial(1, 1 / (1 + np.exp(-frame["x"])))
    frame["y"] = rng.binomial(1, 1 / (1 + np.exp(-(0.4 * frame["t"] - 0.5 + frame["x"]))))
    frame.loc[rng.random(n) < 0.05, "x"] = np.nan
    frame.loc[rng.random(n) < 0.05, "g"] = None
    path = tmp_path / "gen.csv"
    frame.to_csv(path, index=False)
    monkeypatch.setattr(files, "CHUNK_BYTES", 4096)
    formula = "y ~ t + x + C(g)"
    used = frame.dropna()
    got = glm_one_pass(path, formula, "t", "logit", errors="cluster:clinic")
    _agrees(got, _statsmodels(used, formula, "logit", "cluster", used["clinic"]))


@settings(max_examples=25, deadline=None)
@given(st.integers(40, 150), st.integers(0, 3), st.floats(0, 0.15), st.integers(1, 60),
       st.sampled_from(["logit", "poisson"]), st.integers(0, 2**32 - 1))  # fmt: skip
def test_any_small_table_equals_statsmodels(n, levels, missing, batch, model, seed):
    # Property: whatever the table (a text category or none, missing cells, any batch size),
    # the fit in passes equals statsmodels' fit of the same formula.
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame({"x": rng.normal(size=n), "t": rng.binomial(1, 0.5, n).astype(float)})
    eta = 0.3 * frame["t"] + 0.5 * frame["x"] - 0.2
    frame["y"] = (rng.binomial(1, 1 / (1 + np.exp(-eta))) if model == "logit"
                  else rng.poisson(np.exp(eta))).astype(float)  # fmt: skip
    terms = ["t", "x"]
    if levels >= 2:
        frame["g"] = rng.choice([f"L{j}" for j in range(levels)], n).astype(object)
        terms.append("C(g)")
    for col in frame.columns:
        frame.loc[rng.random(n) < missing, col] = np.nan if col != "g" else None
    formula = "y ~ " + " + ".join(terms)
    used = frame.dropna()
    if len(used) < 25 or (levels >= 2 and used["g"].nunique() < levels):
        return
    try:
        ref = _statsmodels(frame, formula, model)
    except Exception:  # noqa: BLE001 - a table statsmodels cannot fit (separation) is skipped
        return
    if not ref.mle_retvals["converged"]:
        return
    batches.BATCH_ROWS, before = batch, batches.BATCH_ROWS
    try:
        got = glm_one_pass(frame, formula, "t", model, errors="hc0")
    finally:
        batches.BATCH_ROWS = before
    robust = _statsmodels(frame, formula, model, "hc0")
    _agrees(got, robust, rel=1e-7)


def _qr_only_and_mixed(monkeypatch, *args, **kwargs):
    """The fit with every pass by QR (the route before Newton steps from x' W x) and the fit
    as it runs now, with the passes each made of each kind, counted."""
    import sensitivity.adapters.glm as glm
    import sensitivity.adapters.glm_passes as passes

    fits, kinds = [], []
    real = glm.piece_step
    for gram in (False, True):
        seen = {"gram": 0, "qr": 0}

        def counted(*a, seen=seen, **k):
            seen["gram" if k.get("gram") else "qr"] += 1
            return real(*a, **k)

        monkeypatch.setattr(passes, "GRAM", gram)
        monkeypatch.setattr(glm, "piece_step", counted)
        fits.append(glm_one_pass(*args, **kwargs))
        kinds.append(seen)
    return fits, kinds


def _same_fit(a, b, rel=1e-12):
    assert a.names == b.names and a.n == b.n and a.cov_type == b.cov_type
    assert np.allclose(a.params, b.params, rtol=rel, atol=0)
    assert np.allclose(np.sqrt(np.diag(a.cov)), np.sqrt(np.diag(b.cov)), rtol=rel, atol=0)
    sd = np.sqrt(np.diag(a.cov))
    assert np.abs(a.cov - b.cov).max() <= rel * np.outer(sd, sd).max()
    assert (a.overlap is None) == (b.overlap is None)
    if a.overlap is not None:
        for key in ("treated", "control", "common_support", "share_outside"):
            assert np.allclose(a.overlap[key], b.overlap[key], rtol=rel, atol=0), key
        assert a.overlap["poor"] == b.overlap["poor"]


@pytest.mark.parametrize("model, outcome, errors", [
    ("logit", "any_visit", None), ("logit", "any_visit", "hc0"), ("poisson", "mdvis", None),
    ("poisson", "mdvis", "cluster:site"), ("poisson", "any_visit", None)])  # fmt: skip
def test_newton_steps_from_the_gram_matrix_end_where_qr_passes_end(
    randhie, model, outcome, errors, monkeypatch
):
    # The passes far from the end take Newton's step from x' W x and the score (a third of
    # the work of an R factor); the last is by QR, so every number is the QR-only route's to
    # 1e-12 (rounding), on the RAND extract shipped with statsmodels.
    frame = randhie.assign(any_visit=(randhie["mdvis"] > 0).astype(int),
                           site=(np.arange(len(randhie)) // 97) % 61)  # fmt: skip
    monkeypatch.setattr(batches, "BATCH_ROWS", 4096)
    formula = f"{outcome} ~ idp + lncoins + lpi + physlm + disea + C(hlthg)"
    (qr, mixed), (only, both) = _qr_only_and_mixed(monkeypatch, frame, formula, "idp", model,
                                                  errors=errors)  # fmt: skip
    _same_fit(qr, mixed)
    assert only["gram"] == 0 and both["gram"] > 0
    assert both["qr"] < only["qr"]


@settings(max_examples=20, deadline=None)
@given(st.integers(60, 400), st.sampled_from(["logit", "poisson"]), st.floats(-2, 2),
       st.floats(0, 1e4), st.integers(0, 2**32 - 1))  # fmt: skip
def test_any_table_gives_the_qr_only_numbers(n, model, effect, offset, seed):
    # Property: whatever the table (an effect of any size, a covariate far from zero, as
    # years or blood pressures are), the fit with Newton steps from x' W x gives the numbers
    # of the fit by QR passes alone: coefficients and classical errors to 1e-10. (With a
    # covariate near 10,000 the QR-only fit itself moves by 2e-11 when only the batch size
    # changes, MEASURED: its own rounding; on data like the RAND extract above, 1e-12.)
    import sensitivity.adapters.glm_passes as passes

    rng = np.random.default_rng(seed)
    x = rng.normal(size=n)
    frame = pd.DataFrame({"x": x + offset, "t": rng.binomial(1, 1 / (1 + np.exp(-x)), n)})
    eta = effect * frame["t"] + 0.5 * x - 0.5
    frame["y"] = (rng.binomial(1, 1 / (1 + np.exp(-eta))) if model == "logit"
                  else rng.poisson(np.exp(eta))).astype(float)  # fmt: skip
    fits = []
    for gram in (False, True):
        passes.GRAM, before = gram, passes.GRAM
        try:
            # classical errors, as said above (a 0/1 Poisson outcome would get HC0 by
            # default, whose sums round differently on a covariate near 10,000)
            fits.append(glm_one_pass(frame, "y ~ t + x", "t", model, errors="classical"))
        except InputError as err:  # separation: both routes must say so
            fits.append(str(err))
        finally:
            passes.GRAM = before
    if isinstance(fits[0], str) or isinstance(fits[1], str):
        assert fits[0] == fits[1]
        return
    _same_fit(fits[0], fits[1], rel=1e-10)


@pytest.mark.parametrize("model", ["logit", "poisson"])
def test_a_column_whose_type_changes_partway_is_read_once(model, tmp_path, monkeypatch):
    # A whole-number column that holds a fraction near the end makes the pass start again
    # with the column read as numbers; the pieces kept before that must not count twice (they
    # did: the rows read before the restart were fitted again, a wrong estimate). Reference:
    # statsmodels' fit of the file as pandas reads it.
    rng = np.random.default_rng(1)
    n = 3000
    frame = pd.DataFrame({"t": rng.binomial(1, 0.5, n),
                          "w": rng.integers(0, 9, n).astype(object)})  # fmt: skip
    frame.loc[n - 3, "w"] = 2.5
    eta = 0.3 * frame["t"] + 0.1 * frame["w"].astype(float) - 0.5
    frame["y"] = (rng.binomial(1, 1 / (1 + np.exp(-eta))) if model == "logit"
                  else rng.poisson(np.exp(eta)))  # fmt: skip
    path = tmp_path / "late.csv"
    frame.to_csv(path, index=False)
    monkeypatch.setattr(files, "CHUNK_BYTES", 2048)
    got = glm_one_pass(path, "y ~ t + w", "t", model)
    _agrees(got, _statsmodels(pd.read_csv(path), "y ~ t + w", model))


def test_pieces_that_keep_no_row_leave_nothing_on_the_terminal(capfd):
    # One row a piece, a third of them missing a cell: pieces of no rows reach every kind of
    # pass; the numbers are statsmodels' (on the rows it keeps) and BLAS prints no complaint
    # (dsyrk refuses an empty piece, on the process's own stderr).
    rng = np.random.default_rng(0)
    n = 200
    frame = pd.DataFrame({"x": rng.normal(size=n), "t": rng.binomial(1, 0.5, n).astype(float)})
    frame["y"] = rng.binomial(1, 1 / (1 + np.exp(-frame["x"])), n).astype(float)
    frame.loc[::3, "x"] = np.nan
    batches.BATCH_ROWS, before = 1, batches.BATCH_ROWS
    try:
        got = glm_one_pass(frame, "y ~ t + x", "t", "logit", errors="hc0")
    finally:
        batches.BATCH_ROWS = before
    _agrees(got, _statsmodels(frame.dropna(), "y ~ t + x", "logit", "hc0"))
    captured = capfd.readouterr()
    assert captured.err == "" and captured.out == ""


def test_glm_input_errors(spector, randhie):
    with pytest.raises(InputError, match=r"`errors` hc1 is computed for OLS fits only"):
        glm_one_pass(spector, "GRADE ~ PSI + GPA", "PSI", "logit", errors="hc1")
    with pytest.raises(InputError, match=r"`errors` must be classical, hc0, hc1, hc2, hc3"):
        glm_one_pass(spector, "GRADE ~ PSI + GPA", "PSI", "logit", errors="robust")
    with pytest.raises(InputError, match=r"`errors` cluster:site: 'site' is not a column"):
        glm_one_pass(spector, "GRADE ~ PSI + GPA", "PSI", "logit", errors="cluster:site")
    with pytest.raises(InputError, match=r"need at least 2 clusters; got 1"):
        glm_one_pass(spector.assign(one=1), "GRADE ~ PSI + GPA", "PSI", "logit",
                     errors="cluster:one")  # fmt: skip
    with pytest.raises(InputError, match=r"a logit outcome must be 0/1 .*; 'mdvis' has "):
        glm_one_pass(randhie, "mdvis ~ idp", "idp", "logit")
    with pytest.raises(InputError, match=r"this route takes columns and C\(col\)"):
        glm_one_pass(spector, "GRADE ~ PSI * GPA", "PSI", "logit")
    with pytest.raises(InputError, match=r"perfect separation"):
        glm_one_pass(spector, "PSI ~ PSI + GPA", "PSI", "logit")
    gap = spector.assign(site=[None, *range(31)])
    with pytest.raises(InputError, match=r"cluster:site: the column has missing values"):
        glm_one_pass(gap, "GRADE ~ PSI + GPA", "PSI", "logit", errors="cluster:site")


@pytest.mark.parametrize(
    "model, outcome, errors",
    [("logit", "any_visit", "hc0"), ("poisson", "mdvis", "cluster:site"),
     ("poisson", "any_visit", None), ("poisson", "any_visit", "classical")],
)  # fmt: skip
def test_the_errors_chosen_give_the_in_memory_result(randhie, model, outcome, errors):
    # --errors on the data route (issue 21): the fit in passes gives the in-memory fit's whole
    # result, words included (a Poisson fit of a 0/1 outcome: hc0 unless asked otherwise, and
    # the warning when classical errors are asked for).
    import warnings

    frame = randhie.assign(any_visit=(randhie["mdvis"] > 0).astype(int),
                           site=(np.arange(len(randhie)) // 97) % 61)  # fmt: skip
    formula = f"{outcome} ~ idp + lncoins + lpi + physlm + disea + C(hlthg)"
    with warnings.catch_warnings(record=True):
        warnings.simplefilter("always")
        column = errors.partition(":")[2] or None if errors else None  # named, as a fit here
        fitted = fit(frame, formula, model, errors=errors)
        before = _evalue_of_results(fitted, "idp", contrast=1.0, alpha=0.1, outcome=None,
                                    cluster=column)  # fmt: skip
        now = evalue_one_pass(frame, formula, "idp", model, errors=errors, alpha=0.1)
    _close(before.to_dict(), now.to_dict(), rel=1e-8)
    assert before.notes == now.notes
    assert now.model["errors"] == before.model["errors"]


def test_a_first_piece_with_only_a_missing_category_is_left_out(monkeypatch):
    # One row a piece, the first one's category missing: that row is left out (found by the
    # property test in test_onepass with one-row batches).
    monkeypatch.setattr(batches, "BATCH_ROWS", 1)
    rng = np.random.default_rng(2)
    frame = pd.DataFrame({"x": rng.normal(size=40), "t": rng.normal(size=40)})
    frame["y"] = frame["t"] + frame["x"] + rng.normal(size=40)
    frame["g"] = pd.Series([None] + list(rng.choice(["a", "b"], 39)), dtype=object)
    got = partial_r2_from_data(frame, "y ~ t + x + g", "t")
    ref = smf.ols("y ~ t + x + g", frame).fit()
    assert float(got.estimate) == pytest.approx(ref.params["t"], rel=1e-8)
    assert got.n == 39


@pytest.mark.parametrize("alpha", [0.5, 0.1, 1e-6])
def test_the_ols_evalue_interval_is_the_fit_at_the_level_asked(alpha, tmp_path, run):
    """Issue 19: --ci-level was ignored on the OLS data route (the interval stayed 95%).
    Reference: statsmodels OLS conf_int(alpha=...) on its shipped `fair` data set."""
    frame = sm.datasets.fair.load_pandas().data
    formula = "affairs ~ rate_marriage + age + yrs_married + children + religious + educ"
    fitted = smf.ols(formula, frame).fit()
    ref = list(fitted.conf_int(alpha=alpha).loc["rate_marriage"])
    ev = evalue_from_data(frame, formula, "rate_marriage", "ols", alpha=alpha)
    once = ols_report_from_data(frame, formula, "rate_marriage", alpha=alpha).evalue
    for res in (ev, once):  # the evalue command's route and the report's one-pass route
        assert res.ci_level == pytest.approx(1 - alpha, rel=1e-15)
        assert list(res.ci) == pytest.approx(ref, rel=1e-9)
    path = tmp_path / "fair.csv"
    frame.to_csv(path, index=False)
    args = ("evalue", "--data", path, "--formula", formula, "--treatment", "rate_marriage")
    res = run(*args, "--model", "ols", "--ci-level", 1 - alpha, "--format", "json")
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout)["ci"] == pytest.approx(ref, rel=1e-9)


def test_an_alpha_whose_level_rounds_to_1_leaves_the_evalue_interval_out(run, tmp_path):
    frame = sm.datasets.fair.load_pandas().data
    formula = "affairs ~ rate_marriage + age + yrs_married + children + religious + educ"
    res = partial_r2_from_data(frame, formula, "rate_marriage", alpha=1e-17)
    assert res.evalue.evalue_ci is None
    assert any("rounds to 1" in n for n in res.all_notes())
    with pytest.raises(InputError, match="`alpha` must be at least 1.2e-16"):
        evalue_from_data(frame, formula, "rate_marriage", "ols", alpha=1e-17)


def _stray_word_file(path: Path, at: int) -> Path:
    """An invented walking-programme table (falls, age, region) whose age column holds one
    word ('unknown') at data row `at`."""
    rng = np.random.default_rng(11)
    n = 3000
    age = np.round(rng.uniform(40, 90, n), 1).astype(object)  # hundreds of distinct ages
    age[at] = "unknown"
    walk = rng.integers(0, 2, n)
    fall = (rng.random(n) < 0.2 + 0.1 * walk).astype(int)
    region = rng.choice(["north", "south", "west"], n)
    pd.DataFrame({"fall": fall, "walk": walk, "age": age, "region": region}).to_csv(
        path, index=False
    )
    return path


@pytest.mark.parametrize("at", [5, 2990])
@pytest.mark.parametrize(
    "command",
    [["evalue", "--model", "ols"], ["evalue", "--model", "logit"], ["evalue", "--model", "poisson"],
     ["partial-r2"]],
)  # fmt: skip
def test_a_word_in_a_number_column_is_refused_not_made_categories(run, tmp_path, command, at):
    # a user's review found evalue --data running for ten minutes: 'unknown' in a number column
    # made every distinct age a category (a design as wide as the ages are many); a few codes
    # and a word stay categories, as patsy has them
    # (tests/test_onepass.py: a column that turns to text partway)
    src = _stray_word_file(tmp_path / "walk.csv", at)
    res = run(*command[:1], "--data", src, "--formula", "fall ~ walk + age + region",
              "--treatment", "walk", *command[1:])  # fmt: skip
    assert res.exit_code == 2, res.stderr
    line = res.stderr.strip().splitlines()[-1]
    assert "column 'age' is used as a number" in line and "'unknown'" in line
    assert "C(age)" in line


def test_a_text_column_of_words_is_still_categories_without_c(run, tmp_path):
    # region is words, not numbers with a stray word: coded as categories, as patsy does
    src = _stray_word_file(tmp_path / "walk.csv", 5)
    table = pd.read_csv(src)
    table["age"] = pd.to_numeric(table["age"], errors="coerce").fillna(60)
    table.to_csv(src, index=False)
    res = run("evalue", "--data", src, "--formula", "fall ~ walk + age + region",
              "--treatment", "walk", "--model", "logit", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    fitted = smf.logit("fall ~ walk + age + region", table).fit(disp=0)  # the reference
    got = json.loads(res.stdout)
    assert np.isclose(np.log(got["estimate"]), fitted.params["walk"], rtol=1e-7)


def _written_numbers_file(path, cell):
    """Invented data: a binary treatment, a number covariate `x` written by `cell` (with a
    percent sign or a decimal comma), a number outcome and a 0/1 outcome."""
    rng = np.random.default_rng(8)
    n = 120
    x = rng.normal(size=n)
    t = (rng.uniform(size=n) < 0.5).astype(int)
    w = x + t + rng.normal(size=n)
    pd.DataFrame({"y": (w > 0.5).astype(int), "t": t, "x": [cell(v) for v in x],
                  "w": w}).to_csv(path, index=False)  # fmt: skip
    return path


@pytest.mark.parametrize(
    "cell, said",
    [(lambda v: f"{v:.3f}%", "a percent sign"),
     (lambda v: f"{v:.3f}".replace(".", ","), "a decimal comma")],
)  # fmt: skip
@pytest.mark.parametrize(
    "command",
    [("evalue", "--formula", "y ~ t + x", "--treatment", "t", "--model", "logit"),
     ("partial-r2", "--formula", "w ~ t + x", "--treatment", "t"),
     ("stability", "--formula-short", "w ~ t", "--formula-long", "w ~ t + x", "--treatment", "t"),
     ("impact", "--formula", "w ~ t + x", "--treatment", "t"),
     ("weighting", "--treatment", "t", "--outcome", "w", "--propensity", "t ~ x",
      "--method", "percentile", "--resamples", "50"),
     ("debiased", "--treatment", "t", "--outcome", "w", "--covariates", "x",
      "--learner", "linear", "--folds", "2")],
)  # fmt: skip
def test_numbers_written_with_a_percent_sign_or_decimal_comma_are_refused(
    run, tmp_path, cell, said, command
):
    """Every cell of `x` was text, so none counted as a stray word: partial-r2 refused the
    treatment as "spanning 58 columns" (listing all), stability and weighting stopped on a
    consequence (rank, separation), and debiased coded each value as a category and printed
    a result."""
    src = _written_numbers_file(tmp_path / "x.csv", cell)
    res = run(command[0], "--data", src, *command[1:])
    assert res.exit_code == 2, res.stdout[-300:]
    line = res.stderr.strip().splitlines()[-1]
    assert line.startswith("Error: `--data`: column 'x' ") and f"written with {said}" in line


def test_a_treatment_of_many_columns_lists_a_few_of_them(run, tmp_path):
    """The refusal listed every column of the treatment: 58 of them for a column of
    percentages, in one line of some 1,500 characters."""
    rng = np.random.default_rng(9)
    frame = pd.DataFrame({"grp": [f"g{k:02d}" for k in rng.integers(0, 20, 200)],
                          "x": rng.normal(size=200)})  # fmt: skip
    frame["w"] = frame["x"] + rng.normal(size=200)
    frame.to_csv(tmp_path / "g.csv", index=False)
    res = run("partial-r2", "--data", tmp_path / "g.csv", "--formula", "w ~ C(grp) + x",
              "--treatment", "C(grp)")  # fmt: skip
    assert res.exit_code == 2
    assert res.stderr.startswith("Error: `--treatment` 'C(grp)' spans 19 columns (C(grp)[T.g01], ")
    assert "C(grp)[T.g08], ...); name one of them" in res.stderr
