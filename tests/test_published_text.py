"""A result pasted as published: `evalue TEXT`, `report TEXT` and `evalue_from_text`.

The reference numbers are VanderWeele & Ding (2017, Ann Intern Med), whose worked example is
RR 3.9 (95% CI 1.8 to 8.7) -> E-values 7.26 and 3.00; the conversions of a common outcome's
odds and hazard ratio are VanderWeele (2017) (sqrt(OR)) and VanderWeele (2020).
"""

import json
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sensitivity.adapters.published import evalue_from_text
from sensitivity.common.errors import InputError
from sensitivity.evalues.core import evalue
from sensitivity.evalues.present import pairs_table
from sensitivity.screen.text import read_result


def test_the_text_form_gives_the_published_evalues(run):
    res = run("evalue", "RR 3.9 (95% CI 1.8-8.7)", "--format", "json")
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["evalue"] == pytest.approx(7.26, abs=0.005)
    assert data["evalue_ci"] == pytest.approx(3.00, abs=0.005)
    assert data["as_read"] == {
        "text": "RR 3.9 (95% CI 1.8-8.7)",
        "scale": "rr",
        "estimate": 3.9,
        "lower": 1.8,
        "upper": 8.7,
        "level": 0.95,
    }


def test_text_and_named_options_agree_exactly(run):
    text = json.loads(run("evalue", "OR=2.1, 95%CI 1.2-3.6", "--prevalence", 0.3,
                          "--format", "json").stdout)  # fmt: skip
    named = json.loads(run("evalue", "--scale", "or", "--estimate", 2.1, "--ci", 1.2, 3.6,
                           "--prevalence", 0.3, "--format", "json").stdout)  # fmt: skip
    for key in ("scale", "estimate", "ci", "rr", "rr_ci", "evalue", "evalue_ci", "outcome"):
        assert text[key] == named[key]
    # VanderWeele (2017): a common outcome's OR maps to sqrt(OR) on the risk-ratio scale.
    assert text["rr"] == pytest.approx(math.sqrt(2.1), rel=1e-12)
    assert "as_read" not in named


def test_the_text_view_shows_what_was_read(run):
    res = run("evalue", "HR 0.72 (95% CI 0.60-0.86)", "--outcome-frequency", "common")
    assert res.exit_code == 0, res.stderr
    first = " ".join(res.stdout.split("\n\n")[0].split())
    assert first == ("Read from 'HR 0.72 (95% CI 0.60-0.86)': hazard ratio; estimate 0.72; "
                     "95% CI 0.6 to 0.86.")  # fmt: skip


def test_the_level_comes_from_the_text(run):
    data = json.loads(run("evalue", "RR 1.6 (90% CI 1.2-2.1)", "--format", "json").stdout)
    assert data["ci_level"] == 0.9 and data["as_read"]["level"] == 0.9
    text = " ".join(run("evalue", "RR 1.6 (90% CI 1.2-2.1)").stdout.split())
    assert "(90% CI 1.20 to 2.10)" in text and "For the 90% CI to take in the null" in text


def test_an_unnamed_level_is_said_and_can_be_given(run):
    data = json.loads(run("evalue", "RR 1.6 (1.2-2.1)", "--format", "json").stdout)
    assert data["ci_level"] == 0.95 and data["as_read"]["level"] is None
    assert any("names no level for its interval: read as 95%" in n for n in data["notes"])
    data = json.loads(run("evalue", "RR 1.6 (1.2-2.1)", "--ci-level", 0.9, "--format",
                          "json").stdout)  # fmt: skip
    assert data["ci_level"] == 0.9


def test_a_scale_the_text_does_not_name_comes_from_the_option(run):
    res = run("evalue", "-0.4 (-0.6 to -0.2)", "--scale", "smd", "--format", "json")
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    assert data["scale"] == "smd" and data["as_read"]["scale"] is None
    same = evalue("smd", -0.4, (-0.6, -0.2))
    assert data["evalue"] == float(same.evalue)


def test_csv_carries_what_was_read_under_the_screens_names(run):
    out = run("evalue", "RR 1.6 (1.2-2.1)", "--format", "csv").stdout
    header = out.splitlines()[0]
    for name in ("as_read_scale", "as_read_estimate", "as_read_lower", "as_read_upper",
                 "as_read_level"):  # fmt: skip
        assert f'"{name}"' in header


def test_the_report_takes_the_text(run, tmp_path):
    res = run("report", "HR 1.38 (95% CI 1.12-1.70)", "--outcome-frequency", "rare",
              "--out", tmp_path / "r")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    entry = json.loads((tmp_path / "r" / "report.json").read_text())["estimates"][0]
    assert entry["as_read"]["scale"] == "hr" and entry["estimate"] == 1.38
    same = evalue("hr", 1.38, (1.12, 1.70), outcome="rare")
    assert entry["evalue"] == float(same.evalue)
    named = run("report", "--scale", "hr", "--estimate", 1.38, "--ci", 1.12, 1.70,
                "--outcome-frequency", "rare", "--out", tmp_path / "n")  # fmt: skip
    assert named.exit_code == 0, named.stderr


def test_the_python_route_reads_and_refuses():
    res = evalue_from_text("HR 0.72 (95% CI 0.60-0.86)", outcome="rare")
    assert res.as_read["scale"] == "hr"
    assert float(res.evalue) == float(evalue("hr", 0.72, (0.6, 0.86), outcome="rare").evalue)
    with pytest.raises(InputError, match=r"^`text` names no scale"):
        evalue_from_text("0.72 (0.60-0.86)")
    with pytest.raises(InputError, match=r"^`text`: two results in one cell"):
        evalue_from_text("HR 0.72 (0.60-0.86) and HR 0.8 (0.7-0.9)")
    with pytest.raises(InputError, match=r"^`text` is a risk difference"):
        evalue_from_text("RD 0.02 (0.01-0.03)")
    with pytest.raises(InputError, match=r"^`TEXT`: the result text is blank"):
        read_result(None, "TEXT")


# The pairs table: every pair lies on the bounding factor's curve B(a, b) = ab / (a + b - 1)
# (Ding & VanderWeele 2016, eq. for the bounding factor) at the observed risk ratio.
@given(st.floats(1.01, 50), st.booleans())
def test_every_unequal_pair_reaches_the_observed_ratio(rr, protective):
    res = evalue("rr", 1 / rr if protective else rr)
    table = pairs_table(res)
    assert table is not None
    first = table.rows[0]
    assert first[0] == first[1]  # equal pair first: the E-value itself
    e = float(res.evalue)
    for k in (1.0, 1.25, 1.5, 2.0, 3.0, 5.0):
        a = e * k
        b = rr * (a - 1) / (a - rr)
        assert a * b / (a + b - 1) == pytest.approx(rr, rel=1e-9)
        assert b <= e * (1 + 1e-12)  # a stronger treatment side needs a weaker outcome side


def test_no_pairs_table_at_the_null():
    assert pairs_table(evalue("rr", 1.0)) is None
    assert pairs_table(evalue("rr", np.array([1.5, 2.0]))) is None
