"""`sensitivity debiased`: omitted-variable bounds for a debiased machine-learning estimate."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import Command, check_plot, emit, format_options, show_warnings

SHORT_HELP = COMMANDS["debiased"][1]


def _progress() -> tuple[Any, bool]:
    """Progress on stderr while the learners fit: one line rewritten in place on a terminal,
    else a line a fit (a log keeps them all)."""
    import sys

    if sys.stderr.isatty():
        return (lambda line: click.echo(f"\r{line}", err=True, nl=False)), True
    return (lambda line: click.echo(line, err=True)), False


@click.command(
    "debiased",
    cls=Command,
    short_help=SHORT_HELP,
    # --strength CY2 CD2; --multiple K is k on both sides
    names={
        "cy2": ("--strength", 1),
        "cd2": ("--strength", 2),
        "k_outcome": "--multiple",
        "k_treatment": "--multiple",
    },
)
@click.option(
    "--data",
    required=True,
    type=click.Path(dir_okay=False),
    help="CSV, TSV, Excel or Parquet file, one row a unit.",
)
@click.option("--treatment", required=True, help="The treatment column.")
@click.option("--outcome", required=True, help="The outcome column.")
@click.option(
    "--covariates",
    required=True,
    help="The observed covariates, comma-separated (text columns become indicators).",
)
@click.option(
    "--target-effect",
    type=click.Choice(["partial-linear", "average"]),
    default="partial-linear",
    show_default=True,
    help="partial-linear: the coefficient of Y = theta D + g(X) + e (any treatment); "
    "average: the average effect of a 0/1 treatment.",
)
@click.option(
    "--learner",
    type=click.Choice(["linear", "lasso", "forest", "boosting"]),
    default="boosting",
    show_default=True,
    help="The learners for the outcome and the treatment.",
)
@click.option(
    "--folds",
    type=click.IntRange(min=1),
    default=5,
    show_default=True,
    help="K-fold cross-fitting (1: fit and predict on all rows).",
)
@click.option("--seed", type=int, default=0, show_default=True, help="Seeds folds and learners.")
@click.option(
    "--strength",
    "strengths",
    nargs=2,
    type=float,
    multiple=True,
    metavar="CY2 CD2",
    help="A hypothetical confounder (repeatable): CY2 its share of the outcome's residual "
    "variation, CD2 its share of the Riesz representer's (in the partially linear model, "
    "its partial R² with the treatment); both in [0, 1).",
)
@click.option(
    "--rho",
    type=float,
    default=1.0,
    show_default=True,
    help="|correlation| of the confounder's two effects, in (0, 1]; 1 is the worst case.",
)
@click.option(
    "--benchmark",
    "benchmarks",
    multiple=True,
    help="A covariate to compare with (repeatable; 'a+b' for a group): its strengths are "
    "measured by refitting the learners without it.",
)
@click.option(
    "--multiple",
    "multiples",
    type=float,
    multiple=True,
    help="Benchmark multiple k on both sides (repeatable; default 1).",
)
@click.option(
    "--alpha",
    type=float,
    default=0.05,
    show_default=True,
    help="Each confidence bound is one-sided at level 1 - alpha.",
)
@click.option(
    "--target",
    type=float,
    default=0.0,
    show_default=True,
    help="The value the robustness values ask about (0: the null).",
)
@click.option(
    "--trim",
    type=float,
    default=0.01,
    show_default=True,
    help="Average effect: propensities are clipped to [trim, 1 - trim].",
)
@click.option(
    "--plot",
    "plots",
    multiple=True,
    type=click.Path(dir_okay=False),
    help="Write the contour figure of the bound (.png, .svg or .pdf; repeatable).",
)
@format_options
def debiased_cmd(
    data: str,
    treatment: str,
    outcome: str,
    covariates: str,
    target_effect: str,
    learner: str,
    folds: int,
    seed: int,
    strengths: Any,
    rho: float,
    benchmarks: Any,
    multiples: Any,
    alpha: float,
    target: float,
    trim: float,
    plots: Any,
    fmt: str,
    outputs: Any,
) -> None:
    """Omitted-variable bounds for a debiased (double) machine-learning estimate.

    Cross-fits the learners, estimates the effect with an orthogonal score, and bounds the
    bias a hidden confounder of chosen strength could cause (Chernozhukov, Cinelli, Newey,
    Sharma & Syrgkanis 2022): at most rho * S * sqrt(CY2 * CD2 / (1 - CD2)), with S from
    the data. Needs scikit-learn (pip install 'sensitivity[ml]').

    \b
    Examples:
      sensitivity debiased --data demo/harbourside_bp.csv --treatment commute_min \\
          --outcome sbp --covariates age,female,smoker,shift,bmi --learner lasso \\
          --strength 0.02 0.05 --benchmark smoker
      sensitivity debiased --data demo/harbourside_bp.csv --treatment smoker --outcome sbp \\
          --covariates age,female,commute_min,shift,bmi --target-effect average \\
          --learner forest --folds 3 --seed 3 --format json
    """
    import sys
    import time

    from sensitivity.common.errors import InputError

    show_warnings()
    check_plot(*plots)
    if multiples and not benchmarks:
        raise click.UsageError("--multiple needs --benchmark (the covariate to scale)")
    from sensitivity.debiased.core import check_strengths

    for cy2, cd2 in strengths:
        check_strengths(cy2, cd2, rho)
    check_strengths(0.0, 0.0, rho)
    if not 0 < alpha < 1:
        raise InputError(f"`alpha` must lie strictly between 0 and 1; got {alpha:g}", "alpha")
    for k in multiples:
        if not k > 0:
            raise InputError(f"`multiple` must be positive; got {k:g}", "multiple")
    from sensitivity.debiased.fit import debiased_fit

    say, in_place = _progress()
    start = time.perf_counter()
    fit = debiased_fit(
        data,
        treatment,
        outcome,
        covariates,
        target_effect=target_effect,
        learner=learner,
        folds=folds,
        seed=seed,
        benchmarks=benchmarks,
        trim=trim,
        progress=say,
    )
    if in_place:
        click.echo("", err=True)
    took = time.perf_counter() - start
    how = "without cross-fitting" if folds == 1 else f"cross-fitted in {folds} folds"
    refits = f"{len(benchmarks)} benchmark {'refit' if len(benchmarks) == 1 else 'refits'}"
    click.echo(
        f"Read the data and fitted the {learner} learners on {fit.moments.n:,} rows {how}"
        f"{f', with {refits},' if benchmarks else ''} in {took:.1f} s.",
        err=True,
    )
    result = fit.bounds(
        strengths, rho=rho, alpha=alpha, target=target, multiples=tuple(multiples) or (1.0,)
    )
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.debiased.figures import contours

        for path in contours(result, plots):
            click.echo(f"Wrote {path}", err=True)
    sys.stdout.flush()


command = debiased_cmd
