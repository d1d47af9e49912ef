"""Every view from one Document, and each family's own report section (issue 18).

Each test pins a fix a user met: the interval's level in every view and in the report, the
confounder sentence in every format, a scale column in mixed tables, a report of any family,
its Reproduce section and versions from Python, and labels that cannot inject markup."""

from __future__ import annotations

import json
import re

import pytest

import sensitivity
from sensitivity.output.document import Document, Prose, markdown_page
from sensitivity.output.tables import Table

ALL_VIEWS = ("text", "markdown", "latex", "html")


# --------------------------------------------------------------------------- one document
def test_the_json_sentences_are_the_documents(run):
    res = run(
        "evalue",
        "--scale",
        "rr",
        "--estimate",
        1.64,
        "--ci",
        1.21,
        2.23,
        "--confounder",
        2,
        3,
        "--format",
        "json",
    )
    data = json.loads(res.stdout)
    document = sensitivity.evalue("rr", 1.64, (1.21, 2.23)).with_confounders(2, 3).document()
    assert data["sentences"] == document.sentences
    assert any(s.startswith("A confounder with risk ratio 2.00") for s in data["sentences"])


@pytest.mark.parametrize("fmt", ["markdown", "latex", "csv", "json"])
def test_the_confounder_sentence_is_in_every_format(run, fmt):
    res = run(
        "evalue",
        "--scale",
        "rr",
        "--estimate",
        1.64,
        "--ci",
        1.21,
        2.23,
        "--confounder",
        2,
        3,
        "--format",
        fmt,
    )
    assert res.exit_code == 0
    said = res.stdout if fmt == "json" else res.stderr
    assert "A confounder with risk ratio 2.00 with the treatment and 3.00" in said


def test_text_mode_has_the_confounder_sentence_too(run):
    res = run(
        "evalue", "--scale", "rr", "--estimate", 1.64, "--ci", 1.21, 2.23, "--confounder", 2, 3
    )
    assert "A confounder with risk ratio 2.00 with the treatment and 3.00" in res.stdout


def test_a_ninety_percent_interval_is_labelled_ninety_in_every_view():
    res = sensitivity.evalue("hr", 1.38, (1.15, 1.66), outcome="rare", ci_level=0.9)
    for fmt in ALL_VIEWS:
        shown = res.document().render(fmt)
        assert "90% CI" in shown or "90\\% CI" in shown, fmt
        assert "95%" not in shown, fmt


def test_a_mixed_table_shows_each_rows_scale_and_conversion():
    res = sensitivity.evalue(["hr", "or", "rr"], [1.38, 2.0, 1.5],
                             ([1.1, 1.5, 1.2], [1.7, 2.6, 1.9]),
                             outcome=["rare", "common", "rare"])  # fmt: skip
    table = res.document().tables[0]
    assert table.columns[1] == "Scale"
    assert [row[1] for row in table.rows if row[0].startswith("Estimate")] == ["HR", "OR", "RR"]
    assert any("estimate 2" in f and "√OR" in f for f in table.footnotes)
    page = res._repr_html_()
    assert "<th>Scale</th>" in page and "estimate 2" in page
    assert "Scale" in res.summary()


def test_each_family_names_its_presenter_and_common_names_none():
    from pathlib import Path

    root = Path(sensitivity.__file__).parent
    text = (root / "common" / "results.py").read_text(encoding="utf-8")
    assert "evalues" not in text and "partial_r2" not in text
    from sensitivity.matched.result import MatchedResult

    assert MatchedResult.presenter == "sensitivity.matched.present"


# --------------------------------------------------------------------------- figures on demand
def test_a_document_lists_its_figures_and_draws_them_only_when_asked(tmp_path):
    res = sensitivity.evalue("rr", 1.64, (1.21, 2.23))
    (figure,) = res.document().figures
    assert not list(tmp_path.iterdir())
    figure.draw([tmp_path / "e.png"])
    assert (tmp_path / "e.png").read_bytes().startswith(b"\x89PNG")


# --------------------------------------------------------------------------- the report
@pytest.fixture(scope="module")
def mixed_report(tmp_path_factory):
    out = tmp_path_factory.mktemp("mixed")
    results = {
        "Night shift": sensitivity.evalue(
            "hr", 1.38, (1.15, 1.66), outcome="common", ci_level=0.9
        ),  # fmt: skip
        "Pairs": sensitivity.rosenbaum_bounds(
            discordant=122, treated_events=110, gamma=[1, 2, 3, 4, 5, 6]
        ),  # fmt: skip
        "Score": sensitivity.evalue("md", 0.5, se=0.1, sd=2.0),
        "Adjusted": sensitivity.partial_r2_summary(0.114, 0.027, 1192),
    }
    sensitivity.report(results, out)
    return out


def test_a_report_takes_any_familys_result(mixed_report):
    data = json.loads((mixed_report / "report.json").read_text(encoding="utf-8"))
    assert [e["label"] for e in data["estimates"]] == ["Night shift", "Pairs", "Score",
                                                       "Adjusted"]  # fmt: skip
    assert data["estimates"][1]["gamma_at_alpha"] == pytest.approx(5.47, abs=5e-3)
    assert data["estimates"][3]["robustness_value"] > 0
    assert "Rosenbaum" in data["methods_text"] and "Cinelli & Hazlett" in data["methods_text"]
    assert (mixed_report / "matched_2.png").is_file()
    assert (mixed_report / "partial_r2_4.png").is_file()


def test_the_reports_levels_are_the_estimates_own(mixed_report):
    md = (mixed_report / "report.md").read_text(encoding="utf-8")
    assert "| Night shift | HR | 1.38 (90% CI 1.15 to 1.66) |" in md
    assert "Observed (95% CI)" not in md


def test_a_shared_level_is_named_in_the_heading(tmp_path):
    res = sensitivity.evalue("rr", 1.5, (1.1, 2.0), ci_level=0.9)
    sensitivity.report({"A": res, "B": res}, tmp_path)
    md = (tmp_path / "report.md").read_text(encoding="utf-8")
    assert "Observed (90% CI)" in md and "E-value, 90% CI limit" in md


def test_the_forest_axis_names_the_shared_level(monkeypatch, tmp_path):
    import sensitivity.evalues.figures as fig

    kept = []
    monkeypatch.setattr(fig, "save_figure", lambda f, paths: kept.append(f))
    res = sensitivity.evalue("rr", 1.5, (1.1, 2.0), ci_level=0.9)
    fig.forest_figure([("A", res), ("B", res)], [tmp_path / "f.png"])
    assert "(90% CI)" in kept[0].axes[0].get_xlabel()


def test_a_regression_row_shows_its_interval(mixed_report):
    md = (mixed_report / "report.md").read_text(encoding="utf-8")
    row = next(line for line in md.splitlines() if line.startswith("| Score |"))
    assert re.search(r"0\.50 \(95% CI 0\.\d+ to 0\.\d+\)", row), row


def test_the_methods_say_how_rare_or_common_was_decided(mixed_report, tmp_path):
    data = json.loads((mixed_report / "report.json").read_text(encoding="utf-8"))
    assert "Night shift: common (as stated by the analyst)" in data["methods_text"]


def test_a_report_from_python_has_a_reproduce_section_and_versions(mixed_report):
    md = (mixed_report / "report.md").read_text(encoding="utf-8")
    reproduce = md.split("## Reproduce", 1)[1]
    assert "sensitivity.report(" in reproduce
    assert "Night shift: EValueResult(scale='hr', estimate=1.38" in reproduce
    assert f"sensitivity {sensitivity.__version__}" in reproduce
    for library in ("numpy", "scipy", "statsmodels"):
        assert library in reproduce
    data = json.loads((mixed_report / "report.json").read_text(encoding="utf-8"))
    assert data["versions"]["sensitivity"] == sensitivity.__version__


def test_the_command_lines_report_names_its_versions(run, tmp_path):
    res = run("report", "--scale", "rr", "--estimate", 1.5, "--ci", 1.1, 2.0, "--out", tmp_path)
    assert res.exit_code == 0, res.stderr
    md = (tmp_path / "report.md").read_text(encoding="utf-8")
    assert (
        "sensitivity report --scale rr --estimate 1.5 --ci 1.1 2.0"
        in md.split("## Reproduce", 1)[1]
    )
    assert "Computed with sensitivity" in md


# --------------------------------------------------------------------------- safe in every view
HOSTILE = "<script>alert(1)</script> [x](javascript:alert(1)) ![i](x) <img src=x onerror=y>"


def test_labels_cannot_inject_markup_into_the_report(tmp_path):
    res = sensitivity.evalue("rr", 1.5, (1.1, 2.0))
    sensitivity.report({HOSTILE + "\nsecond line \U0001f600 \x1b[31m": res}, tmp_path)
    md = (tmp_path / "report.md").read_text(encoding="utf-8")
    assert "<script" not in md and "<img" not in md
    assert not re.search(r"(?<!\\)\]\(javascript", md)  # a link only where "]" is escaped
    assert "\x1b" not in md
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "<script" not in page and "<img src=x" not in page
    tex = (tmp_path / "tables.tex").read_text(encoding="utf-8")
    assert tex.isascii() and "grinning face" in tex
    assert not any(line.strip() == "" for line in _tabular_lines(tex))


def _tabular_lines(tex: str) -> list[str]:
    return [
        line
        for block in re.findall(r"\\begin\{tabular\}.*?\\end\{tabular\}", tex, flags=re.S)
        for line in block.splitlines()
    ]


def test_a_markdown_table_row_stays_one_row():
    table = Table(("Label", "Value"), (("two\nlines | and a bar", "1"),))
    md = Document("T", (table,)).render("markdown")
    rows = [line for line in md.splitlines() if line.startswith("| ")]
    assert len(rows) == 2  # header and one row: the newline did not split the row


def test_text_mode_drops_terminal_escapes():
    doc = Document("T", (Prose(("red \x1b[31m text\x07",)),))
    assert "\x1b" not in doc.render("text") and "\x07" not in doc.render("text")


def test_markdown_keeps_plain_numbers_plain():
    table = Table(("Gamma", "p"), (("1", "<0.0001"),))
    assert "| 1 | <0.0001 |" in markdown_page(Document("T", (table,)))
