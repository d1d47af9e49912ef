"""Screening many published results at once (issue 10): every row kept in order, bad rows
flagged with a reason, computed columns equal to the single-result functions."""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity import evalue, partial_r2_summary
from sensitivity.common.errors import InputError
from sensitivity.evalues.core import bounding_factor, evalue_of_risk_difference
from sensitivity.output.streams import FORMULA_STARTS
from sensitivity.screen import Options, parse, screen_columns
from sensitivity.screen.stream import screen_summary, screen_table

# --------------------------------------------------------------------------- free text
# (cell, estimate, lower, upper, scale named, level): spellings as they appear in papers and
# abstracts; the values are what a careful reader takes from each.
SPELLINGS = [
    ("1.45 (1.12-1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12–1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12—1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12 - 1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45(1.12-1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 [1.12-1.88]", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12, 1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12; 1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (1.12 to 1.88)", 1.45, 1.12, 1.88, "", None),
    ("1.45 (95% CI 1.12-1.88)", 1.45, 1.12, 1.88, "", 0.95),
    ("1.45 (95% CI: 1.12-1.88)", 1.45, 1.12, 1.88, "", 0.95),
    ("1.45 (95%CI 1.12–1.88)", 1.45, 1.12, 1.88, "", 0.95),
    ("1.45 (90% CI 1.20 to 1.75)", 1.45, 1.20, 1.75, "", 0.90),
    ("1.45 (95% confidence interval 1.12 to 1.88)", 1.45, 1.12, 1.88, "", 0.95),
    ("HR 0.72 [0.60, 0.86]", 0.72, 0.60, 0.86, "hr", None),
    ("HR 0.72 (0.60-0.86)", 0.72, 0.60, 0.86, "hr", None),
    ("HR: 0.72 (0.60–0.86)", 0.72, 0.60, 0.86, "hr", None),
    ("HR=0.72 (0.60-0.86)", 0.72, 0.60, 0.86, "hr", None),
    ("aHR 0.72 (0.60-0.86)", 0.72, 0.60, 0.86, "hr", None),
    ("hazard ratio 0.72 (0.60 to 0.86)", 0.72, 0.60, 0.86, "hr", None),
    ("adjusted hazard ratio 0.72 (95% CI 0.60-0.86)", 0.72, 0.60, 0.86, "hr", 0.95),
    ("0.72 (95% CI 0.60 to 0.86)", 0.72, 0.60, 0.86, "", 0.95),
    ("OR=2.1; 95% CI 1.4 to 3.15", 2.1, 1.4, 3.15, "or", 0.95),
    ("OR 2.1, 95% CI 1.4-3.15", 2.1, 1.4, 3.15, "or", 0.95),
    ("aOR 1.3 (1.1–1.6)", 1.3, 1.1, 1.6, "or", None),
    ("odds ratio 1.3 (1.1-1.6)", 1.3, 1.1, 1.6, "or", None),
    ("RR 1.2 (1.0-1.4)", 1.2, 1.0, 1.4, "rr", None),
    ("relative risk 1.2 (1.0 to 1.4)", 1.2, 1.0, 1.4, "rr", None),
    ("IRR 1.8 (1.3–2.5)", 1.8, 1.3, 2.5, "rr", None),
    ("RR 1.2", 1.2, None, None, "rr", None),
    ("1.2", 1.2, None, None, "", None),
    ("−0.30 (−0.50 to −0.10)", -0.30, -0.50, -0.10, "", None),
    ("-0.30 (-0.50--0.10)", -0.30, -0.50, -0.10, "", None),
    ("-0.30 (-0.50 – -0.10)", -0.30, -0.50, -0.10, "", None),
    ("SMD 0.25 (0.10, 0.40)", 0.25, 0.10, 0.40, "smd", None),
    ("d = 0.25 (0.10-0.40)", 0.25, 0.10, 0.40, "smd", None),
    ("MD 4.2 (1.1 to 7.3)", 4.2, 1.1, 7.3, "md", None),
    ("RD 0.05 (0.01-0.09)", 0.05, 0.01, 0.09, "rd", None),
    ("HR 0.72 (0.60 - 0.86), p=0.01", 0.72, 0.60, 0.86, "hr", None),
    ("1.3 (1.1-1.6) (P<0.001)", 1.3, 1.1, 1.6, "", None),
    ("1.45 (1.12-1.88).", 1.45, 1.12, 1.88, "", None),
    ("  1.45  (1.12-1.88)  ", 1.45, 1.12, 1.88, "", None),
    ("1.45\u00a0(1.12-1.88)", 1.45, 1.12, 1.88, "", None),
    ("2.0e-1 (1.0e-1 to 3.0e-1)", 0.2, 0.1, 0.3, "", None),
]


def test_the_table_of_spellings_is_long_enough():
    assert len(SPELLINGS) >= 40


@pytest.mark.parametrize(
    "cell, est, lo, up, scale, level", SPELLINGS, ids=[s[0] for s in SPELLINGS]
)
def test_free_text_spellings(cell, est, lo, up, scale, level):
    got = parse(cell)
    assert got["error"] == ""
    assert got["estimate"] == pytest.approx(est)
    if lo is None:
        assert math.isnan(got["lower"]) and math.isnan(got["upper"])
    else:
        assert (got["lower"], got["upper"]) == pytest.approx((lo, up))
    assert got["scale"] == scale
    if level is None:
        assert math.isnan(got["level"])
    else:
        assert got["level"] == pytest.approx(level)


@pytest.mark.parametrize(
    "cell, reason",
    [
        ("1,45 (1,12-1,88)", "decimal commas"),
        ("1,45", "decimal commas"),
        ("1.45 (1.12-", "the interval is incomplete"),
        ("1.45 (1.12", "the interval is incomplete"),
        ("1.45 (1.12-1.88); 1.30 (1.01-1.67)", "two results in one cell"),
        ("1.45 (1.12-1.88) and 1.30 (1.01-1.67)", "two results in one cell"),
        ("NR", "no result in the text"),
        ("n.r.", "no result in the text"),
        ("not reported", "no result in the text"),
        ("", "no result in the text"),
        ("   ", "no result in the text"),
        (None, "the result text is blank"),
        ("x" * 500, "longer than 200 characters"),
        ("\x00\x01binary\x02", "control or undecodable characters"),
        ('=HYPERLINK("http://x")', "cannot read an estimate"),
        ("@SUM(A1:A2)", "cannot read an estimate"),
        ("see text", "cannot read an estimate"),
    ],
)
def test_cells_that_cannot_be_read_are_flagged_not_guessed(cell, reason):
    got = parse(cell)
    assert reason in got["error"] and not got["error"].startswith(FORMULA_STARTS)
    assert math.isnan(got["estimate"])


# --------------------------------------------------------------------------- row by row
def _cells(row: dict, keys) -> dict:
    return {k: np.array([row.get(k, "") for _ in [0]], dtype=object) for k in keys}


KEYS = ("scale", "estimate", "lower", "upper", "se", "dof", "sd", "outcome", "prevalence")

good = st.one_of(
    st.builds(
        lambda e, w, s, f: {"scale": s, "estimate": f"{e:.4g}", "lower": f"{e / w:.4g}",
                            "upper": f"{e * w:.4g}", "outcome": f},
        st.floats(0.1, 10), st.floats(1.05, 3), st.sampled_from(["rr", "or", "hr", "RR", " Hr "]),
        st.sampled_from(["rare", "common"]),
    ),
    st.builds(lambda e, s: {"scale": "smd", "estimate": f"{e:.4g}", "se": f"{s:.4g}"},
              st.floats(-2, 2), st.floats(0.01, 1)),
    st.builds(lambda e, s, sd: {"scale": "md", "estimate": f"{e:.4g}", "se": f"{s:.4g}",
                                "sd": f"{sd:.4g}"},
              st.floats(-20, 20), st.floats(0.05, 5), st.floats(1, 30)),
)  # fmt: skip
bad = st.sampled_from([
    {"scale": "rr", "estimate": "-1"},
    {"scale": "rr", "estimate": "abc"},
    {"scale": "rr", "estimate": ""},
    {"scale": "or", "estimate": "2"},
    {"scale": "rr", "estimate": "2", "lower": "3", "upper": "4"},
    {"scale": "md", "estimate": "2", "se": "1"},
    {"scale": "zz", "estimate": "2"},
    {"scale": "", "estimate": "2"},
    {"scale": "hr", "estimate": "2", "outcome": "often"},
])  # fmt: skip


def _single(row):
    """The single-result answer: (evalue, evalue_ci) or the InputError text."""
    ci = (float(row["lower"]), float(row["upper"])) if row.get("lower") else None
    kw = {}
    if row.get("se"):
        kw["se"] = float(row["se"])
    if row.get("sd"):
        kw["sd"] = float(row["sd"])
    if row.get("outcome"):
        kw["outcome"] = row["outcome"]
    res = evalue(row["scale"].strip().lower(), float(row["estimate"]), ci, **kw)
    return float(res.evalue), None if res.evalue_ci is None else float(res.evalue_ci)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(good, bad), min_size=1, max_size=25))
def test_computed_columns_equal_the_single_result_functions(rows):
    cols = {k: np.array([r.get(k, "") for r in rows], dtype=object) for k in KEYS}
    out = screen_columns(cols, len(rows), Options(confounders=((2.0, 3.0),)))
    assert len(out["error"]) == len(rows)
    for i, row in enumerate(rows):
        try:
            e, e_ci = _single(row)
        except (InputError, ValueError):
            assert out["error"][i] != "" and math.isnan(out["evalue"][i])
            continue
        assert out["error"][i] == ""
        assert out["evalue"][i] == pytest.approx(e, rel=1e-12)
        if e_ci is not None:
            assert out["evalue_ci"][i] == pytest.approx(e_ci, rel=1e-12)
        b = float(bounding_factor(2.0, 3.0))
        rr = out["rr"][i]
        expected = b >= max(rr, 1 / rr)
        assert out["confounder_1_explains_estimate"][i] == ("true" if expected else "false")


@pytest.mark.parametrize(
    "row, reason",
    [
        ({"scale": "rr", "estimate": "-1"}, "`estimate` must be positive; got -1"),
        ({"scale": "rr", "estimate": "abc"}, "`estimate` is not a number: 'abc'"),
        ({"scale": "rr", "estimate": "1,5"},
         "`estimate` is not a number: '1,5' (a decimal comma?)"),
        ({"scale": "rr", "estimate": ""}, "`estimate` is missing"),
        ({"scale": "or", "estimate": "2"},
         "the outcome's frequency (`outcome`) is needed on the or scale"),
        ({"scale": "rr", "estimate": "2", "lower": "3", "upper": "4"},
         "`estimate` must lie within `ci`; got 2 outside [3, 4]"),
        ({"scale": "rr", "estimate": "2", "lower": "1.5"}, "`ci` needs both limits"),
        ({"scale": "md", "estimate": "2", "se": "1"}, "`sd` is required for scale md"),
        ({"scale": "zz", "estimate": "2"}, "`scale` must be one of rr, or, hr, smd, md, ols, rd"),
        ({"scale": "", "estimate": "2"}, "`scale` is missing"),
        ({"scale": "ols", "estimate": "2", "se": "-1", "dof": "100"}, "`se` must be positive"),
        ({"scale": "ols", "estimate": "2", "se": "1", "dof": "1"}, "`dof` must be at least 2"),
        ({"scale": "rd", "cases_treated": "12", "total_treated": "10", "cases_control": "1",
          "total_control": "10"}, "`cases_treated` must not exceed `total_treated`"),
        ({"scale": "rd", "cases_treated": "1.5", "total_treated": "10", "cases_control": "1",
          "total_control": "10"}, "`cases_treated` must be a whole number"),
        ({"scale": "rr", "estimate": "1e999"}, "`estimate` must be a finite number"),
    ],
)  # fmt: skip
def test_each_reason(row, reason):
    keys = set(row) | {"scale", "estimate"}
    cols = {k: np.array([row.get(k, "")], dtype=object) for k in keys}
    out = screen_columns(cols, 1)
    assert out["error"][0].replace("`lower`", "`ci`").startswith(reason), out["error"][0]
    # the writer trusts the screen's own text columns: none may start as a formula
    assert not out["error"][0].startswith(FORMULA_STARTS)


def test_regression_rows_get_partial_r2_and_robustness_values():
    row = {"scale": "ols", "estimate": "0.114", "se": "0.027", "dof": "1192"}
    cols = {k: np.array([v], dtype=object) for k, v in row.items()}
    out = screen_columns(cols, 1)
    ref = partial_r2_summary(0.114, 0.027, 1192)
    assert out["partial_r2"][0] == pytest.approx(ref.partial_r2, rel=1e-12)
    assert out["robustness_value"][0] == pytest.approx(ref.robustness_value, rel=1e-12)
    assert out["robustness_value_alpha"][0] == pytest.approx(ref.robustness_value_alpha, rel=1e-12)
    assert math.isnan(out["evalue"][0]) and "no sd" in out["notes"][0]


def test_risk_difference_rows_from_counts():
    cols = {k: np.array([v], dtype=object) for k, v in
            {"scale": "rd", "cases_treated": "60", "total_treated": "1000",
             "cases_control": "40", "total_control": "1000"}.items()}  # fmt: skip
    out = screen_columns(cols, 1)
    ref = evalue_of_risk_difference(60, 1000, 40, 1000)
    assert out["evalue"][0] == pytest.approx(float(ref["evalue"]))
    assert out["evalue_ci"][0] == pytest.approx(float(ref["evalue_ci"]))


def test_the_risk_difference_bound_is_never_violated():
    # METHODS-MORE 4.5: random joint distributions of (E, U binary, Y); the causal RD is never
    # below (p1 - p0 B) f + (p1 / B - p0)(1 - f), with B from the distribution's own RRs.
    rng = np.random.default_rng(7)
    k = 20_000
    f = rng.uniform(0.05, 0.95, k)
    pu1, pu0 = rng.uniform(0.01, 0.99, (2, k))  # P(U=1 | E=1), P(U=1 | E=0)
    y = rng.uniform(0.01, 0.99, (2, 2, k))  # P(Y=1 | E=e, U=u)
    p1 = y[1, 1] * pu1 + y[1, 0] * (1 - pu1)
    p0 = y[0, 1] * pu0 + y[0, 0] * (1 - pu0)
    rr_eu = np.maximum(pu1 / pu0, (1 - pu1) / (1 - pu0))
    rr_ud = np.maximum(
        np.maximum(y[1, 1], y[1, 0]) / np.minimum(y[1, 1], y[1, 0]),
        np.maximum(y[0, 1], y[0, 0]) / np.minimum(y[0, 1], y[0, 0]),
    )
    b = bounding_factor(rr_eu, rr_ud)
    pu = f * pu1 + (1 - f) * pu0
    true_rd = (y[1, 1] - y[0, 1]) * pu + (y[1, 0] - y[0, 0]) * (1 - pu)
    bound = (p1 - p0 * b) * f + (p1 / b - p0) * (1 - f)
    assert np.all(true_rd >= bound - 1e-12)


# --------------------------------------------------------------------------- the command
def _read(path, delimiter=","):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh, delimiter=delimiter))


def _write(path, rows, header=None):
    header = header or list(rows[0])
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=header)
        w.writeheader()
        w.writerows(rows)


ROWS = [
    {"id": "a", "scale": "hr", "estimate": "1.38", "lower": "1.12", "upper": "1.70",
     "outcome": "rare", "note": "=cmd|' /C calc'!A0"},
    {"id": "b", "scale": "rr", "estimate": "oops", "lower": "", "upper": "", "outcome": "",
     "note": "-0.4"},
    {"id": "c", "scale": "smd", "estimate": "-0.30", "lower": "-0.50", "upper": "-0.10",
     "outcome": "", "note": "@x"},
    {"id": "d", "scale": "or", "estimate": "2.4", "lower": "1.8", "upper": "3.2",
     "outcome": "common", "note": "+1"},
]  # fmt: skip


def test_every_row_comes_out_in_order_with_its_cells_echoed(run, tmp_path):
    src = tmp_path / "in.csv"
    _write(src, ROWS)
    res = run("screen", src, "--output", tmp_path / "out.csv", "--confounder", 3, 3)
    assert res.exit_code == 0, res.stderr
    out = _read(tmp_path / "out.csv")
    assert [r["id"] for r in out] == ["a", "b", "c", "d"]
    assert out[0]["estimate"] == "1.38" and out[2]["lower"] == "-0.50"
    assert out[1]["error"] == "`estimate` is not a number: 'oops'" and out[1]["evalue"] == ""
    assert float(out[0]["evalue"]) == pytest.approx(float(evalue("hr", 1.38, (1.12, 1.7),
                                                               outcome="rare").evalue))  # fmt: skip
    assert out[0]["confounder_1_explains_estimate"] == "true"
    assert "Read 4 rows" in res.stderr and "1 flagged" in res.stderr


def test_text_cells_are_defused_against_spreadsheet_formulas(run, tmp_path):
    src = tmp_path / "in.csv"
    _write(src, ROWS)
    for ext in ("csv", "xlsx"):
        res = run("screen", src, "--output", tmp_path / f"out.{ext}")
        assert res.exit_code == 0, res.stderr
    out = _read(tmp_path / "out.csv")
    assert [r["note"] for r in out] == ["'=cmd|' /C calc'!A0", "-0.4", "'@x", "+1"]
    import pandas as pd

    sheet = pd.read_excel(tmp_path / "out.xlsx", dtype=str)
    assert sheet["note"].tolist()[0].startswith("'=")
    assert sheet["estimate"].tolist()[2] == "-0.30"


@pytest.mark.parametrize("ext", ["csv", "tsv", "parquet", "xlsx", "json"])
def test_every_output_format(run, tmp_path, ext):
    src = tmp_path / "in.csv"
    _write(src, ROWS)
    out = tmp_path / f"out.{ext}"
    res = run("screen", src, "--output", out)
    assert res.exit_code == 0, res.stderr
    if ext == "json":
        data = json.loads(out.read_text())
        assert [r["id"] for r in data["rows"]] == ["a", "b", "c", "d"]
        assert data["summary"]["rows"] == 4
    elif ext == "parquet":
        import pyarrow.parquet as pq

        assert pq.read_table(out).column("id").to_pylist() == ["a", "b", "c", "d"]
    elif ext == "xlsx":
        import pandas as pd

        assert pd.read_excel(out)["id"].tolist() == ["a", "b", "c", "d"]
    else:
        sep = "," if ext == "csv" else "\t"
        assert len(_read(out, sep)) == 4


@pytest.mark.parametrize("ext", ["tsv", "parquet", "xlsx"])
def test_every_input_format(run, tmp_path, ext):
    import pandas as pd

    frame = pd.DataFrame(ROWS)
    src = tmp_path / f"in.{ext}"
    if ext == "tsv":
        frame.to_csv(src, sep="\t", index=False)
    elif ext == "parquet":
        frame.to_parquet(src)
    else:
        frame.to_excel(src, index=False)
    res = run("screen", src, "--format", "csv")
    assert res.exit_code == 0, res.stderr
    out = list(csv.DictReader(io.StringIO(res.stdout)))
    assert [r["id"] for r in out] == ["a", "b", "c", "d"]


def test_columns_are_mapped_and_text_is_read(run, tmp_path):
    src = tmp_path / "in.csv"
    _write(src, [
        {"kind": "HR", "value": "1.38", "result": "", "lo": "1.12", "hi": "1.70", "freq": "rare"},
        {"kind": "", "value": "", "result": "aOR 2.4 (95% CI 1.8 to 3.2)", "lo": "", "hi": "",
         "freq": "common"},
        {"kind": "rr", "value": "", "result": "HR 1.2 (1.0-1.4)", "lo": "", "hi": "", "freq": ""},
    ])  # fmt: skip
    res = run("screen", src, "--columns", "scale=kind,estimate=value,lower=lo,upper=hi",
              "--columns", "outcome=freq", "--from-text", "result", "--format", "csv")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    out = list(csv.DictReader(io.StringIO(res.stdout)))
    assert out[0]["scale_used"] == "hr" and out[0]["error"] == ""
    assert out[1]["scale_used"] == "or" and "scale read from the text" in out[1]["notes"]
    assert out[2]["error"] == "the scale column says 'rr' but the text names 'hr'"


@pytest.mark.parametrize(
    "args, message",
    [
        (["--columns", "estimate=nope"], "`--columns`: 'nope' (for estimate) is not a column"),
        (["--columns", "size=estimate"], "`--columns`: 'size' is not a column the screen reads"),
        (["--columns", "estimate"], "Invalid value for --columns: 'estimate' must be NAME=COLUMN"),
        (["--from-text", "nope"], "`--from-text`: 'nope' is not a column of the table"),
        (["--output", "x.docx"], "`--output`: cannot tell the format of 'x.docx'"),
        (["--threshold", "0.5"], "`--threshold` must be at least 1"),
        (["--plot", "x.jpg"], "`--plot` must end in .png, .svg or .pdf"),
        # a confounder weaker than none, or not a number, would flag every row "false"
        (
            ["--confounder", "0.5", "2"],
            "the first value of `--confounder` must be at least 1; got 0.5",
        ),
        (["--confounder", "2", "nan"], "Invalid value for '--confounder': must be a finite"),
        (["--alpha", "2"], "`--alpha` must lie strictly between 0 and 1; got 2"),
    ],
)
def test_bad_options_exit_2_with_one_line(run, tmp_path, args, message):
    src = tmp_path / "in.csv"
    _write(src, ROWS)
    res = run("screen", src, *args)
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: {message}"), res.stderr
    assert res.stderr.count("\n") == 1


@pytest.mark.parametrize(
    "content, message",
    [
        (b"", "`file`: "),
        (b"scale,scale\nrr,rr\n", "has columns named twice: scale"),
        (b"a,b\n1,2\n", "the table has no 'estimate' column"),
    ],
)
def test_bad_files_exit_2(run, tmp_path, content, message):
    src = tmp_path / "in.csv"
    src.write_bytes(content)
    res = run("screen", src)
    assert res.exit_code == 2 and message in res.stderr, res.stderr


def test_summary_and_plot(run, tmp_path):
    src = tmp_path / "in.csv"
    _write(src, ROWS)
    res = run("screen", src, "--threshold", 1.5, "--confounder", 2, 2, "--plot",
              tmp_path / "e.png")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    text = " ".join(res.stdout.split())
    assert text.startswith("Read 4 rows from")
    assert "interval E-value below 1.5" in text and "could explain away the estimate" in text
    assert (tmp_path / "e.png").read_bytes().startswith(b"\x89PNG")


# --------------------------------------------------------------------------- Python
def test_screen_a_pandas_polars_or_arrow_table():
    import pandas as pd
    import pyarrow as pa

    frame = pd.DataFrame(ROWS)
    out = screen_table(frame)
    assert isinstance(out, pd.DataFrame) and out["id"].tolist() == ["a", "b", "c", "d"]
    arrow = screen_table(pa.Table.from_pandas(frame))
    assert isinstance(arrow, pa.Table) and arrow.num_rows == 4
    polars = pytest.importorskip("polars")
    pl_out = screen_table(polars.from_pandas(frame))
    assert isinstance(pl_out, polars.DataFrame) and pl_out.height == 4
    summary = screen_summary(frame, threshold=1.5)
    assert summary.rows == 4 and summary.n_flagged == 1


def test_pieces_of_the_file_keep_every_row_in_order(run, tmp_path, monkeypatch):
    # The file is parsed a piece at a time (memory bounded by the piece): cut into pieces of
    # a few hundred bytes, quoted cells with commas and newlines and every row's order survive.
    import sensitivity.adapters.files as files

    rows = [dict(r, id=f"{r['id']}{k}", note=f'line one\nline "two", {k}') for k in range(60)
            for r in ROWS]  # fmt: skip
    src = tmp_path / "in.csv"
    _write(src, rows)
    whole = run("screen", src, "--output", tmp_path / "whole.csv")
    monkeypatch.setattr(files, "FRAME_BYTES", 300)
    pieces = run("screen", src, "--output", tmp_path / "pieces.csv")
    assert whole.exit_code == pieces.exit_code == 0
    assert (tmp_path / "whole.csv").read_bytes() == (tmp_path / "pieces.csv").read_bytes()
    assert [r["id"] for r in _read(tmp_path / "pieces.csv")] == [r["id"] for r in rows]


def test_a_row_cut_short_is_an_error(run, tmp_path):
    src = tmp_path / "short.csv"
    src.write_text("scale,estimate,lower,upper,outcome\nrr,1.5,1.1,2.0,rare\nrr,1.6,1.2\n")
    res = run("screen", src)
    assert res.exit_code == 2
    assert res.stderr.startswith("Error: `file`: could not read") and "Expected 5 columns" in (
        res.stderr
    )


def test_numbers_are_read_exactly_as_the_number_pattern_says():
    # The reader trusts polars' float parser; it must accept exactly the cells the screen's
    # number pattern describes (ASCII digits, exponents, inf, infinity and nan in any case),
    # and a cell it refuses is flagged, never read as missing.
    import re

    from sensitivity.screen.stream import _NUMBER, text_or_numbers

    cells = ["1.5", " 2 ", "+.5", "5.", "-.5e-3", "1E5", "1e+07", "inf", "-Infinity", "NaN",
             "00012", "1e400", ".", "+", "-", "e", "E5", "1e", "1e+", "1..2", "--1", "+-1",
             "1e5.5", "0x1p3", "1_0", "1,5", "1 2", "in", "infinit", "snan", "1d5", "1f",
             "0b101", "∞", "١٢", "１２", "nan(1)", ""]  # fmt: skip
    out = text_or_numbers(pa_strings(cells))
    floats, bad = (out.values, set(out.bad.tolist())) if hasattr(out, "bad") else (out, set())
    for i, cell in enumerate(cells):
        ascii_number = bool(re.match(_NUMBER, cell.strip(), re.I)) and cell.strip().isascii()
        if cell.strip() == "":
            assert i not in bad and np.isnan(floats[i])
        elif ascii_number:
            assert i not in bad, cell
            assert floats[i] == pytest.approx(float(cell), nan_ok=True), cell
        else:
            assert i in bad, cell


def pa_strings(cells):
    import pyarrow as pa

    return pa.array(cells, pa.string())


def test_a_file_with_only_a_header_is_an_error(run, tmp_path):
    src = tmp_path / "header.csv"
    src.write_text("scale,estimate,lower,upper,outcome\n")
    res = run("screen", src)
    assert res.exit_code == 2 and res.stderr == f"Error: `file`: {src} has no data rows\n"


# --------------------------------------------------------------------------- the plain route
# Plain ratio rows are computed in columns (sensitivity/screen/plain.py); every other row by
# screen_columns. The two must agree bit for bit: the same table screened with the plain
# route switched off (every row sent to the core) gives the same frame and the same summary.
_NUMBER_CELLS = st.one_of(
    st.floats(1e-3, 1e3).map(lambda x: f"{x:.6g}"),
    st.floats(1e-3, 1e3).map(repr),
    st.sampled_from(["1", "1.0", "1e-300", "1e300", "9.9e-301", "1.1e300", "1e308", "1.7e308",
                     "5e-324", "1e-310", "2.5E1", "+3", ".5",
                     "0", "-1", "nan", "inf", "", " 1.2", "1.2 ", "1,5", "abc", "=1+2"]),
)  # fmt: skip
_PLAIN_ROW = st.fixed_dictionaries(
    {
        "study": st.text(max_size=6),
        "scale": st.sampled_from(["rr", "or", "hr", "rr", "or", "hr", "RR", " or", "smd", "", "x"]),
        "estimate": _NUMBER_CELLS,
        "lower": _NUMBER_CELLS,
        "upper": _NUMBER_CELLS,
        "outcome": st.sampled_from(["rare", "common", "", "rare", "common", "Rare", "often"]),
        "prevalence": st.sampled_from(["", "", "", "", "0.3", "x"]),
        "se": st.sampled_from(["", "", "", "", "0.2"]),
    }
)


def _ordered(row):
    """Most generated rows made plain-looking: limits around the estimate, when they read."""
    try:
        e, lo, up = (float(row[k]) for k in ("estimate", "lower", "upper"))
    except ValueError:
        return row
    if 0 < e < 1e300 and lo == lo and up == up:
        lo, up = sorted((lo, up))
        return dict(row, lower=repr(min(lo, e)), upper=repr(max(up, e)))
    return row


_CLEAN_ROW = st.builds(
    lambda e, w, s, o, fmt: {"study": "s", "scale": s, "estimate": fmt(e), "lower": fmt(e / w),
                             "upper": fmt(e * w), "outcome": o, "prevalence": "", "se": ""},
    st.one_of(st.floats(1e-250, 1e250), st.floats(0.05, 20)), st.floats(1, 50),
    st.sampled_from(["rr", "or", "hr"]), st.sampled_from(["rare", "common", ""]),
    st.sampled_from([repr, lambda x: f"{x:.3g}", lambda x: f"{x:.2e}"]),
)  # fmt: skip


_EDGES = [
    "5e-324",
    "1e-310",
    "9.99e-301",
    "1e-300",
    "1.0000001e-300",
    "0.5",
    "1",
    "2",
    "9.9e299",
    "1e300",
    "1.0000001e300",
    "1e308",
    "1.7e308",
]
_EDGE_ROW = st.builds(
    lambda cells, s, o: dict(zip(("lower", "estimate", "upper"),
                                 sorted(cells, key=float), strict=True),
                             study="e", scale=s, outcome=o, prevalence="", se=""),
    st.lists(st.sampled_from(_EDGES), min_size=3, max_size=3),
    st.sampled_from(["rr", "or", "hr"]), st.sampled_from(["rare", "common"]),
)  # fmt: skip


@settings(max_examples=80, deadline=None)
@given(st.lists(st.one_of(_CLEAN_ROW, _EDGE_ROW, _PLAIN_ROW.map(_ordered)), min_size=1,
                max_size=40),
       st.sampled_from([(), ((2.0, 2.0),), ((1.5, 3.0), (4.0, 4.0))]))  # fmt: skip
def test_the_plain_route_equals_the_core_bit_for_bit(rows, confounders):
    import polars as pl

    from sensitivity.screen import plain
    from sensitivity.screen.result import Tally
    from sensitivity.screen.stream import screen_frames

    frame = pl.DataFrame(rows, schema={k: pl.String for k in rows[0]})
    given_frame = frame.clone()

    def screened(frames):
        tally = Tally(threshold=1.5, n_confounders=len(confounders))
        out = pl.concat(list(screen_frames(frames, confounders=confounders, tally=tally)))
        return out, tally.result(confounders, "t").to_dict()

    # the frame whole, and in pieces of three rows
    fast, fast_summary = screened([frame])
    pieces, _ = screened([frame.slice(i, 3) for i in range(0, frame.height, 3)])
    original = plain.routes
    try:
        plain.routes = lambda f, m: plain.no_routes(f.height)
        core, core_summary = screened([frame])
    finally:
        plain.routes = original
    assert fast.equals(core, null_equal=True) and pieces.equals(core, null_equal=True)
    for name in ("rr", "rr_lower", "rr_upper", "evalue", "evalue_ci"):  # bits, not approx
        a, b = fast[name].to_numpy(), core[name].to_numpy()
        assert np.array_equal(a.view(np.int64), b.view(np.int64)), name
    assert fast_summary == core_summary
    assert frame.equals(given_frame, null_equal=True)  # the caller's frame is left as it was
    for name in ("scale_used", "error", "notes", *(c for c in fast.columns if "explains" in c)):
        assert not fast[name].str.contains(r"^[=+\-@\t\r]").any(), name


def test_plain_rows_are_most_rows_of_a_clean_table():
    # the point of the route: a clean table of ratios never reaches the core
    import polars as pl

    from sensitivity.screen.plain import routes

    frame = pl.DataFrame({"scale": ["rr", "or", "hr", "or", "hr"],
                          "estimate": ["1.5", "0.7", "2", "1.2", "0.4"],
                          "lower": ["1.1", "0.5", "1.5", "", "0.2"],
                          "upper": ["2.1", "0.9", "2.8", "", "0.8"],
                          "outcome": ["", "common", "common", "rare", "rare"]})  # fmt: skip
    mapping = {c: c for c in frame.columns}
    route, scale, values = routes(frame, mapping)
    assert route.tolist() == [0, 1, 2, 0, 0] and scale.tolist() == [0, 1, 2, 1, 2]
    assert np.isnan(values[1:, 3]).all() and values[0, 4] == 0.4


# --------------------------------------------------------------------------- reading pieces
# Text files are parsed a piece at a time by polars, and by pyarrow for a piece whose cells do
# not add up (a short row, a blank line). Source: the standard library's csv module reading
# the same bytes (blank lines skipped, as csv.reader yields them empty).
_CELL = st.one_of(
    st.sampled_from(["", "1.5", "rr", "a,b", 'say "hi"', "two\nlines", " padded ", "x\r\ny", "\t"]),
    st.text(alphabet='ab,"\n 1.', max_size=6),
)  # fmt: skip


@settings(max_examples=60, deadline=None)
@given(st.lists(st.lists(_CELL, min_size=3, max_size=3), min_size=1, max_size=30),
       st.sampled_from([",", "\t"]), st.sampled_from([40, 97, 1 << 20]),
       st.sampled_from([0, 4, 4096]), st.booleans())  # fmt: skip
def test_pieces_read_as_the_csv_module_reads_the_file(rows, sep, size, few, crlf):
    import polars as pl

    import sensitivity.adapters.files as files

    buffer = io.StringIO()
    csv.writer(buffer, delimiter=sep, lineterminator="\r\n" if crlf else "\n").writerows(
        [["a", "b", "c"], *rows]
    )
    path = _tmp_file(buffer.getvalue(), ".csv" if sep == "," else ".tsv")
    expected = [r for r in csv.reader(io.StringIO(buffer.getvalue(), newline=""),
                                      delimiter=sep)][1:]  # fmt: skip
    expected = [r for r in expected if r]
    original = files.FRAME_BYTES, files._FEW_QUOTES, files._pyarrow_piece
    files.FRAME_BYTES, files._FEW_QUOTES = size, few

    def refuse(*args):  # a well-formed piece must add up, so polars' reading stands
        raise AssertionError("a well-formed piece was sent to the fallback parser")

    files._pyarrow_piece = refuse
    try:
        if not expected:
            with pytest.raises(InputError, match="has no data rows"):
                list(files.read_frames(path))
            return
        got = pl.concat(list(files.read_frames(path)))
    finally:
        files.FRAME_BYTES, files._FEW_QUOTES, files._pyarrow_piece = original
    # the csv module keeps \r\n inside a quoted cell as written; so do the parsers
    assert got.rows() == [tuple(r) for r in expected]


def _tmp_file(text: str, suffix: str):
    import tempfile
    from pathlib import Path

    handle = tempfile.NamedTemporaryFile("w", suffix=suffix, delete=False, newline="")
    with handle:
        handle.write(text)
    return Path(handle.name)


@pytest.mark.parametrize(
    "text, rows",
    [
        ("scale,estimate\nrr,1.5\n\nrr,2\n", [("rr", "1.5"), ("rr", "2")]),  # blank line
        ("scale,estimate\r\nrr,1.5\r\n\r\nrr,2\r\n", [("rr", "1.5"), ("rr", "2")]),
        ("result\n1.5 (1.1-2.0)\n\nHR 2 (1-4)\n", [("1.5 (1.1-2.0)",), ("HR 2 (1-4)",)]),
        ('scale,estimate\nrr,"1,5"\n"r""r",2', [("rr", "1,5"), ('r"r', "2")]),
    ],
)
def test_blank_lines_are_skipped_and_quotes_kept(tmp_path, text, rows):
    import polars as pl

    from sensitivity.adapters.files import read_frames

    src = tmp_path / "t.csv"
    src.write_bytes(text.encode())
    assert pl.concat(list(read_frames(src))).rows() == rows


@pytest.mark.parametrize("body", ["rr,1.6,1.2,2,rare,extra\n", "rr,1.6\n", "rr\n"])
def test_a_row_with_too_many_or_too_few_cells_is_an_error(run, tmp_path, body):
    src = tmp_path / "ragged.csv"
    src.write_text("scale,estimate,lower,upper,outcome\nrr,1.5,1.1,2.0,rare\n" + body)
    res = run("screen", src)
    assert res.exit_code == 2 and res.stderr.startswith("Error: `file`: could not read")
    assert len(res.stderr.strip().splitlines()) == 1


def test_the_progress_bar_follows_the_frames_screened(tmp_path, monkeypatch):
    # each frame's end in the file, in order, whatever the reading ahead; the last is 100%
    import sensitivity.adapters.files as files
    from sensitivity.commands.screen import _bar
    from sensitivity.common.overlap import read_ahead

    src = tmp_path / "in.csv"
    _write(src, [dict(r, id=f"{r['id']}{k}") for k in range(50) for r in ROWS])
    monkeypatch.setattr(files, "FRAME_BYTES", 500)
    share = files.Share()
    frames = list(read_ahead(files.read_frames(src, share=share)))
    ends = [share.next() for _ in frames]
    assert len(frames) > 5 and ends == sorted(ends) and ends[-1] == 1.0 and ends[0] > 0
    assert _bar(0.5, 1234, width=10) == "[#####.....]  50%  1,234 rows screened"
    assert _bar(1.0, 7, width=4) == "[####] 100%  7 rows screened"


def test_json_rows_equal_the_csv_rows_over_many_pieces(run, tmp_path, monkeypatch):
    # JSON rows are written by polars a slice at a time; parsed back they hold what the CSV
    # holds (text exactly, numbers to the bit), with cells that need escaping
    import sensitivity.adapters.files as files

    rows = [dict(r, id=f"{r['id']}{k}", note=f'é "q" \\ line\nbreak, {k}\t') for k in range(40)
            for r in ROWS]  # fmt: skip
    src = tmp_path / "in.csv"
    _write(src, rows)
    monkeypatch.setattr(files, "FRAME_BYTES", 700)
    assert run("screen", src, "-o", tmp_path / "o.csv").exit_code == 0
    assert run("screen", src, "-o", tmp_path / "o.json").exit_code == 0
    table = _read(tmp_path / "o.csv")
    data = json.loads((tmp_path / "o.json").read_text(encoding="utf-8"))["rows"]
    assert len(data) == len(table) == len(rows)
    for got, want in zip(data, table, strict=True):
        assert got["id"] == want["id"] and got["note"] == want["note"]
        for key in ("evalue", "evalue_ci", "rr", "partial_r2"):
            assert got[key] == (float(want[key]) if want[key] else None)
        assert got["error"] == want["error"]


def test_a_pandas_column_mixing_numbers_and_text_is_read_as_text():
    # as a spreadsheet often arrives: floats and a decimal-comma string in one object column
    import pandas as pd

    frame = pd.DataFrame({"scale": ["rr", "hr", "or"], "estimate": [1.5, "2,1", None],
                          "lower": [1.1, "", None], "upper": [2.0, "", None],
                          "outcome": [None, "rare", "common"]})  # fmt: skip
    out = screen_table(frame)
    assert out["evalue"].round(4).tolist()[0] == 2.366
    assert out["error"].tolist()[1:] == [
        "`estimate` is not a number: '2,1' (a decimal comma?)",
        "`estimate` is missing",
    ]


def test_python_entry_points_refuse_bad_input_with_the_argument_named():
    import polars as pl

    from sensitivity.screen.stream import screen_frames

    with pytest.raises(InputError, match="`frames` must yield polars DataFrames; got dict"):
        list(screen_frames([{"scale": "rr"}]))
    table = pl.DataFrame({"scale": ["rr"], "estimate": ["2"]})
    # a later piece is looked at in the second thread; the error is raised in the caller's
    with pytest.raises(InputError, match="`frames` must yield polars DataFrames; got dict"):
        list(screen_frames([table, {"scale": "rr"}]))
    with pytest.raises(InputError, match=r"`confounders` must be pairs \(rr_treatment"):
        screen_table(table, confounders=[(2,)])
    with pytest.raises(InputError, match="`table` must be a pandas, polars or pyarrow table"):
        screen_table({"scale": ["rr"]})


def test_a_table_with_no_rows_comes_back_with_the_computed_columns():
    import polars as pl

    empty = pl.DataFrame(schema={"scale": pl.String, "estimate": pl.String})
    out = screen_table(empty)
    assert out.height == 0 and out.columns[-2:] == ["error", "notes"]
    assert screen_summary(empty).rows == 0


# ---------------------------------------------------------------- issue 19: exact medians
ratios = st.lists(st.floats(1.01, 50), min_size=1, max_size=40)


@settings(max_examples=60, deadline=None)
@given(ratios, ratios)
def test_the_summary_median_is_the_exact_midpoint_median(estimates, limits):
    """numpy's median (the midpoint rule for an even count) of the rows' own E-values."""
    import polars as pl

    from sensitivity.evalues.core import evalue_of_rr

    n = min(len(estimates), len(limits))
    est = np.maximum(estimates[:n], limits[:n])
    low = np.minimum(estimates[:n], limits[:n])
    frame = pl.DataFrame({"scale": ["rr"] * n, "estimate": [repr(float(x)) for x in est],
                          "lower": [repr(float(x)) for x in low],
                          "upper": [repr(float(x) * 2) for x in est]})  # fmt: skip
    summary = screen_summary(frame)
    entry = summary.per_scale["rr"]
    assert entry["median_evalue"] == pytest.approx(float(np.median(evalue_of_rr(est))), rel=1e-12)
    assert entry["median_evalue_ci"] == pytest.approx(
        float(np.median(evalue_of_rr(low))), rel=1e-12
    )


def test_the_issue_example_median_of_two():
    import polars as pl

    summary = screen_summary(pl.DataFrame({"scale": ["rr", "rr"], "estimate": ["2", "3"]}))
    assert summary.per_scale["rr"]["median_evalue"] == pytest.approx(4.43, abs=5e-3)
    assert "Medians are exact" in summary.notes[0]


@settings(max_examples=20, deadline=None)
@given(st.lists(st.floats(1.01, 1e4), min_size=2, max_size=60), st.integers(1, 8))
def test_beyond_memory_the_median_stays_exact(estimates, held):
    """Issue 26: past the values held in memory (forced down to a few here) the rest go to a
    temporary file and the median is still numpy's median of all (reference: numpy), bit for
    bit; the note says the medians are exact."""
    import polars as pl

    from sensitivity.evalues.core import evalue_of_rr
    from sensitivity.screen import result as screen_result

    frame = pl.DataFrame({"scale": ["rr"] * len(estimates),
                          "estimate": [repr(x) for x in estimates]})  # fmt: skip
    saved = screen_result.HELD_VALUES
    screen_result.HELD_VALUES = held
    try:
        summary = screen_summary(frame)
    finally:
        screen_result.HELD_VALUES = saved
    exact = float(np.median(evalue_of_rr(np.array(estimates))))
    assert summary.per_scale["rr"]["median_evalue"] == exact
    assert summary.notes[0].startswith("Medians are exact")


# ---------------------------------------------------------------- issue 19: journal styles
@pytest.mark.parametrize(
    "text, expected",
    [
        ("HR, 0.72; 95% CI, 0.60-0.86", ("hr", 0.72, 0.60, 0.86)),
        ("hazard ratio [HR] 0.72, 95% CI 0.60 to 0.86", ("hr", 0.72, 0.60, 0.86)),
        ("23% lower risk (95% CI 10% to 34%)", ("rr", 0.77, 0.66, 0.90)),
        ("15% higher odds (95% CI 2% to 30%)", ("or", 1.15, 1.02, 1.30)),
    ],
)
def test_common_journal_styles_are_read(text, expected):
    got = parse(text)
    assert got["error"] == ""
    assert (got["scale"], got["estimate"], got["lower"], got["upper"]) == expected
    assert got["level"] == 0.95


two_decimals = st.integers(1, 999).map(lambda k: k / 100)


@given(two_decimals, two_decimals, two_decimals, st.sampled_from(["HR", "OR", "RR"]))
def test_the_comma_style_reads_what_it_says(a, b, c, word):
    lo, est, hi = sorted((a, b, c))
    got = parse(f"{word}, {est:.2f}; 95% CI, {lo:.2f}-{hi:.2f}")
    assert (got["estimate"], got["lower"], got["upper"]) == (est, lo, hi)
    assert got["scale"] == word.lower()


@given(st.integers(1, 99), st.integers(1, 99), st.integers(1, 99),
       st.sampled_from(["lower", "higher"]))  # fmt: skip
def test_a_relative_change_in_percent_is_its_ratio(a, b, c, direction):
    lo, est, hi = sorted((a, b, c))
    got = parse(f"{est}% {direction} risk (95% CI {lo}% to {hi}%)")
    sign = -1 if direction == "lower" else 1
    assert got["estimate"] == pytest.approx(1 + sign * est / 100, abs=1e-12)
    limits = sorted((1 + sign * lo / 100, 1 + sign * hi / 100))
    assert (got["lower"], got["upper"]) == pytest.approx(tuple(limits), abs=1e-12)
    assert got["lower"] <= got["estimate"] <= got["upper"]


def test_two_results_in_one_cell_are_still_refused():
    assert parse("HR 0.72 (95% CI 0.60-0.86); OR 2 (1-3)")["error"] == "two results in one cell"


def test_rows_with_their_own_numbers_ignore_a_blank_text_alike(run, tmp_path):
    """Issue 19: an rd row with its four counts and a blank text is computed, as an md row
    with its estimate is; an rd row without counts says the counts are needed."""
    src = tmp_path / "rd.csv"
    src.write_text(
        "scale,result,cases_treated,total_treated,cases_control,total_control,estimate,se,dof,sd\n"
        "rd,,10,100,5,100,,,,\nmd,,,,,,0.5,0.1,100,2\nrd,0.05 (0.01-0.09),,,,,,,,\n"
    )
    res = run("screen", src, "--from-text", "result", "--format", "csv")
    assert res.exit_code == 0, res.stderr
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert rows[0]["error"] == "" and rows[0]["evalue"] != ""
    assert rows[1]["error"] == "" and rows[1]["evalue"] != ""
    assert rows[2]["error"].startswith("a risk-difference row needs its four counts")


def test_a_tsv_named_csv_says_so_plainly(run, tmp_path):
    src = tmp_path / "tab.csv"
    src.write_text("scale\testimate\tlower\tupper\nrr\t2\t1.5\t3\n")
    res = run("screen", src)
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert "read as one column, whose name holds tabs: 'scale' | 'estimate'" in res.stderr
    assert "rename it .tsv" in res.stderr


def test_partitions_merged_keep_the_exact_median():
    """Issue 19 with the engines: tallies of partitions merged give numpy's median of all."""
    import polars as pl

    from sensitivity.evalues.core import evalue_of_rr
    from sensitivity.screen.result import Tally
    from sensitivity.screen.stream import screen_frames

    parts = [[2.0, 3.0, 5.0], [1.5, 4.0]]
    tallies = []
    for values in parts:
        tally = Tally()
        frame = pl.DataFrame({"scale": ["rr"] * len(values),
                              "estimate": [repr(v) for v in values]})  # fmt: skip
        for _ in screen_frames([frame], tally=tally):
            pass
        tallies.append(tally)
    merged = tallies[0].merge(tallies[1]).result((), "parts")
    everything = np.array([v for p in parts for v in p])
    assert merged.per_scale["rr"]["median_evalue"] == pytest.approx(
        float(np.median(evalue_of_rr(everything))), rel=1e-12
    )


def test_a_true_false_column_is_kept_as_true_false_in_parquet(run, tmp_path):
    # a user's review: a column of true/false stopped the Parquet output with an internal
    # error (polars casts no text to Boolean); the reference is polars reading the whole file
    import polars as pl

    src = tmp_path / "flags.csv"
    src.write_text("scale,estimate,lower,upper,flag\nrr,1.5,1.2,1.9,true\n"
                   "rr,1.6,1.2,1.9,FALSE\nrr,1.7,1.3,2.0,\nrr,1.8,1.3,2.1,True\n")  # fmt: skip
    res = run("screen", src, "--output", tmp_path / "o.parquet")
    assert res.exit_code == 0, res.stderr
    got = pl.read_parquet(tmp_path / "o.parquet")["flag"]
    expected = pl.read_csv(src, infer_schema_length=None)["flag"]
    assert got.dtype == expected.dtype == pl.Boolean
    assert got.to_list() == expected.to_list() == [True, False, None, True]
