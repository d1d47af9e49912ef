"""`sensitivity weighting` as a user runs it: every format, the contract's JSON keys, and
every bad input exits 2 with one line naming it."""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pytest


@pytest.fixture(scope="module")
def clinics(tmp_path_factory):
    """Invented data: an outreach programme, visits in a year, a binary follow-up."""
    import pandas as pd

    rng = np.random.default_rng(11)
    n = 400
    age = rng.normal(50, 10, n).round()
    distance = rng.gamma(2, 3, n).round(1)
    district = rng.choice(["north", "south", "east"], n)
    logit = -0.5 + 0.04 * (age - 50) - 0.08 * (distance - 6) + np.where(district == "north", 0.4, 0)
    outreach = (rng.uniform(size=n) < 1 / (1 + np.exp(-logit))).astype(int)
    visits = (2 + 0.03 * (age - 50) - 0.05 * distance + 0.8 * outreach
              + rng.normal(0, 1.2, n)).round(2)  # fmt: skip
    followed = (rng.uniform(size=n) < 1 / (1 + np.exp(-(-0.5 + 0.9 * outreach)))).astype(int)
    frame = pd.DataFrame({"outreach": outreach, "age": age, "distance": distance,
                          "district": district, "visits": visits, "followed": followed,
                          "score": 1 / (1 + np.exp(-logit)), "label": "x"})  # fmt: skip
    path = tmp_path_factory.mktemp("weighting") / "clinics.csv"
    frame.to_csv(path, index=False)
    return path


def _base(path, *extra):
    return ("weighting", "--data", path, "--treatment", "outreach", "--outcome", "visits",
            "--propensity", "outreach ~ age + distance + C(district)", "--lambda", "1:2:0.5",
            "--resamples", 50, "--seed", 3, *extra)  # fmt: skip


def test_text_shows_the_tables_sentence_and_cautions(run, clinics):
    res = run(*_base(clinics))
    assert res.exit_code == 0, res.stderr
    out = " ".join(res.stdout.split())
    assert "Where the conclusion changes" in out
    assert "Overlap of the treated and the controls" in out
    assert "95% CI" in out and "Cautions:" in out


def test_json_follows_the_contract(run, clinics):
    res = run(*_base(clinics, "--format", "json"))
    assert res.exit_code == 0, res.stderr
    d = json.loads(res.stdout)
    assert d["estimand"] == "ate" and isinstance(d["estimate"], float)
    assert [r["lambda"] for r in d["rows"]] == [1.0, 1.0, 1.5, 1.5, 2.0, 2.0]
    assert {r["method"] for r in d["rows"]} == {"sharp", "percentile"}
    for row in d["rows"]:
        assert {"lambda", "method", "lower", "upper", "ci"} <= set(row)
        assert len(row["ci"]) == 2
    assert set(d["lambda_at_null"]) == {"sharp", "percentile"}
    assert d["sentence"].startswith("The weighted average treatment effect")


def test_binary_outcome_adds_the_risk_ratio_and_att_works(run, clinics):
    args = list(_base(clinics, "--format", "json", "--estimand", "att"))
    args[args.index("visits")] = "followed"
    d = json.loads(run(*args).stdout)
    assert d["estimand"] == "att" and d["outcome_type"] == "binary"
    assert {"rr_lower", "rr_upper", "rr_ci"} <= set(d["rows"][0])


@pytest.mark.parametrize("fmt", ["csv", "markdown", "latex"])
def test_machine_formats_keep_stdout_clean(run, clinics, fmt):
    res = run(*_base(clinics, "--format", fmt))
    assert res.exit_code == 0, res.stderr
    if fmt == "csv":
        rows = list(csv.DictReader(io.StringIO(res.stdout)))
        assert len(rows) == 6 and rows[0]["method"] == "sharp"
    assert "Under the marginal sensitivity model" in res.stderr


def test_a_propensity_column_a_list_of_lambdas_and_a_figure(run, clinics, tmp_path):
    plot = tmp_path / "bounds.svg"
    res = run("weighting", "--data", clinics, "--treatment", "outreach", "--outcome", "visits",
              "--propensity-column", "score", "--lambda", "1,1.3,1.6", "--resamples", 50,
              "--seed", 1, "--plot", plot, "--extreme", "clip", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert plot.exists() and f"Wrote {plot}" in res.stderr
    d = json.loads(res.stdout)
    assert d["propensity"] == "given" and d["extreme"]["rule"] == "clip"


def test_no_seed_reports_the_one_drawn(run, clinics):
    args = [a for a in _base(clinics) if a not in ("--seed", 3)]
    res = run(*args)
    assert res.exit_code == 0 and "Seed " in res.stderr


@pytest.mark.parametrize(
    ("change", "message"),
    [
        ({"--treatment": "district"}, "`--treatment` column 'district' must be numeric"),
        ({"--treatment": "age", "--propensity": "age ~ distance"}, "`--treatment` must be binary"),
        ({"--treatment": "visits", "--propensity": "visits ~ age"}, "`--outcome` must be another"),
        ({"--outcome": "label"}, "`--outcome` column 'label' must be numeric"),
        ({"--lambda": "0.5:2:0.5"}, "`--lambda` must be at least 1; got 0.5"),
        (
            {"--propensity": None, "--propensity-column": "followed"},
            "`--propensity-column` must lie strictly between 0 and 1; got 0",
        ),
        ({"--resamples": 5}, "`--resamples` must be at least 50"),
        (  # issue 19: a 99.9% percentile interval from 200 resamples has no resample in its tail
            {"--alpha": 0.001},
            "`--alpha` 0.001 needs at least 2,000 `--resamples` (each tail of the percentile "
            "interval needs alpha/2 x resamples >= 1 resample beyond it); got",
        ),
        ({"--alpha": 1e-16}, "`--alpha` 1e-16 needs at least 20,000,000,000,000,000 `--resamples`"),
        ({"--outcome": "nothing"}, "`--outcome` 'nothing' is not a column"),
        ({"--propensity": "outreach ~ age + height"}, "uses column 'height'"),
        ({"--plot": "bounds.gif"}, "`--plot` must end in .png, .svg or .pdf"),
    ],
)
def test_bad_input_exits_2_with_one_line(run, clinics, change, message):
    args = list(_base(clinics))
    for key, value in change.items():
        if key in args:
            i = args.index(key)
            if value is None:
                del args[i : i + 2]
            else:
                args[i + 1] = value
        else:
            args += [key, value]
    res = run(*args)
    assert res.exit_code == 2, res.stdout
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and message in lines[0], res.stderr


def test_too_few_in_an_arm(run, tmp_path):
    path = tmp_path / "small.csv"
    rows = ["t,y,x"] + [f"{int(i < 4)},{i % 7},{i % 5}" for i in range(40)]
    path.write_text("\n".join(rows) + "\n")
    res = run("weighting", "--data", path, "--treatment", "t", "--outcome", "y",
              "--propensity", "t ~ x", "--seed", 1)  # fmt: skip
    assert res.exit_code == 2
    assert "the treated arm has 4 units; need at least 10" in res.stderr


def test_both_or_neither_propensity_is_a_usage_error(run, clinics):
    res = run("weighting", "--data", clinics, "--treatment", "outreach", "--outcome", "visits")
    assert res.exit_code == 2 and "--propensity" in res.stderr
    res = run(*_base(clinics, "--propensity-column", "score"))
    assert res.exit_code == 2 and "cannot be used together" in res.stderr
