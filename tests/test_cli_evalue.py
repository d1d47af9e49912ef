"""`sensitivity evalue` as a user runs it: every scale, every format, every error."""

import csv
import io
import json

import pytest

# VanderWeele & Ding (2017): RR 3.9 (1.8, 8.7) -> 7.26 and 3.0.
PUBLISHED = ("evalue", "--scale", "rr", "--estimate", 3.9, "--ci", 1.8, 8.7)


def test_text_shows_both_evalues_sentence_and_cautions(run):
    res = run(*PUBLISHED)
    assert res.exit_code == 0
    assert "7.26" in res.stdout and "3.00" in res.stdout
    text = " ".join(res.stdout.split())
    assert "the E-value is 7.26: a hidden confounder with equal risk ratios" in text
    assert "only if both were 7.26 or more, and none with both below 7.26 could" in text
    assert "(95% CI 1.80 to 8.70)" in text
    assert "For the 95% CI to take in the null, equal risk ratios of 3.00 or more" in text
    assert "not a pass/fail threshold" in res.stdout
    assert res.stderr == ""


def test_json_keys_follow_the_contract(run):
    res = run(*PUBLISHED, "--format", "json")
    data = json.loads(res.stdout)
    for key in ("scale", "estimate", "ci", "target", "rr", "rr_ci", "evalue", "evalue_ci", "notes"):
        assert key in data
    assert data["ci"] == [1.8, 8.7]
    assert data["evalue"] == pytest.approx(7.26, abs=0.005)
    assert data["evalue_ci"] == pytest.approx(3.0, abs=0.05)
    assert isinstance(data["notes"], list) and data["notes"]


def test_json_without_interval_has_nulls(run):
    data = json.loads(run("evalue", "--scale", "rr", "--estimate", 2.0, "--format", "json").stdout)
    assert data["ci"] is None and data["rr_ci"] is None and data["evalue_ci"] is None


@pytest.mark.parametrize(
    "args, rr_text",
    [
        (
            (
                "--scale",
                "or",
                "--estimate",
                2.1,
                "--ci",
                1.4,
                3.15,
                "--outcome-frequency",
                "common",
            ),
            "1.45",
        ),
        (
            ("--scale", "or", "--estimate", 2.1, "--ci", 1.4, 3.15, "--outcome-frequency", "rare"),
            "2.10",
        ),
        (("--scale", "hr", "--estimate", 0.72, "--ci", 0.6, 0.86, "--prevalence", 0.3), "0.80"),
        (("--scale", "hr", "--estimate", 0.72, "--ci", 0.6, 0.86, "--prevalence", 0.05), "0.72"),
        (("--scale", "smd", "--estimate", 0.5, "--se", 0.1), "1.58"),
        (("--scale", "smd", "--estimate", -0.4, "--ci", -0.6, -0.2), "0.69"),
        (("--scale", "md", "--estimate", 0.42, "--se", 0.11, "--sd", 12, "--contrast", 10), "1.38"),
        (("--scale", "rr", "--estimate", 0.5, "--ci", 0.3, 0.8, "--target", 0.8), "0.50"),
    ],
)
def test_every_scale_runs(run, args, rr_text):
    res = run("evalue", *args)
    assert res.exit_code == 0, res.stderr
    assert rr_text in res.stdout


@pytest.mark.parametrize("fmt", ["csv", "markdown", "latex"])
def test_paste_formats_keep_stdout_clean(run, fmt):
    res = run(*PUBLISHED, "--format", fmt)
    assert res.exit_code == 0
    assert "7.26" in res.stdout
    assert "pass/fail" not in res.stdout and "pass/fail" in res.stderr


def test_csv_is_one_row_with_contract_columns(run):
    rows = list(csv.DictReader(io.StringIO(run(*PUBLISHED, "--format", "csv").stdout)))
    assert len(rows) == 1
    assert float(rows[0]["evalue"]) == pytest.approx(7.26, abs=0.005)
    assert rows[0]["ci_lower"] == "1.8"


def test_markdown_and_latex_tables(run):
    md = run(*PUBLISHED, "--format", "markdown").stdout
    assert "| Estimate | 3.90 | 7.26 |" in md
    tex = run(*PUBLISHED, "--format", "latex").stdout
    assert r"\begin{tabular}" in tex and r"Estimate & 3.90 & 7.26 \\" in tex


def test_output_file(run, tmp_path):
    out = tmp_path / "e.json"
    res = run(*PUBLISHED, "--format", "json", "--output", out)
    assert res.exit_code == 0 and res.stdout == ""
    assert json.loads(out.read_text())["scale"] == "rr"


def test_hypothetical_confounder_answers_the_reviewer(run):
    res = run(*PUBLISHED, "--confounder", 2, 3, "--confounder", 8, 8, "--format", "json")
    conf = json.loads(res.stdout)["confounders"]
    assert [c["bounding_factor"] for c in conf] == pytest.approx([1.5, 64 / 15])
    assert conf[0]["bias_adjusted"]["estimate"] == pytest.approx(2.6)
    assert conf[0]["bias_adjusted"]["ci_limit"] == pytest.approx(1.2)
    assert conf[0]["explains_estimate"] is False
    assert conf[1]["explains_estimate"] is True
    text = " ".join(run(*PUBLISHED, "--confounder", 2, 3).stdout.split())
    assert "bounding factor 1.500" in text and "could move the estimate at most to 2.60" in text


@pytest.mark.parametrize(
    "args, message",
    [
        (("--scale", "rr", "--estimate", 0), "Error: `--estimate` must be positive; got 0"),
        (("--scale", "rr", "--estimate", -1.5), "Error: `--estimate` must be positive; got -1.5"),
        (
            ("--scale", "rr", "--estimate", "inf"),
            "Error: Invalid value for '--estimate': must be a finite number; got inf",
        ),
        (
            ("--scale", "rr", "--estimate", "abc"),
            "Error: Invalid value for '--estimate': 'abc' is not a valid float",
        ),
        (
            ("--scale", "rr", "--estimate", 3.9, "--ci", 4, 8.7),
            "Error: `--estimate` must lie within `--ci`",
        ),
        (
            ("--scale", "rr", "--estimate", 3.9, "--ci", 8.7, 1.8),
            "Error: `--ci` lower limit must not exceed the upper",
        ),
        (
            ("--scale", "or", "--estimate", 2),
            "Error: the outcome's frequency (`--outcome-frequency`) is needed on the or scale",
        ),
        (
            ("--scale", "hr", "--estimate", 2, "--prevalence", 2),
            "Error: `--prevalence` must lie in [0, 1]; got 2",
        ),
        (("--scale", "md", "--estimate", 2, "--se", 1), "Error: `--sd` is required for scale md"),
        (
            ("--scale", "rr", "--estimate", 2, "--target", 0),
            "Error: `--target` must be positive; got 0",
        ),
        (
            ("--scale", "rr", "--estimate", 2, "--confounder", 0.5, 2),
            "Error: the first value of `--confounder` must be at least 1; got 0.5",
        ),
        (("--scale", "zz", "--estimate", 2), "Error: Invalid value for '--scale'"),
        (("--scale", "rr"), "Error: give the result as published"),
        (("--estimate", 2), "Error: --estimate needs --scale"),
        (
            ("rr", 2),
            "Error: the form `evalue SCALE ESTIMATE` is retired: give the result as "
            'published, `evalue "RR 2 (95% CI ...)"`, or by name, `evalue --scale rr --estimate 2',
        ),
        (("1.5", "2"), "Error: TEXT is one argument: quote the published result"),
        (("HR 1.4 (1.1-",), "Error: `TEXT`: the interval is incomplete; got 'HR 1.4 (1.1-'"),
        (("1.4 (1.1-1.8)",), "Error: `TEXT` names no scale"),
        (("HR 1.4 (1.1-1.8)", "--scale", "or"), "Error: `--scale` 'or' differs from the scale"),
        (("RR 1.4 (90% CI 1.1-1.8)", "--ci-level", 0.95), "Error: `--ci-level` 0.95 differs"),
        (("RR 1.4 (1.1-1.8)", "--estimate", 1.4), "Error: TEXT and --estimate cannot be used"),
        (("RR 1.4", "--ci", 1.1, 1.8), "Error: TEXT and --ci cannot be used together"),
        # the numbers read from TEXT are the text's: it named `--estimate`, never given
        (("RR 0 (0-1)",), "Error: the estimate in `TEXT` must be positive; got 0"),
        (("RR 1.2 (0 to 1.5)",), "Error: the interval in `TEXT` must be positive; got 0"),
        (
            ("SMD 0.3 (0.1-0.5)", "--se", 0.1),
            "Error: give `--se` or the interval in `TEXT` for scale smd, not both",
        ),
        (
            ("rr", 2, "--output", "/no/such/folder/e.txt"),
            "Error: Invalid value for '--output': folder '/no/such/folder' does not exist",
        ),
    ],
)
def test_bad_input_exits_2_with_one_line(run, args, message):
    res = run("evalue", *args)
    assert res.exit_code == 2
    assert res.stdout == ""
    assert res.stderr.startswith(message)
    assert res.stderr.count("\n") == 1 and "Traceback" not in res.stderr


def test_help_exits_0(run):
    res = run("evalue", "--help")
    assert res.exit_code == 0 and "--confounder" in res.stdout


def test_python_dash_m_runs():
    import subprocess
    import sys

    out = subprocess.run(
        [sys.executable, "-m", "sensitivity", *map(str, PUBLISHED)],
        capture_output=True,
        text=True,
        check=True,
    )
    assert "7.26" in out.stdout
