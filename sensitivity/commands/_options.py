"""Options every command shares, and `emit`, which prints a result in the chosen format."""

from __future__ import annotations

import contextlib
import re
import sys
from collections.abc import Callable, Iterator, Mapping
from pathlib import Path
from typing import Any

import click

from sensitivity.common.errors import SensitivityWarning, one_line

from ._typed import (
    Named,
    _refuse_non_finite,
    _refuse_overwriting_inputs,
    _refuse_repeats,
    _typed,
    namer,
)

FORMATS = ("text", "json", "csv", "markdown", "latex")
#: The arguments of the running command line (set by cli.py), for a report to quote.
INVOCATION: list[str] = []
_NEGATIVE = re.compile(r"^-(\d|\.\d)")
#: Options of earlier versions, and what replaced them.
RENAMED = {"--rare": "--outcome-frequency rare", "--common": "--outcome-frequency common"}
_MARK = "\x00"  # prefixes a positional negative number while click parses the options


class Number(click.ParamType):
    """A float that may be negative where it stands as a positional argument."""

    name = "number"

    def convert(self, value: Any, param: Any, ctx: Any) -> float:
        if isinstance(value, float):
            return value
        text = str(value).removeprefix(_MARK)
        try:
            return float(text)
        except ValueError:
            self.fail(f"{text!r} is not a number", param, ctx)


class Command(click.Command):
    """A command whose positional arguments may be negative numbers (an SMD of -0.4) while
    an unknown or misspelt option is still an error that names it.

    Bad input names the option as the user typed it: an `InputError` carries the Python
    argument it is about (`ci_level`), and the command renders it as its option (`--ci-level`,
    or `-o` where the user typed the short alias). `names` maps a Python argument that is not
    its option's name: to an option (``{"lam": "--lambda"}``) or to one value of a
    multi-value option (``{"cd2": ("--strength", 2)}``, "the second value of `--strength`");
    a command adds names that depend on its input with `name_arguments`."""

    def __init__(self, *args: Any, names: Mapping[str, Named] | None = None, **kwargs: Any):
        super().__init__(*args, **kwargs)
        self.names: dict[str, Named] = dict(names or {})

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        takes = {}
        for param in self.params:
            if isinstance(param, click.Option):
                n = 0 if param.is_flag or param.count else param.nargs
                for name in param.opts + param.secondary_opts:
                    takes[name] = n
        out: list[str] = []
        skip = 0
        for token in args:
            if skip:
                skip -= 1
            elif token in takes:
                skip = takes[token]
            elif token == "--":
                out.extend(args[len(out) :])
                break
            elif _NEGATIVE.match(token):
                token = _MARK + token
            out.append(token)
        from sensitivity.common.errors import InputError

        _refuse_repeats(self, args)
        ctx.meta["typed"] = _typed(self, args)
        try:
            rest = super().parse_args(ctx, out)
        except InputError as err:  # from an option's callback (a --plot path, say)
            raise type(err)(err.render(namer(self, ctx))) from err.__cause__
        except click.BadParameter as err:  # click's own: name the option as typed
            if err.param is not None and err.param.name in ctx.meta["typed"]:
                err.param_hint = repr(ctx.meta["typed"][err.param.name])
            raise
        except click.NoSuchOption as err:
            if err.option_name in RENAMED:
                raise click.UsageError(
                    f"No such option {err.option_name!r}; use {RENAMED[err.option_name]}"
                ) from None
            raise
        _refuse_non_finite(self, ctx)
        _refuse_overwriting_inputs(self, ctx)
        _refuse_format_against_extension(ctx)
        _refuse_plot_settings_without_plot(ctx)
        return rest

    def invoke(self, ctx: click.Context) -> Any:
        from sensitivity.common.errors import InputError

        _load_numpy(self, ctx)
        try:
            return super().invoke(ctx)
        except InputError as err:
            # the library names its Python argument (`ci_level`); the user typed --ci-level
            raise type(err)(err.render(namer(self, ctx))) from err.__cause__


#: Figure settings a command's figures do not take (each was accepted and ignored).
PLOT_SETTINGS_NOT_TAKEN = {
    "pool": ("plot_limits", "plot_marks"),
    "screen": ("plot_marks",),
    "simulate": ("plot_limits",),
    "stability": ("plot_limits",),
    "matched": ("plot_limits",),
}


def _refuse_plot_settings_without_plot(ctx: click.Context) -> None:
    """A figure setting the command's figures do not take, or one given without --plot:
    either way nothing would be drawn as asked, and nothing said."""
    params = ctx.params
    if "plots" not in params:
        return
    settings = (("plot_limits", "--plot-limits"), ("plot_marks", "--plot-mark"))
    for name, option in settings:
        if params.get(name) and name in PLOT_SETTINGS_NOT_TAKEN.get(str(ctx.command.name), ()):
            raise click.UsageError(f"{option} does not apply to {ctx.command.name}")
    if params.get("plots"):
        return
    for name, option in settings:
        if params.get(name):
            raise click.UsageError(f"{option} is a setting of the figure: give --plot FILE with it")


def _load_numpy(command: click.Command, ctx: click.Context) -> None:
    """Load numpy, with OpenBLAS held to one thread where the command multiplies no large
    matrices: summary input (no `--data`), and matched pairs. (The screen holds it itself,
    while its first pieces are read.)"""
    if command.name == "screen":
        return
    if ctx.params.get("data") is not None and command.name != "matched":
        return
    with blas_held_to_one():
        import numpy  # noqa: F401


@contextlib.contextmanager
def blas_held_to_one(wanted: bool = True) -> Iterator[None]:
    """numpy loaded inside this block starts OpenBLAS with one thread. OpenBLAS starts a
    thread a core while numpy loads, and they spin: on this two-core machine a one-number
    command took 1.45x as long with them (paired runs, issue 26). Nothing is set where the
    user chose a number, where numpy is loaded already, or unless `wanted`; the setting is
    gone from the environment after the block (not passed on to other processes)."""
    import os

    hold = wanted and "numpy" not in sys.modules and "OPENBLAS_NUM_THREADS" not in os.environ
    if hold:
        os.environ["OPENBLAS_NUM_THREADS"] = "1"
    try:
        yield
    finally:
        if hold:
            del os.environ["OPENBLAS_NUM_THREADS"]


#: Above this many rows JSON is written compact and streamed (people do not read it).
COMPACT_ROWS = 10_000
RANGE_HELP = "a value or START:STOP:STEP (STOP included when the steps reach it)"


#: Output formats by file extension (`--output` picks the format from the name).
EXTENSIONS = {
    ".json": "json",
    ".csv": "csv",
    ".md": "markdown",
    ".markdown": "markdown",
    ".tex": "latex",
    ".txt": "text",
    ".html": "html",
}


#: Formats as the messages name them.
_SHOWN_FORMATS = {"text": "text", "json": "JSON", "csv": "CSV", "markdown": "Markdown",
                  "latex": "LaTeX", "html": "HTML", "tsv": "TSV", "parquet": "Parquet",
                  "excel": "Excel"}  # fmt: skip


def _refuse_format_against_extension(ctx: click.Context) -> None:
    """A --format given on the command line must be the format an --output file gets from its
    extension: `--format json -o x.csv` would write CSV and print nothing, with neither the
    JSON asked for nor a word. (Not given, --format is only the fallback for an extension that
    names no format; screen's table files by extension are CSV, TSV, JSON, Parquet or Excel.)"""
    from click.core import ParameterSource

    if "fmt" not in ctx.params or ctx.get_parameter_source("fmt") != ParameterSource.COMMANDLINE:
        return
    fmt = ctx.params["fmt"]
    typed = ctx.meta.get("typed") or {}
    for name in ("outputs", "output"):
        value = ctx.params.get(name)
        for path in value if isinstance(value, (tuple, list)) else (value,):
            if not path:
                continue
            suffix = Path(str(path)).suffix.lower()
            if name == "output":  # the screen's table writer
                from sensitivity.output.streams import TABLE_FORMATS

                kind = TABLE_FORMATS.get(suffix)
            else:
                kind = EXTENSIONS.get(suffix)
            if kind is not None and kind != fmt:
                option = typed.get(name, "--output")
                raise click.UsageError(
                    f"`--format` {fmt} contradicts `{option}` {str(path)!r}, which is "
                    f"{_SHOWN_FORMATS.get(kind, kind)} by its extension; a file's format "
                    "comes from its extension: drop --format or change the extension"
                )


def _check_outputs(ctx: click.Context, param: click.Parameter, value: tuple) -> tuple:
    """Refuse a missing folder (or a symbolic link that cannot be written through) before any
    work is done."""
    if not value:
        return value
    from sensitivity.output.atomic import target_problem

    for path in value:
        if path == "-":  # stdout, as the convention has it
            continue
        problem = target_problem(path)
        if problem is not None:
            raise click.BadParameter(problem, ctx, param)
    return value


def format_options(func: Callable) -> Callable:
    """--format and --output (repeatable; each file's format from its extension)."""
    func = click.option(
        "--output",
        "-o",
        "outputs",
        multiple=True,
        type=click.Path(dir_okay=False, writable=True),
        callback=_check_outputs,
        help="Write the result to FILE instead of stdout ('-' for stdout); repeatable. The "
        "format comes from the extension (.json .csv .md .tex .txt .html), else from --format "
        "(a --format that names another format than the extension is an error).",
    )(func)
    return click.option(
        "--format",
        "fmt",
        type=click.Choice(FORMATS),
        default="text",
        show_default=True,
        help="text for reading; json/csv for scripts; markdown/latex to paste into a manuscript.",
    )(func)


def plot_options(what: str, marks: bool = True) -> Callable:
    """--plot (repeatable), --plot-limits and --plot-mark, shared by every figure (without
    --plot-mark where the figure marks no confounder of the user's choice)."""

    def decorate(func: Callable) -> Callable:
        if not marks:
            return _plot_path_and_limits(func, what)
        func = click.option(
            "--plot-mark",
            "plot_marks",
            nargs=2,
            type=float,
            multiple=True,
            metavar="X Y",
            help="Mark a confounder of your choice on the figure (repeatable), in the axes' "
            "units (partial R² and prevalences as shares: 0.05 for 5%).",
        )(func)
        return _plot_path_and_limits(func, what)

    return decorate


def _plot_path_and_limits(func: Callable, what: str) -> Callable:
    """--plot and --plot-limits."""
    func = click.option(
        "--plot-limits",
        nargs=2,
        type=float,
        default=None,
        metavar="X_MAX Y_MAX",
        help="Upper limits of the figure's axes (default: the region where the "
        "conclusion changes).",
    )(func)
    return click.option(
        "--plot",
        "plots",
        multiple=True,
        type=click.Path(dir_okay=False),
        callback=lambda ctx, param, value: _check_plots(value),
        help=f"Write {what} (.png, .svg or .pdf; repeatable, one figure drawn once).",
    )(func)


def _check_plots(value: tuple) -> tuple:
    check_plot(*value)
    return value


def ci_option(help_text: str = "Confidence limits on the same scale as the estimate.") -> Callable:
    return click.option(
        "--ci", nargs=2, type=float, default=None, metavar="LOWER UPPER", help=help_text
    )


def target_option(help_text: str) -> Callable:
    return click.option("--target", type=float, default=None, help=help_text)


def plot_option(help_text: str) -> Callable:
    return click.option("--plot", type=click.Path(dir_okay=False), help=help_text)


def confounder_option(help_text: str) -> Callable:
    """--confounder RR_TREATMENT RR_OUTCOME (repeatable): a hypothetical confounder."""
    return click.option(
        "--confounder",
        "confounders",
        nargs=2,
        type=float,
        multiple=True,
        metavar="RR_TREATMENT RR_OUTCOME",
        help=help_text,
    )


def outcome_frequency_option(help_text: str) -> Callable:
    """--outcome-frequency rare|common (or, hr)."""
    return click.option(
        "--outcome-frequency",
        "outcome",
        type=click.Choice(["rare", "common"], case_sensitive=False),
        default=None,
        help=help_text,
    )


#: The fits `--model` names (the statsmodels routes of adapters.models).
MODEL_KINDS = ("ols", "logit", "poisson", "negbin", "cox")


def model_option(help_text: str, default: str | None = None) -> Callable:
    """--model ols|logit|poisson|negbin|cox: the fit for data input."""
    return click.option(
        "--model",
        "model_kind",
        type=click.Choice(MODEL_KINDS),
        default=default,
        show_default=default is not None,
        help=help_text,
    )


ERRORS_HELP = (
    "Data input: the standard errors of the fit: classical, hc0, hc1, hc2, hc3 (hc1-hc3 for "
    "ols only) or cluster:COLUMN. Default: hc0 for a poisson fit of a 0/1 outcome (modified "
    "Poisson, Zou 2004), classical otherwise. The output names the choice."
)


def errors_option(f: Callable) -> Callable:
    """--errors: the standard errors of a fit made from data."""
    return click.option("--errors", metavar="TYPE", default=None, help=ERRORS_HELP)(f)


ENGINES = ("local", "dask", "spark")


def engine_option(what: str) -> Callable:
    """`--engine local|dask|spark`: where a Parquet dataset folder is read."""
    return click.option(
        "--engine",
        type=click.Choice(ENGINES),
        default="local",
        show_default=True,
        help=f"Where {what} runs: on this machine, or on Dask or Spark (Parquet file or "
        "dataset folder; needs the dask or spark extra). Spark runs where spark-submit "
        "points it, else locally; Dask on DASK_SCHEDULER_ADDRESS if set, else threads here.",
    )


def exclusive(*options: tuple[str, object]) -> None:
    """A usage error naming both options when two that cannot go together are given."""
    given = [name for name, value in options if value is not None]
    if len(given) > 1:
        raise click.UsageError(f"{' and '.join(given)} cannot be used together; give one")


def check_plot(*paths: str | None) -> None:
    """Refuse a bad --plot path before any work is done (the figures module is imported only
    when there is a path to check: a one-number command without --plot starts without it)."""
    if not any(paths):
        return
    from sensitivity.output.atomic import check_target
    from sensitivity.output.figures import check_plot_path

    for path in paths:
        if path:
            check_plot_path(path)
            check_target(path, "plot")


def show_warnings() -> None:
    """Package warnings as one `Warning:` line each on stderr (never a traceback)."""
    import warnings

    def show(message, category, filename, lineno, file=None, line=None):
        click.echo(f"Warning: {one_line(message)}", err=True)  # it may name a label

    warnings.showwarning = show
    warnings.simplefilter("always", SensitivityWarning)


def _json(result: Any, sink: Any) -> None:
    from sensitivity.output.writers import json_rows, write_json

    rows = getattr(result, "n_rows", 1)
    streamed = hasattr(result, "row_layout") and rows > COMPACT_ROWS
    # the rows start being built (in other threads) while the document is made
    stream = json_rows(result.columns(), result.row_layout()) if streamed else None
    said = result.document().sentences
    extra = [("sentence", said[0]), ("sentences", said)] if said else []
    if streamed:
        head = result.json_head()
        items = [*head.items(), ("rows", stream), *extra]
        write_json(items, sink, indent=False)
    else:
        write_json([*result.to_dict().items(), *extra], sink, indent=True)


def _write(result: Any, fmt: str, sink: Any) -> None:
    if fmt == "json":
        _json(result, sink)
    elif fmt == "csv":
        from sensitivity.output.writers import columns_to_csv

        columns_to_csv(result.columns(), sink)
    elif fmt == "html":
        from sensitivity.output.document import html_page

        sink.write(html_page(result.document()).encode("utf-8"))
    else:
        body = result.document().render(fmt, tables_only=fmt in ("markdown", "latex"))
        sink.write((body + "\n").encode("utf-8"))
    sink.flush()


def emit(result: Any, fmt: str, outputs: tuple[str, ...] | str | None) -> None:
    """Print `result` in `fmt`, or write it to each of `outputs` (format by extension); in
    machine formats the sentence and cautions go to stderr."""
    import sys

    if isinstance(outputs, str):
        outputs = (outputs,)
    formats = []
    if not outputs:
        _write(result, fmt, sys.stdout.buffer)
        formats.append(fmt)
    for path in outputs or ():
        if path == "-":  # `-o -`: stdout, in --format (not a file named "-")
            _write(result, fmt, sys.stdout.buffer)
            formats.append(fmt)
            continue
        chosen = EXTENSIONS.get(Path(path).suffix.lower(), fmt)
        from sensitivity.output.atomic import replacing

        with replacing(path) as sink:  # whole or not at all
            _write(result, chosen, sink)
        click.echo(f"Wrote {one_line(path)}", err=True)
        formats.append(chosen)
    if "text" not in formats and any(f in ("csv", "markdown", "latex") for f in formats):
        document = result.document()
        for line in document.sentences + [f"Note: {n}" for n in result.all_notes()]:
            click.echo(one_line(line), err=True)
