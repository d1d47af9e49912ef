"""The layout's promises (issue 7): arrows point one way, every view renders one Document,
results compare by identity, checks work both ways, and every command runs on every scale it
accepts in every format."""

from __future__ import annotations

import csv
import html
import io
import json
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity import evalue, partial_r2_summary
from sensitivity.common.errors import InputError
from sensitivity.evalues import CHECKS, evalue_rows
from sensitivity.output.document import Bullets, Prose
from sensitivity.output.tables import Table
from sensitivity.tipping import (
    binary_confounder_grid,
    bounding_grid,
    parse_range,
    partial_r2_grid,
)

ROOT = Path(__file__).resolve().parent.parent


# --------------------------------------------------------------------------- one Document
def _results():
    ev = evalue("rr", 1.9, (1.3, 2.8)).with_confounders([1.5, 3.0], [2.0, 3.0])
    pr = partial_r2_summary(0.42, 0.1, 500, r2_treatment=[0.02], r2_outcome=[0.05], sd_outcome=3)
    return {
        "evalue": ev,
        "partial-r2": pr,
        "binary": binary_confounder_grid("rr", 1.8, (1.2, 2.7), prevalence_control=0.2),
        "bounding": bounding_grid("rr", 1.8, (1.2, 2.7)),
        "partial-r2-grid": partial_r2_grid(0.42, 0.1, 500),
    }


def _data_result():
    import statsmodels.api as sm

    data = sm.datasets.get_rdataset  # noqa: F841 - keep offline: use the shipped 'fair' data
    fair = sm.datasets.fair.load_pandas().data
    from sensitivity import partial_r2_from_data

    return partial_r2_from_data(
        fair,
        "affairs ~ rate_marriage + age + yrs_married + children",
        "rate_marriage",
        benchmarks=["age", "age:2"],
    )


def _texts(document):
    """Every piece of text a reader sees: table titles and cells, prose, bullet items."""
    for block in document.blocks:
        if isinstance(block, Table):
            yield block.title
            yield from block.columns
            for row in block.rows:
                yield from row
            yield from block.footnotes
        elif isinstance(block, Prose):
            yield from block.lines
        elif isinstance(block, Bullets) and block.items:
            yield block.heading
            yield from block.items


@pytest.mark.parametrize("name", [*_results(), "from-data"])
def test_notebook_view_shows_everything_the_text_shows(name):
    # Issue 7: the HTML used to drop the confounder table, scenarios, covariates, assumptions.
    res = _data_result() if name == "from-data" else _results()[name]
    page = res._repr_html_()
    text = res.summary()
    missing = [t for t in _texts(res.document()) if t and html.escape(t, quote=False) not in page]
    assert missing == []
    for piece in _texts(res.document()):
        first_words = " ".join(piece.split()[:3])
        assert first_words in " ".join(text.split())


def test_the_data_result_shows_scenarios_covariates_and_assumptions_in_html():
    page = _data_result()._repr_html_()
    for piece in ("age ×1", "Measured covariates for comparison", "Assumptions"):
        assert html.escape(piece) in page


@pytest.mark.parametrize("name", list(_results()))
def test_repr_is_one_informative_line(name):
    res = _results()[name]
    text = repr(res)
    assert "\n" not in text and " at 0x" not in text
    assert text.startswith(f"<{type(res).__name__} ")


def test_results_compare_by_identity_never_by_arrays():
    a = evalue("rr", np.array([2.0, 3.0]))
    b = evalue("rr", np.array([2.0, 3.0]))
    assert a == a and a != b  # no "truth value of an array is ambiguous"
    assert len({a, b}) == 2  # hashable


# --------------------------------------------------------------------------- scales
ALL_FORMATS = ("text", "json", "csv", "markdown", "latex")
CASES = [
    *[
        ("evalue", s, args)
        for s, args in [
            ("rr", ["--scale", "rr", "--estimate", "1.8", "--ci", "1.2", "2.7"]),
            (
                "or",
                [
                    "--scale",
                    "or",
                    "--estimate",
                    "1.8",
                    "--ci",
                    "1.2",
                    "2.7",
                    "--outcome-frequency",
                    "common",
                ],
            ),
            (
                "hr",
                [
                    "--scale",
                    "hr",
                    "--estimate",
                    "0.7",
                    "--ci",
                    "0.55",
                    "0.9",
                    "--outcome-frequency",
                    "rare",
                ],
            ),
            ("smd", ["--scale", "smd", "--estimate", "0.4", "--se", "0.1"]),
            ("md", ["--scale", "md", "--estimate", "2.5", "--se", "0.8", "--sd", "11"]),
        ]
    ],
    *[
        ("tipping", s, ["--scale", s, "--estimate", e, "--ci", lo, up, *extra])
        for s, e, lo, up, extra in [
            ("md", "2.5", "1", "4", []),
            ("rd", "0.06", "0.02", "0.1", []),
            ("smd", "0.3", "0.1", "0.5", []),
            ("rr", "1.8", "1.2", "2.7", []),
            ("or", "1.8", "1.2", "2.7", ["--outcome-frequency", "common"]),
            ("hr", "0.7", "0.55", "0.9", ["--outcome-frequency", "rare"]),
        ]
    ],
    *[
        (
            "tipping",
            f"bounding-{s}",
            ["--kind", "bounding", "--scale", s, "--estimate", "1.8", "--ci", "1.2", "2.7", *extra],
        )
        for s, extra in [
            ("rr", []),
            ("or", ["--outcome-frequency", "rare"]),
            ("hr", ["--outcome-frequency", "common"]),
        ]
    ],
    *[
        (
            "tipping",
            f"continuous-{s}",
            ["--kind", "continuous", "--scale", s, "--estimate", e, "--ci", lo, up, *extra],
        )
        for s, e, lo, up, extra in [
            ("md", "2.5", "1", "4", []),
            ("rr", "1.8", "1.2", "2.7", []),
            ("hr", "0.7", "0.55", "0.9", ["--outcome-frequency", "common"]),
        ]
    ],  # fmt: skip
    (
        "tipping",
        "partial-r2",
        ["--kind", "partial-r2", "--estimate", "0.4", "--se", "0.1", "--dof", "300"],
    ),
    ("partial-r2", "md", ["--estimate", "0.4", "--se", "0.1", "--dof", "300"]),
]


@pytest.mark.parametrize("fmt", ALL_FORMATS)
@pytest.mark.parametrize("command, scale, args", CASES, ids=[f"{c}-{s}" for c, s, _ in CASES])
def test_every_command_runs_on_every_scale_in_every_format(run, command, scale, args, fmt):
    # Issue 7: `tipping --scale rd` in text format used to exit 1 with a KeyError.
    res = run(command, *args, "--format", fmt)
    assert res.exit_code == 0, res.stderr
    assert res.stdout.strip()
    if fmt == "json":
        json.loads(res.stdout)
    elif fmt == "csv":
        rows = list(csv.DictReader(io.StringIO(res.stdout)))
        assert rows and all(len(r) == len(rows[0]) for r in rows)
    elif fmt == "latex":
        assert r"\begin{tabular}" in res.stdout
    elif fmt == "text":
        assert "Cautions:" in res.stdout


# --------------------------------------------------------------------------- checks both ways
BAD_INPUTS = [
    {"scale": "rr", "estimate": -1.0},
    {"scale": "rr", "estimate": 2.0, "lower": 2.5, "upper": 3.0},
    {"scale": "rr", "estimate": 2.0, "lower": 3.0, "upper": 1.0},
    {"scale": "rr", "estimate": 2.0, "lower": 1.0},
    {"scale": "or", "estimate": 2.0},
    {"scale": "or", "estimate": 2.0, "outcome": "often"},
    {"scale": "hr", "estimate": 2.0, "prevalence": 1.5},
    {"scale": "md", "estimate": 2.0, "se": 1.0},
    {"scale": "smd", "estimate": 0.4, "sd": 2.0},
    {"scale": "rr", "estimate": 2.0, "se": 0.1},
    {"scale": "xx", "estimate": 2.0},
    {"scale": "rr", "estimate": float("nan")},
    {"scale": "rr", "estimate": 2.0, "target": 0.0},
]


def _single(row):
    ci = None if "lower" not in row else (row["lower"], row.get("upper", np.nan))
    keys = ("se", "sd", "outcome", "prevalence", "target")
    return evalue(row["scale"], row["estimate"], ci, **{k: row[k] for k in keys if k in row})


def _batch(rows):
    n = len(rows)
    cols = {}
    for key in ("estimate", "lower", "upper", "se", "sd", "prevalence", "target"):
        if any(key in r for r in rows):
            default = 1.0 if key == "contrast" else np.nan
            if key == "target":
                cols[key] = np.array(
                    [r.get(key, 1.0 if r["scale"] in ("rr", "or", "hr") else 0.0) for r in rows]
                )
            else:
                cols[key] = np.array([r.get(key, default) for r in rows], float)
    cols["scale"] = np.array([r["scale"] for r in rows], dtype=object)
    cols["outcome"] = np.array([r.get("outcome", "") for r in rows], dtype=object)
    return evalue_rows(cols, n)


@pytest.mark.parametrize("row", BAD_INPUTS, ids=[str(r) for r in BAD_INPUTS])
def test_the_same_rule_raises_for_one_result_and_flags_the_row_in_a_batch(row):
    with pytest.raises(InputError) as err:
        _single(row)
    out, reasons = _batch([{"scale": "rr", "estimate": 2.0}, row, {"scale": "rr", "estimate": 3.0}])
    assert reasons[0] == "" and reasons[2] == ""
    assert str(err.value) == reasons[1].replace("`lower`", "`ci`").replace("`upper`", "`ci`")
    assert np.isnan(out["evalue"][1]) and np.isfinite(out["evalue"][[0, 2]]).all()


def test_every_rule_has_a_bad_input_that_breaks_it_first():
    broken = set()
    for row in BAD_INPUTS:
        _, reasons = _batch([row])
        for check in CHECKS:
            if reasons[0] and reasons[0] == _message_of(check, row):
                broken.add(id(check))
    assert len(broken) >= 12


def _message_of(check, row):
    defaults = {
        "lower": np.nan,
        "upper": np.nan,
        "se": np.nan,
        "sd": np.nan,
        "prevalence": np.nan,
        "outcome": "",
        "contrast": 1.0,
        "target": 1.0 if row["scale"] in ("rr", "or", "hr") else 0.0,
    }
    vals = [row.get(f, defaults.get(f)) for f in check.fields]
    try:
        return check.message(*vals)
    except (TypeError, ValueError):
        return None


good_rows = st.one_of(
    st.builds(
        lambda e, w: {"scale": "rr", "estimate": e, "lower": e / w, "upper": e * w},
        st.floats(0.05, 20),
        st.floats(1.01, 3),
    ),
    st.builds(
        lambda e, f: {"scale": "or", "estimate": e, "outcome": f},
        st.floats(0.05, 20),
        st.sampled_from(["rare", "common"]),
    ),
    st.builds(
        lambda e, p: {"scale": "hr", "estimate": e, "prevalence": p},
        st.floats(0.05, 20),
        st.floats(0, 1),
    ),
    st.builds(
        lambda e, s: {"scale": "smd", "estimate": e, "se": s}, st.floats(-2, 2), st.floats(0.01, 1)
    ),
    st.builds(
        lambda e, s, sd: {"scale": "md", "estimate": e, "se": s, "sd": sd},
        st.floats(-20, 20),
        st.floats(0.01, 5),
        st.floats(0.5, 30),
    ),
)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.one_of(good_rows, st.sampled_from(BAD_INPUTS)), min_size=1, max_size=15))
def test_a_mixed_batch_equals_one_result_per_row(rows):
    out, reasons = _batch(rows)
    assert len(reasons) == len(rows)
    for i, row in enumerate(rows):
        try:
            one = _single(row)
        except InputError as err:
            assert reasons[i].replace("`lower`", "`ci`").replace("`upper`", "`ci`") == str(err)
            continue
        assert reasons[i] == ""
        assert out["evalue"][i] == pytest.approx(float(one.evalue), rel=1e-12)
        if one.evalue_ci is None:
            assert np.isnan(out["evalue_ci"][i])
        else:
            assert out["evalue_ci"][i] == pytest.approx(float(one.evalue_ci), rel=1e-12)


def test_one_call_takes_per_row_scale_frequency_prevalence_contrast_and_target():
    # Issue 7: an array of outcome frequencies used to fail inside numpy.
    scale = np.array(["or", "or", "hr", "md", "rr"], dtype=object)
    est = np.array([2.0, 2.0, 0.6, 3.0, 1.5])
    res = evalue(
        scale,
        est,
        outcome=np.array(["rare", "common", None, None, None], dtype=object),
        sd=np.array([np.nan, np.nan, np.nan, 12.0, np.nan]),
        contrast=np.array([1, 1, 1, 10, 1.0]),
        target=np.array([1.0, 1.0, 1.0, 0.0, 1.2]),
        prevalence=np.array([np.nan, np.nan, 0.3, np.nan, np.nan]),
    )
    expected = [
        evalue("or", 2.0, outcome="rare").evalue,
        evalue("or", 2.0, outcome="common").evalue,
        evalue("hr", 0.6, prevalence=0.3).evalue,
        evalue("md", 3.0, sd=12.0, contrast=10).evalue,
        evalue("rr", 1.5, target=1.2).evalue,
    ]
    np.testing.assert_allclose(res.evalue, np.array(expected, float), rtol=1e-12)


# --------------------------------------------------------------------------- exits and columns
def test_a_numpy_value_error_is_ours_exit_1(run, monkeypatch):
    import sensitivity.evalues.core as ev

    def broken(*args, **kwargs):
        raise ValueError("operands could not be broadcast together")

    monkeypatch.setattr(ev, "evalue", broken)
    res = run("evalue", "--scale", "rr", "--estimate", 2)
    assert res.exit_code == 1
    assert res.stderr.startswith("Error: internal error (ValueError: operands could not")
    assert res.stderr.count("\n") == 1


@pytest.mark.parametrize("name", list(_results()))
def test_every_table_like_result_has_columns_of_equal_length(name):
    cols = _results()[name].columns()
    lengths = {len(np.asarray(v)) for v in cols.values()}
    assert len(lengths) == 1 and lengths.pop() >= 1


def test_large_json_is_streamed_and_equals_the_python_rows(run, tmp_path):
    out = tmp_path / "grid.json"
    res = run(
        "tipping",
        "--scale",
        "rr",
        "--estimate",
        1.8,
        "--ci",
        1.2,
        2.7,
        "--prevalence-treated",
        "0:1:0.01",
        "--prevalence-control",
        0.2,
        "--outcome-effect",
        "1:3:0.01",
        "--format",
        "json",
        "--output",
        out,
    )
    assert res.exit_code == 0, res.stderr
    data = json.loads(out.read_text())
    assert len(data["rows"]) == 101 * 201
    grid = binary_confounder_grid(
        "rr",
        1.8,
        (1.2, 2.7),
        prevalence_treated=parse_range("0:1:0.01", "p1"),
        prevalence_control=0.2,
        outcome_effect=parse_range("1:3:0.01", "g"),
    )
    expected = grid.to_dict()
    assert data["rows"][::997] == expected["rows"][::997]
    assert data["tipping_points"] == expected["tipping_points"]
