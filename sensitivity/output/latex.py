"""LaTeX that compiles with plain LaTeX and booktabs: escaping and the table layout."""

from __future__ import annotations

from typing import Any

from .tables import Table, safe_text

_LATEX_ESCAPES = {
    "&": r"\&",
    "%": r"\%",
    "$": r"\$",
    "#": r"\#",
    "_": r"\_",
    "{": r"\{",
    "}": r"\}",
    "~": r"\textasciitilde{}",
    "^": r"\textasciicircum{}",
    "\\": r"\textbackslash{}",
    "²": r"\textsuperscript{2}",
    "√": r"$\surd$",
    "≥": r"$\geq$",
    "≤": r"$\leq$",
    "×": r"$\times$",
    "−": "-",
    "≈": r"$\approx$",
    "±": r"$\pm$",
    "–": "--",
    "—": "---",
    "‘": "`",
    "’": "'",
    "“": "``",
    "”": "''",
    "…": r"\ldots{}",
    "·": r"$\cdot$",
    "µ": r"$\mu$",
    "³": r"\textsuperscript{3}",
    "°": r"$^\circ$",
    "\u00a0": "~",
    "<": r"\textless{}",
    ">": r"\textgreater{}",
    "|": r"\textbar{}",
}
# Accents a name may carry (fumeur_été): base letter plus a combining mark, as LaTeX writes it.
_ACCENTS = {
    "\u0301": "'",
    "\u0300": "`",
    "\u0308": '"',
    "\u0302": "^",
    "\u0303": "~",
    "\u0327": "c",
}

#: What the LaTeX output needs beyond plain LaTeX (said at the top of every LaTeX document).
LATEX_PACKAGES = ("booktabs",)


def latex_escape(text: str) -> str:
    """Text as LaTeX that compiles with no package beyond `LATEX_PACKAGES`: special
    characters escaped and every non-ASCII character converted (pure ASCII out)."""
    import unicodedata

    out = []
    for ch in safe_text(text):
        if ch in _LATEX_ESCAPES:
            out.append(_LATEX_ESCAPES[ch])
        elif ord(ch) < 128:
            out.append(ch)
        else:
            parts = unicodedata.normalize("NFD", ch)
            base, marks = parts[0], parts[1:]
            if marks and marks[0] in _ACCENTS and ord(base) < 128:
                cmd = _ACCENTS[marks[0]]
                out.append(f"\\{cmd}{{{base}}}" if cmd == "c" else f"\\{cmd}{{{base}}}")
            elif unicodedata.name(ch, "").startswith(("GREEK SMALL LETTER ", "GREEK CAPITAL")):
                word = unicodedata.name(ch).split()[-1].lower()
                out.append(
                    f"$\\{word.capitalize() if 'CAPITAL' in unicodedata.name(ch) else word}$"
                )
            else:
                ascii_form = unicodedata.normalize("NFKD", ch).encode("ascii", "ignore").decode()
                # a character plain LaTeX cannot set (an emoji) is named, never turned into "?"
                name = unicodedata.name(ch, f"U+{ord(ch):04X}").lower()
                out.append(ascii_form or f"[{name}]")
    return "".join(out)


def latex_table(table: Table) -> str:
    spec = table.alignment()
    body = [" & ".join(latex_escape(c) for c in row) + r" \\" for row in table.rows]
    out = [r"\begin{table}[ht]", r"\centering"]
    if table.title:
        out.append(r"\caption{" + latex_escape(table.title) + "}")
    out += [r"\begin{tabular}{" + spec + "}", r"\toprule"]
    out += [" & ".join(latex_escape(c) for c in table.columns) + r" \\", r"\midrule"]
    out += body + [r"\bottomrule", r"\end{tabular}"]
    if table.footnotes:
        out.append(r"\par\smallskip{\footnotesize " + latex_escape(" ".join(table.footnotes)) + "}")
    out.append(r"\end{table}")
    return "\n".join(out)


def latex_block(block: Any) -> str:
    """A block of a Document other than a table, as LaTeX (prose, headings, lists, code)."""
    kind = type(block).__name__
    if kind == "Prose":
        return "\n\n".join(latex_escape(line) for line in block.lines)
    if kind == "Heading":
        command = "section*" if block.level <= 2 else "subsection*"
        return f"\\{command}{{{latex_escape(block.text)}}}"
    if kind == "Code":
        lines = safe_text(block.text, keep_lines=True).splitlines()
        return (
            "\\begin{verbatim}\n"
            + "\n".join(line.encode("ascii", "replace").decode() for line in lines)
            + "\n\\end{verbatim}"
        )
    if kind == "Image":
        return f"% Figure: {latex_escape(block.caption)} ({block.path.name})"
    items = "\n".join(r"  \item " + latex_escape(i) for i in block.items)
    head = r"\paragraph{" + latex_escape(block.heading) + "}\n" if block.heading else ""
    return head + r"\begin{itemize}" + "\n" + items + "\n" + r"\end{itemize}"
