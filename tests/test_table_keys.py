"""Issue 19, second re-check: what a table cannot be read without travels with the table.

The matched family's definition of Gamma led the text, HTML and report views but was lost in
Markdown and LaTeX on stdout (tables only). Prose with ``role="key"`` is shown above its
table in the full views and becomes the table's first footnote where only tables are shown.
"""

from __future__ import annotations

import re

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from sensitivity import rosenbaum_bounds
from sensitivity.output.document import Document, prose
from sensitivity.output.tables import Table

DEFINITION = "Gamma is how many times more likely a hidden confounder could make one unit"


def _flat(text: str) -> str:
    return " ".join(re.sub(r"[*\\{}]", " ", text).split())


@settings(max_examples=25, deadline=None)
@given(
    discordant=st.integers(2, 200),
    share=st.floats(0, 1),
    method=st.sampled_from(["exact", "normal"]),
)
def test_every_matched_view_defines_gamma_once(discordant, share, method):
    """Invented counts (a scenario of our own), every format: the definition appears once,
    before the first table's rows in the full views and under it where only tables print."""
    events = int(round(share * discordant))
    r = rosenbaum_bounds(discordant=discordant, treated_events=events, method=method,
                         gamma=np.array([1.0, 2.0]))  # fmt: skip
    doc = r.document()
    for fmt in ("text", "markdown", "latex", "html"):
        for tables_only in (False, True):
            if fmt in ("text", "html") and tables_only:
                continue
            out = _flat(doc.render(fmt, tables_only=tables_only))
            assert out.count(DEFINITION) == 1, (fmt, tables_only)
            assert f"{discordant:,} pairs" in out
    full = _flat(doc.render("text"))
    assert full.index(DEFINITION) < full.index("Worst-case p")


def test_key_prose_joins_the_next_table_only_where_tables_print_alone():
    table = Table(("a", "b"), (("1", "2"),), title="T", footnotes=("After.",))
    doc = Document("D", (prose("Read me first.", role="key"), table, prose("Between.")))
    md = doc.render("markdown", tables_only=True)
    assert "Read me first." in md and md.index("Read me first.") < md.index("After.")
    assert "Between." not in md
    full = doc.render("markdown")
    assert full.count("Read me first.") == 1 and full.index("Read me first.") < full.index("| a")
    assert doc.tables == [table]  # the tables themselves are unchanged
