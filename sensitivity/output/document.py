"""The Document: everything a person sees of a result, rendered every way from one object.

A family's `present.document(result)` builds one: its title, blocks in reading order (tables,
prose, bullet lists, headings), the figures it can draw (as specs, drawn on demand) and its
references. Text, Markdown, LaTeX and HTML (the notebook view and the report) all render the
same blocks, and the JSON `sentences` are its sentence blocks, so no view can say what
another leaves out. Every cell and line is made safe for the view it lands in: markup and
control characters from a label never reach a terminal, a Markdown file or a page raw.
"""

from __future__ import annotations

import base64
import html
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .tables import Table, bullets, markdown_cell, render, safe_text, wrap


@dataclass(frozen=True)
class Prose:
    """Lines of prose: each wrapped on its own line in text, a paragraph elsewhere.

    ``role="sentence"`` marks paste-ready sentences for a manuscript: every view shows them,
    and the machine formats carry them too (JSON `sentences`, stderr beside CSV or tables).
    """

    lines: tuple[str, ...]
    role: str = "text"


@dataclass(frozen=True)
class Bullets:
    heading: str
    items: tuple[str, ...]


@dataclass(frozen=True)
class Heading:
    """A section heading (level 2 under the document's title, 3 below that)."""

    text: str
    level: int = 2


@dataclass(frozen=True)
class Code:
    """Verbatim lines (a command line to reproduce a result)."""

    text: str


@dataclass(frozen=True)
class Image:
    """A drawn figure: its PNG file and caption (embedded in HTML, linked in Markdown)."""

    path: Path
    caption: str


@dataclass(frozen=True)
class Figure:
    """A figure a result can draw: `draw(paths)` writes it to each path (format by
    extension). Nothing is drawn until someone asks, so a summary never pays for matplotlib."""

    key: str
    caption: str
    draw: Callable[[Sequence[Path]], Any]


Block = Table | Prose | Bullets | Heading | Code | Image


@dataclass(frozen=True)
class Document:
    """A result laid out as blocks, in reading order, with its figures and references."""

    title: str
    blocks: tuple[Block, ...]
    figures: tuple[Figure, ...] = field(default=())
    references: tuple[str, ...] = field(default=())

    @property
    def tables(self) -> list[Table]:
        return [b for b in self.blocks if isinstance(b, Table)]

    @property
    def sentences(self) -> list[str]:
        """Every paste-ready sentence, in reading order."""
        return [
            line
            for b in self.blocks
            if isinstance(b, Prose) and b.role == "sentence"
            for line in b.lines
        ]

    @property
    def sentence(self) -> str | None:
        """The first paste-ready sentence (the result's headline), if any."""
        found = self.sentences
        return found[0] if found else None

    def render(self, fmt: str, *, tables_only: bool = False, embed: bool = True) -> str:
        """The document as text, markdown, latex or html (`tables_only`: just the tables;
        `embed`: HTML images inline as data, so the page is one self-contained file)."""
        blocks: list[Any] = (
            list(self.tables) if tables_only else [b for b in self.blocks if _nonempty(b)]
        )
        if self.references and not tables_only:
            blocks.append(Bullets("References", self.references))
        if fmt == "html":
            body = "".join(_html(b, embed) for b in blocks)
            return "<div class='sensitivity-result'>" + body + "</div>"
        body = "\n\n".join(_render(b, fmt) for b in blocks)
        if fmt == "latex":
            from .latex import LATEX_PACKAGES

            needs = ", ".join(LATEX_PACKAGES)
            body = f"% Needs \\usepackage{{{needs}}} (rules in the tables); nothing else.\n{body}"
        return body


def _nonempty(block: Block) -> bool:
    if isinstance(block, Bullets):
        return bool(block.items)
    if isinstance(block, Prose):
        return bool(block.lines)
    return True


def markdown_text(text: str) -> str:
    """Prose for Markdown: markup escaped as in a table cell, and a line that would open a
    heading, a quote or a list kept as text."""
    out = markdown_cell(text)
    return "\\" + out if out[:1] in ("#", ">", "-", "+") else out


def _render(block: Block, fmt: str) -> str:
    if isinstance(block, Table):
        return render(block, fmt)
    if fmt == "latex":
        from .latex import latex_block

        return latex_block(block)
    if isinstance(block, Prose):
        if fmt == "text":
            return "\n".join(wrap(safe_text(line)) for line in block.lines)
        return "\n\n".join(markdown_text(line) for line in block.lines)
    if isinstance(block, Heading):
        text = safe_text(block.text)
        if fmt == "text":
            return text + "\n" + ("=" if block.level <= 2 else "-") * min(len(text), 92)
        return "#" * block.level + " " + markdown_text(block.text)
    if isinstance(block, Code):
        if fmt == "text":
            return safe_text(block.text, keep_lines=True)
        fence = "~~~~" if "```" in block.text else "```"
        return f"{fence}\n{safe_text(block.text, keep_lines=True)}\n{fence}"
    if isinstance(block, Image):
        if fmt == "text":
            return f"[Figure: {safe_text(block.caption)} ({block.path.name})]"
        alt = markdown_text(block.caption)
        return f"![{alt}]({_url(block.path.name)})\n\n*{alt}*"
    if fmt == "text":
        listed = bullets(safe_text(block.heading) or "-", [safe_text(i) for i in block.items])
        return listed if block.heading else listed.split("\n", 1)[-1]
    items = "\n".join(f"- {markdown_text(i)}" for i in block.items)
    return (f"**{markdown_text(block.heading)}**\n\n" if block.heading else "") + items


def _url(name: str) -> str:
    from urllib.parse import quote

    return quote(name)


def _esc(text: str) -> str:
    return html.escape(safe_text(text), quote=False)


def _attribute(text: str) -> str:
    return html.escape(safe_text(text), quote=True)


def _html(block: Block, embed: bool) -> str:
    if isinstance(block, Table):
        return render(block, "html")
    if isinstance(block, Prose):
        return "".join(f"<p>{_esc(line)}</p>" for line in block.lines)
    if isinstance(block, Heading):
        level = min(max(block.level, 1), 6)
        return f"<h{level}>{_esc(block.text)}</h{level}>"
    if isinstance(block, Code):
        return f"<pre>{html.escape(safe_text(block.text, keep_lines=True), quote=False)}</pre>"
    if isinstance(block, Image):
        if embed:
            data = base64.b64encode(block.path.read_bytes()).decode("ascii")
            src = f"data:image/png;base64,{data}"
        else:
            src = html.escape(_url(block.path.name), quote=True)
        return (
            f"<figure><img src='{src}' alt='{_attribute(block.caption)}' style='max-width:100%'>"
            f"<figcaption>{_esc(block.caption)}</figcaption></figure>"
        )
    items = "".join(f"<li>{_esc(i)}</li>" for i in block.items)
    head = f"<p><strong>{_esc(block.heading)}</strong></p>" if block.heading else ""
    return f"{head}<ul>{items}</ul>"


def prose(*lines: str | None, role: str = "text") -> Prose:
    return Prose(tuple(line for line in lines if line), role)


def sentences(*lines: str | None) -> Prose:
    """Paste-ready sentences (see `Prose`)."""
    return prose(*lines, role="sentence")


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
    "figure{margin:1.5rem 0}pre{white-space:pre-wrap;background:#f4f4f4;padding:.5rem}"
)


def html_page(document: Document) -> str:
    """A whole, self-contained HTML page for one document (no scripts, nothing fetched)."""
    title = _esc(document.title)
    return (
        "<!DOCTYPE html>\n<html lang='en'><head><meta charset='utf-8'>"
        f"<title>{title}</title><style>{PAGE_STYLE}</style></head><body>"
        f"<h1>{title}</h1>{document.render('html')}</body></html>\n"
    )


def markdown_page(document: Document) -> str:
    """A whole Markdown file for one document: its title, then its blocks."""
    return f"# {markdown_text(document.title)}\n\n{document.render('markdown')}\n"
