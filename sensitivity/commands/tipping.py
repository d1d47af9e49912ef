"""`sensitivity tipping`: tipping-point grids for a hidden confounder of chosen strength."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import (
    RANGE_HELP,
    Command,
    emit,
    format_options,
    outcome_frequency_option,
    plot_options,
)

SHORT_HELP = COMMANDS["tipping"][1]


@click.command("tipping", cls=Command, short_help=SHORT_HELP)
@click.option(
    "--kind",
    type=click.Choice(["binary", "continuous", "bounding", "partial-r2"]),
    default="binary",
    show_default=True,
    help="binary: a binary confounder's prevalences and effect; continuous: a normal "
    "confounder's difference between the groups and effect per SD; bounding: its two risk "
    "ratios (bounding factor); partial-r2: its two partial R² (OLS coefficient).",
)
@click.option(
    "--scale",
    type=click.Choice(["md", "smd", "rd", "rr", "or", "hr"], case_sensitive=False),
    help="Effect scale (binary and bounding views).",
)
@click.option("--estimate", type=float, help="The observed adjusted estimate.")
@click.option(
    "--ci", nargs=2, type=float, default=None, metavar="LOWER UPPER", help="Its confidence limits."
)
@click.option(
    "--ci-level",
    type=float,
    default=None,
    help="The level of --ci, as the output names it (default 0.95; 0.9 for a 90% CI). "
    "The partial-r2 view takes --alpha instead.",
)
@click.option(
    "--target", type=float, default=None, help="Value to test against (default: the null)."
)
@click.option(
    "--difference",
    help=f"continuous: the confounder's mean, treated minus controls, in SDs: {RANGE_HELP}.",
)
@click.option("--prevalence-treated", help=f"P(U=1) among the treated: {RANGE_HELP}.")
@click.option("--prevalence-control", help=f"P(U=1) among the controls: {RANGE_HELP}.")
@click.option(
    "--outcome-effect",
    help=f"Effect of U on the outcome (difference for md/rd, ratio for rr/or/hr): {RANGE_HELP}.",
)
@click.option("--rr-treatment", help=f"bounding: risk ratio of U with the treatment: {RANGE_HELP}.")
@click.option("--rr-outcome", help=f"bounding: risk ratio of U with the outcome: {RANGE_HELP}.")
@outcome_frequency_option(
    "or, hr (binary and bounding views): the outcome's frequency; a common outcome's ratio is "
    "converted to the risk-ratio scale as in `evalue`."
)
@click.option("--se", type=float, help="partial-r2: the coefficient's standard error.")
@click.option("--dof", type=float, help="partial-r2: residual degrees of freedom.")
@click.option(
    "--alpha",
    type=float,
    default=None,
    help="partial-r2: significance level (default 0.05); the other views take --ci-level.",
)
@click.option(
    "--r2-treatment", help=f"partial-r2: partial R² of U with the treatment: {RANGE_HELP}."
)
@click.option("--r2-outcome", help=f"partial-r2: partial R² of U with the outcome: {RANGE_HELP}.")
@plot_options("a figure of the grid with the tipping lines drawn")
@format_options
def tipping_cmd(
    kind: Any,
    scale: Any,
    estimate: Any,
    ci: Any,
    ci_level: Any,
    target: Any,
    prevalence_treated: Any,
    prevalence_control: Any,
    outcome_effect: Any,
    difference: Any,
    rr_treatment: Any,
    rr_outcome: Any,
    outcome: Any,
    se: Any,
    dof: Any,
    alpha: Any,
    r2_treatment: Any,
    r2_outcome: Any,
    plots: Any,
    plot_limits: Any,
    plot_marks: Any,
    fmt: Any,
    outputs: Any,
) -> None:
    """Tipping-point grid: where does the conclusion tip under a hidden confounder?

    Each strength is a single value or a range START:STOP:STEP; the grid is every
    combination. Unset strengths get a range scaled to the estimate. The tipping points are,
    for each value of the other varying parameters, the least value of the last varying one
    at which the estimate (and separately its CI limit nearest the target) reaches the target.

    \b
    Examples:
      sensitivity tipping --scale rr --estimate 1.8 --ci 1.2 2.7 --prevalence-control 0.2
      sensitivity tipping --scale md --estimate 2.4 --ci 0.8 4.0 \\
          --prevalence-treated 0.5 --prevalence-control 0:0.5:0.05 --outcome-effect 0:10:0.5
      sensitivity tipping --kind bounding --scale hr --estimate 1.38 --ci 1.12 1.70 \\
          --outcome-frequency rare --plot b.png
      sensitivity tipping --kind partial-r2 --estimate 0.114 --se 0.027 --dof 1192
      sensitivity tipping --kind continuous --scale rr --estimate 0.81 --ci 0.69 0.95 \\
          --difference 0:1.5:0.1 --outcome-effect 0.67
    """
    from sensitivity.tipping import core as tp

    if estimate is None:
        raise click.UsageError("--estimate is required")

    given = {
        "scale": scale,
        "ci": ci or None,
        "ci_level": ci_level,
        "alpha": alpha,
        "difference": difference,
        "prevalence_treated": prevalence_treated,
        "prevalence_control": prevalence_control,
        "outcome_effect": outcome_effect,
        "rr_treatment": rr_treatment,
        "rr_outcome": rr_outcome,
        "outcome": outcome,
        "se": se,
        "dof": dof,
        "r2_treatment": r2_treatment,
        "r2_outcome": r2_outcome,
    }
    foreign = [k for k, v in given.items() if v is not None and k not in VIEW_OPTIONS[kind]]
    if foreign:
        flags = ", ".join(
            "--" + ("outcome-frequency" if k == "outcome" else k.replace("_", "-")) for k in foreign
        )
        verb = "does" if len(foreign) == 1 else "do"
        hint = {"alpha": "; its --ci's level is --ci-level", "ci_level": "; it takes --alpha"}
        why = "".join(hint.get(k, "") for k in foreign)
        raise click.UsageError(f"{flags} {verb} not apply to the {kind} view{why}")
    if ci_level is not None and not ci:
        raise click.UsageError("--ci-level is the level of --ci: give --ci LOWER UPPER with it")
    level = {} if ci_level is None else {"ci_level": ci_level}

    if plot_limits is not None or plot_marks:  # refused before any work, with or without --plot
        from sensitivity.tipping.figures import check_plot_input

        check_plot_input(kind, plot_limits, plot_marks)

    def grid(name):
        return None if given[name] is None else tp.parse_range(given[name], name)

    if kind in ("binary", "bounding", "continuous") and scale is None:
        scales = "rr, or, hr" if kind == "bounding" else "md, smd, rd, rr, or, hr"
        raise click.UsageError(f"--scale is required for the {kind} view ({scales})")
    if kind == "binary":
        result = tp.binary_confounder_grid(
            scale,
            estimate,
            ci or None,
            target=target,
            outcome=outcome,
            **level,
            **{k: grid(k) for k in ("prevalence_treated", "prevalence_control", "outcome_effect")},
        )
    elif kind == "continuous":
        result = tp.continuous_confounder_grid(
            scale,
            estimate,
            ci or None,
            target=target,
            outcome=outcome,
            **level,
            **{k: grid(k) for k in ("difference", "outcome_effect")},
        )
    elif kind == "bounding":
        result = tp.bounding_grid(
            scale,
            estimate,
            ci or None,
            outcome=outcome,
            target=target,
            **level,
            **{k: grid(k) for k in ("rr_treatment", "rr_outcome")},
        )
    else:
        if se is None or dof is None:
            raise click.UsageError("the partial-r2 view needs --se and --dof")
        result = tp.partial_r2_grid(
            estimate,
            se,
            dof,
            alpha=0.05 if alpha is None else alpha,
            target=target,
            **{k: grid(k) for k in ("r2_treatment", "r2_outcome")},
        )
    if plots:  # the axes are the grid's: checked before output
        from sensitivity.tipping.figures import check_axes, check_varying

        check_varying(result)
        if plot_limits is not None:
            check_axes(result, plot_limits)
    if fmt in ("json", "csv") and result.n_rows > 200_000:
        click.echo(f"Writing {result.n_rows:,} rows as {fmt}...", err=True)
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.tipping.figures import tipping_figure

        for path in tipping_figure(result, plots, limits=plot_limits, marks=plot_marks):
            click.echo(f"Wrote {path}", err=True)


#: The options each tipping view takes (the rest are refused, not silently ignored).
VIEW_OPTIONS = {
    "binary": {
        "scale",
        "ci",
        "ci_level",
        "prevalence_treated",
        "prevalence_control",
        "outcome_effect",
        "outcome",
    },
    "continuous": {"scale", "ci", "ci_level", "difference", "outcome_effect", "outcome"},
    "bounding": {"scale", "ci", "ci_level", "rr_treatment", "rr_outcome", "outcome"},
    "partial-r2": {"se", "dof", "alpha", "r2_treatment", "r2_outcome"},
}


command = tipping_cmd
