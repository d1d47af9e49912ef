"""The screen's summary in words and a table."""

from __future__ import annotations

from ..common.scales import SCALES
from ..output.document import Block, Document, prose, standard_tail
from ..output.tables import Table, number
from .result import ScreenSummary

_NAMES = {**{c: s.name for c, s in SCALES.items()}, "ols": "regression coefficient"}


def _share(k: int, n: int) -> str:
    return "-" if n == 0 else f"{k / n:.0%} ({k:,} of {n:,})"


def paragraph(s: ScreenSummary) -> str:
    good = s.rows - s.n_flagged
    rows = "row" if s.rows == 1 else "rows"
    text = f"Read {s.rows:,} {rows} from {s.source}: {good:,} screened, {s.n_flagged:,} flagged"
    if s.flagged:
        text += " (" + "; ".join(f"{count:,} × {why}" for why, count in s.flagged.items()) + ")"
    text += "."
    for code, e in s.per_scale.items():
        name = _NAMES.get(code, code)
        text += (
            f" {name.capitalize()}s ({e['rows']:,}): median E-value {number(e['median_evalue'])}"
        )
        if e["with_interval"]:
            text += f", of the interval limit {number(e['median_evalue_ci'])}"
        if s.threshold is not None and e["with_interval"]:
            text += (
                f"; interval E-value below {s.threshold:g} in "
                f"{_share(e['below_threshold'], e['with_interval'])}"
            )
        for i, (a, b) in enumerate(s.confounders):
            text += (
                f"; a confounder with risk ratios {a:g} and {b:g} could explain away the "
                f"estimate in {_share(e['explains_estimate'][i], e['rows'])} and move the "
                f"interval to include the null in {_share(e['explains_ci'][i], e['with_interval'])}"
            )
        if e["regression_rows"]:
            text += f"; {e['regression_rows']:,} with robustness values"
        text += "."
    return text


def table(s: ScreenSummary) -> Table:
    rows = []
    for code, e in s.per_scale.items():
        rows.append(
            (
                _NAMES.get(code, code),
                f"{e['rows']:,}",
                number(e["median_evalue"]),
                number(e["median_evalue_ci"]),
                "-" if e["below_threshold"] is None else _share(e["below_threshold"],
                                                                 e["with_interval"]),
            )
        )  # fmt: skip
    below = (
        "Interval E-value below threshold"
        if s.threshold is None
        else (f"Interval E-value below {s.threshold:g}")
    )
    return Table(
        ("Scale", "Rows", "Median E-value", "Median E-value (interval)", below),
        tuple(rows),
        title="Screened results by scale",
    )


def flagged_table(s: ScreenSummary) -> Table | None:
    """Each reason a row was flagged, with its count and the first rows it applies to."""
    if not s.flagged:
        return None
    rows = []
    for why, count in s.flagged.items():
        first = s.first_rows.get(why, [])
        more = ", ..." if count > len(first) else ""
        rows.append((why, f"{count:,}", ", ".join(f"{r:,}" for r in first) + more))
    return Table(
        ("Why the row was flagged", "Rows", "First rows"),
        tuple(rows),
        title="Flagged rows by reason",
        footnotes=(
            "Row numbers count data rows from 1 (the header is not a row). Each flagged row "
            "keeps its reason in the output's `error` column; --flagged FILE writes those rows "
            "alone.",
        ),
    )


def document(s: ScreenSummary) -> Document:
    text = paragraph(s)
    flagged = flagged_table(s)
    blocks: tuple[Block, ...] = (
        prose(text, role="sentence"),
        table(s),
        *((flagged,) if flagged else ()),
        *standard_tail(s.notes, s.cautions),
    )
    return Document("Screen", blocks)
