"""`sensitivity stability`: coefficient stability under proportional selection (Oster)."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import Command, emit, format_options, plot_options

SHORT_HELP = COMMANDS["stability"][1]


@click.command("stability", cls=Command, short_help=SHORT_HELP)
@click.option("--estimate-short", type=float, help="Coefficient without the controls.")
@click.option("--r2-short", type=float, help="R² without the controls.")
@click.option("--estimate-long", type=float, help="Coefficient with the controls.")
@click.option("--r2-long", type=float, help="R² with the controls.")
@click.option("--var-outcome", type=float, help="Exact solution: the outcome's variance.")
@click.option("--var-treatment", type=float, help="Exact solution: the treatment's variance.")
@click.option(
    "--var-treatment-residual",
    type=float,
    help="Exact solution: the variance of the treatment's residual on the controls.",
)
@click.option(
    "--r2-max",
    type=float,
    help="R² with the unobserved controls too (default 1.3 x long R², capped at 1).",
)
@click.option("--delta", type=float, default=1.0, show_default=True,
              help="Selection on unobservables relative to observables.")  # fmt: skip
@click.option("--target", type=float, default=0.0, show_default=True,
              help="The coefficient the delta for target brings the estimate to.")  # fmt: skip
@click.option("--data", type=click.Path(dir_okay=False), help="Data input: fit both here.")
@click.option("--formula-short", help='Data input: e.g. "y ~ t".')
@click.option("--formula-long", help='Data input: e.g. "y ~ t + x1 + x2".')
@click.option("--treatment", help="Data input: the treatment's name.")
@plot_options("the bias-adjusted coefficient against delta", marks=False)
@format_options
def stability_cmd(estimate_short: Any, r2_short: Any, estimate_long: Any, r2_long: Any,
                  var_outcome: Any, var_treatment: Any, var_treatment_residual: Any,
                  r2_max: Any, delta: float, target: float, data: Any, formula_short: Any,
                  formula_long: Any, treatment: Any, plots: Any, plot_limits: Any,
                  fmt: str, outputs: Any) -> None:  # fmt: skip
    """Coefficient stability under proportional selection (Oster 2019): the bias-adjusted
    coefficient at a delta, and the delta that brings the coefficient to a target.

    \b
    Examples:
      sensitivity stability --estimate-short 0.5 --r2-short 0.1 --estimate-long 0.4 \\
          --r2-long 0.3
      sensitivity stability --data demo/harbourside_bp.csv --formula-short "sbp ~ commute_min" \\
          --formula-long "sbp ~ commute_min + age + female + smoker + bmi" --treatment commute_min
    """
    from sensitivity.stability.core import coefficient_stability

    if data:
        if not (formula_short and formula_long and treatment):
            raise click.UsageError(
                "data input needs --formula-short, --formula-long and --treatment as well"
            )
        from sensitivity.adapters.stability import stability_inputs_from_data

        numbers = stability_inputs_from_data(data, formula_short, formula_long, treatment)
    else:
        numbers = {
            "estimate_short": estimate_short, "r2_short": r2_short,
            "estimate_long": estimate_long, "r2_long": r2_long, "var_outcome": var_outcome,
            "var_treatment": var_treatment, "var_treatment_residual": var_treatment_residual,
        }  # fmt: skip
        missing = [f"--{k.replace('_', '-')}" for k in ("estimate_short", "r2_short",
                   "estimate_long", "r2_long") if numbers[k] is None]  # fmt: skip
        if missing:
            raise click.UsageError(f"summary input needs {', '.join(missing)}")
    result = coefficient_stability(**numbers, r2_max=r2_max, delta=delta, target=target)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.stability.figures import stability_figure

        for path in stability_figure(result, plots):
            click.echo(f"Wrote {path}", err=True)


command = stability_cmd
