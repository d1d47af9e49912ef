"""`sensitivity report`: the robustness section of a manuscript, in one folder."""

from __future__ import annotations

import shlex
from typing import Any

import click

from sensitivity.commands import COMMANDS

from . import _options
from ._options import (
    Command,
    confounder_option,
    errors_option,
    model_option,
    outcome_frequency_option,
    show_warnings,
)
from ._published import published_options, summary_route

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
@errors_option
@click.option("--contrast", type=float, default=1.0, show_default=True,
              help="A continuous treatment: report per this many units.")  # fmt: skip
@click.option("--target", type=float, default=None,
              help="Summary input: the true value to test against (default the null).")  # fmt: skip
@confounder_option("A confounder to set against every estimate: its risk ratios with the "
                   "treatment and the outcome (repeatable).")  # fmt: skip
@click.option("--benchmark", "benchmarks", multiple=True, metavar="COLUMN[:K[:K_OUTCOME]]",
              help="Data input, --model ols: a measured covariate to compare with, and its "
              "multiples (repeatable), as in partial-r2.")  # fmt: skip
@click.option("--benchmark-r2", "benchmark_r2", nargs=3, multiple=True,
              metavar="NAME[:K[:K_OUTCOME]] R2_TREATMENT R2_OUTCOME",
              help="A benchmark from published numbers, as in partial-r2 (regression "
              "estimates: --data with --model ols, or table rows with se and dof).")  # fmt: skip
@click.option("--r2-treatment", multiple=True, type=float,
              help="A hypothetical confounder of a regression coefficient: its partial R² "
              "with the treatment (pairs with --r2-outcome; repeatable).")  # fmt: skip
@click.option("--r2-outcome", multiple=True, type=float,
              help="Its partial R² with the outcome.")  # fmt: skip
@click.option("--out", "folder", required=True, type=click.Path(file_okay=False),
              help="The folder to write (created if missing).")  # fmt: skip
def report_cmd(text: Any, scale: Any, estimate: Any, ci: Any, ci_level: Any, se: Any,
               sd: Any, outcome: Any,
               prevalence: Any, label: str, estimates: Any, data: Any, formula: Any,
               treatment: Any, model_kind: Any, event: Any, errors: Any, contrast: float,
               target: Any, confounders: Any, benchmarks: Any, benchmark_r2: Any,
               r2_treatment: Any, r2_outcome: Any, folder: str) -> None:  # fmt: skip
    """Write the robustness section of a manuscript to a folder.

    report.md, a self-contained report.html (figures embedded, nothing fetched), tables.tex,
    the figures as PNG and SVG, and report.json with every number: a supplement table across
    the estimates, a forest-style figure with their E-values, Methods and Results paragraphs,
    each estimate's tables and sentences, the assumptions, the cautions, the references and
    the command that reproduces it.

    The options of the commands it gathers apply here too: --ci-level, --confounder (set
    against every estimate), --errors (data input), and for a regression coefficient
    --benchmark, --benchmark-r2 and their multiples.

    \b
    Examples:
      sensitivity report "HR 1.38 (95% CI 1.12-1.70)" --outcome-frequency rare --out report
      sensitivity report --scale rr --estimate 1.5 --ci 1.1 2.0 --out report
      sensitivity report --estimates demo/cohort_estimates.csv --confounder 2 2 --out report
      sensitivity report --data demo/harbourside_bp.csv --model ols --treatment commute_min \\
          --formula "sbp ~ commute_min + age + female + smoker + C(shift) + bmi" \\
          --benchmark smoker --benchmark smoker:2 --errors hc1 --contrast 10 --out report
    """
    from sensitivity.output.report import Reproduce, write_report

    show_warnings()
    if not folder.strip():  # "" would be the current folder, written over unasked
        from sensitivity.common.errors import InputError

        raise InputError(f"`--out` must name a folder; got {folder!r}", "--out")
    route, published = summary_route("report", text, scale, estimate, ci)
    routes = [bool(route), bool(estimates), bool(data)]
    if sum(routes) != 1:
        raise click.UsageError(
            'give one input: TEXT as published ("HR 1.38 (95% CI 1.12-1.70)"), --scale and '
            "--estimate, --estimates FILE, or --data with --formula, --treatment and --model"
        )
    if scale == "rd":
        raise click.UsageError("--scale rd: a report takes rr, or, hr, smd or md")
    # an option of another input was accepted and ignored ("--outcome-frequency rare" with a
    # table of estimates, then "the outcome's frequency is needed" of its hr row)
    given = {
        "--se": se is not None, "--sd": sd is not None, "--prevalence": prevalence is not None,
        "--outcome-frequency": outcome is not None, "--label": label != "Main estimate",
        "--contrast": contrast != 1.0, "--formula": formula is not None,
        "--treatment": treatment is not None, "--model": model_kind is not None,
        "--event": event is not None,
    }  # fmt: skip
    taken = {
        "table": ("a table of estimates (each row gives its own: columns se, sd, outcome, "
                  "prevalence, contrast, label)", ()),
        "data": ("data input", ("--outcome-frequency", "--label", "--contrast", "--formula",
                                "--treatment", "--model", "--event")),
        "summary": ("summary input", ("--se", "--sd", "--prevalence", "--outcome-frequency",
                                      "--label", "--contrast")),
    }  # fmt: skip
    what, allowed = taken["table" if estimates else "data" if data else "summary"]
    stray = [flag for flag, on in given.items() if on and flag not in allowed]
    if stray:
        verb = "does" if len(stray) == 1 else "do"
        raise click.UsageError(f"{', '.join(stray)} {verb} not apply to {what}")
    if benchmarks and not (data and model_kind == "ols"):
        raise click.UsageError(
            "--benchmark needs data input with --model ols (a measured covariate of the fit); "
            "from a paper's tables use --benchmark-r2"
        )
    if errors is not None and not data:
        raise click.UsageError("--errors applies to data input (--data ... --model)")
    if target is not None and route is None:
        raise click.UsageError("--target applies to summary input (TEXT, or --scale --estimate)")
    level = 0.95 if ci_level is None else ci_level
    worker = None  # with data input, a second process that draws figures (below)
    try:
        if estimates:
            from sensitivity.reporting import results_from_table

            items = results_from_table(estimates, ci_level=level)
        elif data:
            missing = [n for n, v in (("--formula", formula), ("--treatment", treatment),
                                      ("--model", model_kind)) if not v]  # fmt: skip
            if missing:
                raise click.UsageError(f"data input needs {', '.join(missing)} as well")
            import threading

            from sensitivity.adapters.models import evalue_from_data, ols_report_from_data
            from sensitivity.output.drawing import FigureWorker
            from sensitivity.output.report import preload

            # while the data are read, matplotlib loads here in a second thread and in a second
            # process, which then draws some of the figures while this one draws the others
            worker = FigureWorker()
            loading = threading.Thread(target=preload, name="load-matplotlib", daemon=True)
            loading.start()
            try:
                if model_kind == "ols" and errors in (None, "classical"):  # one pass, both parts
                    items = [(label, ols_report_from_data(
                        data, formula, treatment, contrast=contrast, event=event, alpha=1 - level,
                        benchmarks=benchmarks))]  # fmt: skip
                else:
                    res = evalue_from_data(data, formula, treatment, model_kind, event=event,
                                           contrast=contrast, outcome=outcome, alpha=1 - level,
                                           errors=errors)  # fmt: skip
                    items = [(label, res)]
                    if model_kind == "ols":
                        from dataclasses import replace

                        from sensitivity.adapters.statsmodels import partial_r2_from_data

                        pr2 = partial_r2_from_data(
                            data, formula, treatment, contrast=contrast, alpha=1 - level,
                            benchmarks=benchmarks)  # fmt: skip
                        items = [(label, replace(pr2, evalue=res))]
            finally:
                loading.join()
        elif route == "text":
            from sensitivity.adapters.published import evalue_from_text

            res = evalue_from_text(published, scale=scale, ci_level=ci_level, se=se, sd=sd,
                                   outcome=outcome, prevalence=prevalence, contrast=contrast,
                                   target=target, argument="TEXT")  # fmt: skip
            items = [(label, res)]
        else:
            from sensitivity.evalues.core import evalue

            res = evalue(scale, estimate, ci or None, se=se, sd=sd, outcome=outcome,
                         prevalence=prevalence, contrast=contrast, ci_level=level,
                         target=target)  # fmt: skip
            items = [(label, res)]
        items = _with_options(items, confounders, benchmark_r2)
        if r2_treatment or r2_outcome:
            items = _with_strengths(items, r2_treatment, r2_outcome)
        command = "sensitivity " + shlex.join(_options.INVOCATION or ["report", "..."])
        from sensitivity.common.levels import level_text
        from sensitivity.output.tables import safe_text

        files = write_report(items, folder, Reproduce(command), worker)
    finally:
        if worker is not None:
            worker.close()
    click.echo(f"Wrote the report to {files['folder']}/ (report.html, report.md, tables.tex, "
               "report.json, figures)", err=True)  # fmt: skip
    for name, result in items:
        e = result.report_parts()[0]
        ci_e = (
            "no interval"
            if e.evalue_ci is None
            else f"for the {level_text(e.ci_level)} CI: {float(e.evalue_ci):.2f}"
        )
        # the label as one safe line: a newline, carriage return or terminal escape in it is
        # the user's text, not an instruction to the terminal (issue 19)
        click.echo(f"{safe_text(name)}: E-value {float(e.evalue):.2f} ({ci_e})")


def _with_options(items: list[tuple[str, Any]], confounders: Any,
                  benchmark_r2: Any) -> list[tuple[str, Any]]:  # fmt: skip
    """Confounders on every E-value; published benchmarks on every regression coefficient."""
    from dataclasses import replace

    from sensitivity.evalues.result import EValueResult
    from sensitivity.partial_r2.result import PartialR2Result

    out = []
    for name, result in items:
        if confounders:
            rr_t, rr_y = zip(*confounders, strict=True)
            if isinstance(result, EValueResult):
                result = result.with_confounders(rr_t, rr_y)
            elif isinstance(result, PartialR2Result) and result.evalue is not None:
                result = replace(result, evalue=result.evalue.with_confounders(rr_t, rr_y))
        if benchmark_r2 and isinstance(result, PartialR2Result):
            from sensitivity.partial_r2.published import apply_text_benchmarks

            result = apply_text_benchmarks(result, benchmark_r2)
        out.append((name, result))
    if benchmark_r2 and not any(isinstance(r, PartialR2Result) for _, r in out):
        raise click.UsageError(
            "--benchmark-r2 applies to a regression coefficient: data input with --model ols, "
            "or --estimates rows with se and dof"
        )
    return out


def _with_strengths(items: list[tuple[str, Any]], r2_treatment: Any,
                    r2_outcome: Any) -> list[tuple[str, Any]]:  # fmt: skip
    """Hypothetical confounders of chosen partial R² on every regression coefficient."""
    from sensitivity.partial_r2.core import hypothetical_scenarios
    from sensitivity.partial_r2.result import PartialR2Result

    if len(r2_treatment) != len(r2_outcome):
        raise click.UsageError("--r2-treatment and --r2-outcome come in pairs")
    out = []
    for name, r in items:
        if isinstance(r, PartialR2Result):
            extra = hypothetical_scenarios(r.estimate, r.se, r.dof, list(r2_treatment),
                                           list(r2_outcome), r.alpha)  # fmt: skip
            r = r.with_scenarios(extra)
        out.append((name, r))
    if not any(isinstance(r, PartialR2Result) for _, r in out):
        raise click.UsageError(
            "--r2-treatment and --r2-outcome apply to a regression coefficient: data input "
            "with --model ols, or --estimates rows with se and dof"
        )
    return out


command = report_cmd
