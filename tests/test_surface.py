"""What a user meets outside the numbers: notebooks, start-up cost, refusals."""

import subprocess
import sys

import pytest


def test_results_display_as_tables_in_a_notebook():
    from sensitivity import evalue, partial_r2_summary
    from sensitivity.tipping import binary_confounder_grid

    for res in (
        evalue("rr", 3.9, (1.8, 8.7)).with_confounders([2.0], [3.0]),
        partial_r2_summary(0.097, 0.0232, 783),
        binary_confounder_grid("rr", 1.8, (1.2, 2.7), prevalence_control=0.2),
    ):
        html = res._repr_html_()
        assert html.startswith("<div") and "<table>" in html and "</table>" in html
        assert "pass/fail" in html or "Compare the required confounder strength" in html
        assert str(res) == res.summary()


def test_one_number_command_imports_nothing_costly():
    # Issue 2: `sensitivity evalue` must not import pandas, statsmodels, scipy or matplotlib.
    code = (
        "import sys\n"
        "from click.testing import CliRunner\n"
        "from cli import cli\n"
        "r = CliRunner().invoke(cli, ['evalue', 'RR 3.9 (95% CI 1.8-8.7)'])\n"
        "assert r.exit_code == 0, r.output\n"
        "print(sorted(m for m in ('pandas', 'statsmodels', 'scipy', 'matplotlib', 'pyarrow')"
        " if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_instrumental_variable_fit_is_refused():
    import numpy as np
    from statsmodels.sandbox.regression.gmm import IV2SLS

    from sensitivity.adapters.statsmodels import partial_r2_from_model

    rng = np.random.default_rng(0)
    z = rng.normal(size=(200, 1))
    x = np.column_stack([np.ones(200), z[:, 0] + rng.normal(size=200)])
    y = x @ [1.0, 0.5] + rng.normal(size=200)
    fit = IV2SLS(y, x, np.column_stack([np.ones(200), z])).fit()
    with pytest.raises(ValueError, match=r"got IV2SLS\. .*use the E-value route"):
        partial_r2_from_model(fit, "x1")


def test_internal_fault_exits_1_without_traceback(run, monkeypatch):
    import sensitivity.evalues.core as ev

    def broken(*args, **kwargs):
        raise RuntimeError("simulated fault")

    monkeypatch.setattr(ev, "evalue", broken)
    res = run("evalue", "--scale", "rr", "--estimate", 2)
    assert res.exit_code == 1
    assert (
        res.stderr == "Error: internal error (RuntimeError: simulated fault); rerun with --debug\n"
    )


def test_debug_shows_the_traceback(monkeypatch):
    from click.testing import CliRunner

    import sensitivity.evalues.core as ev
    from cli import cli

    monkeypatch.setattr(ev, "evalue", lambda *a, **k: 1 / 0)
    res = CliRunner().invoke(cli, ["--debug", "evalue", "--scale", "rr", "--estimate", "2"])
    assert isinstance(res.exception, ZeroDivisionError)


@pytest.mark.parametrize(
    "name, content",
    [("bad.parquet", b"not parquet at all"), ("bad.xlsx", b"PK\x03\x04 broken zip")],
)
def test_malformed_files_exit_2(run, tmp_path, name, content):
    path = tmp_path / name
    path.write_bytes(content)
    res = run("partial-r2", "--data", path, "--formula", "y ~ t", "--treatment", "t")
    assert res.exit_code == 2
    assert res.stderr.startswith(f"Error: `--data`: could not read {path} as ")
    assert res.stderr.count("\n") == 1


def test_a_dataframe_is_not_a_fitted_model():
    import pandas as pd

    from sensitivity.adapters.statsmodels import partial_r2_from_model

    with pytest.raises(
        TypeError, match=r"`results` must be a fitted statsmodels model; got DataFrame"
    ):
        partial_r2_from_model(pd.DataFrame({"a": [1]}), "a")
