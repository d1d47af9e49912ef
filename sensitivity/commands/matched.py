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
@plot_options("the upper bound on the p-value against Gamma")
@format_options
def matched_cmd(data: Any, treated: Any, control: Any, differences: Any, discordant: Any,
                treated_events: Any, gamma: str, alpha: float, method: str, zeros: str,
                alternative: str, continuity: bool, plots: Any, plot_limits: Any,
                plot_marks: Any, fmt: str, outputs: Any) -> None:  # fmt: skip
    """Rosenbaum bounds: the p-value of a matched-pairs test under hidden bias up to Gamma.

    \b
    Examples:
      sensitivity matched --discordant 80 --treated-events 58 --gamma 1:3:0.25
      sensitivity matched --data demo/matched_pairs.csv --treated night_shift_sbp \\
          --control day_shift_sbp --gamma 1:2:0.1
    """
    from sensitivity.common.errors import InputError
    from sensitivity.matched.core import rosenbaum_bounds
    from sensitivity.tipping.core import parse_range

    grid = parse_range(gamma, "gamma")
    if data:
        import numpy as np

        from sensitivity.adapters.files import read_table

        frame = read_table(data, "data")
        if differences and (treated or control):
            raise click.UsageError("give --differences, or --treated and --control, not both")
        cols = [differences] if differences else [treated, control]
        if not all(cols):
            raise click.UsageError("--data needs --treated and --control, or --differences")
        for col in cols:
            if col not in frame.columns:
                raise InputError(f"`data`: no column {col!r}; columns: {', '.join(frame.columns)}")
        import pandas as pd

        values = frame[cols].apply(lambda c: pd.to_numeric(c, errors="coerce"))
        bad = values.isna().any(axis=1).to_numpy()
        if bad.any():
            rows = ", ".join(str(i + 2) for i in np.flatnonzero(bad)[:20])
            click.echo(f"Note: {int(bad.sum())} pairs with a missing or non-numeric value left "
                       f"out (file lines {rows})", err=True)  # fmt: skip
        v = values.to_numpy(float)[~bad]
        d = v[:, 0] if differences else v[:, 0] - v[:, 1]
        result = rosenbaum_bounds(differences=d, gamma=grid, alpha=alpha, method=method,
                                  zeros=zeros, missing=int(bad.sum()),
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
