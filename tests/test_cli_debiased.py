"""`sensitivity debiased` as a user runs it: every format, every error exits 2 in one line."""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pandas as pd
import pytest

pytest.importorskip("sklearn")


@pytest.fixture(scope="module")
def data_csv(tmp_path_factory):
    rng = np.random.default_rng(3)
    n = 300
    xs = rng.normal(size=(n, 3))
    d = (0.5 * xs[:, 0] + rng.normal(size=n) > 0).astype(int)
    y = 0.8 * d + xs @ [1.0, 0.5, -0.3] + rng.normal(size=n)
    frame = pd.DataFrame(
        {
            "y": y,
            "d": d,
            "dose": xs[:, 0] + rng.normal(size=n),
            "x1": xs[:, 0],
            "x2": xs[:, 1],
            "site": np.where(xs[:, 2] > 0, "north", "south"),
            "flat": 1.0,
        }
    )
    path = tmp_path_factory.mktemp("data") / "sim.csv"
    frame.to_csv(path, index=False)
    return path


def args(path, *extra):
    """The base invocation with `extra`; an option already in the base gets the extra value
    (a single-value option given twice is refused, issue 19)."""
    base = [
        "debiased", "--data", path, "--treatment", "d", "--outcome", "y",
        "--covariates", "x1,x2,site", "--learner", "linear", "--folds", "2",
    ]  # fmt: skip
    extra = list(extra)
    i = 0
    while i < len(extra):
        if str(extra[i]).startswith("--") and extra[i] in base and i + 1 < len(extra):
            base[base.index(extra[i]) + 1] = extra[i + 1]
            del extra[i : i + 2]
        else:
            i += 1
    return (*base, *extra)


def test_text(run, data_csv):
    res = run(*args(data_csv, "--strength", "0.05", "0.05", "--benchmark", "x1"))
    assert res.exit_code == 0, res.stderr
    for text in ("robustness value", "Cautions:", "Assumptions:", "x1 ×1", "chosen 5.00% / 5.00%"):
        assert text in res.stdout
    assert "fitted the linear learners on 300 rows cross-fitted in 2 folds" in res.stderr
    assert "fitting learners: 1 of 8 fits" in res.stderr  # progress while the learners fit


def test_json_keys_of_the_contract(run, data_csv):
    res = run(*args(data_csv, "--strength", "0.05", "0.1", "--format", "json"))
    assert res.exit_code == 0, res.stderr
    out = json.loads(res.stdout)
    for key in ("estimate", "se", "ci", "robustness_value", "robustness_value_alpha", "scenarios"):
        assert key in out
    s = out["scenarios"][0]
    for key in ("cy2", "cd2", "rho", "bound_lower", "bound_upper", "ci_lower", "ci_upper"):
        assert key in s
    assert (s["cy2"], s["cd2"], s["rho"]) == (0.05, 0.1, 1.0)
    assert s["ci_lower"] < s["bound_lower"] < out["estimate"] < s["bound_upper"] < s["ci_upper"]
    assert out["sentence"].startswith("The debiased machine-learning estimate")


def test_average_effect_in_json(run, data_csv):
    res = run(*args(data_csv, "--target-effect", "average", "--format", "json"))
    assert res.exit_code == 0, res.stderr
    assert json.loads(res.stdout)["target_effect"] == "average"


def test_csv_one_row_a_scenario(run, data_csv):
    res = run(*args(data_csv, "--benchmark", "x1", "--multiple", "1", "--multiple", "2",
                    "--format", "csv"))  # fmt: skip
    assert res.exit_code == 0, res.stderr
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert [float(r["k_outcome"]) for r in rows] == [1.0, 2.0]
    assert "The debiased machine-learning estimate" in res.stderr  # the sentence


@pytest.mark.parametrize("fmt", ["markdown", "latex"])
def test_markdown_and_latex(run, data_csv, fmt):
    res = run(*args(data_csv, "--strength", "0.05", "0.05", "--format", fmt))
    assert res.exit_code == 0, res.stderr
    assert "robustness value" in res.stdout
    assert "Note:" in res.stderr


def test_seed_reproduces_the_json(run, data_csv):
    one = run(*args(data_csv, "--learner", "forest", "--seed", "4", "--format", "json"))
    two = run(*args(data_csv, "--learner", "forest", "--seed", "4", "--format", "json"))
    assert one.exit_code == 0, one.stderr
    assert one.stdout == two.stdout


def test_output_files_by_extension(run, data_csv, tmp_path):
    out = tmp_path / "bounds.json"
    res = run(*args(data_csv, "--output", out))
    assert res.exit_code == 0, res.stderr
    assert json.loads(out.read_text())["estimate"] is not None


def test_plot_writes_the_contour_figure(run, data_csv, tmp_path):
    out = tmp_path / "bound.png"
    res = run(*args(data_csv, "--benchmark", "x1", "--plot", out))
    assert res.exit_code == 0, res.stderr
    assert out.stat().st_size > 1000 and f"Wrote {out}" in res.stderr


@pytest.mark.parametrize(
    ("extra", "match"),
    [
        (("--treatment", "flat"), "`--treatment` 'flat' is constant"),
        (("--folds", "40"), "`--folds` 40 leaves 7 rows per fold (300 rows); each fold needs"),
        (("--covariates", "x1,nope"), "`--covariates` 'nope' is not a column of the data"),
        (
            ("--strength", "1.2", "0.1"),
            "the first value of `--strength` must lie in [0, 1); got 1.2",
        ),
        (("--rho", "1.5"), "`--rho` must lie in (0, 1]; got 1.5"),
        (("--multiple", "2"), "--multiple needs --benchmark"),
        (("--benchmark", "x9"), "`--benchmark` 'x9' is not one of the covariates"),
        (("--target-effect", "average", "--treatment", "dose"), "must be coded 0/1"),
        (("--learner", "svm"), "Invalid value for '--learner'"),
        (("--plot", "figure.gif"), "`--plot` must end in .png, .svg or .pdf"),
        (("--data", "missing.csv"), "file not found"),
    ],
)
def test_errors_exit_2_with_one_line(run, data_csv, extra, match):
    res = run(*args(data_csv, *extra))
    assert res.exit_code == 2
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ")
    assert match in lines[0]


def test_without_scikit_learn_one_line_says_what_to_install(run, data_csv, monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "sklearn", None)
    res = run(*args(data_csv))
    assert res.exit_code == 2
    assert res.stderr.strip() == (
        "Error: the debiased family needs scikit-learn: pip install 'sensitivity[ml]'"
    )


# The help examples run as printed in tests/test_help_examples.py, with every command's.


def test_one_fold_says_no_cross_fitting_once(run, data_csv):
    """A reviewer's find: --folds 1 said both "cross-fitted ... in 1 fold(s)" and "no
    cross-fitting"."""
    res = run(*args(data_csv, "--folds", "1", "--strength", "0.05", "0.05"))
    assert res.exit_code == 0, res.stderr
    assert "without cross-fitting" in res.stderr and "cross-fitted" not in res.stderr
