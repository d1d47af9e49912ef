"""`sensitivity tipping` as a user runs it."""

import csv
import io
import json

import pytest

EXAMPLE = (
    "tipping",
    "--scale",
    "rr",
    "--estimate",
    1.8,
    "--ci",
    1.2,
    2.7,
    "--prevalence-control",
    0.2,
)


def test_the_issue_example_gives_a_grid_and_table(run):
    res = run(*EXAMPLE)
    assert res.exit_code == 0, res.stderr
    out = res.stdout
    assert "Tipping points: least effect of U on the outcome" in out
    assert "Prevalence of U among the treated" in out
    assert "21 x 1 x 21 = 441 cells" in " ".join(out.split())
    assert "Cautions:" in out


@pytest.mark.parametrize(
    "view",
    [
        EXAMPLE,
        ("tipping", "--kind", "continuous", "--scale", "rr", "--estimate", 0.81)
        + ("--ci", 0.69, 0.95, "--difference", "0:1.5:0.5", "--outcome-effect", 1.5),
        ("tipping", "--kind", "bounding", "--scale", "rr", "--estimate", 1.38)
        + ("--ci", 1.12, 1.7, "--rr-treatment", "1:3:0.5", "--rr-outcome", "1:3:0.5"),
    ],
)
def test_the_ci_level_is_named_in_every_view_and_in_json(run, view):
    """Issue 19: every interval names its level; --ci-level is the level of --ci."""
    res = run(*view, "--ci-level", 0.9)
    assert res.exit_code == 0, res.stderr
    assert "90% CI" in res.stdout and "95%" not in res.stdout
    res = run(*view, "--ci-level", 0.9, "--format", "json")
    assert json.loads(res.stdout)["ci_level"] == 0.9
    assert json.loads(run(*view, "--format", "json").stdout)["ci_level"] == 0.95


def test_partial_r2_alpha_names_its_level(run):
    args = ("tipping", "--kind", "partial-r2", "--estimate", 0.114, "--se", 0.027, "--dof", 1192)
    res = run(*args, "--alpha", 0.1)
    assert res.exit_code == 0, res.stderr
    assert "90% CI" in res.stdout and "95%" not in res.stdout
    assert json.loads(run(*args, "--alpha", 0.1, "--format", "json").stdout)["ci_level"] == 0.9


def test_json_rows_and_tipping_points_follow_the_contract(run):
    res = run(*EXAMPLE, "--format", "json")
    d = json.loads(res.stdout)
    assert len(d["rows"]) == 441
    row = d["rows"][0]
    for key in ("prevalence_treated", "prevalence_control", "outcome_effect", "bias_adjusted"):
        assert key in row
    assert {"estimate", "ci"} <= set(row["bias_adjusted"])
    assert len(d["tipping_points"]) == 21
    tp = d["tipping_points"][-1]
    assert tp["prevalence_treated"] == 1.0 and tp["parameter"] == "outcome_effect"
    assert tp["estimate"] == 2.25 and tp["estimate_exact"]["low"] == pytest.approx(2.25)
    assert isinstance(d["notes"], list)


def test_single_values_give_one_row(run):
    res = run(
        "tipping",
        "--scale",
        "md",
        "--estimate",
        2.4,
        "--ci",
        0.8,
        4.0,
        "--prevalence-treated",
        0.6,
        "--prevalence-control",
        0.2,
        "--outcome-effect",
        3,
        "--format",
        "json",
    )
    d = json.loads(res.stdout)
    assert len(d["rows"]) == 1 and d["tipping_points"] == []
    assert d["rows"][0]["bias_adjusted"]["estimate"] == pytest.approx(2.4 - 3 * 0.4)
    text = run(
        "tipping",
        "--scale",
        "md",
        "--estimate",
        2.4,
        "--prevalence-treated",
        0.6,
        "--prevalence-control",
        0.2,
        "--outcome-effect",
        3,
    ).stdout
    assert "Bias-adjusted estimate" in text


def test_csv_is_long_format(run):
    res = run(*EXAMPLE, "--format", "csv")
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert len(rows) == 441
    assert {
        "prevalence_treated",
        "bias_adjusted_estimate",
        "bias_adjusted_ci_lower",
        "reaches_target",
    } <= set(rows[0])
    assert "Note:" in res.stderr


@pytest.mark.parametrize("fmt", ["markdown", "latex"])
def test_table_formats(run, fmt):
    res = run(*EXAMPLE, "--format", fmt)
    assert res.exit_code == 0 and "Estimate reaches the null at" in res.stdout


def test_target_and_difference_scale(run):
    res = run(
        "tipping",
        "--scale",
        "rd",
        "--estimate",
        0.08,
        "--ci",
        0.03,
        0.13,
        "--target",
        0.02,
        "--prevalence-treated",
        "0:1:0.1",
        "--prevalence-control",
        0.1,
        "--outcome-effect",
        0.2,
        "--format",
        "json",
    )
    d = json.loads(res.stdout)
    assert d["target"] == 0.02
    (tp,) = d["tipping_points"]
    assert tp["parameter"] == "prevalence_treated"
    assert tp["estimate_exact"]["low"] == pytest.approx(0.1 + 0.06 / 0.2)


def test_bounding_view(run):
    res = run(
        "tipping",
        "--kind",
        "bounding",
        "--scale",
        "rr",
        "--estimate",
        3.9,
        "--ci",
        1.8,
        8.7,
        "--format",
        "json",
    )
    d = json.loads(res.stdout)
    assert d["evalue"] == pytest.approx(7.26, abs=0.005)
    assert {"rr_treatment", "rr_outcome", "bounding_factor"} <= set(d["rows"][0])


def test_bounding_view_with_common_odds_ratio(run):
    res = run(
        "tipping",
        "--kind",
        "bounding",
        "--scale",
        "or",
        "--estimate",
        2.4,
        "--outcome-frequency",
        "common",
        "--rr-treatment",
        2,
        "--rr-outcome",
        "1:5:0.5",
    )
    assert res.exit_code == 0 and "RR ≈ √OR" in res.stdout


def test_partial_r2_view(run):
    res = run(
        "tipping",
        "--kind",
        "partial-r2",
        "--estimate",
        0.097,
        "--se",
        0.0232,
        "--dof",
        783,
        "--format",
        "json",
    )
    assert res.exit_code == 0, res.stderr
    d = json.loads(res.stdout)
    assert {"r2_treatment", "r2_outcome", "bias"} <= set(d["rows"][0])
    assert {"estimate", "se", "t", "ci"} <= set(d["rows"][0]["bias_adjusted"])


@pytest.mark.parametrize(
    "suffix, magic", [(".png", b"\x89PNG"), (".svg", b"<?xml"), (".pdf", b"%PDF")]
)
def test_plot_formats(run, tmp_path, suffix, magic):
    out = tmp_path / f"t{suffix}"
    res = run(*EXAMPLE, "--plot", out)
    assert res.exit_code == 0, res.stderr
    assert out.read_bytes().startswith(magic)


@pytest.mark.parametrize(
    "args",
    [
        ("tipping", "--kind", "bounding", "--scale", "rr", "--estimate", 3.9, "--ci", 1.8, 8.7),
        ("tipping", "--kind", "partial-r2", "--estimate", 0.097, "--se", 0.0232, "--dof", 783),
        (
            "tipping",
            "--scale",
            "rr",
            "--estimate",
            1.8,
            "--prevalence-control",
            0.2,
            "--prevalence-treated",
            0.6,
        ),
    ],
)
def test_plot_every_view(run, tmp_path, args):
    out = tmp_path / "v.png"
    res = run(*args, "--plot", out)
    assert res.exit_code == 0, res.stderr
    assert out.stat().st_size > 1000


@pytest.mark.parametrize(
    "args, message",
    [
        (
            EXAMPLE + ("--prevalence-treated", "0:1.5:0.1"),
            "Error: `--prevalence-treated` must lie in [0, 1]; got 1.1",
        ),
        (
            EXAMPLE + ("--outcome-effect", "0:3:0.5"),
            "Error: `--outcome-effect` must be positive; got 0",
        ),
        (
            EXAMPLE + ("--outcome-effect", "3:1:0.5"),
            "Error: `--outcome-effect` is backwards or empty",
        ),
        (
            EXAMPLE + ("--outcome-effect", "1:3:0"),
            "Error: `--outcome-effect` step must be positive; got 0",
        ),
        (
            EXAMPLE + ("--outcome-effect", "1:3"),
            "Error: `--outcome-effect` must be a number or START:STOP:STEP",
        ),
        (
            (
                "tipping",
                "--scale",
                "rr",
                "--estimate",
                1.8,
                "--prevalence-treated",
                "0:1:0.0005",
                "--prevalence-control",
                "0:1:0.0005",
                "--outcome-effect",
                2,
            ),
            "Error: the grid has 4,004,001 cells",
        ),
        (
            (
                "tipping",
                "--scale",
                "rr",
                "--estimate",
                1.8,
                "--prevalence-treated",
                "0:1:0.0002",
                "--prevalence-control",
                "0:1:0.0002",
                "--outcome-effect",
                2,
            ),
            "Error: the grid has 25,010,001 cells (5001 x 5001 x 1); the limit is 5,000,000",
        ),
        (("tipping", "--estimate", 1.8), "Error: --scale is required for the binary view"),
        (("tipping", "--scale", "rr"), "Error: --estimate is required"),
        (
            ("tipping", "--scale", "rr", "--estimate", 0),
            "Error: `--estimate` must be positive; got 0",
        ),
        (
            ("tipping", "--kind", "partial-r2", "--estimate", 1),
            "Error: the partial-r2 view needs --se and --dof",
        ),
        (
            ("tipping", "--kind", "bounding", "--scale", "md", "--estimate", 1),
            "Error: `--scale` must be one of rr, or, hr for the bounding view",
        ),
        (
            ("tipping", "--scale", "rr", "--estimate", 2, "--rr-treatment", 2),
            "Error: --rr-treatment does not apply to the binary view",
        ),
        (
            EXAMPLE + ("--alpha", 0.1),  # issue 19: was ignored, the CI still called 95%
            "Error: --alpha does not apply to the binary view; its --ci's level is --ci-level",
        ),
        (
            ("tipping", "--scale", "rr", "--estimate", 1.8, "--ci-level", 0.9),
            "Error: --ci-level is the level of --ci: give --ci LOWER UPPER with it",
        ),
        (
            ("tipping", "--kind", "partial-r2", "--estimate", 1, "--se", 1, "--dof", 9)
            + ("--ci-level", 0.9),
            "Error: --ci-level does not apply to the partial-r2 view; it takes --alpha",
        ),
        (EXAMPLE + ("--ci-level", 1.5), "Error: `--ci-level` must lie strictly between 0 and 1"),
        (
            EXAMPLE + ("--plot", "t.gif"),
            "Error: `--plot` must end in .png, .svg or .pdf; got 't.gif'",
        ),
        (
            ("tipping", "--scale", "rr", "--estimate", 1.8, "--plot", "x.png"),
            "Error: `--plot` needs one or two varying parameters; got 3",
        ),
    ],
)
def test_bad_input_exits_2(run, args, message):
    res = run(*args)
    if "4,004,001" in message:  # under the limit: this one must work
        assert res.exit_code == 0, res.stderr
        return
    assert res.exit_code == 2, res.stdout[:200]
    assert res.stderr.startswith(message), res.stderr
    assert res.stderr.count("\n") == 1


def test_a_tiny_alpha_names_its_level(run):
    """Issue 19: alpha 1e-17 printed "(100 − 0)% CI" (the level 1 - alpha held as 1)."""
    args = ("tipping", "--kind", "partial-r2", "--estimate", 0.114, "--se", 0.027, "--dof", 1192)
    res = run(*args, "--alpha", 1e-17)
    assert res.exit_code == 0, res.stderr
    assert "(100 − 1e-15)% CI" in res.stdout and "(100 − 0)" not in res.stdout


def test_the_bounding_views_e_value_names_its_level(run):
    res = run("tipping", "--kind", "bounding", "--scale", "rr", "--estimate", 1.38,
              "--ci", 1.12, 1.7, "--ci-level", 0.9)  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "for the 90% CI:" in " ".join(res.stdout.split())


def test_a_figure_of_no_varying_strength_is_refused_before_any_output(run, tmp_path):
    """With every strength a single value, `--plot` printed the whole table, then exited 2
    telling the user to "give one of them a single value" (the hint for three)."""
    res = run(
        *EXAMPLE, "--prevalence-treated", 0.3, "--outcome-effect", 2,
        "--plot", str(tmp_path / "x.png"),
    )  # fmt: skip
    assert res.exit_code == 2
    assert res.stdout == ""
    assert res.stderr == (
        "Error: `--plot` needs one or two varying parameters; got 0 (give one of them a range "
        "START:STOP:STEP)\n"
    )
    assert not (tmp_path / "x.png").exists()
