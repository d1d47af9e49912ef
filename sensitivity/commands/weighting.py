"""`sensitivity weighting`: a weighted (IPW) estimate under the marginal sensitivity model."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS
from sensitivity.common.errors import InputError

from ._options import (
    RANGE_HELP,
    Command,
    check_plot,
    emit,
    exclusive,
    format_options,
    show_warnings,
)
from ._typed import name_arguments

SHORT_HELP = COMMANDS["weighting"][1]


def parse_lambda(text: str) -> list[float]:
    """A value, START:STOP:STEP (as every grid option reads it), or a comma-separated list."""
    if "," in str(text):
        try:
            return [float(p) for p in str(text).split(",")]
        except ValueError:
            raise InputError(
                f"`lambda` must be numbers separated by commas; got {text!r}", "lambda"
            ) from None
    from sensitivity.tipping.core import parse_range

    return [float(v) for v in parse_range(text, "lambda")]


@click.command("weighting", cls=Command, short_help=SHORT_HELP)
@click.option(
    "--data",
    type=click.Path(dir_okay=False),
    required=True,
    help="CSV, TSV, Excel or Parquet file, one row per unit.",
)
@click.option("--treatment", required=True, help="The treatment column (0/1).")
@click.option("--outcome", required=True, help="The outcome column (numeric; 0/1 is binary).")
@click.option("--propensity", help='Logistic propensity model, e.g. "T ~ x1 + x2 + C(site)".')
@click.option("--propensity-column", help="Or a column of fitted propensities.")
@click.option(
    "--estimand",
    type=click.Choice(["ate", "att"]),
    default="ate",
    show_default=True,
    help="ate: everyone; att: the treated (only the controls' weights move).",
)
@click.option(
    "--lambda",
    "lam",
    default="1:2:0.25",
    show_default=True,
    help=f"Λ >= 1: {RANGE_HELP}, or a comma-separated list.",
)
@click.option(
    "--method",
    type=click.Choice(["both", "sharp", "percentile"]),
    default="both",
    show_default=True,
    help="sharp: quantile-balancing bounds; percentile: box bounds only (fast on large data).",
)
@click.option(
    "--resamples",
    type=int,
    default=200,
    show_default=True,
    help="Bootstrap resamples (at least 50).",
)
@click.option("--seed", type=int, help="Seed (when not given, one is drawn and reported).")
@click.option(
    "--alpha",
    type=float,
    default=0.05,
    show_default=True,
    help="The intervals' level is 1 - alpha; alpha/2 x --resamples must be at least 1.",
)
@click.option(
    "--target",
    type=float,
    default=0.0,
    show_default=True,
    help="The effect (difference scale) whose inclusion changes the conclusion.",
)
@click.option(
    "--extreme",
    type=click.Choice(["none", "clip", "trim"]),
    default="none",
    show_default=True,
    help="Extreme propensities: clip them to [CUT, 1-CUT] or leave those units out.",
)
@click.option(
    "--cut", type=float, default=0.01, show_default=True, help="The limit --extreme uses."
)
@click.option(
    "--plot",
    "plots",
    multiple=True,
    type=click.Path(dir_okay=False),
    help="Write the bounds and intervals against Λ (.png, .svg or .pdf; repeatable).",
)
@format_options
def weighting_cmd(
    data: str,
    treatment: str,
    outcome: str,
    propensity: Any,
    propensity_column: Any,
    estimand: str,
    method: str,
    lam: str,
    resamples: int,
    seed: Any,
    alpha: float,
    target: float,
    extreme: str,
    cut: float,
    plots: Any,
    fmt: str,
    outputs: Any,
) -> None:
    """Bounds on a weighted (inverse probability weighting) effect when a hidden confounder
    may move each unit's odds of treatment by up to a factor Λ beyond the measured
    covariates: sharp (quantile-balancing) and box bounds with percentile-bootstrap
    intervals at each Λ, and the least Λ at which each interval includes the null.

    \b
    Examples:
      sensitivity weighting --data demo/harbourside_cohort.csv --treatment night_shift \\
          --outcome sbp --propensity "night_shift ~ age + female + smoker + bmi" --seed 4
    """
    import sys

    show_warnings()
    exclusive(("--propensity", propensity), ("--propensity-column", propensity_column))
    if propensity is None and propensity_column is None:
        raise click.UsageError("give --propensity (a formula) or --propensity-column")
    if propensity_column is not None:  # the library's `propensity` holds this column's values
        name_arguments(propensity="--propensity-column")
    check_plot(*plots)  # extension, folder, a symbolic link written through
    grid = parse_lambda(lam)
    import time

    from sensitivity.weighting.data import weighted_sensitivity

    began = time.monotonic()
    terminal = sys.stderr.isatty()

    def progress(done: int, total: int) -> None:
        # on a terminal, or once the run has taken long enough for a log to want it
        every = max(1, total // (20 if terminal else 4))  # a log gets a line a quarter
        if (terminal or time.monotonic() - began > 5) and (done == total or done % every == 0):
            end = "\n" if done == total or not terminal else ""
            lead = "\r" if terminal else ""
            click.echo(f"{lead}bootstrap {done:,}/{total:,} resamples{end}", err=True, nl=False)

    result = weighted_sensitivity(
        data,
        treatment,
        outcome,
        propensity=propensity,
        propensity_column=propensity_column,
        estimand=estimand,
        lam=grid,
        resamples=resamples,
        seed=seed,
        alpha=alpha,
        target=target,
        methods=("sharp", "percentile") if method == "both" else (method,),
        extreme=extreme,
        cut=cut,
        progress=progress,
    )
    if seed is None:
        click.echo(f"Seed {result.seed} (give --seed {result.seed} to repeat this run)", err=True)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.weighting.figures import draw

        for path in draw(result, plots):
            click.echo(f"Wrote {path}", err=True)


command = weighting_cmd
