"""The simulation family's figure: the distribution of bias-adjusted estimates."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from ..common.levels import level_text
from ..common.scales import RATIO_SCALES
from ..output.figures import figure_paths, legend_below, new_figure, save_figure


def simulation_figure(result: Any, path: str | Path | Sequence[str | Path]) -> list[Path]:
    """The distribution of bias-adjusted estimates (systematic, and with random error), with
    the observed estimate, its interval and the target marked."""
    paths = figure_paths(path)
    fig, ax = new_figure()
    ratio = result.scale in RATIO_SCALES
    values = [np.log(result.sample_total), np.log(result.sample)] if ratio else [
        result.sample_total, result.sample]  # fmt: skip
    lo = min(float(np.percentile(v, 0.5)) for v in values)
    hi = max(float(np.percentile(v, 99.5)) for v in values)
    bins = np.linspace(lo, hi, 80)
    ax.hist(values[0], bins=bins, color="#c9c9c9", label="With random error", density=True)
    ax.hist(values[1], bins=bins, histtype="step", color="black", lw=1.8,
            label="Systematic error only", density=True)  # fmt: skip
    f = np.log if ratio else (lambda v: v)
    ax.axvline(f(result.estimate), color="black", lw=1.2, ls="--", label="Observed estimate")
    ax.axvspan(f(result.ci[0]), f(result.ci[1]), color="#4c72b0", alpha=0.12,
               label=f"Observed {level_text(result.ci_level)} CI")  # fmt: skip
    ax.axvline(
        f(result.target), color="#d62728", lw=1.2, ls=":", label=f"Target ({result.target:g})"
    )
    if ratio:
        from matplotlib.ticker import FuncFormatter

        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{np.exp(v):.3g}"))
        ax.set_xlabel("Bias-adjusted estimate (log axis)")
    else:
        ax.set_xlabel("Bias-adjusted estimate")
    ax.set_ylabel("Density")
    ax.set_yticks([])
    ax.set_title(f"Probabilistic bias analysis ({result.draws - result.discarded:,} draws, "
                 f"seed {result.seed})")  # fmt: skip
    legend_below(ax, ax.get_legend_handles_labels()[0])
    save_figure(fig, paths)
    return paths
