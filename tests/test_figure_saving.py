"""Issue 26: a figure is laid out once and drawn once in each format, the PNG compressed in a
second thread while the SVG draws. The reference is matplotlib itself: the PNG must be the
bytes its own `savefig` writes for the same figure, and the layout the one its constrained
layout engine gives; a failure leaves no file and no temporary behind."""

from __future__ import annotations

import pytest

from sensitivity.output import figures


def _figure():
    """A small figure with what the families draw: filled levels with a colour bar, a
    legend below, a title and percent ticks (its own scenario, no data)."""
    import numpy as np

    fig, ax = figures.new_figure((5.0, 4.0))
    x = np.linspace(0, 0.5, 41)
    z = np.add.outer(x, 2 * x)
    figures.filled_levels(ax, x, x, z, "Adjusted value", 0.6)
    handles: list = []
    figures.tip_line(ax, x, x, z, 0.6, "estimate", "Reaches the target", handles)
    figures.legend_below(ax, handles)
    figures.percent_axis(ax, "x")
    ax.set_title("A test figure")
    return fig


def _leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if p.name.startswith("."))


def test_the_png_is_the_bytes_matplotlib_writes(tmp_path):
    reference = _figure()
    reference.savefig(tmp_path / "reference.png", format="png")  # matplotlib's own route
    figures.pyplot().close(reference)
    ours = [tmp_path / "ours.png", tmp_path / "ours.svg"]
    assert figures.save_figure(_figure(), ours) == ours
    assert (tmp_path / "ours.png").read_bytes() == (tmp_path / "reference.png").read_bytes()
    assert (tmp_path / "ours.svg").read_text(encoding="utf-8").startswith("<?xml")
    assert _leftovers(tmp_path) == []


def test_every_format_has_the_layout_matplotlib_gives_the_png(tmp_path):
    reference = _figure()
    reference.savefig(tmp_path / "reference.png", format="png")  # lays the axes out
    expected = [b for ax in reference.axes for b in ax.get_position(original=True).bounds]
    figures.pyplot().close(reference)
    fig = _figure()
    figures.lay_out(fig)
    assert fig.get_layout_engine() is None  # savefig will not lay it out (or draw it) again
    got = [b for ax in fig.axes for b in ax.get_position(original=True).bounds]
    assert got == pytest.approx(expected, abs=1e-12)
    figures.pyplot().close(fig)


def test_a_png_that_fails_in_the_second_thread_stops_the_save_and_leaves_nothing(
    tmp_path, monkeypatch
):
    from PIL import Image

    def full_disk(*args, **kwargs):
        raise OSError("No space left on device")

    monkeypatch.setattr(Image.Image, "save", full_disk)
    fig = _figure()
    with pytest.raises(OSError, match="No space left"):
        figures.save_figure(fig, [tmp_path / "f.png", tmp_path / "f.svg"])
    assert not (tmp_path / "f.png").exists()
    assert _leftovers(tmp_path) == []
    assert not figures.pyplot().fignum_exists(fig.number)  # closed all the same


def test_a_single_png_is_written_as_before(tmp_path):
    fig = _figure()
    figures.save_figure(fig, [tmp_path / "only.png"])
    assert (tmp_path / "only.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert _leftovers(tmp_path) == []


def test_the_same_figure_gives_the_same_bytes_in_every_format(tmp_path):
    """A report folder kept under version control changes only where the numbers do:
    no creation date in the SVG or PDF, and the SVG's ids fixed (matplotlib's own
    `svg.hashsalt` and `metadata` settings)."""
    for run in ("a", "b"):
        paths = [tmp_path / f"{run}.png", tmp_path / f"{run}.svg", tmp_path / f"{run}.pdf"]
        figures.save_figure(_figure(), paths)
    for kind in ("png", "svg", "pdf"):
        assert (tmp_path / f"a.{kind}").read_bytes() == (tmp_path / f"b.{kind}").read_bytes()
    assert b"<dc:date>" not in (tmp_path / "a.svg").read_bytes()
    assert b"/CreationDate" not in (tmp_path / "a.pdf").read_bytes()
