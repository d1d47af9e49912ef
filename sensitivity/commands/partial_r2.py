"""`sensitivity partial-r2`: partial-R² sensitivity of a linear-regression coefficient."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS
from sensitivity.common.errors import InputError

from ._options import (
    Command,
    emit,
    engine_option,
    exclusive,
    format_options,
    model_option,
    plot_options,
    show_warnings,
)

SHORT_HELP = COMMANDS["partial-r2"][1]


@click.command("partial-r2", cls=Command, short_help=SHORT_HELP, names={"sd_outcome": "--sd"})
@click.option("--estimate", type=float, help="Summary input: the treatment's OLS coefficient.")
@click.option("--se", type=float, help="Summary input: its classical standard error.")
@click.option("--t", "t_stat", type=float, help="Summary input: its t statistic (instead of --se).")
@click.option(
    "--dof", type=float, help="Summary input: residual degrees of freedom (n - coefficients)."
)
@click.option(
    "--data",
    type=click.Path(),
    help="Data input: CSV, TSV, Excel or Parquet file, or a Parquet dataset folder.",
)
@click.option("--formula", help='Data input: OLS formula, e.g. "y ~ t + x1 + C(region)".')
@click.option("--treatment", help="Data input: the treatment's name in the formula.")
@engine_option("the pass over --data")
@model_option("Data input: the fit. Partial-R² bounds need ols; the others go to `evalue`.", "ols")
@click.option(
    "--reduce-by",
    type=float,
    default=1.0,
    show_default=True,
    help="The share of the estimate a hidden confounder has to remove (1: all of it, to "
    "zero; 0.5: half of it).",
)
@click.option("--alpha", type=float, default=0.05, show_default=True, help="Significance level.")
@click.option(
    "--benchmark",
    "benchmarks",
    multiple=True,
    metavar="COLUMN[:K[:K_OUTCOME]]",
    help="Data input, repeatable: a measured covariate to compare with, and how many times "
    "its strength the confounder has (smoker, smoker:2, or smoker:1:3 for the treatment's "
    "and the outcome's multiples; default 1).",
)
@click.option(
    "--benchmark-r2",
    "benchmark_r2",
    nargs=3,
    multiple=True,
    metavar="NAME[:K[:K_OUTCOME]] R2_TREATMENT R2_OUTCOME",
    help="A benchmark from a paper's published numbers (repeatable; summary or data input): "
    "each side a partial R², or t:T:DOF, its t statistic and that model's degrees of freedom "
    "(t:T on the outcome side uses --dof). R² = t²/(t² + dof). NAME:K sets the multiple "
    "(NAME:1:3 the two sides'), as for --benchmark. A treatment side not published may be "
    "written assumed:R2, and the output states the assumption.",
)
@click.option(
    "--r2-treatment",
    multiple=True,
    type=float,
    help="Hypothetical confounder: partial R² with the treatment (pairs with --r2-outcome).",
)
@click.option(
    "--r2-outcome",
    multiple=True,
    type=float,
    help="Hypothetical confounder: partial R² with the outcome.",
)
@click.option("--sd", type=float, help="Summary input: outcome SD, to add the E-value alongside.")
@click.option(
    "--contrast",
    type=float,
    default=1.0,
    show_default=True,
    help="The E-value alongside is per this many units of treatment (e.g. 10).",
)
@plot_options("a contour figure in two panels: the bias-adjusted estimate, and its t value")
@format_options
def partial_r2_cmd(
    estimate: Any,
    se: Any,
    t_stat: Any,
    dof: Any,
    data: Any,
    formula: Any,
    treatment: Any,
    engine: Any,
    model_kind: Any,
    reduce_by: Any,
    alpha: Any,
    benchmarks: Any,
    benchmark_r2: Any,
    r2_treatment: Any,
    r2_outcome: Any,
    sd: Any,
    contrast: Any,
    plots: Any,
    plot_limits: Any,
    plot_marks: Any,
    fmt: Any,
    outputs: Any,
) -> None:
    """Partial-R² sensitivity of a linear-regression (OLS) coefficient.

    Give summary numbers (--estimate with --se or --t, and --dof), or data (--data, --formula,
    --treatment) to fit the OLS model here, which adds every covariate's strength and
    benchmarks.

    \b
    Examples:
      sensitivity partial-r2 --estimate 0.114 --se 0.027 --dof 1192
      sensitivity partial-r2 --data demo/harbourside_bp.csv \\
          --formula "sbp ~ commute_min + age + female + smoker + C(shift) + bmi" \\
          --treatment commute_min --benchmark smoker --benchmark smoker:2 --plot contours.png
      sensitivity partial-r2 --estimate 0.114 --se 0.027 --dof 1192 \\
          --benchmark-r2 smoker t:6.1:1193 t:3.9 --benchmark-r2 smoker:2 t:6.1:1193 t:3.9
      sensitivity partial-r2 --data demo/harbourside_bp_parquet --engine dask \\
          --formula "sbp ~ commute_min + age + female + smoker + C(shift) + bmi" \\
          --treatment commute_min
    """
    show_warnings()
    if plot_limits is not None or plot_marks:  # refused before any work, with or without --plot
        from sensitivity.partial_r2.figures import check_limits, check_marks

        check_limits(plot_limits)
        check_marks(plot_marks)
    exclusive(("--se", se), ("--t", t_stat))
    summary_given = [
        n
        for n, v in (
            ("--estimate", estimate),
            ("--se", se),
            ("--t", t_stat),
            ("--dof", dof),
            ("--sd", sd),
        )
        if v is not None
    ]
    data_given = [
        n
        for n, v in (("--data", data), ("--formula", formula), ("--treatment", treatment))
        if v is not None
    ]
    if summary_given and data_given:
        raise click.UsageError(
            f"give summary numbers or data, not both: got {', '.join(summary_given + data_given)}"
        )
    if not summary_given and not data_given:
        raise click.UsageError(
            "give --estimate, --se (or --t) and --dof, or --data, --formula and --treatment"
        )
    if engine != "local" and not data_given:
        raise click.UsageError("--engine applies to data input (--data)")
    if not data_given and model_kind != "ols":  # it was ignored: the summary is an OLS one
        raise click.UsageError(
            f"--model applies to data input (--data); summary numbers are an OLS coefficient's "
            f"(for a {model_kind} model's estimate use `sensitivity evalue`)"
        )
    if not data_given and sd is None and contrast != 1.0:  # nothing to scale without --sd
        raise click.UsageError(
            "--contrast scales the E-value alongside, which summary input gives only with --sd"
        )
    r2t = list(r2_treatment) or None
    r2y = list(r2_outcome) or None
    if data_given:
        missing = [n for n in ("--data", "--formula", "--treatment") if n not in data_given]
        if missing:
            raise click.UsageError(f"data input needs {', '.join(missing)} as well")
        if model_kind != "ols":
            raise InputError(
                f"`--model` {model_kind}: partial-R² bounds need an OLS fit; for a {model_kind} "
                f"model use `sensitivity evalue --data ... --model {model_kind}`"
            )
        import sys

        from sensitivity.adapters.statsmodels import partial_r2_from_data

        tty = sys.stderr.isatty()

        def progress(done: int, total: int | None = None) -> None:
            text = f"read {done:,} rows" if total is None else f"{done:,} of {total:,} partitions"
            click.echo("\r" + text if tty else text, err=True, nl=not tty)

        result = partial_r2_from_data(
            data,
            formula,
            treatment,
            reduce_by=reduce_by,
            alpha=alpha,
            benchmarks=benchmarks,
            r2_treatment=r2t,
            r2_outcome=r2y,
            contrast=contrast,
            engine=engine,
            progress=progress if sys.stderr.isatty() or engine != "local" else None,
        )
        if tty:
            click.echo("", err=True)
    else:
        if benchmarks:
            raise click.UsageError(
                "--benchmark needs data input (--data); from a paper's tables give the "
                "covariate's published numbers with --benchmark-r2 NAME R2_TREATMENT R2_OUTCOME"
            )
        if estimate is None:
            raise click.UsageError("summary input needs --estimate")
        if dof is None:
            raise click.UsageError("summary input needs --dof")
        from sensitivity.partial_r2.core import partial_r2_summary

        result = partial_r2_summary(
            estimate,
            se,
            dof,
            t=t_stat,
            reduce_by=reduce_by,
            alpha=alpha,
            r2_treatment=r2t,
            r2_outcome=r2y,
            contrast=contrast,
            sd_outcome=sd,
        )
    if benchmark_r2:
        from sensitivity.partial_r2.published import apply_text_benchmarks

        result = apply_text_benchmarks(result, benchmark_r2)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.partial_r2.figures import partial_r2_contours

        for path in partial_r2_contours(result, plots, limits=plot_limits, marks=plot_marks):
            click.echo(f"Wrote {path}", err=True)


command = partial_r2_cmd
