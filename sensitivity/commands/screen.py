"""`sensitivity screen FILE`: many published results at once."""

from __future__ import annotations

import sys
from pathlib import Path
from typing import Any

import click

from sensitivity.commands import COMMANDS

from ._options import (
    FORMATS,
    Command,
    blas_held_to_one,
    confounder_option,
    engine_option,
    plot_options,
)

SHORT_HELP = COMMANDS["screen"][1]


def _column_map(values: tuple[str, ...]) -> dict[str, str]:
    mapping: dict[str, str] = {}
    for value in values:
        for item in value.split(","):
            if not item.strip():
                continue
            if "=" not in item:
                raise click.BadParameter(
                    f"{item!r} must be NAME=COLUMN (e.g. estimate=HR)", param_hint="--columns"
                )
            name, column = (part.strip() for part in item.split("=", 1))
            if mapping.get(name, column) != column:  # the last would win, silently
                raise click.BadParameter(
                    f"{name} is mapped twice ({mapping[name]}, {column}); give it once",
                    param_hint="--columns",
                )
            mapping[name] = column
    return mapping


@click.command("screen", cls=Command, short_help=SHORT_HELP)
@click.argument("file", type=click.Path())
@engine_option("the screen")
@click.option(
    "--columns",
    "column_map",
    multiple=True,
    metavar="NAME=COLUMN",
    help="Your column names: estimate=HR,lower=LCL,upper=UCL (repeatable or comma-separated).",
)
@click.option(
    "--from-text",
    metavar="COLUMN",
    help="Read each row's estimate, interval and (where it names one) scale from this "
    "free-text column, e.g. 'HR 0.72 (0.60-0.86)'.",
)
@confounder_option(
    "Add, for every row, whether a confounder this strong could explain the estimate "
    "and the interval away (repeatable)."
)
@click.option(
    "--threshold",
    type=float,
    help="Report the share of results whose interval E-value is below this (no threshold is "
    "a pass mark; choose it for your question).",
)
@click.option(
    "--alpha", type=float, default=0.05, show_default=True, help="Level for regression rows."
)
@click.option(
    "--output",
    "-o",
    type=click.Path(dir_okay=False),
    help="Write the screened table: .csv, .tsv, .parquet, .xlsx or .json.",
)
@click.option(
    "--flagged",
    type=click.Path(dir_okay=False),
    help="Also write the flagged rows alone (with their reasons in `error`): .csv, .tsv, "
    ".parquet, .xlsx or .json.",
)
@click.option(
    "--delimiter",
    type=click.Choice(["auto", ",", ";", "tab"]),
    default="auto",
    show_default=True,
    help="Between the cells of a text file: auto detects a European file (';' between cells, "
    "',' in decimals) from its header and first lines.",
)
@click.option(
    "--format",
    "fmt",
    type=click.Choice(FORMATS),
    default="text",
    show_default=True,
    help="Without --output: csv or json puts the screened table on stdout; text, markdown "
    "or latex the summary. With --output the file's extension decides (a --format that "
    "names another format is an error).",
)
@click.option(
    "--pool",
    "pool_threshold",
    type=float,
    metavar="Q",
    help="Also pool the screened studies (random effects, Paule-Mandel) and show how much "
    "common bias would bring the share of true effects beyond Q down to 10%; JSON adds it "
    "under 'pool'. The pool command has the full options.",
)
@plot_options("the distribution of E-values (estimate and interval) by scale")
def screen_cmd(
    file: str,
    engine: str,
    column_map: tuple[str, ...],
    from_text: str | None,
    confounders: tuple,
    threshold: float | None,
    alpha: float,
    output: str | None,
    flagged: str | None,
    delimiter: str,
    fmt: str,
    plots: tuple[str, ...],
    plot_limits: Any,
    plot_marks: Any,
    pool_threshold: float | None = None,
) -> None:
    """Screen a table of published results (CSV, TSV, Excel or Parquet), one row each.

    Every row comes out, in input order, with its E-values (and, for regression rows with
    se and dof, partial R² and robustness values); a bad row gets the reason in `error`
    and never stops the run. Columns read: scale, estimate, lower, upper, and where a row
    needs them se, dof, sd, outcome (rare/common), prevalence, contrast, target, and for
    risk differences cases_treated, total_treated, cases_control, total_control. Text cells
    written to CSV and Excel are defused against spreadsheet formulas. Files are read a piece
    at a time, so memory stays flat; on a terminal, a progress bar shows on stderr. FILE may
    be a Parquet dataset folder, screened here or on Dask or Spark (--engine): each
    partition is screened where it lies, its rows kept in order, and the summary added up.

    \b
    Examples:
      sensitivity screen demo/published_results.csv --output screened.csv
      sensitivity screen demo/published_results.csv --from-text result \\
          --confounder 2 2 --threshold 1.5 --plot evalues.png --output screened.parquet
      sensitivity screen demo/pooled_studies.csv --from-text result --pool 1.1
      sensitivity screen demo/published_results_parquet --engine dask --output screened.csv
    """
    import atexit
    import gc

    # At exit the collector's last pass would visit every object the imports made (a tenth of
    # a second of CPU, measured): frozen first, they are left to the process's end
    atexit.unregister(gc.freeze)
    atexit.register(gc.freeze)
    # the first pieces of the file are parsed (polars, in a second thread) while the rest of
    # the screen is imported and the options are checked

    from sensitivity.adapters.files import Share, read_frames, resolve_delimiter
    from sensitivity.common.overlap import read_ahead

    # The screen calls no BLAS routine. Left to itself, OpenBLAS starts a thread per core as
    # numpy loads, and they spin for a while: 0.05 s of CPU taken from the reader and writer
    # (measured, issue 26). Held to one thread while numpy loads here, unless the user chose
    # a number or numpy is already loaded; the setting is not passed on to other processes.
    # Not with --pool, whose sums may use BLAS: its numbers stay those of any thread count.
    with blas_held_to_one(pool_threshold is None):
        share = Share()
        folder = Path(file).is_dir()
        mark = None if folder or engine != "local" else resolve_delimiter(file, delimiter)
        if engine == "local" and folder:
            from sensitivity.screen.engines import folder_frames

            frames = read_ahead(folder_frames(file))
        elif engine == "local":
            frames = read_ahead(read_frames(file, "file", share=share, delimiter=mark or "auto"))
        import numpy  # noqa: F401 - loaded now (while the first pieces are read), held to one

    from sensitivity.common.errors import InputError, one_line
    from sensitivity.output.atomic import check_target
    from sensitivity.screen.core import AS_READ_TEXT, Options, computed_names
    from sensitivity.screen.result import Tally
    from sensitivity.screen.stream import screen_frames
    from sensitivity.screen.write import check_table_path, table_writer

    if plot_marks:
        raise click.UsageError("--plot-mark does not apply to screen")
    for target, argument in ((output, "output"), (flagged, "flagged")):
        if target is not None:
            try:
                check_table_path(target)
                check_target(target, "output")  # a symbolic link is written through
            except InputError as err:  # the writer's check knows one `output`
                raise err.renamed({"output": argument}) from None
    if plot_limits is not None and not plot_limits[0] > 1:  # the E-value axis starts at 1
        raise InputError(f"`limits`: the E-value axis must end above 1; got {plot_limits[0]:g}",
                         "limits")  # fmt: skip
    if (
        flagged is not None
        and output is not None
        and Path(flagged).resolve() == Path(output).resolve()
    ):
        raise click.UsageError("--flagged and --output must be different files")
    if threshold is not None and not threshold >= 1:
        raise InputError(
            f"`threshold` must be at least 1 (an E-value); got {threshold:g}", "threshold"
        )
    pooled = None
    if pool_threshold is not None and (engine != "local" or Path(file).is_dir()):
        raise click.UsageError("--pool reads a single file; screen a folder or an engine's "
                               "data without it")  # fmt: skip
    if pool_threshold is not None:  # pooled first: a table that cannot be pooled stops here
        from sensitivity.adapters.files import read_table
        from sensitivity.pooling.data import pool_table

        try:
            pooled = pool_table(
                read_table(file, "file"),
                threshold=pool_threshold,
                columns=_column_map(column_map) or None,
                from_text=from_text,
            )
        except InputError as err:  # the pool's threshold is --pool here (--threshold is ours)
            raise err.renamed({"threshold": "pool"}) from None
    tally = Tally(threshold=threshold, n_confounders=len(confounders))
    options: dict[str, Any] = {"columns": _column_map(column_map), "from_text": from_text,
               "confounders": confounders, "alpha": alpha}  # fmt: skip
    progress = sys.stderr.isatty()
    if engine == "local":
        stream = screen_frames(frames, tally=tally, decimal_comma=mark == ";", **options)
    else:
        from sensitivity.adapters.engines import open_with
        from sensitivity.screen.engines import screened_frames

        def partitions(done: int, total: int) -> None:
            click.echo(f"{done:,} of {total:,} partitions screened", err=True)

        data = open_with(file, engine, "file")
        stream = screened_frames(data, engine, tally, progress=partitions, **options)
        progress = False
    # the screen's own text columns (codes, reasons, notes, true/false) never start with a
    # formula character (tests/test_screen.py), so only the input's are defused
    trusted = set(computed_names(Options(confounders=confounders))) - set(AS_READ_TEXT)
    # Parquet keeps the input's column types: those polars infers from the whole text file (a
    # Parquet input's own types pass through as they are). The inference reads the whole file
    # in a thread of its own while the first pieces are screened; each Parquet writer casts
    # its pieces in its own thread, to the types the file's first piece says until the whole
    # file's are known (and writes them again in the rare file where those differ)
    convert = None
    if any(str(t).lower().endswith((".parquet", ".pq")) for t in (output, flagged) if t):
        from sensitivity.output.parquet import warm_up

        warm_up()  # pyarrow's writer imported beside the screen's own start
        if mark:
            from sensitivity.adapters.late_types import LateTypes

            convert = LateTypes(file, mark)

    writer = table_writer(output, fmt, trusted, convert)
    flagged_writer = None if flagged is None else table_writer(flagged, "text", trusted, convert)
    try:
        for batch in stream:
            if writer is not None:
                writer.write(batch)
            if flagged_writer is not None:
                import polars as pl

                flagged_writer.write(batch.filter(pl.col("error") != ""))
            if progress:
                click.echo("\r" + _bar(share.next(), tally.rows), err=True, nl=False)
    except BaseException:
        for open_writer in (writer, flagged_writer):
            if open_writer is not None:
                open_writer.abort()  # nothing half-written is left under the output's name
        raise
    if progress:
        click.echo("", err=True)
    source = click.format_filename(file)
    if mark == ";":
        how = "detected" if delimiter == "auto" else "as --delimiter says"
        source += f" (read as a European file, {how}: ';' between cells, ',' as decimal mark)"
    summary = tally.result(tuple(confounders), source)
    if writer is not None:
        extra = {"summary": summary.to_dict()}
        if pooled is not None:
            extra["pool"] = pooled.to_dict()
        writer.close(extra if writer.kind == "json" else None)
    if output is not None:
        click.echo(f"Wrote {one_line(output)}", err=True)
    if flagged_writer is not None:
        flagged_writer.close(None)
        count = sum(tally.flagged.values())
        click.echo(f"Wrote {count:,} flagged row{'s' * (count != 1)} to {flagged}", err=True)
    document = summary.document()
    if output is None and fmt not in ("csv", "json"):
        click.echo(document.render(fmt, tables_only=fmt in ("markdown", "latex")))
        if fmt != "text":
            click.echo(one_line(document.sentence), err=True)
    else:
        click.echo(one_line(document.sentence), err=True)
    if pooled is not None:
        shown = output is None and fmt not in ("csv", "json")
        if shown:
            click.echo("\n" + pooled.document().render(fmt, tables_only=fmt != "text"))
        if not shown or fmt != "text":
            click.echo(one_line(pooled.sentence()), err=True)
    if plots:
        from sensitivity.screen.figures import screen_figure

        for path in screen_figure(summary, plots, limits=plot_limits):
            click.echo(f"Wrote {path}", err=True)


def _bar(done: float, rows: int, width: int = 30) -> str:
    """A progress bar for stderr: how much of the file is read, and the rows screened."""
    filled = min(int(done * width), width)
    return f"[{'#' * filled}{'.' * (width - filled)}] {done:4.0%}  {rows:,} rows screened"


command = screen_cmd
