"""`sensitivity partial-r2` as a user runs it."""

import csv
import io
import json

import pytest
import statsmodels.api as sm

# Cinelli & Hazlett (2020): t = 4.18 on 783 dof -> 2.2%, 13.9%, 7.6%.
SUMMARY = ("partial-r2", "--estimate", 4.18, "--se", 1, "--dof", 783)
FORMULA = "affairs ~ rate_marriage + age + yrs_married + educ + C(religious)"


@pytest.fixture(scope="module")
def fair_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("data") / "fair.csv"
    sm.datasets.fair.load_pandas().data.to_csv(path, index=False)
    return path


def data_args(path, *extra):
    return (
        "partial-r2",
        "--data",
        path,
        "--formula",
        FORMULA,
        "--treatment",
        "rate_marriage",
        *extra,
    )


def test_summary_text(run):
    res = run(*SUMMARY)
    assert res.exit_code == 0, res.stderr
    for text in ("2.2%", "13.9%", "7.6%", "Cautions:", "Assumptions:"):
        assert text in res.stdout


def test_summary_with_t_instead_of_se(run):
    res = run("partial-r2", "--estimate", 0.5, "--t", 4.18, "--dof", 783, "--format", "json")
    assert json.loads(res.stdout)["robustness_value"] == pytest.approx(0.139, abs=5e-4)


def test_json_keys_follow_the_contract(run, fair_csv):
    res = run(
        *data_args(
            fair_csv,
            "--benchmark",
            "religious",
            "--benchmark",
            "religious:2",
            "--r2-treatment",
            0.05,
            "--r2-outcome",
            0.05,
            "--format",
            "json",
        )
    )
    assert res.exit_code == 0, res.stderr
    d = json.loads(res.stdout)
    for key in (
        "estimate",
        "se",
        "dof",
        "t",
        "partial_r2",
        "reduce_by",
        "alpha",
        "robustness_value",
        "robustness_value_alpha",
        "scenarios",
        "covariates",
    ):
        assert key in d
    assert len(d["scenarios"]) == 3
    # one label form everywhere (the text table's), the numbers in fields of their own
    assert [sc["label"] for sc in d["scenarios"]] == ["chosen 5.00% / 5.00%", "religious ×1",
                                                     "religious ×2"]  # fmt: skip
    assert [(sc["multiple_treatment"], sc["multiple_outcome"]) for sc in d["scenarios"][1:]] == [
        (1.0, 1.0), (2.0, 2.0)]  # fmt: skip
    for sc in d["scenarios"]:
        assert {"label", "r2_treatment", "r2_outcome", "bias", "bias_adjusted"} <= set(sc)
        assert {"estimate", "se", "t", "ci"} <= set(sc["bias_adjusted"])
    assert {c["name"] for c in d["covariates"]} == {"age", "yrs_married", "educ", "C(religious)"}
    assert all({"name", "r2_treatment", "r2_outcome"} <= set(c) for c in d["covariates"])


def test_data_text_has_table_sentence_and_covariates(run, fair_csv):
    res = run(*data_args(fair_csv, "--benchmark", "age:1:3"))
    assert res.exit_code == 0, res.stderr
    out = " ".join(res.stdout.split())
    assert "age ×1/×3" in out  # labels built from the scenario's fields (issue 9)
    assert "Measured covariates for comparison" in out
    assert "E-value alongside (per unit; estimate / 95% CI)" in out
    assert "Benchmarks compare a hidden confounder with covariates that were measured" in out


@pytest.mark.parametrize("fmt", ["csv", "markdown", "latex"])
def test_paste_and_table_formats(run, fair_csv, fmt):
    res = run(*data_args(fair_csv, "--benchmark", "age", "--format", fmt))
    assert res.exit_code == 0, res.stderr
    assert "Cautions" not in res.stdout and "Note:" in res.stderr
    if fmt == "csv":
        rows = list(csv.DictReader(io.StringIO(res.stdout)))
        assert rows[0]["scenario_benchmark"] == "age"
        assert rows[0]["scenario_label"] == "age ×1"
        assert float(rows[0]["scenario_multiple_treatment"]) == 1.0


@pytest.mark.parametrize(
    "suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")]
)
def test_plot_formats(run, fair_csv, tmp_path, suffix, magic):
    out = tmp_path / f"c{suffix}"
    res = run(*data_args(fair_csv, "--benchmark", "religious", "--plot", out, "--format", "json"))
    assert res.exit_code == 0, res.stderr
    assert out.read_bytes().startswith(magic)
    json.loads(res.stdout)  # stdout stays parseable with a plot written


def test_the_figure_has_an_estimate_panel_and_a_t_panel(run, tmp_path):
    out = tmp_path / "t.svg"
    res = run(*SUMMARY, "--plot", out)
    assert res.exit_code == 0 and out.stat().st_size > 1000
    svg = out.read_text()
    assert "Bias-adjusted estimate" in svg and "Bias-adjusted t value" in svg


def test_capped_benchmark_warns_on_one_line(run, tmp_path):
    import numpy as np
    import pandas as pd

    rng = np.random.default_rng(3)
    x = rng.normal(size=300)
    t = 0.5 * x + rng.normal(size=300)
    y = 0.2 * t + 3 * x + rng.normal(size=300) * 0.3
    path = tmp_path / "strong.csv"
    pd.DataFrame({"y": y, "t": t, "x": x}).to_csv(path, index=False)
    res = run(
        "partial-r2",
        "--data",
        path,
        "--formula",
        "y ~ t + x",
        "--treatment",
        "t",
        "--benchmark",
        "x:2",
    )
    assert res.exit_code == 0
    assert res.stderr.startswith("Warning: a confounder x ×2 would need an outcome-side partial R²")
    res = run(
        "partial-r2",
        "--data",
        path,
        "--formula",
        "y ~ t + x",
        "--treatment",
        "t",
        "--benchmark",
        "x:2",
        "--format",
        "json",
    )
    assert res.exit_code == 0, res.stderr
    (sc,) = json.loads(res.stdout)["scenarios"]
    assert sc["capped"] is True and sc["r2_outcome"] == 1.0
    assert sc["bias_adjusted"]["se"] == 0.0 and sc["bias_adjusted"]["t"] is None


@pytest.mark.parametrize(
    "args, message",
    [
        (
            ("partial-r2", "--estimate", 1, "--se", 0, "--dof", 10),
            "Error: `--se` must be positive; got 0",
        ),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 1),
            "Error: `--dof` must be at least 2; got 1",
        ),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--alpha", 1.5),
            "Error: `--alpha` must lie strictly between 0 and 1; got 1.5",
        ),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--reduce-by", -1),
            "Error: `--reduce-by` must be positive; got -1",
        ),
        (
            (
                "partial-r2",
                "--estimate",
                1,
                "--se",
                0.1,
                "--dof",
                50,
                "--r2-treatment",
                1.2,
                "--r2-outcome",
                0.1,
            ),
            "Error: `--r2-treatment` must lie in [0, 1); got 1.2",
        ),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--r2-treatment", 0.1),
            "Error: `--r2-treatment` needs `--r2-outcome`",
        ),
        (("partial-r2", "--estimate", 1, "--se", 0.1), "Error: summary input needs --dof"),
        (("partial-r2", "--se", 0.1, "--dof", 10), "Error: summary input needs --estimate"),
        (("partial-r2",), "Error: give --estimate, --se (or --t) and --dof, or --data"),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--benchmark", "age"),
            "Error: --benchmark needs data input (--data); from a paper's tables give",
        ),
        (
            ("partial-r2", "--estimate", 1, "--se", 0.1, "--dof", 50, "--plot", "x.jpg"),
            "Error: `--plot` must end in .png, .svg or .pdf; got 'x.jpg'",
        ),
        (
            ("partial-r2", "--data", "missing.csv", "--formula", "y ~ t", "--treatment", "t"),
            "Error: `--data`: file not found: missing.csv",
        ),
        (
            ("partial-r2", "--data", "x.csv", "--formula", "y ~ t"),
            "Error: data input needs --treatment as well",
        ),
    ],
)
def test_bad_input_exits_2(run, args, message):
    res = run(*args)
    assert res.exit_code == 2, res.stdout
    assert res.stderr.startswith(message)
    assert res.stderr.count("\n") == 1 and "Traceback" not in res.stderr


@pytest.mark.parametrize(
    "extra, formula, message",
    [
        (
            ("--treatment", "nope"),
            FORMULA,
            "Error: `--treatment` 'nope' is not a column of the data; columns: rate_marriage",
        ),
        (
            ("--treatment", "rate_marriage", "--benchmark", "height"),
            FORMULA,
            "Error: `--benchmark` 'height' is not a column of the data; columns: rate_marriage",
        ),
        (
            ("--treatment", "rate_marriage"),
            "affairs ~ rate_marriage + (",
            "Error: `--formula` 'affairs ~ rate_marriage + (' could not be read: expected a "
            "noun, but instead the expression ended (at '(')",
        ),
        (
            ("--treatment", "rate_marriage", "--benchmark", "religious:-2"),
            FORMULA,
            "Error: `--benchmark` 'religious:-2': a multiple must be a positive finite number",
        ),
    ],
)
def test_bad_data_input_exits_2(run, fair_csv, extra, formula, message):
    res = run("partial-r2", "--data", fair_csv, "--formula", formula, *extra)
    assert res.exit_code == 2
    assert res.stderr.startswith(message) and res.stderr.count("\n") == 1


def test_empty_file_exits_2(run, tmp_path):
    path = tmp_path / "empty.csv"
    path.write_text("")
    res = run("partial-r2", "--data", path, "--formula", "y ~ t", "--treatment", "t")
    assert res.exit_code == 2 and "is empty" in res.stderr


def test_mixing_inputs_exits_2(run, fair_csv):
    res = run(*data_args(fair_csv, "--estimate", 1))
    assert res.exit_code == 2 and "give summary numbers or data, not both" in res.stderr
