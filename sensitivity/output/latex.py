"""LaTeX that compiles with plain LaTeX and booktabs: escaping and the table layout."""

from __future__ import annotations

from .tables import Table

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
    for ch in text:
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
                out.append(ascii_form or "?")
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
