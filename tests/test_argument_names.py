"""Issue 19: bad input names the argument it is about, as data.

`InputError` carries the Python argument (`err.argument`); from Python its message names that
argument (`ci_level`), and on the command line the same error names the option exactly as the
user typed it (`--ci-level`, `-o`, "the first value of `--strength`"), never a Python name.
Nothing reads a message back: a message about a row of a file keeps the file's column names.
"""

from __future__ import annotations

import csv
import os
import pickle
import re
from importlib import import_module

import click
import numpy as np
import pytest
from click.testing import CliRunner
from conftest import ROOT, first_example
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_fuzz import NASTY, SLOTS, with_value

import sensitivity as s
from cli import cli
from sensitivity.commands import COMMANDS
from sensitivity.common.errors import InputError


def _invoke(args):
    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=False)


# ------------------------------------------------------------------ from Python
@pytest.mark.parametrize(
    "call, argument",
    [
        (lambda: s.evalue("rr", 2.0, ci=(1.5, 3.0), ci_level=5), "ci_level"),
        (lambda: s.evalue("rr", 2.0, ci=(3.0, 1.5)), "ci"),
        (lambda: s.evalue("md", 0.3, se=-1, sd=2.0), "se"),
        (lambda: s.partial_r2_summary(0.5, -0.1, 100.0), "se"),
        (lambda: s.partial_r2_summary(0.5, 0.1, 100.0, alpha=2), "alpha"),
        (lambda: s.impact_threshold(estimate=0.5, se=0.1, t=3.0, dof=100.0), "se"),
        (lambda: s.rosenbaum_bounds(discordant=-1, treated_events=1), "discordant"),
        (lambda: s.bounding_grid("rr", 2.0, ci=(1.5, 3.0), rr_treatment=[0.5]), "rr_treatment"),
        (lambda: s.evalue_of_rr(-1.0), "rr"),
    ],
)
def test_python_messages_name_the_python_argument(call, argument):
    with pytest.raises(InputError) as caught:
        call()
    err = caught.value
    assert err.argument == argument
    assert f"`{argument}`" in str(err) and "`--" not in str(err)


def test_the_message_is_text_and_slots_built_from_the_names_given():
    err = InputError("give `se` or `t`, not both", ("se", "t"))
    assert err.arguments == ("se", "t") and str(err) == "give `se` or `t`, not both"
    assert err.render(lambda a: f"<{a}>") == "give <se> or <t>, not both"
    # a backticked word that is not an argument (a column of a file) is never a slot
    row = InputError("`estimates` row 2: `outcome` is missing", "estimates")
    assert row.render(lambda a: "`--estimates`") == "`--estimates` row 2: `outcome` is missing"
    assert InputError("the table has no rows").argument is None
    back = pickle.loads(pickle.dumps(err))
    assert back.arguments == err.arguments and str(back) == str(err)
    renamed = InputError("`threshold` must be positive; got 0", "threshold").renamed(
        {"threshold": "pool"}
    )
    assert renamed.argument == "pool" and str(renamed) == "`pool` must be positive; got 0"


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(SLOTS), st.sampled_from(NASTY))
def test_every_library_error_carries_the_arguments_its_message_names(slot, value):
    """Over the public API and nasty values: each argument an InputError carries is named in
    its message, no message names a command-line option, and an error whose message leads with
    the argument that was given the bad value carries that argument."""
    _, (kind, where) = slot
    func, args, kwargs = with_value(slot, value)
    try:
        func(*args, **kwargs)
    except InputError as err:
        text = str(err)
        assert "`--" not in text, text
        for argument in err.arguments:
            assert f"`{argument}`" in text, (argument, text)
        if kind == "kw" and text.startswith(f"`{where}`"):
            assert err.argument == where, (where, text)
    except ValueError:
        pass


# ------------------------------------------------------------------ on the command line


FIRST = {name: first_example(name) for name in COMMANDS}


def _command(name: str) -> click.Command:
    return import_module(f"sensitivity.commands.{COMMANDS[name][0]}").command


def _is_numeric(param: click.Option) -> bool:
    """A number, numbers, or a grid of numbers (START:STOP:STEP)."""
    kinds = [getattr(t, "name", "") for t in getattr(param.type, "types", None) or [param.type]]
    grid = "START:STOP:STEP" in (param.help or "")
    return not param.is_flag and (
        grid
        or any(k in ("float", "number", "integer", "integer range", "float range") for k in kinds)
    )


NUMERIC = [
    (name, [o for o in p.opts if o.startswith("--")][0], p.nargs)
    for name in COMMANDS
    for p in _command(name).params
    if isinstance(p, click.Option) and _is_numeric(p)
]


def _with(args, option, values):
    """`args` with `option` set to `values` (replacing its values where present)."""
    args = list(args)
    if option in args:
        i = args.index(option)
        return args[: i + 1] + list(values) + args[i + 1 + len(values) :]
    return args + [option, *values]


def _columns(args) -> set[str]:
    """The column names of every file the arguments read (a message may name them)."""
    names: set[str] = set()
    for a in args:
        path = ROOT / str(a)
        if str(a).endswith((".csv", ".tsv")) and path.is_file():
            with open(path, newline="", encoding="utf-8") as fh:
                names |= set(next(csv.reader(fh, delimiter="\t" if a.endswith(".tsv") else ",")))
    return names


def _one_line_naming(res, args, typed: str | None) -> str:
    """The error line, checked: exit 2, one line, the option as typed (when given), and no
    backticked name that is neither an option nor a column of the input."""
    assert res.exit_code == 2, (args, res.stderr)
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), res.stderr
    line = lines[0]
    if typed is not None:
        assert f"`{typed}`" in line or f"'{typed}'" in line or f"{typed} " in line, (args, line)
    positional = {p.name for p in _command(args[0]).params if isinstance(p, click.Argument)}
    head = re.split(r"\brow \d", line)[0]  # a row's reasons name the file's fields
    for word in re.findall(r"`([^`]+)`", head):
        if word.startswith("-") or word in positional or " " in word:
            continue
        assert word in _columns(args), f"a Python name `{word}` in: {line}"
    return line


#: A value each numeric option refuses, with the first example of its command.
BAD = {
    ("evalue", "--estimate"): ["-1"],
    ("evalue", "--ci"): ["3", "1.5"],
    ("evalue", "--ci-level"): ["1.5"],
    ("evalue", "--se"): ["-1"],
    ("evalue", "--sd"): ["0"],
    ("evalue", "--contrast"): ["0"],
    ("evalue", "--prevalence"): ["2"],
    ("evalue", "--target"): ["-1"],
    ("evalue", "--confounder"): ["0.5", "2"],
    ("partial-r2", "--se"): ["-1"],
    ("partial-r2", "--dof"): ["1"],
    ("partial-r2", "--alpha"): ["2"],
    ("partial-r2", "--reduce-by"): ["-1"],
    ("partial-r2", "--r2-treatment"): ["1.5"],
    ("partial-r2", "--r2-outcome"): ["1.5"],
    ("partial-r2", "--sd"): ["-1"],
    ("partial-r2", "--plot-limits"): ["-1", "2"],
    ("impact", "--dof"): ["0"],
    ("impact", "--alpha"): ["2"],
    ("impact", "--n"): ["-1"],
    ("impact", "--covariates"): ["-1"],
    ("matched", "--discordant"): ["-1"],
    ("matched", "--gamma"): ["0.5"],
    ("matched", "--alpha"): ["2"],
    ("stability", "--r2-short"): ["2"],
    ("stability", "--r2-long"): ["2"],
    ("stability", "--r2-max"): ["2"],
    ("stability", "--var-outcome"): ["-1"],
    ("tipping", "--prevalence-treated"): ["2"],
    ("tipping", "--outcome-effect"): ["-1"],
    ("tipping", "--ci"): ["3", "1"],
    ("simulate", "--ci-level"): ["2"],
    ("simulate", "--draws"): ["-1"],
    ("simulate", "--correlation"): ["2"],
    ("debiased", "--folds"): ["0"],
    ("debiased", "--rho"): ["2"],
    ("debiased", "--alpha"): ["2"],
    ("debiased", "--trim"): ["0.7"],
    ("debiased", "--multiple"): ["-1"],
    ("weighting", "--lambda"): ["0.5"],
    ("weighting", "--resamples"): ["5"],
    ("weighting", "--alpha"): ["2"],
    ("weighting", "--cut"): ["2"],
    ("pool", "--bias-sd"): ["-1"],
    ("pool", "--bias"): ["0.5"],
    ("pool", "--share"): ["2"],
    ("pool", "--threshold"): ["-1"],
    ("pool", "--level"): ["2"],
    ("screen", "--threshold"): ["0.5"],
    ("screen", "--alpha"): ["2"],
    ("screen", "--pool"): ["0"],
    ("screen", "--confounder"): ["0.5", "2"],
    ("screen", "--plot-limits"): ["0.5", "2"],
    ("report", "--contrast"): ["0"],
    ("report", "--r2-treatment"): ["1.5"],
}


def _prepared(command, args, tmp_path):
    """Run where outputs land in `tmp_path` (the examples' demo/ files linked there)."""
    link = tmp_path / "demo"
    if not link.exists():
        link.symlink_to(ROOT / "demo")
    os.chdir(tmp_path)
    return args


@pytest.mark.parametrize(
    "command, option, values",
    [(c, o, v) for (c, o), v in BAD.items()],
    ids=[f"{c} {o}" for c, o in BAD],  # fmt: skip
)
def test_a_bad_value_names_the_option_as_typed(command, option, values, tmp_path, monkeypatch):
    monkeypatch.chdir(ROOT)
    args = _prepared(command, _with(FIRST[command], option, values), tmp_path)
    line = _one_line_naming(_invoke(args), args, option)
    assert line.count("Error:") == 1


def test_every_command_has_its_numeric_options_in_the_table():
    assert {c for c, _ in BAD} == set(COMMANDS)
    assert set(BAD) <= {(c, o) for c, o, _ in NUMERIC}


@pytest.mark.parametrize("command, option, nargs", NUMERIC, ids=[f"{c} {o}" for c, o, _ in NUMERIC])
@pytest.mark.parametrize("bad", ["nan", "-inf"])
def test_a_non_finite_value_names_the_option_as_typed(command, option, nargs, bad, tmp_path,
                                                      monkeypatch):  # fmt: skip
    monkeypatch.chdir(ROOT)
    args = _prepared(command, _with(FIRST[command], option, [bad] * nargs), tmp_path)
    _one_line_naming(_invoke(args), args, option)


#: Found by this fuzz, not about names (raw warnings in figures at 1e308): left to their
#: owners. (weighting --lambda 1e308 warns in the box bounds too; weighting is not fuzzed here.)
KNOWN = {("report", "--target", "1e308"), ("report", "--confounder", "1e308")}
VALUES = ["-1e308", "-1", "-0.5", "0", "0.5", "2", "1e308", "5e-324", "1:0:1", "x"]
SLOW = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture]
QUICK = [(c, o, n) for c, o, n in NUMERIC if c not in ("debiased", "weighting")]


@settings(max_examples=80, deadline=None, suppress_health_check=SLOW)
@given(spot=st.sampled_from(QUICK), value=st.sampled_from(VALUES), inline=st.booleans())
def test_any_value_of_a_numeric_option_runs_or_names_no_python_argument(
    spot, value, inline, tmp_path, monkeypatch
):
    """Any value: exit 0, or exit 2 with one line that names options as typed and never a
    Python argument (a backticked name is an option, or a column of the input file)."""
    command, option, nargs = spot
    if (command, option, value) in KNOWN:
        return
    monkeypatch.chdir(ROOT)
    args = _with(FIRST[command], option, [value] * nargs)
    if inline and nargs == 1:  # --option=value
        i = args.index(option)
        args = [*args[:i], f"{option}={value}", *args[i + 2 :]]
    args = _prepared(command, args, tmp_path)
    res = _invoke(args)
    assert res.exit_code in (0, 2), res.stderr
    if res.exit_code == 2:
        _one_line_naming(res, args, None)


# ------------------------------------------------------------------ the cases of the issue
def test_the_debiased_strength_names_its_value(monkeypatch):
    monkeypatch.chdir(ROOT)
    base = ["debiased", "--data", "demo/harbourside_bp.csv", "--treatment", "commute_min",
            "--outcome", "sbp", "--covariates", "age,female"]  # fmt: skip
    res = _invoke([*base, "--strength", "1.2", "0.1"])
    assert res.stderr == "Error: the first value of `--strength` must lie in [0, 1); got 1.2\n"
    res = _invoke([*base, "--strength", "0.1", "0.2", "--strength", "0.3", "1"])
    assert res.stderr == "Error: the second value of `--strength` must lie in [0, 1); got 1\n"
    # from Python the same rule names the Python argument
    from sensitivity.debiased.core import check_strengths

    with pytest.raises(InputError, match=r"^`cy2` must lie in \[0, 1\); got 1.2$") as caught:
        check_strengths(1.2, 0.1)
    assert caught.value.argument == "cy2"


def test_a_value_from_propensity_column_is_named_by_that_option(tmp_path, monkeypatch):
    """--propensity is a formula; --propensity-column a column of fitted propensities. The
    library's `propensity` holds the column's values, so its errors name --propensity-column,
    while a formula's errors name --propensity."""
    monkeypatch.chdir(ROOT)
    rows = ["t,y,ps"] + [f"{i % 2},{i * 0.1:.1f},{0 if i == 3 else 0.5}" for i in range(60)]
    path = tmp_path / "d.csv"
    path.write_text("\n".join(rows) + "\n")
    base = ["weighting", "--data", path, "--treatment", "t", "--outcome", "y"]
    res = _invoke([*base, "--propensity-column", "ps"])
    assert res.exit_code == 2
    assert res.stderr.startswith("Error: `--propensity-column` must lie strictly between 0 and 1")
    res = _invoke([*base, "--propensity", "t ~ nope"])
    assert res.exit_code == 2 and res.stderr.startswith("Error: `--propensity` uses column 'nope'")


def test_a_row_of_a_file_keeps_its_column_names(tmp_path, monkeypatch):
    """The row's message names the file's columns (`outcome` here is a column, not the
    command's --outcome-frequency); only the argument the error carries is renamed."""
    path = tmp_path / "estimates.csv"
    path.write_text("label,scale,estimate,lower,upper\nA,rr,1.5,1.2,1.9\nB,or,2,1.5,3\n")
    res = _invoke(["report", "--estimates", path, "--out", tmp_path / "r"])
    assert res.exit_code == 2
    assert res.stderr == (
        "Error: `--estimates` row 2 (B): the outcome's frequency (`outcome`) is needed on the "
        "or scale: say rare or common, or give the outcome's `prevalence`\n"
    )


@pytest.mark.parametrize("spelt", ["-o", "--output"])
def test_the_short_alias_is_named_when_typed(spelt, monkeypatch):
    monkeypatch.chdir(ROOT)
    res = _invoke(["evalue", "RR 2 (1.5-3)", spelt, "/no/such/folder/x.json"])
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: Invalid value for '{spelt}': folder ")


def test_an_option_given_as_name_equals_value_is_named_as_typed():
    res = _invoke(["evalue", "--scale", "rr", "--estimate", "2", "--ci", "1.5", "3",
                   "--ci-level=1.5"])  # fmt: skip
    assert res.stderr == "Error: `--ci-level` must lie strictly between 0 and 1; got 1.5\n"


def test_the_screen_names_its_pool_threshold_as_pool(monkeypatch):
    """The pooling's `threshold` is the screen's --pool (the screen has its own --threshold)."""
    monkeypatch.chdir(ROOT)
    res = _invoke(["screen", "demo/published_results.csv", "--pool", "0"])
    assert res.exit_code == 2 and "`--pool` must be positive; got 0" in res.stderr
    assert "--threshold" not in res.stderr


# ------------------------------------------------------------------ overflow names its cause
@settings(max_examples=60, deadline=None)
@given(
    rr=st.floats(1.01, 1e6),
    tiny=st.floats(5e-324, 1e-309),  # rr / tiny > 1e309: beyond the doubles
)
def test_an_overflowing_ratio_to_the_target_names_the_target(rr, tiny):
    """The estimate is an ordinary risk ratio; a target so small that rr / target leaves the
    doubles is the target's doing (it named the estimate before)."""
    with pytest.raises(InputError) as err:
        s.evalue("rr", rr, target=tiny)
    assert err.value.argument == "target" and "`target`" in str(err.value)


@settings(max_examples=60, deadline=None)
@given(estimate=st.floats(0.01, 1e3), sd=st.floats(5e-324, 1e-306))
def test_a_tiny_sd_names_the_sd(estimate, sd):
    """A mean difference over a tiny SD is an infinite standardized difference: `sd` is named."""
    with pytest.raises(InputError) as err:
        s.evalue("md", estimate, sd=sd)
    assert err.value.argument == "sd"


def test_on_the_command_line_the_overflow_names_the_option():
    res = _invoke(["evalue", "--scale", "rr", "--estimate", "1.5", "--target", "5e-324"])
    assert res.exit_code == 2 and "`--target`" in res.stderr, res.stderr
    res = _invoke(["partial-r2", "--estimate", "2", "--se", "0.5", "--dof", "100", "--sd",
                   "5e-324"])  # fmt: skip
    assert res.exit_code == 2 and "`--sd`" in res.stderr, res.stderr


def test_a_level_whose_critical_value_is_zero_is_refused():
    """Below about 1.1e-16 the two-sided normal critical value rounds to 0 (scipy's ndtri
    at (1 - level) / 2 = 0.5): the pool read every study's se as -inf from a zero-width
    interval. The level is refused, naming the option."""
    from scipy.special import ndtri

    assert -ndtri((1 - 5e-17) / 2) == 0 < -ndtri((1 - 1e-15) / 2)
    res = _invoke(["pool", str(ROOT / "demo/pooled_studies.csv"), "--from-text", "result",
                   "--threshold", "1.1", "--level", "5e-324"])  # fmt: skip
    assert res.exit_code == 2 and "`--level`" in res.stderr, res.stderr
    with pytest.raises(InputError) as err:
        s.evalue("rr", 2.0, ci=(1.5, 3.0), ci_level=1e-16)
    assert err.value.argument == "ci_level"


def test_a_lambda_beyond_the_limit_is_refused():
    from sensitivity.weighting.core import MAX_LAMBDA, _lambda_grid

    assert _lambda_grid([1, MAX_LAMBDA]).max() == MAX_LAMBDA
    with pytest.raises(InputError) as err:
        _lambda_grid([1, 1e308])
    assert err.value.argument == "lambda"


# ------------------------------------------------------- an output never replaces an input
@pytest.mark.parametrize("spelt", ["-o", "--output"])
def test_an_output_that_is_the_input_file_is_refused(spelt, tmp_path):
    """A reviewer's find: `screen f.csv -o f.csv` replaced the input and exited 0."""
    source = tmp_path / "in.csv"
    source.write_bytes((ROOT / "demo/published_results.csv").read_bytes())
    before = source.read_bytes()
    link = tmp_path / "link.csv"
    link.symlink_to(source)
    for target in (source, tmp_path / "." / "in.csv", link):
        res = _invoke(["screen", source, spelt, target])
        assert res.exit_code == 2 and f"`{spelt}`" in res.stderr, res.stderr
        assert res.stderr.count("\n") == 1 and "input file" in res.stderr
    assert source.read_bytes() == before


def test_matched_output_may_not_replace_the_pairs_file(tmp_path):
    pairs = tmp_path / "pairs.csv"
    pairs.write_bytes((ROOT / "demo/matched_pairs.csv").read_bytes())
    before = pairs.read_bytes()
    base = ["matched", "--data", pairs, "--treated", "night_shift_sbp", "--control",
            "day_shift_sbp"]  # fmt: skip
    for extra in (["--format", "csv", "-o", pairs], ["-o", pairs]):
        res = _invoke(base + extra)
        assert res.exit_code == 2 and "--data" in res.stderr, res.stderr
    assert pairs.read_bytes() == before
    assert _invoke(base + ["--format", "csv", "-o", tmp_path / "gamma.csv"]).exit_code == 0


def test_an_output_inside_a_dataset_folder_it_reads_is_refused(tmp_path):
    folder = tmp_path / "claims"
    folder.mkdir()
    res = _invoke(["partial-r2", "--data", folder, "--formula", "y ~ t + x", "--treatment", "t",
                   "-o", folder / "out.json"])  # fmt: skip
    assert res.exit_code == 2 and "inside the dataset folder" in res.stderr, res.stderr


@pytest.mark.parametrize("spelling", [["--columns", "estimate=estimate,estimate=lower"],
                                      ["--columns", "estimate=estimate", "--columns",
                                       "estimate=lower"]])  # fmt: skip
def test_a_column_mapped_twice_is_refused(spelling, tmp_path):
    """A reviewer's find: the last mapping won silently, and every E-value came from the
    lower limit."""
    res = _invoke(["screen", ROOT / "demo/published_results.csv", *spelling,
                   "-o", tmp_path / "out.csv"])  # fmt: skip
    assert res.exit_code == 2 and "estimate is mapped twice (estimate, lower)" in res.stderr
    assert not (tmp_path / "out.csv").exists()


@pytest.mark.parametrize(
    "alpha, dof, argument",
    [(0.05, 0, "dof"), (0.05, -3, "dof"), (1.5, 10, "alpha"), (np.nan, 10, "alpha")],
)
def test_t_critical_refuses_what_has_no_critical_value(alpha, dof, argument):
    """It returned NaN with no word; a NaN dof still marks a missing entry."""
    with pytest.raises(InputError) as err:
        s.t_critical(alpha, dof)
    assert err.value.argument == argument
    got = s.t_critical(0.05, [10, np.nan])
    # scipy.stats.t.ppf(0.975, 10) = 2.228138851986274 (scipy's quantile as the reference)
    assert got[0] == pytest.approx(2.228138851986274, rel=1e-12) and np.isnan(got[1])


def test_matched_and_report_read_files_as_the_screen_does(tmp_path):
    """A reviewer's find: only the screen read a European (semicolon, decimal comma) file or
    named a TSV saved as .csv; matched said "no column 't'" and report "no 'scale' column"."""
    semi = tmp_path / "pairs.csv"
    semi.write_text("pair;t;c\n1;116,5;106\n2;112;101\n3;120;104\n4;118;111\n")
    comma = tmp_path / "pairs_plain.csv"
    comma.write_text("pair,t,c\n1,116.5,106\n2,112,101\n3,120,104\n4,118,111\n")
    runs = [_invoke(["matched", "--data", f, "--treated", "t", "--control", "c", "--format",
                     "json"]) for f in (semi, comma)]  # fmt: skip
    assert [r.exit_code for r in runs] == [0, 0] and runs[0].stdout == runs[1].stdout
    tab = tmp_path / "estimates.csv"
    tab.write_text("scale\testimate\tlower\tupper\nrr\t1.5\t1.1\t2.0\n")
    res = _invoke(["report", "--estimates", tab, "--out", tmp_path / "r"])
    assert res.exit_code == 2 and "`--estimates`" in res.stderr and "rename it .tsv" in res.stderr
