"""The one-pass partial-R² data route (issue 11) against statsmodels refits.

Reference: statsmodels OLS fits of the same formula on the same data, read whole by pandas
(a general-purpose library), through `partial_r2_from_model`; data: the `fair` extramarital
affairs data shipped with statsmodels (Fair 1978) and data generated here. Every number of
the result (estimate, se, dof, robustness values, every covariate's partial R², benchmark
scenarios) must agree to 1e-8 relative, whatever the batch size, the file format, the order in
which categorical levels appear, and on ill-conditioned designs.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from hypothesis import given, settings
from hypothesis import strategies as st

import sensitivity.adapters.batches as batches
import sensitivity.adapters.files as files
import sensitivity.adapters.onepass as onepass
from sensitivity.adapters.onepass import partial_r2_one_pass
from sensitivity.adapters.statsmodels import partial_r2_from_model
from sensitivity.common.errors import InputError

COVARIATES = "age + yrs_married + educ + C(religious)"


@pytest.fixture(scope="module")
def fair():
    return sm.datasets.fair.load_pandas().data


def _same(reference, got, rel=1e-8):
    """Every field of two results' JSON equal: numbers to `rel`, the rest exactly."""

    def walk(a, b, path):
        if isinstance(a, dict):
            assert set(a) == set(b), path
            for key in a:
                walk(a[key], b[key], f"{path}.{key}")
        elif isinstance(a, list):
            assert len(a) == len(b), path
            for i, (u, v) in enumerate(zip(a, b, strict=True)):
                walk(u, v, f"{path}[{i}]")
        elif isinstance(a, float) and isinstance(b, float):
            assert b == pytest.approx(a, rel=rel, abs=1e-300), path
        else:
            assert a == b, path

    walk(reference.to_dict(), got.to_dict(), "")


def _reference(frame, formula, treatment, **options):
    fit = smf.ols(formula, data=frame).fit()
    notes = []
    if len(frame) > fit.nobs:
        notes.append(
            f"{len(frame) - int(fit.nobs)} of {len(frame)} rows had missing values in the "
            "model's columns and were left out of the fit."
        )
    return partial_r2_from_model(fit, treatment, notes=notes, **options)


FORMULAS = [
    f"affairs ~ rate_marriage + {COVARIATES}",
    "affairs ~ rate_marriage + age + C(religious) + C(occupation) + educ",
    "affairs ~ 0 + rate_marriage + C(religious) + age",
    "affairs ~ rate_marriage + age + np.log(yrs_married) + educ:age + C(religious)",  # patsy
    "affairs ~ rate_marriage + I(age ** 2) + C(religious, Treatment(2))",  # patsy
]


@pytest.mark.parametrize("formula", FORMULAS)
def test_equal_to_statsmodels_on_the_fair_data(fair, formula, tmp_path):
    marks = {"benchmarks": ["age"]} if "+ age" in formula else {}
    reference = _reference(fair, formula, "rate_marriage", **marks)
    _same(reference, partial_r2_one_pass(fair, formula, "rate_marriage", **marks))
    path = tmp_path / "fair.csv"
    fair.to_csv(path, index=False)
    _same(reference, partial_r2_one_pass(path, formula, "rate_marriage", **marks))


def test_file_formats_and_small_batches_agree(fair, tmp_path, monkeypatch):
    formula = f"affairs ~ rate_marriage + {COVARIATES}"
    reference = _reference(fair, formula, "rate_marriage")
    fair.to_parquet(tmp_path / "fair.parquet")
    fair.to_csv(tmp_path / "fair.tsv", sep="\t", index=False)
    fair.to_csv(tmp_path / "fair.csv", index=False)
    monkeypatch.setattr(files, "CHUNK_BYTES", 997)  # hundreds of pieces, cut anywhere
    monkeypatch.setattr(batches, "BATCH_ROWS", 37)
    for name in ("fair.parquet", "fair.tsv", "fair.csv"):
        _same(reference, partial_r2_one_pass(tmp_path / name, formula, "rate_marriage"))
    _same(reference, partial_r2_one_pass(fair, formula, "rate_marriage"))


def _messy(n=3000, seed=4):
    """Text, true/false and integer-coded categories, missing cells, levels met late."""
    rng = np.random.default_rng(seed)
    region = rng.choice(["north", "east", "south", "west"], n)
    region[: n // 2] = np.where(region[: n // 2] == "east", "west", region[: n // 2])  # late
    frame = pd.DataFrame(
        {
            "y": rng.normal(size=n),
            "t": rng.normal(size=n),
            "x": rng.normal(size=n),
            "region": region,
            "smoker": rng.random(n) < 0.3,
            "grade": rng.integers(1, 5, n),
        }
    )
    frame["y"] += 0.4 * frame["t"] + 0.2 * frame["smoker"] + 0.1 * frame["grade"]
    frame.loc[rng.choice(n, 40, replace=False), "x"] = np.nan
    frame.loc[rng.choice(n, 25, replace=False), "y"] = np.nan
    frame = frame.astype({"region": object})
    frame.loc[rng.choice(n, 15, replace=False), "region"] = None
    return frame


@pytest.mark.parametrize(
    "formula, treatment",
    [
        ("y ~ t + x + region + smoker + C(grade)", "t"),
        ("y ~ x + region + smoker + t", "t"),
        ("y ~ t + x + region + smoker", "smoker[T.True]"),
        ("y ~ 0 + region + t + C(grade)", "t"),
    ],
)
def test_messy_data_equal_to_statsmodels(formula, treatment, tmp_path, monkeypatch):
    frame = _messy()
    path = tmp_path / "messy.csv"
    frame.to_csv(path, index=False)
    reference = _reference(pd.read_csv(path), formula, treatment)
    monkeypatch.setattr(files, "CHUNK_BYTES", 4096)
    _same(reference, partial_r2_one_pass(path, formula, treatment))
    _same(reference, partial_r2_one_pass(frame, formula, treatment))


def test_a_column_that_turns_to_text_partway_is_a_category_as_pandas_reads_it(
    tmp_path, monkeypatch
):
    # pandas reads a column of numbers with one text cell as text; patsy then codes it as a
    # category. The piece that meets the text comes long after the first.
    rng = np.random.default_rng(1)
    n = 2000
    frame = pd.DataFrame({"y": rng.normal(size=n), "t": rng.normal(size=n),
                          "dose": rng.integers(0, 3, n).astype(object)})  # fmt: skip
    frame.loc[n - 5, "dose"] = "high"
    path = tmp_path / "late.csv"
    frame.to_csv(path, index=False)
    monkeypatch.setattr(files, "CHUNK_BYTES", 2048)
    reference = _reference(pd.read_csv(path), "y ~ t + dose", "t")
    _same(reference, partial_r2_one_pass(path, "y ~ t + dose", "t"))
    # whole numbers that later hold a fraction stay numbers
    frame = pd.DataFrame({"y": rng.normal(size=n), "t": rng.normal(size=n),
                          "w": rng.integers(0, 9, n).astype(float)})  # fmt: skip
    frame.loc[n - 3, "w"] = 2.5
    frame.to_csv(path, index=False)
    reference = _reference(pd.read_csv(path), "y ~ t + C(w)", "t")
    _same(reference, partial_r2_one_pass(path, "y ~ t + C(w)", "t"))


def test_quoted_cells_with_newlines_survive_the_pieces(tmp_path, monkeypatch):
    rng = np.random.default_rng(2)
    n = 400
    frame = pd.DataFrame({"y": rng.normal(size=n), "t": rng.normal(size=n),
                          "site": rng.choice(["A\nnorth", 'B "old"', "C, east"], n)})  # fmt: skip
    path = tmp_path / "quoted.csv"
    frame.to_csv(path, index=False)
    monkeypatch.setattr(files, "CHUNK_BYTES", 300)
    reference = _reference(pd.read_csv(path), "y ~ t + site", "t")
    _same(reference, partial_r2_one_pass(path, "y ~ t + site", "t"))


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["1", "2.5", "-3", "", "x", "NA", "nan", "true", "1e3"]),
                          st.sampled_from(batches.MISSING + ["a", "b", "NAN", " NA"]),
                          st.booleans(), st.integers(0, 9)),
                min_size=1, max_size=60), st.integers(8, 200))  # fmt: skip
def test_pieces_parsed_without_the_missing_words_read_the_same(cells, chunk):
    # The first piece's types are inferred from its first rows (3 here), then the piece
    # parsed with them; the others are parsed without polars' list of missing-value words,
    # their text cells that are one of the words made missing. The batches must be exactly
    # those of every piece parsed with the list and the first inferred whole, whatever the
    # cells, quoted or not, and wherever the pieces are cut.
    import tempfile
    from pathlib import Path

    lines = ["n,w,k"]
    for number, word, quoted, k in cells:
        lines.append(",".join([number, f'"{word}"' if quoted else word, str(k)]))
    text = "\n".join(lines) + "\n"
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "words.csv"
        path.write_text(text)
        got, want = [], []
        for out, quick in ((got, True), (want, False)):
            before, size = (batches._read_first, batches._read_held), files.CHUNK_BYTES
            if not quick:  # every piece parsed with the list, as before
                batches._read_first = lambda read, dtypes: read(dtypes, None)
                batches._read_held = lambda read, dtypes: read(dtypes, 0)
            files.CHUNK_BYTES, batches.INFER_ROWS = chunk, 3
            try:
                out.append(_batches_of(path))
            except Exception as err:  # noqa: BLE001 - both must fail alike
                out.append(type(err).__name__)
            finally:
                (batches._read_first, batches._read_held), files.CHUNK_BYTES = before, size
                batches.INFER_ROWS = 1000
    assert got == want


def _batches_of(path):
    """Every batch of a file as plain Python values (NaN as None) for comparing."""
    source = batches.file_source(path)
    out = []
    for batch in batches.restarting(lambda forced: list(source.batches(["n", "w", "k"], forced))):
        row = {}
        for name, (kind, values) in batch.items():
            seq = values.to_pylist() if kind == "text" else values.tolist()
            row[name] = (kind, [None if v is None or v != v else v for v in seq])
        out.append(row)
    return out


def test_byte_chunks_cut_only_between_records(tmp_path):
    path = tmp_path / "q.csv"
    path.write_bytes(b'a,b\n1,"x\ny"\n2,"p""q\nr"\n3,z\n')
    pieces = list(files.byte_chunks(path, size=5))
    assert all(head == b"a,b\n" for head, _ in pieces)
    assert b"".join(body for _, body in pieces) == b'1,"x\ny"\n2,"p""q\nr"\n3,z\n'
    for _, body in pieces:
        assert body.count(b'"') % 2 == 0 and body.endswith(b"\n")


def _mp_ols(frame, target, columns):
    """(coefficients, residual sum of squares) at 60 digits by the normal equations: the
    high-precision reference (mpmath; a condition number of 1e11 squares to 1e22, well inside
    60 digits)."""
    import mpmath as mp

    mp.mp.dps = 60
    rows = [[mp.mpf(1)] + [mp.mpf(float(v)) for v in r] for r in frame[columns].to_numpy()]
    y = [mp.mpf(float(v)) for v in frame[target]]
    p = len(columns) + 1
    gram = mp.matrix([[mp.fsum(r[a] * r[b] for r in rows) for b in range(p)] for a in range(p)])
    rhs = mp.matrix([mp.fsum(r[a] * v for r, v in zip(rows, y, strict=True)) for a in range(p)])
    beta = mp.lu_solve(gram, rhs)
    rss = mp.fsum((v - mp.fsum(r[a] * beta[a] for a in range(p))) ** 2
                  for r, v in zip(rows, y, strict=True))  # fmt: skip
    return beta, rss


def _ill(n, offset, gap, seed=3):
    rng = np.random.default_rng(seed)
    base = rng.normal(size=n)
    frame = pd.DataFrame({
        "x1": offset + base,
        "x2": offset + base + gap * rng.normal(size=n),
        "small": 1e-4 * rng.normal(size=n),
        "big": 1e5 * rng.normal(size=n),
        "t": rng.normal(size=n) + 0.3 * base,
    })  # fmt: skip
    frame["y"] = 0.5 * frame["t"] + frame["x1"] - frame["x2"] + 3e3 * frame["small"] + \
        1e-5 * frame["big"] + rng.normal(size=n)  # fmt: skip
    return frame


def test_moderately_ill_conditioned_design_agrees_with_statsmodels():
    # Condition number about 1e8 (an offset of 1e4, scales from 1e-4 to 1e5, two covariates
    # correlated at 0.99995): X'X (1e16) would keep no digit; statsmodels' SVD and our R
    # factor agree to 1e-8.
    frame = _ill(3000, 1e4, 1e-2)
    formula = "y ~ t + x1 + x2 + small + big"
    fit = smf.ols(formula, data=frame).fit()
    assert np.linalg.cond(fit.model.exog) > 1e7
    reference = partial_r2_from_model(fit, "t", benchmarks=["x1", "small"])
    _same(reference, partial_r2_one_pass(frame, formula, "t", benchmarks=["x1", "small"]))


def test_severely_ill_conditioned_design_agrees_with_60_digit_arithmetic():
    # Condition number about 1e11 (an offset of 1e6, covariates correlated at 0.9999998):
    # statsmodels' own partial R² of x1 is off in the sixth digit here; ours must match a
    # 60-digit computation to 1e-8 (the offset is taken out before the factor, see _shifted).
    import mpmath as mp

    frame = _ill(800, 1e6, 5e-4)
    formula = "y ~ t + x1 + x2 + small + big"
    assert np.linalg.cond(smf.ols(formula, data=frame).fit().model.exog) > 1e10
    got = partial_r2_one_pass(frame, formula, "t")
    beta, rss = _mp_ols(frame, "y", ["t", "x1", "x2", "small", "big"])
    dof = len(frame) - 6
    assert float(got.estimate) == pytest.approx(float(beta[1]), rel=1e-8)
    assert float(got.se) ** 2 * dof == pytest.approx(
        float(rss / _mp_ols(frame, "t", ["x1", "x2", "small", "big"])[1]), rel=1e-8
    )  # se² = sigma² / rss(t on covariates)
    _, full = _mp_ols(frame, "t", ["x1", "x2", "small", "big"])
    _, without = _mp_ols(frame, "t", ["x2", "small", "big"])
    by_name = {c.name: c for c in got.covariates}
    assert by_name["x1"].r2_treatment == pytest.approx(float((without - full) / without), rel=1e-8)
    _, without_y = _mp_ols(frame, "y", ["t", "x2", "small", "big"])
    assert by_name["x1"].r2_outcome == pytest.approx(float((without_y - rss) / without_y), rel=1e-8)
    assert mp.mp.dps == 60


def test_a_covariate_in_the_span_of_others_is_left_out_with_a_note():
    rng = np.random.default_rng(5)
    n = 500
    frame = pd.DataFrame({"y": rng.normal(size=n), "t": rng.normal(size=n),
                          "a": rng.normal(size=n), "b": rng.normal(size=n)})  # fmt: skip
    frame["c"] = frame["a"] - 2 * frame["b"]
    got = partial_r2_one_pass(frame, "y ~ t + a + b + c", "t")
    fit = smf.ols("y ~ t + a + b", data=frame).fit()
    assert float(got.estimate) == pytest.approx(fit.params["t"], rel=1e-10)
    assert float(got.se) == pytest.approx(fit.bse["t"], rel=1e-10)
    assert float(got.dof) == fit.df_resid
    assert any("Left out as linear combinations" in n and "c" in n for n in got.notes)


def test_bad_input():
    frame = pd.DataFrame({"y": [1.0, 2, 3, 4, 5], "t": [1.0, 2, 3, 4, 5], "u": [2.0, 4, 6, 8, 10],
                          "g": list("abcab")})  # fmt: skip
    with pytest.raises(InputError, match=r"`treatment` 't' is a linear combination"):
        partial_r2_one_pass(frame, "y ~ u + t", "t")
    with pytest.raises(InputError, match=r"the outcome column 'g' must be numeric"):
        partial_r2_one_pass(frame, "g ~ t", "t")
    with pytest.raises(InputError, match=r"residual degrees of freedom; need at least 2"):
        partial_r2_one_pass(frame, "y ~ t + C(g)", "t")
    empty = frame.assign(y=np.nan)
    with pytest.raises(InputError, match=r"no row has a value in every column"):
        partial_r2_one_pass(empty, "y ~ t", "t")


def test_the_factor_equals_the_qr_of_all_rows_whatever_the_batches():
    # The running R against numpy's QR of the whole matrix (same up to the signs of rows).
    rng = np.random.default_rng(6)
    x = rng.normal(size=(1000, 7))
    factor = onepass.TriangularFactor()
    for start in range(0, 1000, 91):
        factor.add_rows(x[start : start + 91])
    whole = np.linalg.qr(x, mode="r")
    assert np.allclose(np.abs(factor.r), np.abs(whole), rtol=1e-10, atol=1e-10)


def test_bad_files(tmp_path, run):
    one = tmp_path / "one.csv"
    one.write_text("y,t,x\n1,2,3\n")
    res = run("partial-r2", "--data", one, "--formula", "y ~ t + x", "--treatment", "t")
    assert res.exit_code == 2
    assert (
        res.stderr
        == "Error: `--data`: the fit has 0 residual degrees of freedom; need at least 2\n"
    )
    broken = tmp_path / "broken.csv"
    broken.write_text('y,t,x\n1,2,3\n2,"3,4\n')
    res = run("partial-r2", "--data", broken, "--formula", "y ~ t + x", "--treatment", "t")
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert res.stderr.startswith(f"Error: `--data`: could not read {broken}: could not parse")


@settings(max_examples=40, deadline=None)
@given(st.integers(12, 80), st.integers(1, 3), st.integers(0, 4), st.floats(0, 0.2),
       st.integers(1, 50), st.integers(0, 2**32 - 1))  # fmt: skip
def test_any_small_table_equals_statsmodels(n, k, levels, missing, batch, seed):
    # Property: whatever the table (numeric covariates, a text category or none, missing
    # cells, any batch size), the one pass equals a statsmodels fit of the same formula.
    rng = np.random.default_rng(seed)
    frame = pd.DataFrame(rng.normal(size=(n, k)), columns=[f"x{i}" for i in range(k)])
    frame["t"] = rng.normal(size=n) + frame["x0"]
    frame["y"] = 0.5 * frame["t"] + frame.sum(axis=1) + rng.normal(size=n)
    terms = [f"x{i}" for i in range(k)]
    if levels >= 2:
        frame["g"] = rng.choice([f"L{j}" for j in range(levels)], n).astype(object)
        terms.append("g")
    for col in frame.columns:
        frame.loc[rng.random(n) < missing, col] = np.nan if col != "g" else None
    formula = "y ~ t + " + " + ".join(terms)
    used = frame.dropna()
    if len(used) < len(terms) + 8 or (levels >= 2 and used["g"].nunique() < levels):
        return  # too few rows, or a level only in dropped rows (statsmodels keeps its column)
    fit = smf.ols(formula, data=frame).fit()
    if np.linalg.matrix_rank(fit.model.exog) < fit.model.exog.shape[1]:
        return
    batches.BATCH_ROWS, before = batch, batches.BATCH_ROWS
    try:
        got = partial_r2_one_pass(frame, formula, "t")
    finally:
        batches.BATCH_ROWS = before
    assert float(got.estimate) == pytest.approx(fit.params["t"], rel=1e-8, abs=1e-12)
    assert float(got.se) == pytest.approx(fit.bse["t"], rel=1e-8)
    assert float(got.dof) == fit.df_resid
    reference = _reference(frame, formula, "t")
    for mine, theirs in zip(got.covariates, reference.covariates, strict=True):
        assert mine.name == theirs.name
        assert mine.r2_outcome == pytest.approx(theirs.r2_outcome, rel=1e-7, abs=1e-12)
        assert mine.r2_treatment == pytest.approx(theirs.r2_treatment, rel=1e-7, abs=1e-12)


@pytest.mark.parametrize("kind", ["text", "number"])
def test_a_first_batch_whose_category_is_all_missing(kind):
    # Found by the property above (hypothesis, n=42, batch=1): a first piece whose category
    # cell is missing has no level yet; the row is dropped, not an internal error.
    rng = np.random.default_rng(115)
    frame = pd.DataFrame({"t": rng.normal(size=30), "x": rng.normal(size=30)})
    frame["y"] = frame["t"] + rng.normal(size=30)
    levels = np.array(["a", "b", "c"] * 10, dtype=object) if kind == "text" else np.tile(
        [1.0, 2.0, 3.0], 10)  # fmt: skip
    levels[0] = None if kind == "text" else np.nan
    frame["g"] = levels
    fit = smf.ols("y ~ t + x + C(g)", data=frame).fit()
    batches.BATCH_ROWS, before = 1, batches.BATCH_ROWS
    try:
        got = partial_r2_one_pass(frame, "y ~ t + x + C(g)", "t")
    finally:
        batches.BATCH_ROWS = before
    assert float(got.estimate) == pytest.approx(fit.params["t"], rel=1e-8)
    assert float(got.se) == pytest.approx(fit.bse["t"], rel=1e-8)
