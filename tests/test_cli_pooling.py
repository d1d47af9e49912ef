"""`sensitivity pool` as a user runs it: every format, figures, every error exits 2."""

from __future__ import annotations

import csv
import io
import json
import shlex
import shutil

import pytest
from click.testing import CliRunner
from conftest import ROOT, help_examples

from cli import cli

DEMO = str(ROOT / "demo" / "pooled_studies.csv")
BASE = ("pool", DEMO, "--from-text", "result", "--threshold", "1.1")


def test_text_shows_the_answer_sentence_and_cautions(run):
    res = run(*BASE)
    assert res.exit_code == 0, res.stderr
    text = " ".join(res.stdout.split())
    assert "Paule-Mandel" in text and "95% CI" in text
    assert "could reduce that share to 10%, and a smaller one could not" in text
    assert "Ridgeway" in text and "no result in the text" in text  # the flagged row is kept
    assert "does not show that the association is causal" in text
    assert res.stderr == ""


def test_json_keys_follow_the_contract(run):
    res = run(*BASE, "--format", "json", "--bias", "1:1.5:0.1", "--share", "0.2")
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert set(data) >= {"studies", "pooled", "share_beyond", "bias_to_reduce",
                         "strength_to_reduce", "evalue"}  # fmt: skip
    assert set(data["pooled"]) >= {"estimate", "ci", "tau2", "method"}
    assert [round(row["bias"], 10) for row in data["share_beyond"]] == [1, 1.1, 1.2, 1.3, 1.4, 1.5]
    assert set(data["share_beyond"][0]) == {"bias", "share", "se"}
    assert data["bias_to_reduce"]["value"] > 1 and data["bias_to_reduce"]["se"] > 0
    assert len(data["studies"]) == 13
    flagged = [s for s in data["studies"] if s["error"]]
    assert [s["label"] for s in flagged] == ["Ridgeway", "Copperfield"]
    assert data["share"] == 0.2 and "sentence" in data


def test_csv_is_the_share_against_the_bias(run):
    res = run(*BASE, "--format", "csv", "--bias", "1.2")
    assert res.exit_code == 0
    rows = list(csv.DictReader(io.StringIO(res.stdout)))
    assert list(rows[0]) == ["bias", "share", "se"] and len(rows) == 1
    assert "could reduce" in res.stderr  # the sentence and notes go to stderr


@pytest.mark.parametrize("fmt, mark", [("markdown", "|"), ("latex", "\\begin{tabular}")])
def test_manuscript_formats(run, fmt, mark):
    res = run(*BASE, "--format", fmt)
    assert res.exit_code == 0 and mark in res.stdout


def test_several_outputs_and_both_figures(run, tmp_path):
    out_json, out_md, out_html = (tmp_path / f"pool.{x}" for x in ("json", "md", "html"))
    res = run(*BASE, "--method", "dl", "-o", out_json, "-o", out_md, "-o", out_html,
              "--plot", tmp_path / "pool.png", "--plot", tmp_path / "only-share.svg")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert json.loads(out_json.read_text())["pooled"]["method"] == "dl"
    assert out_md.read_text().startswith("**")
    assert "<!DOCTYPE html>" in out_html.read_text() and "could reduce" in out_html.read_text()
    for name in ("pool-forest.png", "pool-share.png", "only-share.svg"):
        assert (tmp_path / name).stat().st_size > 1000
    assert not (tmp_path / "only-share-forest.svg").exists()


def test_a_preventive_pooled_effect_counts_effects_below_the_threshold(run, tmp_path):
    path = tmp_path / "protective.csv"
    path.write_text("study,result\nA,RR 0.70 (0.55-0.89)\nB,RR 0.82 (0.66-1.02)\n"
                    "C,RR 0.61 (0.45-0.83)\nD,RR 0.90 (0.75-1.08)\n")  # fmt: skip
    res = run("pool", path, "--from-text", "result", "--threshold", "0.9", "--format", "json")
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["direction"] == "below" and data["pooled"]["estimate"] < 1
    assert "below 0.9" in " ".join(data["sentences"])


def test_plot_mark_does_not_apply(run):
    res = run(*BASE, "--plot-mark", "1", "2")
    assert res.exit_code == 2 and "--plot-mark does not apply to pool" in res.stderr


def test_log_estimates_with_standard_errors(run, tmp_path):
    path = tmp_path / "logs.csv"
    path.write_text("label,y,s\nA,0.3,0.1\nB,0.1,0.12\nC,0.45,0.15\nD,0.2,0\n")
    res = run("pool", path, "--columns", "log_estimate=y,se=s", "--threshold", "1.1",
              "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["pooled"]["studies"] == 3
    assert data["studies"][3]["error"] == "`se` must be positive; got 0"


@pytest.mark.parametrize(
    "args, message",
    [
        (("--share", "1.5"), "`--share` must lie strictly between 0 and 1; got 1.5"),
        (("--share", "0"), "`--share` must lie strictly between 0 and 1; got 0"),
        (("--bias", "0.5"), "`--bias` must be at least 1; got 0.5"),
        (("--bias", "1:x:2"), "`--bias` must be a number or START:STOP:STEP"),
        (("--bias-sd", "3"), "`--bias-sd` must be less than the estimated spread"),
        (("--threshold", "-1"), "`--threshold` must be positive; got -1"),
        (("--method", "reml"), "Invalid value for '--method'"),
        (("--level", "95"), "`--level` must lie strictly between 0 and 1; got 95"),
        (("--columns", "label=nothere"), "'nothere' (for label) is not a column"),
        (("--plot", "x.gif"), "must end in .png, .svg or .pdf"),
    ],
)
def test_errors_exit_2_with_one_line(run, args, message):
    base = list(BASE)
    if args[0] in base:  # an option given once (twice is refused): replace its value
        i = base.index(args[0])
        base[i : i + len(args)] = args
        args = ()
    res = run(*base, *args)
    assert res.exit_code == 2, res.stdout
    assert message in res.stderr
    assert len(res.stderr.strip().splitlines()) <= 2 and "Traceback" not in res.stderr


@pytest.mark.parametrize(
    "content, message",
    [
        ("label,result\nA,RR 1.3 (1.1-1.5)\n", "pooling needs at least 2 usable studies; got 1"),
        ("label,result\nA,RR 1.3 (1.1-1.5)\nB,RR 1.2 (1.2-1.2)\n",
         "row 2: `se` must be positive; got 0"),
        ("label,log_estimate,se\nA,0.3,0.1\nB,0.2,-0.1\n",
         "row 2: `se` must be positive; got -0.1"),
    ],
)  # fmt: skip
def test_too_few_usable_studies_exit_2_naming_the_rule(run, tmp_path, content, message):
    path = tmp_path / "studies.csv"
    path.write_text(content)
    extra = ("--from-text", "result") if "result" in content else ()
    res = run("pool", path, *extra, "--threshold", "1.1")
    assert res.exit_code == 2
    assert message in res.stderr and "Traceback" not in res.stderr


def test_a_missing_file_exits_2(run, tmp_path):
    res = run("pool", tmp_path / "none.csv", "--threshold", "1.1")
    assert res.exit_code == 2 and "Error:" in res.stderr


@pytest.mark.parametrize("example", help_examples("pool"))
def test_help_examples_run(example, tmp_path, monkeypatch):
    shutil.copytree(ROOT / "demo", tmp_path / "demo")
    monkeypatch.chdir(tmp_path)
    args = shlex.split(example)
    res = CliRunner().invoke(cli, args[1:])
    assert res.exit_code == 0, res.stderr


def test_screen_pools_what_it_screened(run, tmp_path):
    res = run("screen", DEMO, "--from-text", "result", "--pool", "1.1")
    assert res.exit_code == 0, res.stderr
    assert "Screened results by scale" in res.stdout
    text = " ".join(res.stdout.split())
    assert "A random-effects meta-analysis of 11 studies" in text
    assert "were pooled on the risk-ratio scale after the screen's conversions" in text
    res = run("screen", DEMO, "--from-text", "result", "--pool", "1.1", "--format", "json")
    data = json.loads(res.stdout)
    assert data["pool"]["pooled"]["studies"] == 11 and len(data["rows"]) == 13
    assert "A random-effects meta-analysis" in res.stderr
    alone = json.loads(run(*BASE, "--format", "json").stdout)
    assert data["pool"]["pooled"] == alone["pooled"]


def test_screen_pool_errors_exit_2(run, tmp_path):
    path = tmp_path / "one.csv"
    path.write_text("result\nRR 1.3 (1.1-1.5)\n")
    res = run("screen", path, "--from-text", "result", "--pool", "1.1")
    assert res.exit_code == 2 and "at least 2 usable studies" in res.stderr
    res = run("screen", DEMO, "--from-text", "result", "--pool", "0")
    assert res.exit_code == 2 and "`--pool` must be positive; got 0" in res.stderr


def _studies(tmp_path, second_level):
    # invented studies (a scenario of our own), read from free text with their levels
    path = tmp_path / "studies.csv"
    path.write_text(
        "label,result\n"
        'A,"RR 1.52 (95% CI 1.10-2.10)"\n'
        f'B,"RR 1.31 ({second_level}% CI 1.02-1.68)"\n'
        'C,"RR 1.80 (95% CI 1.20-2.70)"\n'
    )
    return path


def test_the_studies_table_names_the_level_all_rows_share(run, tmp_path):
    res = run("pool", _studies(tmp_path, 95), "--from-text", "result", "--threshold", "1.2",
              "--format", "markdown")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "| Study | Risk ratio | 95% CI | E-value | E-value (95% CI) | Weight |" in res.stdout
    assert "E-value (CI)" not in res.stdout


def test_the_studies_table_gives_each_row_its_level_when_they_differ(run, tmp_path):
    import pandas as pd

    from sensitivity.pooling.data import pool_table
    from sensitivity.pooling.present import study_table

    res = run("pool", _studies(tmp_path, 90), "--from-text", "result", "--threshold", "1.2",
              "--format", "markdown")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "| Interval | Level | E-value | E-value (its row's CI) |" in res.stdout
    assert "| B | 1.31 | 1.02 to 1.68 | 90% |" in res.stdout
    assert "E-value (CI)" not in res.stdout
    frame = pd.read_csv(_studies(tmp_path, 90))
    table = study_table(pool_table(frame, from_text="result", threshold=1.2))
    assert [row[3] for row in table.rows] == ["95%", "90%", "95%"]
    assert table.footnotes[0].startswith("Each interval, and the E-value of its limit nearest")
