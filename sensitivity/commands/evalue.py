"""`sensitivity evalue`: E-values of an estimate and its interval, on any common scale."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import (
    Command,
    confounder_option,
    emit,
    errors_option,
    exclusive,
    format_options,
    model_option,
    outcome_frequency_option,
    plot_options,
    show_warnings,
)
from ._published import published_options, summary_route

SHORT_HELP = COMMANDS["evalue"][1]


@click.command("evalue", cls=Command, short_help=SHORT_HELP)
@published_options
@click.option(
    "--counts",
    nargs=4,
    type=int,
    default=None,
    metavar="CASES_T TOTAL_T CASES_C TOTAL_C",
    help="--scale rd: the 2 x 2 counts (cases and totals among the treated, then the controls).",
)
@click.option(
    "--data", type=click.Path(dir_okay=False), help="Data input: CSV, TSV, Excel or Parquet."
)
@click.option("--formula", help='Data input: the model formula, e.g. "y ~ t + age + C(site)".')
@click.option("--treatment", help="Data input: the treatment's coefficient name.")
@model_option(
    "Data input: the fit, which decides the scale (cox: time on the formula's left side)."
)
@click.option("--event", help="Data input with --model cox: the column that is 1 for an event.")
@errors_option
@click.option("--se", type=float, default=None, help="Standard error (smd and md).")
@click.option(
    "--sd",
    type=float,
    default=None,
    help="Outcome's standard deviation (md: needed to standardise).",
)
@click.option(
    "--contrast",
    type=float,
    default=1.0,
    show_default=True,
    help="md with a continuous treatment: the coefficient is per unit; report per "
    "this many units (e.g. 10).",
)
@outcome_frequency_option(
    "or, hr: the outcome's frequency at the end of follow-up (rare: under about 15%)."
)
@click.option(
    "--prevalence",
    type=float,
    default=None,
    help="Outcome prevalence; decides rare/common by the 15% rule.",
)
@click.option(
    "--target",
    type=float,
    default=None,
    help="True value to test against, on the SCALE's scale (default: the null).",
)
@confounder_option(
    "A hypothetical confounder's risk ratios with the treatment and with the "
    "outcome: prints its bounding factor and how far it could move the result. "
    "Repeatable."
)
@click.option(
    "--with-selection",
    type=click.Choice(["whole", "simplified"]),
    help="Add selection bias to a joint E-value: whole (the whole population, two selection "
    "factors) or simplified (one factor, under Smith & VanderWeele's simplifying assumption "
    "about how selection relates to the outcome; check that it holds).",
)
@click.option(
    "--with-misclassification",
    is_flag=True,
    help="Add differential outcome misclassification to a joint E-value.",
)
@plot_options("a figure of the confounder strengths that could explain the result away",
              marks=False)  # fmt: skip
@format_options
def evalue_cmd(
    text: Any,
    scale: Any,
    estimate: Any,
    ci: Any,
    ci_level: Any,
    counts: Any,
    data: Any,
    formula: Any,
    treatment: Any,
    model_kind: Any,
    event: Any,
    errors: Any,
    se: Any,
    sd: Any,
    contrast: Any,
    outcome: Any,
    prevalence: Any,
    target: Any,
    confounders: Any,
    with_selection: Any,
    with_misclassification: bool,
    plots: Any,
    plot_limits: Any,
    fmt: Any,
    outputs: Any,
) -> None:
    """E-value of a result as published (TEXT), of --scale/--estimate, or of a fitted model.

    TEXT is the result as a paper prints it, in quotes: "HR 0.72 (95% CI 0.60-0.86)". The
    scale and the interval's level come from the text where it names them (--scale and
    --ci-level fill in what it does not), and the output shows what was read. Scripts can
    name the numbers instead: --scale --estimate [--ci LOWER UPPER]. Or give --data
    --formula --treatment --model to fit the model here: the fit decides the scale, the
    estimate and interval come from it, and the outcome's share in the data decides rare or
    common.

    \b
    Examples:
      sensitivity evalue "HR 1.38 (95% CI 1.12-1.70)" --outcome-frequency rare
      sensitivity evalue "OR=2.40, 95%CI 1.80-3.20" --prevalence 0.3
      sensitivity evalue --scale rr --estimate 0.81 --ci 0.69 0.95
      sensitivity evalue --scale smd --estimate 0.18 --se 0.05
      sensitivity evalue --scale md --estimate 0.035 --se 0.012 --sd 14 --contrast 10
      sensitivity evalue --scale rd --counts 60 1000 40 1000
      sensitivity evalue "HR 1.38 (1.12 to 1.70)" --outcome-frequency rare --confounder 1.5 2
      sensitivity evalue --data demo/harbourside_bp.csv --formula "sbp ~ commute_min + age + \\
          female + smoker + C(shift) + bmi" --treatment commute_min --model ols --contrast 10
    """
    from sensitivity.evalues.core import evalue

    route, published = summary_route("evalue", text, scale, estimate, ci)
    if plot_limits is not None:  # refused before any work, with or without --plot
        from sensitivity.evalues.figures import check_limits

        check_limits(plot_limits)
    exclusive(("--outcome-frequency", outcome), ("--prevalence", prevalence))
    exclusive(("--se", se), ("--ci", ci or None))
    inputs = (("--data", data), ("--formula", formula), ("--treatment", treatment))
    data_given = [n for n, v in (*inputs, ("--model", model_kind)) if v]
    if data_given:
        summary = [n for n, v in (("TEXT", published), ("--scale", scale), ("--estimate", estimate),
                                  ("--ci", ci or None), ("--se", se), ("--sd", sd),
                                  ("--prevalence", prevalence)) if v is not None]  # fmt: skip
        if summary:
            raise click.UsageError(
                f"give summary numbers or data, not both: got {', '.join(summary + data_given)}"
            )
        missing = [n for n in ("--data", "--formula", "--treatment", "--model")
                   if n not in data_given]  # fmt: skip
        if missing:
            raise click.UsageError(f"data input needs {', '.join(missing)} as well")
        from sensitivity.adapters.models import evalue_from_data

        show_warnings()
        result = evalue_from_data(data, formula, treatment, model_kind, event=event,
                                  contrast=contrast, outcome=outcome, errors=errors,
                                  alpha=1 - (0.95 if ci_level is None else ci_level))  # fmt: skip
        _finish(result, confounders, fmt, outputs, plots, plot_limits,
                with_selection, with_misclassification)  # fmt: skip
        return
    if event is not None:
        raise click.UsageError("--event applies to data input with --model cox")
    if errors is not None:
        raise click.UsageError("--errors applies to data input (--data ... --model)")
    if scale == "rd" or counts:
        if scale != "rd" or route is not None or not counts:
            raise click.UsageError(
                "the risk difference takes: evalue --scale rd --counts A N1 C N0"
            )
        from sensitivity.evalues.core import evalue_rd

        emit(evalue_rd(tuple(counts), ci_level=0.95 if ci_level is None else ci_level),
             fmt, outputs)  # fmt: skip
        return
    if route == "text":
        from sensitivity.adapters.published import evalue_from_text

        result = evalue_from_text(published, scale=scale, ci_level=ci_level, se=se, sd=sd,
                                  contrast=contrast, outcome=outcome, prevalence=prevalence,
                                  target=target, argument="TEXT")  # fmt: skip
        _finish(result, confounders, fmt, outputs, plots, plot_limits,
                with_selection, with_misclassification)  # fmt: skip
        return
    if route is None:
        raise click.UsageError(
            'give the result as published (e.g. evalue "RR 1.6 (95% CI 1.2-2.1)"), or '
            "--scale and --estimate, or --data, --formula, --treatment and --model"
        )

    result = evalue(
        scale,
        estimate,
        ci=ci or None,
        se=se,
        sd=sd,
        contrast=contrast,
        outcome=outcome,
        prevalence=prevalence,
        target=target,
        ci_level=0.95 if ci_level is None else ci_level,
    )
    _finish(result, confounders, fmt, outputs, plots, plot_limits,
            with_selection, with_misclassification)  # fmt: skip


def _finish(result: Any, confounders: Any, fmt: str, outputs: Any, plots: Any,
            plot_limits: Any, selection: Any = None,
            misclassification: bool = False) -> None:  # fmt: skip
    if selection or misclassification:
        result = result.with_biases(selection=selection, misclassification=misclassification)
    if confounders:
        rr_t, rr_y = zip(*confounders, strict=True)
        result = result.with_confounders(rr_t, rr_y)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.evalues.figures import evalue_figure

        for path in evalue_figure(result, plots, limits=plot_limits):
            click.echo(f"Wrote {path}", err=True)


command = evalue_cmd
