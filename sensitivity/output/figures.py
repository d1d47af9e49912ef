"""The plumbing of every figure: the project's visual language, shared by every family.

Each family draws its own figures in its `figures.py` with these pieces; this module knows
no family.

Every strength map is drawn the same way: filled levels of the bias-adjusted value with a
colour bar, the lines where the conclusion tips drawn in black and named in a legend below
the plot, scenarios as numbered white markers keyed to the rows of the scenario table, the
observed estimate in the title, and shares (partial R², prevalences) in percent. Labels are
numbers, never free text on the plot, so nothing overlaps or is cut at the edge.

matplotlib is imported here and only here, inside the functions, with the Agg backend, so
no display is needed and one-number commands never pay for it. Vector output embeds its
fonts: TrueType in PDF (fonttype 42), glyphs as paths in SVG.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.errors import InputError

PLOT_FORMATS = (".png", ".svg", ".pdf")
STYLE = {
    "font.family": "DejaVu Sans",
    "font.size": 9,
    "axes.titlesize": 10,
    "axes.labelsize": 9,
    "legend.fontsize": 8,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "pdf.fonttype": 42,
    "ps.fonttype": 42,
    "svg.fonttype": "path",
    "svg.hashsalt": "sensitivity",  # the same ids in every run: the same figure, the same SVG
    "savefig.dpi": 200,
}
#: No creation date in a saved figure: the same figure gives the same bytes on every run.
UNDATED = {"svg": {"Date": None}, "pdf": {"Creator": "sensitivity", "CreationDate": None}}
FILL = "PuOr"  # diverging at the target; readable by colour-blind readers
LINE = {"estimate": ("black", "-", 2.0), "ci": ("black", "--", 1.5)}
Mark = tuple[float, float]


def plot_label(text: str, limit: int = 60) -> str:
    """A user's label as a figure can show it, exactly as text: one line, no control
    characters, at most `limit` characters (a label of 100,000 characters would take
    matplotlib seconds to lay out and fill the page), every character one the figure's font
    has (an emoji or a CJK character would be a missing-glyph warning and an empty box: it
    becomes U+FFFD), and every dollar sign escaped (matplotlib reads the text between two
    as mathematics: "$5 to $10" lost its dollars, and "$\\frac{$" stopped the command)."""
    from .tables import safe_text

    kept = " ".join(safe_text(str(text)).split())
    if len(kept) > limit:
        kept = kept[: limit - 1].rstrip() + "…"
    has = _glyphs()
    kept = "".join(ch if ord(ch) in has else _MISSING for ch in kept)
    return kept.replace("$", r"\$")


_MISSING = "\ufffd"


@functools.lru_cache(maxsize=1)
def _glyphs() -> frozenset[int]:
    """The code points the figures' font draws (its character map)."""
    from matplotlib import font_manager

    path = font_manager.findfont(font_manager.FontProperties(family=str(STYLE["font.family"])))
    return frozenset(font_manager.get_font(path).get_charmap())


def check_plot_path(path: str | Path, argument: str = "plot") -> Path:
    """Refuse an unsupported extension or a missing folder before any work is done."""
    p = Path(path)
    if p.suffix.lower() not in PLOT_FORMATS:
        raise InputError(f"`{argument}` must end in .png, .svg or .pdf; got {p.name!r}", argument)
    if not p.parent.exists():
        raise InputError(f"`{argument}`: folder {str(p.parent)!r} does not exist", argument)
    return p


def pyplot() -> Any:
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def preload() -> None:
    """Import what drawing and saving a figure loads on first use (matplotlib, its Agg and SVG
    writers, contour lines, PNG compression): for a second thread while data are read."""
    pyplot()
    import contourpy  # noqa: F401
    import matplotlib.backends.backend_agg  # noqa: F401
    import matplotlib.backends.backend_svg  # noqa: F401
    from PIL import Image

    Image.preinit()  # the image formats Pillow loads on its first save


def new_figure(figsize: tuple[float, float] = (6.4, 5.6)) -> tuple[Any, Any]:
    """A figure and axes in the project's style (constrained layout)."""
    plt = pyplot()
    plt.rcParams.update(STYLE)
    fig, ax = plt.subplots(figsize=figsize, layout="constrained")
    return fig, ax


def figure_paths(path: str | Path | Sequence[str | Path], argument: str = "plot") -> list[Path]:
    """One path or several, each checked (extension and folder) before anything is drawn."""
    many = [path] if isinstance(path, (str, Path)) else list(path)
    return [check_plot_path(p, argument) for p in many]


def lay_out(fig: Any) -> None:
    """Place the axes once, as saving at the raster resolution would, and keep them there.

    matplotlib's `savefig` with a layout engine draws the figure twice (once unseen to lay it
    out, once for real) in every format; laid out here, each format draws once, and every
    format shows the same layout."""
    engine = fig.get_layout_engine()
    if engine is None or not hasattr(fig.canvas, "get_renderer"):
        return
    plt = pyplot()
    shown, saved = fig.dpi, plt.rcParams["savefig.dpi"]
    fig.dpi = shown if saved == "figure" else saved
    try:
        engine.execute(fig)
    finally:
        fig.dpi = shown
    # no engine at all (not matplotlib's placeholder "none", with which savefig still draws
    # the figure unseen first)
    with plt.rc_context({"figure.autolayout": False, "figure.constrained_layout.use": False}):
        fig.set_layout_engine(None)


def save_figure(fig: Any, paths: Sequence[str | Path]) -> list[Path]:
    """Write `fig` to every path (format by extension), each whole or not at all, and close it.

    A PNG followed by other formats is compressed and written in a second thread while they
    draw (compression leaves Python's lock free); its bytes are those `savefig` writes."""
    pending: list[Any] = []
    try:
        lay_out(fig)
        for k, path in enumerate(paths):
            kind = Path(path).suffix.lstrip(".").lower() or None
            if kind == "png" and k < len(paths) - 1:
                pending.append(_png_in_background(fig, path))
            else:
                _save_whole(fig, path, kind)
    finally:
        try:
            for job in pending:
                job.result()
        finally:
            pyplot().close(fig)
    return [Path(p) for p in paths]


def _save_whole(fig: Any, path: str | Path, kind: str | None) -> None:
    from .atomic import commit, discard, temporary_beside

    temporary = temporary_beside(path)
    try:
        fig.savefig(temporary, format=kind, metadata=UNDATED.get(kind or ""))
        commit(temporary, path)
    except BaseException:
        discard(temporary)
        raise


def _png_in_background(fig: Any, path: str | Path) -> Any:
    """Draw `fig` now as `savefig` draws a PNG (matplotlib's Agg at savefig.dpi); compress and
    write it whole in a second thread. Returns a future: `.result()` waits and raises what
    the writing raised."""
    import io
    from concurrent.futures import Future

    import matplotlib

    dpi = pyplot().rcParams["savefig.dpi"]
    dpi = fig.dpi if dpi == "figure" else dpi
    pixels = io.BytesIO()
    fig.savefig(pixels, format="rgba", dpi=dpi)  # the same drawing as format="png"
    width, height = (int(v * dpi) for v in fig.get_size_inches())
    software = f"Matplotlib version{matplotlib.__version__}, https://matplotlib.org/"
    done: Future = Future()
    if width * height * 4 != pixels.getbuffer().nbytes:  # not expected: Agg sizes it so
        _save_whole(fig, path, "png")
        done.set_result(None)
        return done
    import threading

    def write() -> None:
        try:
            _write_png(pixels.getbuffer(), (width, height), dpi, software, path)
        except BaseException as err:  # raised again by .result(), in the drawing thread
            done.set_exception(err)
        else:
            done.set_result(None)

    threading.Thread(target=write, name="write-png", daemon=True).start()
    return done


def _write_png(pixels: Any, size: tuple[int, int], dpi: float, software: str,
               path: str | Path) -> None:  # fmt: skip
    """RGBA pixels to a PNG file as matplotlib's `imsave` writes them, whole or not at all."""
    from PIL import Image, PngImagePlugin

    from .atomic import commit, discard, temporary_beside

    image = Image.frombuffer("RGBA", size, pixels, "raw", "RGBA", 0, 1)
    info = PngImagePlugin.PngInfo()
    info.add_text("Software", software)
    temporary = temporary_beside(path)
    try:
        image.save(temporary, format="png", pnginfo=info, dpi=(dpi, dpi))
        commit(temporary, path)
    except BaseException:
        discard(temporary)
        raise


def percent_axis(ax: Any, which: str) -> None:
    from matplotlib.ticker import PercentFormatter

    axis = ax.xaxis if which == "x" else ax.yaxis
    low, high = ax.get_xlim() if which == "x" else ax.get_ylim()
    decimals = 0 if high - low >= 0.05 else None
    axis.set_major_formatter(PercentFormatter(1.0, decimals=decimals))


def legend_below(ax: Any, handles: list) -> None:
    if handles:
        longest = max(len(h.get_label()) for h in handles)
        ncols = 1 if longest > 42 else 2 if longest > 26 else 3
        ax.legend(
            handles=handles,
            loc="upper center",
            bbox_to_anchor=(0.5, -0.13),
            ncols=min(ncols, len(handles)),
            frameon=False,
        )


def numbered_markers(ax: Any, points: Sequence[Mark], start: int = 1) -> None:
    """Numbered markers: white discs with the row number of the table they belong to (a
    point that is not a number, such as an impossible benchmark, is skipped; its number too)."""
    for i, (x, y) in enumerate(points, start):
        if not (np.isfinite(x) and np.isfinite(y)):
            continue
        ax.plot([x], [y], "o", ms=13, mfc="white", mec="black", mew=1.0, zorder=5, clip_on=False)
        ax.annotate(str(i), (x, y), ha="center", va="center", fontsize=7.5, zorder=6)


def legend_point(marker: str, **style: Any) -> Any:
    """A legend entry for a marker with no line."""
    return pyplot().Line2D([], [], marker=marker, ls="", **style)


def own_marks(ax: Any, marks: Sequence[Mark], handles: list) -> None:
    """The user's own confounders (the reviewer's question): the project's own marker, a
    white-edged deep-teal star, apart from the numbered scenario discs."""
    if not marks:
        return
    xs, ys = zip(*marks, strict=True)
    ax.plot(xs, ys, MARK_SHAPE, ms=12, mfc=MARK_COLOUR, mec="white", mew=0.9, zorder=6,
            clip_on=False)  # fmt: skip
    handles.append(legend_point(MARK_SHAPE, mfc=MARK_COLOUR, mec="white", ms=12,
                                label="Your confounder"))  # fmt: skip


#: The marker of a confounder the user names (`--plot-mark`): a deep-teal star.
MARK_SHAPE, MARK_COLOUR = "*", "#00696b"


def filled_levels(
    ax: Any, x: np.ndarray, y: np.ndarray, z: np.ndarray, label: str, center: float
) -> None:
    """Filled levels of z (rows along x) with a colour bar named `label`. The colours
    diverge at `center` (the target), so the side of the target a cell lies on is plain."""
    from matplotlib.colors import TwoSlopeNorm
    from matplotlib.ticker import MaxNLocator

    finite = z[np.isfinite(z)]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    if hi <= lo:
        hi = lo + 1.0
    levels = MaxNLocator(nbins=12).tick_values(lo, hi)
    span = max(abs(hi - center), abs(center - lo), 1e-12)
    norm = TwoSlopeNorm(vcenter=center, vmin=center - span, vmax=center + span)
    filled = ax.contourf(x, y, z.T, levels=levels, cmap=FILL, norm=norm, extend="both")
    bar = ax.figure.colorbar(filled, ax=ax, shrink=0.85, pad=0.02)
    bar.set_label(label)


def tip_line(
    ax: Any,
    x: np.ndarray,
    y: np.ndarray,
    z: np.ndarray,
    level: float,
    key: str,
    label: str,
    handles: list,
) -> None:
    plt = pyplot()
    finite = z[np.isfinite(z)]
    if finite.size and finite.min() <= level <= finite.max():
        color, style, width = LINE[key]
        ax.contour(x, y, z.T, levels=[level], colors=color, linestyles=style, linewidths=width)
        handles.append(plt.Line2D([], [], color=color, ls=style, lw=width, label=label))


def log_ticks(ax: Any, low: float, high: float) -> None:
    """A log x axis labelled with plain numbers (0.8, 1, 1.5, 2), no minor labels."""
    from matplotlib.ticker import FixedLocator, FuncFormatter, NullFormatter, NullLocator

    nice = [0.1, 0.2, 0.3, 0.5, 0.67, 0.8, 1, 1.25, 1.5, 2, 3, 5, 10, 20, 50, 100, 1e3, 1e4]
    if not (np.isfinite(low) and np.isfinite(high) and 0 < low < high):
        raise ValueError(f"log_ticks needs 0 < low < high, both finite; got {low}, {high}")
    if high / low > 1e5:  # powers of ten where the nice values would crowd or run out
        nice = [10.0**k for k in range(int(np.floor(np.log10(low))),
                                       int(np.ceil(np.log10(high))) + 1, 2)]  # fmt: skip
    ax.set_xscale("log")
    ax.set_xlim(low, high)
    # keep ticks far enough apart that their labels cannot run together ("1.251.5" on a
    # narrow panel): about 0.45 inch of axis between neighbours
    box = ax.get_position()
    width = max(box.width * ax.figure.get_figwidth(), 0.5)
    gap = 0.45 / width * (np.log10(high) - np.log10(low))
    ticks: list[float] = []
    for v in (v for v in nice if low <= v <= high):
        if not ticks or np.log10(v) - np.log10(ticks[-1]) >= gap:
            ticks.append(v)
    ax.xaxis.set_major_locator(FixedLocator(ticks))
    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}"))
    ax.xaxis.set_minor_locator(NullLocator())
    ax.xaxis.set_minor_formatter(NullFormatter())
