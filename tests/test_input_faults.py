"""Issue 19: input at fault is exit 2 (one line), never an internal error or a raw warning."""

from __future__ import annotations

import pytest


@pytest.mark.parametrize(
    "args",
    [
        # an infinite risk-ratio limit (axis NaN), and overflow inside the log axis
        ("report", "--scale", "smd", "--estimate", 1.38, "--ci", 1.12, 800),
        ("report", "--scale", "rr", "--estimate", 1.38, "--ci", 1.12, 1e300),
    ],
)
def test_extreme_but_legal_intervals_make_a_report_without_warnings(run, tmp_path, args):
    res = run(*args, "--out", tmp_path / "r")
    assert res.exit_code == 0, res.stderr
    assert "Warning" not in res.stderr and "RuntimeWarning" not in res.stderr
    assert (tmp_path / "r" / "report.md").exists()


@pytest.mark.parametrize(
    "args, message",
    [
        (("tipping", "--kind", "partial-r2", "--estimate", 0.114, "--se", 5e-324, "--dof", 1192),
         "`--estimate` / `--se` must be a finite t statistic"),
        (("partial-r2", "--estimate", 0.114, "--se", 5e-324, "--dof", 1192),
         "`--estimate` / `--se` must be a finite t statistic"),
        (("impact", "--t", 1e155, "--dof", 196), None),
        (("stability", "--estimate-short", 0.5, "--r2-short", 0.1, "--estimate-long", 0.4,
          "--r2-long", 0.3, "--var-outcome", 1, "--var-treatment", 1,
          "--var-treatment-residual", 0.5, "--target", 1e308), None),
        (("matched", "--discordant", 99999999999999999999, "--treated-events", 5),
         "`--discordant` must be at most 2^53"),
    ],
)  # fmt: skip
def test_the_issue_list_of_internal_errors(run, args, message):
    res = run(*args)
    if message is None:
        assert res.exit_code == 0, res.stderr
        assert "Warning" not in res.stderr
    else:
        assert res.exit_code == 2, res.stderr
        assert res.stderr.count("\n") == 1 and message in res.stderr


def test_writing_excel_without_openpyxl_says_what_to_install(run, tmp_path, monkeypatch):
    import importlib.util

    real = importlib.util.find_spec

    def find_spec(name, *rest):
        return None if name == "openpyxl" else real(name, *rest)

    monkeypatch.setattr(importlib.util, "find_spec", find_spec)
    src = tmp_path / "in.csv"
    src.write_text("scale,estimate\nrr,2\n")
    res = run("screen", src, "-o", tmp_path / "out.xlsx")
    assert res.exit_code == 2
    assert "needs openpyxl; install it (pip install openpyxl)" in res.stderr
