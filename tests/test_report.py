"""The manuscript report (issue 11): every file written, numbers equal to the JSON output of
`evalue`, figures valid, and the HTML self-contained, checked in a real headless browser."""

from __future__ import annotations

import base64
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
ESTIMATES = ROOT / "demo" / "cohort_estimates.csv"


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    from click.testing import CliRunner

    from cli import cli

    out = tmp_path_factory.mktemp("report")
    res = CliRunner().invoke(cli, ["report", "--estimates", str(ESTIMATES), "--out", str(out)])
    assert res.exit_code == 0, res.stderr
    return out


def test_every_file_is_written(report):
    for name in ("report.md", "report.html", "tables.tex", "report.json", "forest.png",
                 "forest.svg", "evalue_1.png", "evalue_1.svg"):  # fmt: skip
        assert (report / name).is_file(), name
    assert (report / "forest.png").read_bytes().startswith(b"\x89PNG")
    assert b"<svg" in (report / "forest.svg").read_bytes()


def test_report_json_follows_the_contract(report):
    data = json.loads((report / "report.json").read_text())
    assert set(data) >= {"estimates", "methods_text", "results_text", "references", "command"}
    assert len(data["estimates"]) == 5
    first = data["estimates"][0]
    assert first["label"] == "Night-shift work (ever vs never): Type 2 diabetes"
    for key in ("scale", "estimate", "ci", "target", "rr", "rr_ci", "evalue", "evalue_ci"):
        assert key in first
    assert data["command"].startswith("sensitivity report --estimates")
    assert any("VanderWeele" in r for r in data["references"])


def test_the_reports_numbers_equal_the_evalue_commands(run, report):
    data = json.loads((report / "report.json").read_text())
    alone = json.loads(
        run(
            "evalue",
            "--scale",
            "hr",
            "--estimate",
            1.38,
            "--ci",
            1.12,
            1.70,
            "--outcome-frequency",
            "rare",
            "--format",
            "json",
        ).stdout  # fmt: skip
    )
    first = data["estimates"][0]
    for key in ("evalue", "evalue_ci", "rr", "rr_ci"):
        assert first[key] == alone[key]
    md = (report / "report.md").read_text()
    assert "| Night-shift work (ever vs never): Type 2 diabetes | HR | 1.38 (1.12 to 1.70) |" in md


def test_methods_and_results_are_in_our_words(report):
    data = json.loads((report / "report.json").read_text())
    assert "necessary, not sufficient" in data["methods_text"]
    assert "Across the 5 estimates, E-values ranged from" in data["results_text"]
    assert "For the 95% CI to take in the null, equal risk ratios of" in data["results_text"]
    assert "none with both below" in data["results_text"]
    assert "beyond the measured covariates" not in data["results_text"] + data["methods_text"]


def test_the_latex_needs_only_booktabs(report):
    tex = (report / "tables.tex").read_text()
    assert tex.isascii() and tex.startswith("% Needs \\usepackage{booktabs}")


def test_the_html_fetches_nothing_and_embeds_its_figures(report):
    page = (report / "report.html").read_text()
    assert not re.search(r"""(src|href)\s*=\s*['"]?(https?:|//)""", page)
    assert "<script" not in page
    images = re.findall(r"src='data:image/png;base64,([^']+)'", page)
    assert len(images) >= 6
    assert all(base64.b64decode(i).startswith(b"\x89PNG") for i in images)


def _browser():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return shutil.which(name)
    return None


def test_the_html_renders_in_a_headless_browser(report, tmp_path):
    browser = _browser()
    if browser is None:
        pytest.skip("no headless Chromium here (Debian package chromium); .ci/run installs it")
    shot = tmp_path / "page.png"
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
             "--disable-component-update", "--disable-sync", "--no-first-run",
             f"--user-data-dir={tmp_path / 'profile'}",
             "--host-resolver-rules=MAP * ~NOTFOUND"]  # nothing can be fetched  # fmt: skip
    page = (report / "report.html").as_uri()
    subprocess.run([browser, *flags, "--window-size=1200,2400", f"--screenshot={shot}", page],
                   check=True, capture_output=True, timeout=120)  # fmt: skip
    assert shot.read_bytes().startswith(b"\x89PNG") and shot.stat().st_size > 50_000
    dom = subprocess.run([browser, *flags, "--dump-dom", page], check=True,
                         capture_output=True, text=True, timeout=120).stdout  # fmt: skip
    assert "Sensitivity to unmeasured confounding" in dom
    assert dom.count("<img") >= 6


@pytest.mark.parametrize(
    "args, message",
    [
        ([], "Error: Missing option '--out'"),
        (["--out", "r"], "Error: give one input"),
        (
            ["--scale", "rr", "--estimate", 2, "--estimates", ESTIMATES, "--out", "r"],
            "Error: give one input",
        ),
        (["rr", 2, "--out", "r"], "Error: the form `report SCALE ESTIMATE` is retired"),
        (["--data", "x.csv", "--out", "r"], "Error: data input needs --formula"),
    ],
)
def test_report_usage_errors(run, args, message):
    res = run("report", *args)
    assert res.exit_code == 2 and res.stderr.startswith(message), res.stderr


def test_a_bad_row_stops_the_report_naming_it(run, tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("label,scale,estimate,lower,upper\nA,rr,2,1.5,2.5\nB,or,2,1.5,2.5\n")
    res = run("report", "--estimates", bad, "--out", tmp_path / "r")
    assert res.exit_code == 2
    assert res.stderr.startswith(
        "Error: `--estimates` row 2 (B): the outcome's frequency (`outcome`) is needed"
    )


def test_report_from_summary_and_from_data(run, tmp_path):
    res = run("report", "--scale", "or", "--estimate", 2.4, "--ci", 1.8, 3.2,
              "--outcome-frequency", "common",
              "--out", tmp_path / "a")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "E-value 2.47" in res.stdout
    res = run("report", "--data", ROOT / "demo" / "harbourside_bp.csv", "--formula",
              "sbp ~ commute_min + age + female + smoker + C(shift) + bmi", "--treatment",
              "commute_min", "--model", "ols", "--contrast", 10,
              "--out", tmp_path / "b")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    data = json.loads((tmp_path / "b" / "report.json").read_text())
    assert "partial_r2" in data["estimates"][0]
    assert data["estimates"][0]["partial_r2"]["robustness_value"] == pytest.approx(0.117, abs=5e-4)
    assert (tmp_path / "b" / "partial_r2_1.png").is_file()


def test_report_from_python_takes_fitted_models_and_results(tmp_path):
    # The report's numbers are from_model's own, which test_models checks against the fits.
    import numpy as np
    import pandas as pd
    import statsmodels.formula.api as smf

    import sensitivity
    from sensitivity.common.errors import InputError

    rng = np.random.default_rng(3)
    x = rng.normal(size=3000)
    t = rng.binomial(1, 1 / (1 + np.exp(-x)))
    y = rng.binomial(1, 1 / (1 + np.exp(-(-2 + 0.5 * t + 0.3 * x))))
    d = pd.DataFrame({"x": x, "t": t, "z": 1.0 * t + 0.5 * x + rng.normal(size=3000), "y": y})
    logit, ols = smf.logit("y ~ t + x", d).fit(disp=0), smf.ols("z ~ t + x", d).fit()
    summary = sensitivity.evalue("hr", 1.38, (1.12, 1.70), outcome="rare")
    files = sensitivity.report([logit, ols, summary], tmp_path / "rep", treatment="t",
                               labels=["Sleep", "Score", "Diabetes"])  # fmt: skip
    data = json.loads(files["json"].read_text(encoding="utf-8"))
    assert [e["label"] for e in data["estimates"]] == ["Sleep", "Score", "Diabetes"]
    expected = [
        sensitivity.from_model(logit, "t"),
        sensitivity.from_model(ols, "t").evalue,
        summary,
    ]
    for row, res in zip(data["estimates"], expected, strict=True):
        assert row["evalue"] == pytest.approx(float(res.evalue), rel=1e-12)
    assert (tmp_path / "rep" / "partial_r2_2.png").exists()  # the OLS fit's contours
    with pytest.raises(InputError, match="`treatment` is needed"):
        sensitivity.report(logit, tmp_path / "bad")
    with pytest.raises(InputError, match="`labels` has 1 names for 2 results"):
        sensitivity.report([summary, summary], tmp_path / "bad", labels=["one"])


def test_the_report_names_the_level_of_the_e_values_interval(run, tmp_path, monkeypatch):
    """Issue 19: stdout said "E-value 2.10 (CI: 1.49)" and the forest's header "E-value (CI)"."""
    import sensitivity.evalues.figures as figures
    from sensitivity.evalues.core import evalue

    res = run("report", "--scale", "rr", "--estimate", 1.38, "--ci", 1.12, 1.7,
              "--ci-level", 0.9, "--out", tmp_path / "a")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    assert "E-value 2.10 (for the 90% CI: 1.49)" in res.stdout
    texts = []
    monkeypatch.setattr(figures, "save_figure", lambda fig, paths: texts.extend(
        t.get_text() for ax in fig.axes for t in ax.texts))  # fmt: skip
    one = evalue("rr", 1.38, (1.12, 1.7), ci_level=0.9)
    figures.forest_figure([("a", one), ("b", one)], [tmp_path / "f.png"])
    assert "E-value  (90% CI)" in texts
    other = evalue("rr", 1.38, (1.12, 1.7))
    texts.clear()
    figures.forest_figure([("a", one), ("b", other)], [tmp_path / "f.png"])
    assert "E-value  (its row's CI)" in texts
