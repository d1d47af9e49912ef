"""`sensitivity report` takes the options of the commands it gathers, on one command line.

Reference numbers: `evalue` and `partial-r2` run on the same input (their own checks are
against published examples and statsmodels elsewhere); here the report must carry the same
numbers, and its Reproduce section the exact command line and the library versions.
"""

import json
import sys
from pathlib import Path

import pytest
import statsmodels.api as sm

FORMULA = "affairs ~ rate_marriage + age + yrs_married + educ"


@pytest.fixture(scope="module")
def fair_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("data") / "fair.csv"
    sm.datasets.fair.load_pandas().data.to_csv(path, index=False)
    return path


def _entries(folder):
    return json.loads((folder / "report.json").read_text())


def test_summary_report_with_confounders_level_and_target(run, tmp_path):
    args = ("--scale", "hr", "--estimate", 1.38, "--ci", 1.12, 1.70, "--outcome-frequency",
            "rare", "--ci-level", 0.9,
            "--confounder", 1.5, 2, "--target", 1.1)  # fmt: skip
    res = run("report", *args, "--out", tmp_path / "r")
    assert res.exit_code == 0, res.stderr
    want = json.loads(run("evalue", *args, "--format", "json").stdout)
    (entry,) = _entries(tmp_path / "r")["estimates"]
    for key in ("evalue", "evalue_ci", "ci_level", "target", "confounders"):
        assert entry[key] == want[key], key
    text = (tmp_path / "r" / "report.md").read_text()
    assert "90% CI" in text and "bounding factor 1.200" in text


def test_data_report_with_errors_benchmarks_and_published_benchmarks(run, fair_csv, tmp_path):
    data = ("--data", fair_csv, "--formula", FORMULA, "--treatment", "rate_marriage")
    bench = ("--benchmark", "age", "--benchmark", "age:2",
             "--benchmark-r2", "age_paper", 0.01, 0.02, "--ci-level", 0.9)  # fmt: skip
    res = run("report", *data, "--model", "ols", "--errors", "hc3", *bench, "--out", tmp_path / "r")
    assert res.exit_code == 0, res.stderr
    (evalue_entry,) = _entries(tmp_path / "r")["estimates"]
    entry = evalue_entry["partial_r2"]
    want = json.loads(
        run("partial-r2", *data, *bench[:-2], "--alpha", 0.1, "--format", "json").stdout
    )
    assert [s["label"] for s in entry["scenarios"]] == [s["label"] for s in want["scenarios"]]
    for got, ref in zip(entry["scenarios"], want["scenarios"], strict=True):
        assert got["bias_adjusted"]["ci"] == pytest.approx(ref["bias_adjusted"]["ci"], rel=1e-9)
    text = (tmp_path / "r" / "report.md").read_text()
    assert "heteroskedasticity-robust (HC3) standard errors" in text
    # the E-value alongside comes from the HC3 fit
    ev = json.loads(
        run(
            "evalue", *data, "--model", "ols", "--errors", "hc3", *bench[-2:], "--format", "json"
        ).stdout
    )  # at the report's level (issue 19: the E-value's interval was 95% whatever was asked)
    assert evalue_entry["evalue_ci"] == pytest.approx(ev["evalue_ci"], rel=1e-12)
    assert evalue_entry["model"]["errors"] == "hc3"


def test_reproduce_has_the_exact_command_and_versions(run, fair_csv, tmp_path):
    args = ("report", "--data", str(fair_csv), "--formula", FORMULA, "--treatment",
            "rate_marriage", "--model", "ols", "--benchmark", "age:2",
            "--out", str(tmp_path / "r"))  # fmt: skip
    assert run(*args).exit_code == 0
    out = _entries(tmp_path / "r")
    assert out["command"].startswith("sensitivity report --data ")
    assert "--benchmark age:2" in out["command"]
    for library in ("sensitivity", "numpy", "statsmodels", "scipy", "pandas"):
        assert library in out["versions"], library


def test_a_lifelines_fit_names_lifelines_in_the_versions(tmp_path):
    lifelines = pytest.importorskip("lifelines")
    from sensitivity import report

    rossi = lifelines.datasets.load_rossi()
    fit = lifelines.CoxPHFitter().fit(rossi[["week", "arrest", "fin", "age"]], "week", "arrest")
    report({"Recidivism": fit}, tmp_path / "r", treatment="fin")
    out = _entries(tmp_path / "r")
    assert "lifelines" in out["versions"] and "lifelines" in sys.modules


def test_estimates_table_takes_confounders_and_level(run, tmp_path):
    table = tmp_path / "est.csv"
    table.write_text("label,scale,estimate,lower,upper,outcome\nA,rr,1.8,1.3,2.5,\n"
                     "B,or,1.5,1.1,2.0,rare\n")  # fmt: skip
    res = run("report", "--estimates", table, "--confounder", 2, 2, "--ci-level", 0.9,
              "--out", tmp_path / "r")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    entries = _entries(tmp_path / "r")["estimates"]
    assert all(e["ci_level"] == 0.9 and e["confounders"] for e in entries)


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (("--scale", "hr", "--estimate", 1.4, "--outcome-frequency", "rare", "--benchmark", "age"),
         "--benchmark needs data input with --model ols"),
        (("--scale", "hr", "--estimate", 1.4, "--outcome-frequency", "rare", "--errors", "hc0"),
         "--errors applies to data input"),
        (("--scale", "hr", "--estimate", 1.4, "--outcome-frequency", "rare", "--benchmark-r2",
          "a", 0.1, 0.1),
         "--benchmark-r2 applies to a regression coefficient"),
    ],
)  # fmt: skip
def test_report_option_errors(run, tmp_path, args, message):
    res = run("report", *args, "--out", tmp_path / "r")
    assert res.exit_code == 2 and res.stderr.count("\n") == 1
    assert message in res.stderr


def test_report_takes_hypothetical_strengths_for_a_coefficient(run, fair_csv, tmp_path):
    data = ("--data", fair_csv, "--formula", FORMULA, "--treatment", "rate_marriage")
    strengths = ("--r2-treatment", 0.05, "--r2-outcome", 0.1)
    res = run("report", *data, "--model", "ols", *strengths, "--out", tmp_path / "r")
    assert res.exit_code == 0, res.stderr
    (entry,) = _entries(tmp_path / "r")["estimates"]
    want = json.loads(run("partial-r2", *data, *strengths, "--format", "json").stdout)
    got = entry["partial_r2"]["scenarios"]
    assert got[0]["bias_adjusted"]["ci"] == pytest.approx(
        want["scenarios"][0]["bias_adjusted"]["ci"], rel=1e-12
    )
    bad = run("report", "--scale", "rr", "--estimate", 1.5, *strengths, "--out", tmp_path / "s")
    assert bad.exit_code == 2 and "apply to a regression coefficient" in bad.stderr


def test_an_out_folder_that_cannot_be_made_exits_2_naming_it(run, tmp_path):
    """`--out` under a file (or anywhere the folder cannot be made) ended in exit 1, "Error:
    Not a directory: ...", as if the tool had failed, without naming the option."""
    (tmp_path / "a-file").write_text("x")
    target = tmp_path / "a-file" / "report"
    res = run("report", "--scale", "rr", "--estimate", 2, "--out", target)
    assert res.exit_code == 2 and res.stdout == ""
    assert res.stderr == (
        f"Error: `--out`: the folder cannot be made there (Not a directory); got {str(target)!r}\n"
    )


def test_an_empty_out_is_refused_not_the_current_folder(run, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = run("report", "--scale", "rr", "--estimate", 2, "--out", "")
    assert res.exit_code == 2 and res.stderr == "Error: `--out` must name a folder; got ''\n"
    assert list(tmp_path.iterdir()) == []


@pytest.mark.parametrize(
    "args, message",
    [
        (("--estimates", "TABLE", "--outcome-frequency", "rare"),
         "Error: --outcome-frequency does not apply to a table of estimates (each row gives its "
         "own: columns se, sd, outcome, prevalence, contrast, label)\n"),
        (("--estimates", "TABLE", "--label", "Foo"), "Error: --label does not apply to a table"),
        (("RR 1.5 (1.2-1.9)", "--formula", "y ~ x", "--treatment", "x"),
         "Error: --formula, --treatment do not apply to summary input\n"),
        (("--data", "DATA", "--model", "ols", "--formula", "sbp ~ commute_min + age",
          "--treatment", "commute_min", "--se", 0.1),
         "Error: --se does not apply to data input\n"),
    ],
)  # fmt: skip
def test_an_option_of_another_input_is_refused(run, tmp_path, args, message):
    """Each was accepted and ignored: `--outcome-frequency rare` with a table of estimates
    ended in "the outcome's frequency is needed" of its hr row, and `--label` was dropped."""
    table = tmp_path / "t.csv"
    table.write_text("label,scale,estimate,lower,upper\nA,hr,1.4,1.1,1.8\n")
    data = Path(__file__).resolve().parent.parent / "demo" / "harbourside_bp.csv"
    args = [table if a == "TABLE" else data if a == "DATA" else a for a in args]
    res = run("report", *args, "--out", tmp_path / "r")
    assert res.exit_code == 2 and res.stderr.startswith(message)
    assert res.stderr.count("\n") == 1 and not (tmp_path / "r").exists()
