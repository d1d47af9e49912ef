"""Issue 19: bad input names what the user typed (the option, the text or the column), exit 2.

Each case is one line on the command line; the rule it names is ours (no outside source)."""

from __future__ import annotations

import pytest
from click.testing import CliRunner
from conftest import ROOT

from cli import cli
from sensitivity.screen.text import parse


def _run(*args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


def _error(*args) -> str:
    result = _run(*args)
    assert result.exit_code == 2, result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1 or "Usage" in result.output, result.output
    return result.output


def test_tipping_bounding_names_no_prevalence_option():
    out = _error("tipping", "--kind", "bounding", "--scale", "hr", "--estimate", "1.38",
                 "--ci", "1.12", "1.70")  # fmt: skip
    assert "--outcome-frequency" in out and "prevalence" not in out


@pytest.mark.parametrize(
    "text, expected",
    [
        ("HR 0.72 (95% CI 0.80-0.86)", "the estimate 0.72 must lie within its interval"),
        ("RR 1e400 (1 to 2)", "the number 1e400 is beyond double precision"),
        ("RR 1.5 (1 to 2e999)", "the number 2e999"),
        ("RR 1.5 (2 to 1)", "lower limit 2 exceeds its upper limit 1"),
        ("HR 0.72 (95 % CI 0,60-0,86)", "decimal commas"),
        ("HR 0.72 (95% CI 0,60-0,86)", "decimal commas"),
        ("HR 0.72 (150% CI 0.6-0.86)", "level 150% must lie strictly between 0 and 100%"),
        ("HR 0.72 (0% CI 0.7-0.74)", "level 0% must lie strictly between 0 and 100%"),
        ("HR 0.72 (100% CI 0.6-0.86)", "level 100% must lie"),
    ],
)
def test_published_text_errors_name_the_text(text, expected):
    out = _error("evalue", text, "--outcome-frequency", "rare")
    assert expected in out and "--estimate" not in out and "--ci" not in out
    assert "two results" not in out


def test_a_one_digit_level_is_read():
    assert parse("HR 0.72 (5% CI 0.7-0.74)")["level"] == pytest.approx(0.05)
    assert parse("HR 0.72 (95 % CI 0.60-0.86)")["level"] == pytest.approx(0.95)
    assert parse("HR 1.2 (1.1,1.3)")["error"] == ""


def test_contrast_beyond_range_names_contrast():
    out = _error("evalue", "--data", ROOT / "demo" / "harbourside_bp.csv", "--formula",
                 "sbp ~ commute_min + age", "--treatment", "commute_min", "--model", "ols",
                 "--contrast", "1e300")  # fmt: skip
    assert "--contrast" in out


@pytest.mark.parametrize("model", ["logit", "poisson"])
def test_contrast_beyond_range_names_contrast_on_log_models(model):
    out = _error("evalue", "--data", ROOT / "demo" / "harbourside_cohort.csv", "--formula",
                 "diabetes ~ bmi + age", "--treatment", "bmi", "--model", model,
                 "--contrast", "-1e300")  # fmt: skip
    assert "--contrast" in out and "--estimate" not in out


SIMULATE = ("simulate", "--scale", "rr", "--estimate", "0.81", "--prevalence-treated",
            "uniform:0.2:0.4", "--prevalence-control", "uniform:0.3:0.5", "--outcome-effect",
            "lognormal:0.5:0.2", "--seed", "7")  # fmt: skip


def test_simulate_names_a_tiny_level_as_the_cause():
    out = _error(*SIMULATE, "--ci", "0.69", "0.95", "--ci-level", "1e-15")
    assert "at `--ci-level` 1e-15" in out and "outcome-effect" not in out


def test_simulate_names_an_interval_too_wide_at_its_level():
    out = _error(*SIMULATE, "--ci", "1e-300", "1e300")
    assert "`--ci` at level 0.95" in out and "--ci-level" not in out


def test_simulate_level_error_carries_the_argument_from_python():
    from sensitivity.common.errors import InputError
    from sensitivity.simulate.core import simulate

    with pytest.raises(InputError) as caught:
        simulate("rr", 0.81, (0.69, 0.95), prevalence_treated="uniform:0.2:0.4",
                 prevalence_control="uniform:0.3:0.5", outcome_effect="lognormal:0.5:0.2",
                 seed=7, ci_level=1e-15)  # fmt: skip
    assert caught.value.arguments == ("ci_level", "ci")


def test_matched_same_column_twice_is_named():
    out = _error("matched", "--data", ROOT / "demo" / "matched_pairs.csv", "--treated",
                 "night_shift_sbp", "--control", "night_shift_sbp")  # fmt: skip
    assert "`--treated` and `--control` name the same column" in out
    assert "--differences" not in out


@pytest.mark.parametrize(
    "row, options, expected",
    [
        ("3,inf,100", ("--differences", "night_shift_sbp"),
         "column 'night_shift_sbp' holds inf on file line 4"),
        ("3,100,-inf", ("--treated", "night_shift_sbp", "--control", "day_shift_sbp"),
         "column 'day_shift_sbp' holds -inf on file line 4"),
        ("3,1e308,-1e308", ("--treated", "night_shift_sbp", "--control", "day_shift_sbp"),
         "'night_shift_sbp' minus 'day_shift_sbp' on file line 4 is beyond double precision"),
    ],
)  # fmt: skip
def test_matched_infinite_cell_names_column_and_file_line(tmp_path, row, options, expected):
    lines = (ROOT / "demo" / "matched_pairs.csv").read_text().splitlines()
    lines[3] = row
    path = tmp_path / "pairs.csv"
    path.write_text("\n".join(lines) + "\n")
    out = _error("matched", "--data", path, *options)
    assert expected in out and "--differences`" not in out


def test_matched_from_a_frame_names_the_row():
    import pandas as pd

    from sensitivity.adapters.matched import matched_differences
    from sensitivity.common.errors import InputError

    frame = pd.DataFrame({"a": [1.0, float("inf")], "b": [0.0, 1.0]})
    with pytest.raises(InputError, match="column 'a' holds inf on row 1"):
        matched_differences(frame, treated="a", control="b")


@pytest.mark.parametrize(
    "table, options, expected",
    [
        ("label,scale,HR,LCL,UCL,outcome\na,hr,1.38,1.70,1.12,rare\n",
         ("--columns", "estimate=HR,lower=LCL,upper=UCL"),
         "`LCL` must not exceed `UCL`; got 1.7 > 1.12"),
        ("label,scale,HR,LCL,UCL\nc,rr,0.5,0.6,0.9\n",
         ("--columns", "estimate=HR,lower=LCL,upper=UCL"),
         "`HR` must lie within `LCL` to `UCL`; got 0.5 outside [0.6, 0.9]"),
        ("label,scale,estimate,lower,upper\na,rr,1.38,1.70,1.12\n", (),
         "`lower` must not exceed `upper`"),
        ('label,result\na,"RR 0.5 (0.6-0.9)"\n', ("--from-text", "result"),
         "the estimate in `result` must lie within the interval in `result`"),
    ],
)  # fmt: skip
def test_screen_row_errors_name_the_files_columns(tmp_path, table, options, expected):
    path = tmp_path / "rows.csv"
    path.write_text(table)
    result = _run("screen", path, "--format", "csv", *options)
    assert result.exit_code == 0, result.output
    assert expected in result.output and "`ci`" not in result.output


def test_evalue_offers_no_plot_mark():
    assert "--plot-mark" not in _run("evalue", "--help").output
    result = _run("evalue", "--scale", "rr", "--estimate", "2", "--plot-mark", "1", "2")
    assert result.exit_code == 2 and "No such option '--plot-mark'" in result.output
    assert "--plot-mark" in _run("tipping", "--help").output  # figures that mark keep it


PR2 = ("--estimate", "0.114", "--se", "0.027", "--dof", "1192")


@pytest.mark.parametrize(
    "args, expected",
    [
        (("evalue", "--scale", "rr", "--estimate", "2", "--plot-limits", "0", "5"),
         "`--plot-limits` are risk-ratio axes starting at 1"),
        (("evalue", "--scale", "rr", "--estimate", "2", "--plot-limits", "-1", "5"),
         "got -1"),
        (("tipping", "--kind", "partial-r2", *PR2, "--plot-limits", "0", "0"),
         "`--plot-limits` are partial R² axes"),
        (("tipping", "--kind", "partial-r2", *PR2, "--plot-mark", "2", "2"),
         "each value of `--plot-mark` is a partial R²"),
        (("partial-r2", *PR2, "--plot-mark", "2", "2"),
         "each value of `--plot-mark` is a partial R²"),
        (("tipping", "--kind", "bounding", "--scale", "rr", "--estimate", "1.38", "--ci", "1.12",
          "1.70", "--plot-limits", "0.5", "3"), "got 0.5"),
        (("tipping", "--scale", "md", "--estimate", "2.4", "--ci", "0.8", "4.0",
          "--prevalence-treated", "0.5", "--prevalence-control", "0:0.5:0.05",
          "--outcome-effect", "0:10:0.5", "--plot", "PLOT", "--plot-limits", "0", "5"),
         "axis starts at 0, so its upper limit must exceed that; got 0"),
    ],
)  # fmt: skip
def test_plot_options_are_checked_before_any_work(tmp_path, args, expected):
    plot = tmp_path / "f.png"
    args = tuple(str(plot) if a == "PLOT" else a for a in args)
    if "--plot" not in args:
        args = (*args, "--plot", str(plot))
    result = _run(*args)
    assert result.exit_code == 2, result.output
    assert expected in result.output
    assert not result.output.startswith(("E-values", "Tipping", "Partial")), result.output
    assert not plot.exists()


@pytest.mark.parametrize("command", ["matched", "simulate", "stability"])
def test_figures_that_mark_no_confounder_offer_no_plot_mark(command):
    """They accepted --plot-mark and drew nothing with it; like evalue now, they don't offer
    it (pool and the screen refuse it with a reason)."""
    out = CliRunner().invoke(cli, [command, "--help"], terminal_width=200).stdout
    assert "--plot-mark" not in out and "--plot-limits" in out
