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
        assert html.startswith("<div><table>") and "</table>" in html
        assert "pass/fail" in html or "Compare the required confounder strength" in html
        assert str(res) == res.summary()


def test_one_number_command_imports_nothing_costly():
    # Issue 2: `sensitivity evalue` must not import pandas, statsmodels, scipy or matplotlib.
    code = (
        "import sys\n"
        "from click.testing import CliRunner\n"
        "from cli import cli\n"
        "r = CliRunner().invoke(cli, ['evalue', 'rr', '3.9', '--ci', '1.8', '8.7'])\n"
        "assert r.exit_code == 0, r.output\n"
        "print(sorted(m for m in ('pandas', 'statsmodels', 'scipy', 'matplotlib', 'pyarrow')"
        " if m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"


def test_instrumental_variable_fit_is_refused():
    import numpy as np
    from statsmodels.sandbox.regression.gmm import IV2SLS

    from sensitivity.regression import partial_r2_from_model

    rng = np.random.default_rng(0)
    z = rng.normal(size=(200, 1))
    x = np.column_stack([np.ones(200), z[:, 0] + rng.normal(size=200)])
    y = x @ [1.0, 0.5] + rng.normal(size=200)
    fit = IV2SLS(y, x, np.column_stack([np.ones(200), z])).fit()
    with pytest.raises(ValueError, match=r"got IV2SLS\. .*use the E-value route"):
        partial_r2_from_model(fit, "x1")
