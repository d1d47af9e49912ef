"""The Document: one result's tables, sentences, notes and cautions, rendered every way.

Each family's `present.document(result)` builds one; text, Markdown, LaTeX and HTML (the
notebook view, and the report) all render the same blocks, so they cannot disagree.
"""

from __future__ import annotations

import html
from collections.abc import Sequence
from dataclasses import dataclass, field

from .tables import LATEX_PACKAGES, Table, bullets, latex_escape, render, wrap


@dataclass(frozen=True)
class Prose:
    """Lines of prose: each wrapped on its own line in text, a paragraph elsewhere."""

    lines: tuple[str, ...]
    role: str = "text"  # "sentence" marks paste-ready prose for a manuscript


@dataclass(frozen=True)
class Bullets:
    heading: str
    items: tuple[str, ...]


Block = Table | Prose | Bullets


@dataclass(frozen=True)
class Document:
    """A result laid out as blocks, in reading order."""

    title: str
    blocks: tuple[Block, ...]
    sentence: str | None = None  # the one paste-ready sentence, where there is one
    references: tuple[str, ...] = field(default=())

    @property
    def tables(self) -> list[Table]:
        return [b for b in self.blocks if isinstance(b, Table)]

    @property
    def sentences(self) -> list[str]:
        return [] if self.sentence is None else [self.sentence]

    def render(self, fmt: str, *, tables_only: bool = False) -> str:
        """The document as text, markdown, latex or html (`tables_only`: just the tables)."""
        blocks = self.tables if tables_only else [b for b in self.blocks if _nonempty(b)]
        if fmt == "html":
            return "<div class='sensitivity-result'>" + "".join(_html(b) for b in blocks) + "</div>"
        body = "\n\n".join(_render(b, fmt) for b in blocks)
        if fmt == "latex":
            needs = ", ".join(LATEX_PACKAGES)
            body = f"% Needs \\usepackage{{{needs}}} (rules in the tables); nothing else.\n{body}"
        return body


def _nonempty(block: Block) -> bool:
    if isinstance(block, Bullets):
        return bool(block.items)
    if isinstance(block, Prose):
        return bool(block.lines)
    return True


def _render(block: Block, fmt: str) -> str:
    if isinstance(block, Table):
        return render(block, fmt)
    if isinstance(block, Prose):
        if fmt == "text":
            return "\n".join(wrap(line) for line in block.lines)
        if fmt == "latex":
            return "\n\n".join(latex_escape(line) for line in block.lines)
        return "\n\n".join(block.lines)
    if fmt == "text":
        return bullets(block.heading, block.items)
    if fmt == "latex":
        items = "\n".join(r"  \item " + latex_escape(i) for i in block.items)
        return (
            r"\paragraph{" + latex_escape(block.heading) + "}\n"
            r"\begin{itemize}" + "\n" + items + "\n" + r"\end{itemize}"
        )
    return f"**{block.heading}**\n\n" + "\n".join(f"- {i}" for i in block.items)


def _html(block: Block) -> str:
    if isinstance(block, Table):
        return render(block, "html")
    if isinstance(block, Prose):
        return "".join(f"<p>{html.escape(line, quote=False)}</p>" for line in block.lines)
    items = "".join(f"<li>{html.escape(i, quote=False)}</li>" for i in block.items)
    return f"<p><strong>{html.escape(block.heading, quote=False)}</strong></p><ul>{items}</ul>"


def prose(*lines: str, role: str = "text") -> Prose:
    return Prose(tuple(line for line in lines if line), role)


def standard_tail(
    notes: Sequence[str], cautions: Sequence[str], assumptions: Sequence[str] = ()
) -> tuple[Bullets, ...]:
    """The closing blocks every result shares: assumptions, notes, cautions."""
    return (
        Bullets("Assumptions", tuple(assumptions)),
        Bullets("Notes", tuple(notes)),
        Bullets("Cautions", tuple(cautions)),
    )


PAGE_STYLE = (
    "body{font-family:Georgia,serif;max-width:60rem;margin:2rem auto;padding:0 1rem;"
    "line-height:1.45;color:#222}table{border-collapse:collapse;margin:1rem 0;"
    "font-family:system-ui,sans-serif;font-size:.9rem}caption{text-align:left;"
    "font-weight:bold;padding:.3rem 0}th,td{padding:.25rem .6rem;border-bottom:1px solid #ccc}"
    "th{border-bottom:2px solid #444}tfoot td{border:0;font-size:.8rem;color:#555}"
)


def html_page(document: Document) -> str:
    """A whole, self-contained HTML page for one document (no scripts, nothing fetched)."""
    title = html.escape(document.title, quote=False)
    return (
        "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'>"
        f"<title>{title}</title><style>{PAGE_STYLE}</style></head><body>"
        f"<h1>{title}</h1>{document.render('html')}</body></html>\n"
    )
