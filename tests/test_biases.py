"""Several biases at once (issue 13): the joint E-value against closed forms and the bound
it solves, the risk-difference E-value, and the command."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from sensitivity import evalue
from sensitivity.common.errors import InputError
from sensitivity.evalues.core import combined_evalue, evalue_of_risk_difference, evalue_of_rr


def test_selection_bias_alone_has_a_closed_form():
    # Smith & VanderWeele (2019) general case: sqrt(RR) + sqrt(RR - sqrt(RR)); 3.9 -> 3.362342
    # [METHODS-MORE 4.2, verified there against numeric root finding].
    got = float(combined_evalue(3.9, confounding=False, selection="whole"))
    assert got == pytest.approx(math.sqrt(3.9) + math.sqrt(3.9 - math.sqrt(3.9)), rel=1e-12)
    assert got == pytest.approx(3.362342, abs=5e-7)


@given(st.floats(1.01, 1e4))
def test_one_bias_is_the_ordinary_evalue(rr):
    assert float(combined_evalue(rr)) == pytest.approx(float(evalue_of_rr(rr)), rel=1e-10)
    one = float(combined_evalue(rr, confounding=False, selection="simplified"))
    assert one == pytest.approx(float(evalue_of_rr(rr)), rel=1e-10)


@given(st.floats(1.01, 1e3), st.sampled_from([None, "whole", "simplified"]), st.booleans())
def test_the_joint_evalue_solves_its_bound(rr, selection, misclassification):
    x = float(combined_evalue(rr, selection=selection, misclassification=misclassification))
    k = 1 + {None: 0, "whole": 2, "simplified": 1}[selection]
    bound = (x * x / (2 * x - 1)) ** k * x ** (1 if misclassification else 0)
    assert bound == pytest.approx(rr, rel=1e-9)
    assert x <= float(evalue_of_rr(rr)) * (1 + 1e-12)  # more biases need less of each


def test_the_command_names_each_bias_with_its_assumption(run):
    res = run("evalue", "--scale", "rr", "--estimate", 3.2, "--ci", 2.1, 4.8,
              "--with-selection", "whole",
              "--with-misclassification", "--format", "json")  # fmt: skip
    assert res.exit_code == 0, res.stderr
    mb = json.loads(res.stdout)["several_biases"]
    assert mb["included"] == ["confounding", "selection", "misclassification"]
    assert len(mb["assumptions"]) == 3
    joint = combined_evalue(3.2, selection="whole", misclassification=True)
    assert mb["evalue"] == pytest.approx(float(joint))
    text = run(
        "evalue",
        "--scale",
        "rr",
        "--estimate",
        3.2,
        "--ci",
        2.1,
        4.8,
        "--with-selection",
        "simplified",
    ).stdout
    assert "With confounding and selection both at work" in " ".join(text.split())


def test_bad_bias_options():
    with pytest.raises(InputError, match=r"`selection` must be whole or simplified"):
        combined_evalue(2.0, selection="both")
    with pytest.raises(InputError, match=r"include at least one bias"):
        combined_evalue(2.0, confounding=False)
    with pytest.raises(InputError, match=r"describes one result"):
        evalue("rr", np.array([2.0, 3.0])).with_biases(selection="whole")


def test_the_risk_difference_evalue_with_all_treated_is_the_rr_evalue():
    # METHODS-MORE 4.1 special case: with f -> 1 (almost everyone treated) B* -> p1/p0.
    out = evalue_of_risk_difference(600, 1_000_000, 4, 10_000)
    assert float(out["bounding_factor"]) == pytest.approx(1.5, rel=1e-3)


def test_evalue_rd_from_counts(run):
    res = run("evalue", "--scale", "rd", "--counts", 60, 1000, 40, 1000, "--format", "json")
    assert res.exit_code == 0, res.stderr
    data = json.loads(res.stdout)
    ref = evalue_of_risk_difference(60, 1000, 40, 1000)
    assert data["scale"] == "rd" and data["estimate"] == pytest.approx(0.02)
    assert data["evalue"] == pytest.approx(float(ref["evalue"]))
    assert data["evalue_ci"] == pytest.approx(float(ref["evalue_ci"]))
    text = " ".join(run("evalue", "--scale", "rd", "--counts", 60, 1000, 40, 1000).stdout.split())
    assert (
        "(95% CI 0.0009 to 0.0391)" in text
        and "the E-value for the whole population is 2.37" in text
    )


@pytest.mark.parametrize(
    "args, message",
    [
        (
            ("--scale", "rd", "--counts", 60, 1000, 70, 50),
            "Error: `--counts`: cases must not exceed totals",
        ),
        (
            ("rd", "0.02"),
            "Error: the form `evalue rd` is retired: write `evalue --scale rd --counts",
        ),
        (
            ("--scale", "rd", "--estimate", "0.02"),
            "Error: the risk difference takes: evalue --scale rd",
        ),
        (
            ("--scale", "rr", "--estimate", 2, "--counts", 1, 2, 3, 4),
            "Error: the risk difference takes",
        ),
    ],
)
def test_evalue_rd_errors(run, args, message):
    res = run("evalue", *args)
    assert res.exit_code == 2 and res.stderr.startswith(message), res.stderr
