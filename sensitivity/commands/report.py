"""`sensitivity report`: the robustness section of a manuscript, in one folder."""

from __future__ import annotations

import shlex
from typing import Any

import click

from sensitivity.commands import COMMANDS

from . import _options
from ._options import (
    Command,
    model_option,
    outcome_frequency_option,
    published_options,
    show_warnings,
    summary_route,
)

SHORT_HELP = COMMANDS["report"][1]


@click.command("report", cls=Command, short_help=SHORT_HELP)
@published_options
@click.option("--se", type=float, help="Summary input: standard error (smd, md).")
@click.option("--sd", type=float, help="Summary input: the outcome's SD (md).")
@outcome_frequency_option("Summary input, or and hr: the outcome's frequency.")
@click.option("--prevalence", type=float, help="Summary input: the outcome's prevalence.")
@click.option("--label", default="Main estimate", show_default=True,
              help="Summary or data input: the estimate's name in the report.")  # fmt: skip
@click.option(
    "--estimates",
    type=click.Path(dir_okay=False),
    help="A table of estimates, one a row: the screen's columns and a label.",
)
@click.option("--data", type=click.Path(dir_okay=False), help="Data input, as for evalue.")
@click.option("--formula", help="Data input: the model formula.")
@click.option("--treatment", help="Data input: the treatment's coefficient name.")
@model_option("Data input: the fit.")
@click.option("--event", help="Data input with --model cox: the event column.")
@click.option("--contrast", type=float, default=1.0, show_default=True,
              help="A continuous treatment: report per this many units.")  # fmt: skip
@click.option("--out", "folder", required=True, type=click.Path(file_okay=False),
              help="The folder to write (created if missing).")  # fmt: skip
def report_cmd(text: Any, scale: Any, estimate: Any, ci: Any, ci_level: Any, se: Any,
               sd: Any, outcome: Any,
               prevalence: Any, label: str, estimates: Any, data: Any, formula: Any,
               treatment: Any, model_kind: Any, event: Any, contrast: float,
               folder: str) -> None:  # fmt: skip
    """Write the robustness section of a manuscript to a folder.

    report.md, a self-contained report.html (figures embedded, nothing fetched), tables.tex,
    the figures as PNG and SVG, and report.json with every number: a supplement table across
    the estimates, a forest-style figure with their E-values, Methods and Results paragraphs,
    each estimate's tables and sentences, the assumptions, the cautions, the references and
    the command that reproduces it.

    \b
    Examples:
      sensitivity report "HR 1.38 (95% CI 1.12-1.70)" --outcome-frequency rare --out report
      sensitivity report --scale rr --estimate 1.5 --ci 1.1 2.0 --out report
      sensitivity report --estimates demo/cohort_estimates.csv --out report
    """
    from sensitivity.output.report import Reproduce, write_report

    show_warnings()
    route, published = summary_route("report", text, scale, estimate, ci)
    routes = [bool(route), bool(estimates), bool(data)]
    if sum(routes) != 1:
        raise click.UsageError(
            'give one input: TEXT as published ("HR 1.38 (95% CI 1.12-1.70)"), --scale and '
            "--estimate, --estimates FILE, or --data with --formula, --treatment and --model"
        )
    if scale == "rd":
        raise click.UsageError("--scale rd: a report takes rr, or, hr, smd or md")
    if estimates:
        from sensitivity.reporting import results_from_table

        items = results_from_table(estimates)
    elif data:
        missing = [n for n, v in (("--formula", formula), ("--treatment", treatment),
                                  ("--model", model_kind)) if not v]  # fmt: skip
        if missing:
            raise click.UsageError(f"data input needs {', '.join(missing)} as well")
        from sensitivity.adapters.models import evalue_from_data

        res = evalue_from_data(data, formula, treatment, model_kind, event=event,
                               contrast=contrast, outcome=outcome)  # fmt: skip
        items = [(label, res)]
        if model_kind == "ols":
            from dataclasses import replace

            from sensitivity.adapters.statsmodels import partial_r2_from_data

            pr2 = partial_r2_from_data(data, formula, treatment, contrast=contrast)
            items = [(label, replace(pr2, evalue=res))]
    elif route == "text":
        from sensitivity.adapters.published import evalue_from_text

        res = evalue_from_text(published, scale=scale, ci_level=ci_level, se=se, sd=sd,
                               outcome=outcome, prevalence=prevalence, contrast=contrast,
                               argument="TEXT")  # fmt: skip
        items = [(label, res)]
    else:
        from sensitivity.evalues.core import evalue

        res = evalue(scale, estimate, ci or None, se=se, sd=sd, outcome=outcome,
                     prevalence=prevalence, contrast=contrast,
                     ci_level=0.95 if ci_level is None else ci_level)  # fmt: skip
        items = [(label, res)]
    command = "sensitivity " + shlex.join(_options.INVOCATION or ["report", "..."])
    files = write_report(items, folder, Reproduce(command))
    click.echo(f"Wrote the report to {files['folder']}/ (report.html, report.md, tables.tex, "
               "report.json, figures)", err=True)  # fmt: skip
    for name, result in items:
        e = result.report_parts()[0]
        ci_e = "-" if e.evalue_ci is None else f"{float(e.evalue_ci):.2f}"
        click.echo(f"{name}: E-value {float(e.evalue):.2f} (CI: {ci_e})")


command = report_cmd
