"""`sensitivity simulate`: probabilistic bias analysis for a hidden binary confounder."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import Command, emit, format_options, outcome_frequency_option, plot_options

SHORT_HELP = COMMANDS["simulate"][1]
PRIOR_HELP = (
    "a prior KIND:PARAMETERS: fixed:V, uniform:LOW:HIGH, triangular:LOW:MODE:HIGH, "
    "trapezoidal:MIN:MODE_LOW:MODE_HIGH:MAX, beta:A:B or lognormal:MEANLOG:SDLOG"
)


@click.command("simulate", cls=Command, short_help=SHORT_HELP)
@click.option("--scale", type=click.Choice(["md", "smd", "rd", "rr", "or", "hr"],
              case_sensitive=False), required=True, help="Effect scale.")  # fmt: skip
@click.option("--estimate", type=float, required=True, help="The observed adjusted estimate.")
@click.option("--ci", nargs=2, type=float, required=True, metavar="LOWER UPPER",
              help="Its confidence limits (the random error is drawn from them).")  # fmt: skip
@click.option("--ci-level", type=float, default=0.95, show_default=True, help="Their level.")
@click.option(
    "--prevalence-treated", required=True, help=f"P(U=1) among the treated: {PRIOR_HELP}."
)
@click.option(
    "--prevalence-control", required=True, help=f"P(U=1) among the controls: {PRIOR_HELP}."
)
@click.option("--outcome-effect", required=True,
              help=f"U's effect on the outcome (a ratio for rr/or/hr): {PRIOR_HELP}.")  # fmt: skip
@click.option("--correlation", type=float, default=0.0, show_default=True,
              help="Correlation of the two prevalences (a Gaussian copula).")  # fmt: skip
@click.option("--draws", type=int, default=100_000, show_default=True, help="Number of draws.")
@click.option("--seed", type=int, help="Seed (when not given, one is drawn and reported).")
@click.option("--target", type=float, help="The value to test against (default: the null).")
@outcome_frequency_option("or, hr: the outcome's frequency (a common outcome is converted).")
@plot_options("the distribution of bias-adjusted estimates", marks=False)
@format_options
def simulate_cmd(scale: str, estimate: float, ci: Any, ci_level: float, prevalence_treated: str,
                 prevalence_control: str, outcome_effect: str, correlation: float, draws: int,
                 seed: Any, target: Any, outcome: Any, plots: Any, plot_limits: Any,
                 fmt: str, outputs: Any) -> None:  # fmt: skip
    """Probabilistic bias analysis: bias-adjusted estimates under priors on a hidden binary
    confounder's prevalences and effect, with systematic and total-error intervals.

    \b
    Examples:
      sensitivity simulate --scale rr --estimate 0.81 --ci 0.69 0.95 \\
          --prevalence-treated uniform:0.2:0.4 --prevalence-control uniform:0.3:0.5 \\
          --outcome-effect lognormal:0.5:0.2 --seed 7
    """
    from sensitivity.simulate.core import simulate

    result = simulate(scale, estimate, ci, prevalence_treated=prevalence_treated,
                      prevalence_control=prevalence_control, outcome_effect=outcome_effect,
                      draws=draws, seed=seed, correlation=correlation, outcome=outcome,
                      target=target, ci_level=ci_level)  # fmt: skip
    if seed is None:
        click.echo(f"Seed {result.seed} (give --seed {result.seed} to repeat this run)", err=True)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.simulate.figures import simulation_figure

        for path in simulation_figure(result, plots):
            click.echo(f"Wrote {path}", err=True)


command = simulate_cmd
