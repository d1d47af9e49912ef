"""The `sensitivity` command line: parsing and printing only; the package computes.

Every subcommand prints a result in `--format text|json|csv|markdown|latex`. Bad input exits 2
with one line `Error: ...` on stderr; an internal fault exits 1 (with a traceback only under
`--debug`).
"""

from __future__ import annotations

import json
import sys

import click

FORMATS = ("text", "json", "csv", "markdown", "latex")


# --------------------------------------------------------------------------- plumbing
class _Cli(click.Group):
    """A group whose errors are one line on stderr: 2 for the user's input, 1 for ours."""

    def main(self, args=None, prog_name=None, **extra):
        args = list(sys.argv[1:] if args is None else args)
        debug = "--debug" in args
        extra.pop("standalone_mode", None)
        try:
            super().main(
                args=args, prog_name=prog_name or "sensitivity", standalone_mode=False, **extra
            )
        except click.exceptions.Exit as stop:
            sys.exit(stop.exit_code)
        except click.Abort:
            click.echo("Error: aborted", err=True)
            sys.exit(1)
        except click.ClickException as err:
            click.echo(f"Error: {' '.join(err.format_message().split())}", err=True)
            sys.exit(2)
        except (ValueError, TypeError) as err:
            if debug:
                raise
            click.echo(f"Error: {' '.join(str(err).split())}", err=True)
            sys.exit(2)
        except OSError as err:
            if debug:
                raise
            click.echo(f"Error: {err.strerror or err}: {err.filename or ''}".rstrip(": "), err=True)
            sys.exit(1)
        except Exception as err:  # noqa: BLE001 - the contract: no traceback without --debug
            if debug:
                raise
            click.echo(
                f"Error: internal error ({type(err).__name__}: {err}); rerun with --debug", err=True
            )
            sys.exit(1)
        sys.exit(0)


def _format_option(func):
    func = click.option(
        "--output",
        "-o",
        type=click.Path(dir_okay=False, writable=True),
        default=None,
        help="Write the result to FILE instead of stdout.",
    )(func)
    return click.option(
        "--format",
        "fmt",
        type=click.Choice(FORMATS),
        default="text",
        show_default=True,
        help="text for reading; json/csv for scripts; markdown/latex to paste into a manuscript.",
    )(func)


def emit(result, fmt: str, output: str | None) -> None:
    """Print `result` in `fmt`; in machine formats the sentence and cautions go to stderr."""
    if fmt == "text":
        body = result.summary()
    elif fmt == "json":
        # Indented JSON for people; above 10,000 rows compact, which halves size and time.
        indent = None if getattr(result, "n_rows", 1) > 10_000 else 2
        body = json.dumps(result.to_dict(), indent=indent, allow_nan=False, ensure_ascii=False)
    elif fmt == "csv" and hasattr(result, "columns"):
        from sensitivity.tables import columns_to_csv

        body = columns_to_csv(result.columns()).rstrip("\n")
    elif fmt == "csv":
        from sensitivity.tables import records_to_csv

        body = records_to_csv(result.records()).rstrip("\n")
    else:
        from sensitivity.tables import render

        body = "\n\n".join(render(t, fmt) for t in result.tables())
    if output:
        from pathlib import Path

        folder = Path(output).parent
        if not folder.is_dir():
            raise click.UsageError(f"--output: folder {str(folder)!r} does not exist")
        with open(output, "w", encoding="utf-8") as fh:
            fh.write(body + "\n")
        click.echo(f"Wrote {output}", err=True)
    else:
        click.echo(body)
    if fmt in ("csv", "markdown", "latex"):
        sentence = getattr(result, "sentence", None)
        extra = [sentence()] if callable(sentence) and getattr(result, "is_scalar", True) else []
        for line in extra + [f"Note: {n}" for n in result.all_notes()]:
            click.echo(line, err=True)


@click.group(cls=_Cli, context_settings={"help_option_names": ["-h", "--help"]})
@click.option("--debug", is_flag=True, help="Show tracebacks for internal errors.")
@click.version_option(package_name="sensitivity", prog_name="sensitivity")
def cli(debug):
    """How strong would an unmeasured confounder have to be to explain an estimate away?

    \b
    evalue      E-value of an estimate and its CI (rr, or, hr, smd, md)
    partial-r2  partial-R² bounds for a linear-regression coefficient
    tipping     tipping-point grids for a hidden confounder of chosen strength

    Run `sensitivity COMMAND --help` for each command's options.
    """


# --------------------------------------------------------------------------- evalue
@cli.command(
    "evalue",
    short_help="E-value of an estimate and its CI (rr, or, hr, smd, md).",
    context_settings={"ignore_unknown_options": True},  # lets ESTIMATE be negative (smd/md)
)
@click.argument("scale", type=click.Choice(["rr", "or", "hr", "smd", "md"]), metavar="SCALE")
@click.argument("estimate", type=float)
@click.option(
    "--ci",
    nargs=2,
    type=float,
    default=None,
    metavar="LOWER UPPER",
    help="Confidence limits on the same scale as ESTIMATE.",
)
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
@click.option(
    "--rare",
    "outcome",
    flag_value="rare",
    default=None,
    help="Outcome under about 15% at the end of follow-up (or, hr).",
)
@click.option(
    "--common",
    "outcome",
    flag_value="common",
    help="Outcome 15% or more at the end of follow-up (or, hr).",
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
@click.option(
    "--confounder",
    "confounders",
    nargs=2,
    type=float,
    multiple=True,
    metavar="RR_TREATMENT RR_OUTCOME",
    help="A hypothetical confounder's risk ratios with the treatment and with the "
    "outcome: prints its bounding factor and how far it could move the result. "
    "Repeatable.",
)
@_format_option
def evalue_cmd(
    scale, estimate, ci, se, sd, contrast, outcome, prevalence, target, confounders, fmt, output
):
    """E-value of ESTIMATE on SCALE: rr, or, hr, smd or md.

    \b
    Examples:
      sensitivity evalue rr 3.9 --ci 1.8 8.7
      sensitivity evalue or 2.1 --ci 1.4 3.15 --common
      sensitivity evalue hr 0.72 --ci 0.6 0.86 --prevalence 0.3
      sensitivity evalue md 0.42 --se 0.11 --sd 12 --contrast 10
      sensitivity evalue rr 3.9 --ci 1.8 8.7 --confounder 2 3 --confounder 4 4
    """
    from sensitivity.evalues import evalue

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
    )
    if confounders:
        rr_t, rr_y = zip(*confounders, strict=True)
        result = result.with_confounders(rr_t, rr_y)
    emit(result, fmt, output)


# --------------------------------------------------------------------------- partial-r2
def _show_warnings():
    """Package warnings as one `Warning:` line each on stderr (never a traceback)."""
    import warnings

    def show(message, category, filename, lineno, file=None, line=None):
        click.echo(f"Warning: {message}", err=True)

    warnings.showwarning = show
    from sensitivity._warnings import SensitivityWarning

    warnings.simplefilter("always", SensitivityWarning)


@cli.command("partial-r2", short_help="Partial-R² bounds for an OLS coefficient, with benchmarks.")
@click.option("--estimate", type=float, help="Summary input: the treatment's OLS coefficient.")
@click.option("--se", type=float, help="Summary input: its classical standard error.")
@click.option("--t", "t_stat", type=float, help="Summary input: its t statistic (instead of --se).")
@click.option(
    "--dof", type=float, help="Summary input: residual degrees of freedom (n - coefficients)."
)
@click.option(
    "--data", type=click.Path(dir_okay=False), help="Data input: CSV, TSV, Excel or Parquet file."
)
@click.option("--formula", help='Data input: OLS formula, e.g. "y ~ t + x1 + C(region)".')
@click.option("--treatment", help="Data input: the treatment's name in the formula.")
@click.option(
    "--fraction",
    type=float,
    default=1.0,
    show_default=True,
    help="Share of the estimate the confounder must explain away.",
)
@click.option("--alpha", type=float, default=0.05, show_default=True, help="Significance level.")
@click.option(
    "--benchmark",
    "benchmarks",
    multiple=True,
    help="Observed covariate to compare with (repeatable; data input).",
)
@click.option(
    "--times",
    multiple=True,
    type=float,
    help="Benchmark multiple k, both sides (repeatable; default 1).",
)
@click.option(
    "--times-pair",
    "times_pairs",
    nargs=2,
    type=float,
    multiple=True,
    metavar="K_TREATMENT K_OUTCOME",
    help="Separate benchmark multiples for the treatment and outcome sides (repeatable).",
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
@click.option(
    "--plot", type=click.Path(dir_okay=False), help="Write a contour figure (.png, .svg or .pdf)."
)
@click.option(
    "--plot-statistic",
    type=click.Choice(["estimate", "t"]),
    default="estimate",
    show_default=True,
    help="What the figure's contours show.",
)
@_format_option
def partial_r2_cmd(
    estimate,
    se,
    t_stat,
    dof,
    data,
    formula,
    treatment,
    fraction,
    alpha,
    benchmarks,
    times,
    times_pairs,
    r2_treatment,
    r2_outcome,
    sd,
    contrast,
    plot,
    plot_statistic,
    fmt,
    output,
):
    """Partial-R² sensitivity of a linear-regression (OLS) coefficient.

    Give summary numbers (--estimate with --se or --t, and --dof), or data (--data, --formula,
    --treatment) to fit the OLS model here, which adds every covariate's strength and
    benchmarks.

    \b
    Examples:
      sensitivity partial-r2 --estimate 0.097 --se 0.0232 --dof 783
      sensitivity partial-r2 --data demo/harbourside_bp.csv \\
          --formula "sbp ~ commute_min + age + female + smoker + C(shift) + bmi" \\
          --treatment commute_min --benchmark smoker --times 1 --times 2 --plot contours.png
    """
    _show_warnings()
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
    r2t = list(r2_treatment) or None
    r2y = list(r2_outcome) or None
    if plot:
        from sensitivity.plots import check_plot_path

        check_plot_path(plot)
    if data_given:
        missing = [n for n in ("--data", "--formula", "--treatment") if n not in data_given]
        if missing:
            raise click.UsageError(f"data input needs {', '.join(missing)} as well")
        from sensitivity.regression import partial_r2_from_data

        result = partial_r2_from_data(
            data,
            formula,
            treatment,
            fraction=fraction,
            alpha=alpha,
            benchmarks=benchmarks,
            times=list(times) or None,
            times_pairs=times_pairs,
            r2_treatment=r2t,
            r2_outcome=r2y,
            contrast=contrast,
        )
    else:
        if benchmarks or times or times_pairs:
            raise click.UsageError("--benchmark, --times and --times-pair need data input (--data)")
        if estimate is None:
            raise click.UsageError("summary input needs --estimate")
        if dof is None:
            raise click.UsageError("summary input needs --dof")
        from sensitivity.partial_r2 import partial_r2_summary

        result = partial_r2_summary(
            estimate,
            se,
            dof,
            t=t_stat,
            fraction=fraction,
            alpha=alpha,
            r2_treatment=r2t,
            r2_outcome=r2y,
            contrast=contrast,
            sd_outcome=sd,
        )
    emit(result, fmt, output)
    if plot:
        from sensitivity.plots import partial_r2_contours

        partial_r2_contours(result, plot, statistic=plot_statistic)
        click.echo(f"Wrote {plot}", err=True)


# --------------------------------------------------------------------------- tipping
RANGE_HELP = "a value or START:STOP:STEP (STOP included when the steps reach it)"


@cli.command(
    "tipping", short_help="Tipping-point grids for a hidden confounder of chosen strength."
)
@click.option(
    "--kind",
    type=click.Choice(["binary", "bounding", "partial-r2"]),
    default="binary",
    show_default=True,
    help="binary: a binary confounder's prevalences and effect; bounding: its two risk "
    "ratios (bounding factor); partial-r2: its two partial R² (OLS coefficient).",
)
@click.option(
    "--scale",
    type=click.Choice(["md", "rd", "rr", "or", "hr"]),
    help="Effect scale (binary and bounding views).",
)
@click.option("--estimate", type=float, help="The observed adjusted estimate.")
@click.option(
    "--ci", nargs=2, type=float, default=None, metavar="LOWER UPPER", help="Its confidence limits."
)
@click.option(
    "--target", type=float, default=None, help="Value to test against (default: the null)."
)
@click.option("--prevalence-treated", help=f"P(U=1) among the treated: {RANGE_HELP}.")
@click.option("--prevalence-control", help=f"P(U=1) among the controls: {RANGE_HELP}.")
@click.option(
    "--outcome-effect",
    help=f"Effect of U on the outcome (difference for md/rd, ratio for rr/or/hr): {RANGE_HELP}.",
)
@click.option("--rr-treatment", help=f"bounding: risk ratio of U with the treatment: {RANGE_HELP}.")
@click.option("--rr-outcome", help=f"bounding: risk ratio of U with the outcome: {RANGE_HELP}.")
@click.option(
    "--rare",
    "outcome",
    flag_value="rare",
    default=None,
    help="bounding with or/hr: the outcome is rare (under about 15%).",
)
@click.option(
    "--common", "outcome", flag_value="common", help="bounding with or/hr: the outcome is common."
)
@click.option("--se", type=float, help="partial-r2: the coefficient's standard error.")
@click.option("--dof", type=float, help="partial-r2: residual degrees of freedom.")
@click.option(
    "--alpha", type=float, default=0.05, show_default=True, help="partial-r2: significance level."
)
@click.option(
    "--r2-treatment", help=f"partial-r2: partial R² of U with the treatment: {RANGE_HELP}."
)
@click.option("--r2-outcome", help=f"partial-r2: partial R² of U with the outcome: {RANGE_HELP}.")
@click.option(
    "--plot",
    type=click.Path(dir_okay=False),
    help="Write a figure (.png, .svg or .pdf) with the tipping line drawn.",
)
@_format_option
def tipping_cmd(
    kind,
    scale,
    estimate,
    ci,
    target,
    prevalence_treated,
    prevalence_control,
    outcome_effect,
    rr_treatment,
    rr_outcome,
    outcome,
    se,
    dof,
    alpha,
    r2_treatment,
    r2_outcome,
    plot,
    fmt,
    output,
):
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
      sensitivity tipping --kind bounding --scale rr --estimate 3.9 --ci 1.8 8.7 --plot b.png
      sensitivity tipping --kind partial-r2 --estimate 0.097 --se 0.0232 --dof 783
    """
    from sensitivity import tipping as tp

    if plot:
        from sensitivity.plots import check_plot_path

        check_plot_path(plot)
    if estimate is None:
        raise click.UsageError("--estimate is required")

    given = {
        "scale": scale,
        "ci": ci or None,
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
            "--" + ("rare/--common" if k == "outcome" else k.replace("_", "-")) for k in foreign
        )
        raise click.UsageError(f"{flags} do not apply to the {kind} view")

    def grid(name):
        return None if given[name] is None else tp.parse_range(given[name], name)

    if kind in ("binary", "bounding") and scale is None:
        scales = "md, rd, rr, or, hr" if kind == "binary" else "rr, or, hr"
        raise click.UsageError(f"--scale is required for the {kind} view ({scales})")
    if kind == "binary":
        result = tp.binary_confounder_grid(
            scale,
            estimate,
            ci or None,
            target=target,
            **{k: grid(k) for k in ("prevalence_treated", "prevalence_control", "outcome_effect")},
        )
    elif kind == "bounding":
        result = tp.bounding_grid(
            scale,
            estimate,
            ci or None,
            outcome=outcome,
            target=target,
            **{k: grid(k) for k in ("rr_treatment", "rr_outcome")},
        )
    else:
        if se is None or dof is None:
            raise click.UsageError("the partial-r2 view needs --se and --dof")
        result = tp.partial_r2_grid(
            estimate,
            se,
            dof,
            alpha=alpha,
            target=target,
            **{k: grid(k) for k in ("r2_treatment", "r2_outcome")},
        )
    if fmt in ("json", "csv") and result.n_rows > 200_000:
        click.echo(f"Writing {result.n_rows:,} rows as {fmt}...", err=True)
    emit(result, fmt, output)
    if plot:
        from sensitivity.plots import tipping_figure

        tipping_figure(result, plot)
        click.echo(f"Wrote {plot}", err=True)


#: The options each tipping view takes (the rest are refused, not silently ignored).
VIEW_OPTIONS = {
    "binary": {"scale", "ci", "prevalence_treated", "prevalence_control", "outcome_effect"},
    "bounding": {"scale", "ci", "rr_treatment", "rr_outcome", "outcome"},
    "partial-r2": {"se", "dof", "r2_treatment", "r2_outcome"},
}


def main():
    """Console entry point."""
    cli.main(prog_name="sensitivity")


if __name__ == "__main__":
    main()
