"""`sensitivity pool FILE`: confounding in a random-effects meta-analysis."""

from __future__ import annotations

from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import RANGE_HELP, Command, emit, format_options, plot_options

SHORT_HELP = COMMANDS["pool"][1]


def pool_options(func: Any) -> Any:
    """The options `pool` shares with `screen --pool`."""
    func = click.option(
        "--bias-sd",
        type=float,
        default=0.0,
        show_default=True,
        help="Bias that varies between studies: the SD of the log bias factor (must be less "
        "than tau).",
    )(func)
    func = click.option(
        "--method",
        type=click.Choice(["pm", "dl"]),
        default="pm",
        show_default=True,
        help="Heterogeneity estimator: pm Paule-Mandel, dl DerSimonian-Laird (statsmodels).",
    )(func)
    func = click.option(
        "--bias",
        "bias_text",
        metavar="B",
        help=f"Common bias factor(s) at which to show the share: {RANGE_HELP}; default a grid "
        "from 1 to past the answer.",
    )(func)
    func = click.option(
        "--share",
        type=float,
        default=0.10,
        show_default=True,
        help="R: the share of meaningfully strong effects to bring the share down to (your "
        "choice; no value is a pass mark).",
    )(func)
    return click.option(
        "--threshold",
        type=float,
        required=True,
        help="Q: the least meaningful effect on the ratio scale (1.1; 0.9 for a preventive "
        "effect).",
    )(func)


def run_pool(table: Any, *, threshold: float, share: float, bias_text: str | None,
             method: str, bias_sd: float, **reading: Any) -> Any:  # fmt: skip
    """Pool a table with the command line's options (shared with `screen --pool`)."""
    from sensitivity.pooling.data import pool_table

    bias = None
    if bias_text is not None:
        from sensitivity.tipping.core import parse_range

        bias = parse_range(bias_text, "bias")
    return pool_table(table, threshold=threshold, share=share, bias=bias, method=method,
                      bias_sd=bias_sd, **reading)  # fmt: skip


@click.command("pool", cls=Command, short_help=SHORT_HELP)
@click.argument("file", type=click.Path(dir_okay=False))
@pool_options
@click.option(
    "--columns",
    "column_map",
    multiple=True,
    metavar="NAME=COLUMN",
    help="Your column names, as in screen (estimate=HR,lower=LCL,upper=UCL; label=Study; "
    "log_estimate=logRR,se=SE).",
)
@click.option(
    "--from-text",
    metavar="COLUMN",
    help="Read each study's result from this free-text column, e.g. 'RR 1.32 (1.05-1.66)'.",
)
@click.option(
    "--level",
    type=float,
    default=0.95,
    show_default=True,
    help="Level of the intervals in the table, where a row's text does not name one.",
)
@format_options
@plot_options("a forest plot with each study's E-value and the share against the bias")
def pool_cmd(file: str, threshold: float, share: float, bias_text: str | None, method: str,
             bias_sd: float, column_map: tuple[str, ...], from_text: str | None, level: float,
             fmt: str, outputs: tuple[str, ...], plots: tuple[str, ...], plot_limits: Any,
             plot_marks: Any) -> None:  # fmt: skip
    """How much common confounding bias would bring the share of meaningfully strong true
    effects in a random-effects meta-analysis down to R (Mathur & VanderWeele 2020).

    FILE holds one study a row: the screen's columns (scale, estimate, lower, upper, ...),
    a free-text column (--from-text), or log_estimate and se. Every row is kept; rows that
    cannot be pooled are flagged with the reason. A figure path ending in -forest or
    -share draws that figure alone; any other draws both (NAME-forest.png, NAME-share.png).

    \b
    Examples:
      sensitivity pool demo/pooled_studies.csv --from-text result --threshold 1.1
      sensitivity pool demo/pooled_studies.csv --from-text result --threshold 1.1 \\
          --share 0.2 --bias 1:2:0.1 --method dl --format json
    """
    from sensitivity.adapters.files import read_table
    from sensitivity.commands.screen import _column_map

    if plot_marks:
        raise click.UsageError("--plot-mark does not apply to pool")
    table = read_table(file, "file")
    result = run_pool(table, threshold=threshold, share=share, bias_text=bias_text,
                      method=method, bias_sd=bias_sd, columns=_column_map(column_map),
                      from_text=from_text, level=level)  # fmt: skip
    emit(result, fmt, outputs)
    if plots:
        from sensitivity.pooling.figures import draw_for_paths

        for path in draw_for_paths(result, plots):
            click.echo(f"Wrote {path}", err=True)


command = pool_cmd
