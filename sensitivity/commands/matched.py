"""`sensitivity matched`: Rosenbaum bounds for matched pairs."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import RANGE_HELP, Command, emit, format_options, plot_options

SHORT_HELP = COMMANDS["matched"][1]


@click.command("matched", cls=Command, short_help=SHORT_HELP)
@click.option("--data", type=click.Path(dir_okay=False), help="A file of pairs, one a row.")
@click.option("--treated", help="--data: the treated unit's outcome column.")
@click.option("--control", help="--data: the control unit's outcome column.")
@click.option("--differences", help="--data: a column of treated-minus-control differences.")
@click.option("--discordant", type=int, help="Binary outcome: the number of discordant pairs.")
@click.option(
    "--treated-events",
    type=int,
    help="Binary outcome: discordant pairs in which the treated unit had the event.",
)
@click.option("--gamma", default="1:6:0.5", show_default=True, help=f"Gamma: {RANGE_HELP}.")
@click.option("--alpha", type=float, default=0.05, show_default=True, help="One-sided level.")
@click.option("--method", type=click.Choice(["exact", "normal"]), default="exact",
              show_default=True, help="The exact bound or the large-sample one.")  # fmt: skip
@click.option("--zeros", type=click.Choice(["pratt", "drop"]), default="pratt",
              show_default=True,
              help="Zero differences: ranked and counted as zero (pratt), or dropped.")  # fmt: skip
@click.option("--alternative", type=click.Choice(["auto", "greater", "less"]), default="auto",
              show_default=True,
              help="The one-sided test's direction: treated above control (greater), below "
                   "(less), or the observed effect's (auto).")  # fmt: skip
@click.option(
    "--continuity",
    is_flag=True,
    help="Sign test, normal method: use T - 1/2 (as Rosenbaum's tables print it).",
)
@plot_options("the upper bound on the p-value against Gamma", marks=False)
@format_options
def matched_cmd(data: Any, treated: Any, control: Any, differences: Any, discordant: Any,
                treated_events: Any, gamma: str, alpha: float, method: str, zeros: str,
                alternative: str, continuity: bool, plots: Any, plot_limits: Any,
                fmt: str, outputs: Any) -> None:  # fmt: skip
    """Rosenbaum bounds: the p-value of a matched-pairs test under hidden bias up to Gamma.

    \b
    Examples:
      sensitivity matched --discordant 80 --treated-events 58 --gamma 1:3:0.25
      sensitivity matched --data demo/matched_pairs.csv --treated night_shift_sbp \\
          --control day_shift_sbp --gamma 1:2:0.1
    """
    from sensitivity.matched.core import rosenbaum_bounds
    from sensitivity.tipping.ranges import parse_range

    grid = parse_range(gamma, "gamma")
    counts = discordant is not None or treated_events is not None
    if data and counts:  # one or the other: neither is left unused without a word
        raise click.UsageError(
            "give --data with the pairs, or --discordant and --treated-events (a binary "
            "outcome's counts), not both"
        )
    if not data and (treated or control or differences):
        raise click.UsageError("--treated, --control and --differences name columns of --data; "
                               "give --data too")  # fmt: skip
    if data:
        from sensitivity.adapters.matched import matched_differences

        if differences and (treated or control):
            raise click.UsageError("give --differences, or --treated and --control, not both")
        if not all([differences] if differences else [treated, control]):
            raise click.UsageError("--data needs --treated and --control, or --differences")
        d, left_out = matched_differences(  # reads the file: its errors name file lines
            data, treated=treated, control=control, differences=differences
        )
        if len(left_out):
            rows = ", ".join(str(i + 2) for i in left_out[:20])
            more = f" and {len(left_out) - 20:,} more" if len(left_out) > 20 else ""
            one = len(left_out) == 1
            click.echo(f"Note: {len(left_out):,} {'pair' if one else 'pairs'} with a missing or "
                       f"non-numeric value left out (file {'line' if one else 'lines'} "
                       f"{rows}{more})", err=True)  # fmt: skip
        result = rosenbaum_bounds(differences=d, gamma=grid, alpha=alpha, method=method,
                                  zeros=zeros, missing=len(left_out),
                                  alternative=alternative)  # fmt: skip
    else:
        if discordant is None or treated_events is None:
            raise click.UsageError(
                "give --discordant and --treated-events, or --data with the pairs"
            )
        result = rosenbaum_bounds(discordant=discordant, treated_events=treated_events,
                                  gamma=grid, alpha=alpha, method=method,
                                  continuity=continuity, alternative=alternative)  # fmt: skip
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.matched.figures import matched_figure

        for path in matched_figure(result, plots):
            click.echo(f"Wrote {path}", err=True)


command = matched_cmd
