"""`sensitivity impact`: the impact threshold of a confounding variable."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import Command, emit, format_options

SHORT_HELP = COMMANDS["impact"][1]


@click.command("impact", cls=Command, short_help=SHORT_HELP)
@click.option("--t", "t_stat", type=float,
              help="The treatment coefficient's t statistic (or --estimate and --se).")  # fmt: skip
@click.option("--dof", type=float, help="Residual degrees of freedom (or --n and --covariates).")
@click.option("--estimate", type=float, help="The treatment's coefficient (with --se).")
@click.option("--se", type=float, help="Its standard error.")
@click.option("--n", type=int, help="The number of observations.")
@click.option("--covariates", type=int,
              help="Covariates besides the treatment: dof = n - covariates - 2.")  # fmt: skip
@click.option("--alpha", type=float, default=0.05, show_default=True, help="Two-sided level.")
@click.option("--data", type=click.Path(dir_okay=False), help="Data input: fit OLS here.")
@click.option("--formula", help='Data input: e.g. "y ~ t + x1 + x2".')
@click.option("--treatment", help="Data input: the treatment's coefficient name.")
@format_options
def impact_cmd(t_stat: Any, dof: Any, estimate: Any, se: Any, n: Any, covariates: Any,
               alpha: float, data: Any, formula: Any, treatment: Any, fmt: str,
               outputs: Any) -> None:  # fmt: skip
    """How strong an omitted variable would have to be to change a regression coefficient's
    significance (impact threshold, Frank 2000), and the share of the coefficient bias
    would have to account for (Frank et al. 2013).

    \b
    Examples:
      sensitivity impact --t 1.1 --dof 480
      sensitivity impact --estimate 0.114 --se 0.027 --n 1200 --covariates 6
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

        result = impact_threshold(t=t_stat, dof=dof, estimate=estimate, se=se, n=n,
                                  covariates=covariates, alpha=alpha)  # fmt: skip
    emit(result, fmt, outputs)


command = impact_cmd
