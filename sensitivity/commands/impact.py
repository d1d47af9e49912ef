"""`sensitivity impact`: the impact threshold of a confounding variable."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import Command, emit, format_options

SHORT_HELP = COMMANDS["impact"][1]


@click.command("impact", cls=Command, short_help=SHORT_HELP)
@click.option("--estimate", type=float, help="The treatment's coefficient.")
@click.option("--se", type=float, help="Its standard error.")
@click.option("--t", "t_stat", type=float, help="Its t statistic (instead of --se).")
@click.option("--n", type=int, help="The number of observations.")
@click.option("--covariates", type=int,
              help="Covariates besides the treatment: df = n - covariates - 2.")  # fmt: skip
@click.option("--dof", type=float, help="Residual degrees of freedom (instead of n, covariates).")
@click.option("--alpha", type=float, default=0.05, show_default=True, help="Two-sided level.")
@click.option("--data", type=click.Path(dir_okay=False), help="Data input: fit OLS here.")
@click.option("--formula", help='Data input: e.g. "y ~ t + x1 + x2".')
@click.option("--treatment", help="Data input: the treatment's coefficient name.")
@format_options
def impact_cmd(estimate: Any, se: Any, t_stat: Any, n: Any, covariates: Any, dof: Any,
               alpha: float, data: Any, formula: Any, treatment: Any, fmt: str,
               outputs: Any) -> None:  # fmt: skip
    """The impact threshold of a confounding variable (Frank 2000) and the share of the
    estimate bias would have to remove to change the inference (Frank et al. 2013).

    \b
    Examples:
      sensitivity impact --estimate 0.114 --se 0.027 --n 1200 --covariates 6
      sensitivity impact --t 1.1 --dof 480
    """
    if data:
        if not (formula and treatment):
            raise click.UsageError("data input needs --formula and --treatment as well")
        from sensitivity.adapters.design import check_names
        from sensitivity.adapters.files import read_table
        from sensitivity.adapters.models import impact_from_model
        from sensitivity.adapters.statsmodels import fit_formula

        frame = read_table(data, "data")
        check_names(frame, formula, treatment)
        results, _ = fit_formula(frame, formula)
        result = impact_from_model(results, treatment, alpha=alpha)
    else:
        from sensitivity.impact.core import impact_threshold

        result = impact_threshold(estimate, se, t=t_stat, n=n, covariates=covariates, dof=dof,
                                  alpha=alpha)  # fmt: skip
    emit(result, fmt, outputs)


command = impact_cmd
