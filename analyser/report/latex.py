"""Tables as LaTeX, ready to paste into a paper.

booktabs rules (\\toprule, \\midrule, \\bottomrule; the package must be
loaded), one column per table column, measured values in math mode as
$x^{+a}_{-b}$, every special character of plain text escaped.  Notes go
under the tabular in a footnote-sized paragraph.  The output uses nothing
beyond booktabs and the LaTeX kernel.
"""

from .cells import latex


def latex_table(table, source=""):
    """The LaTeX source of one Table (see tables.py)."""
    spec = "".join(c.align for c in table.columns)
    lines = [f"% {table.title}: written by `analyser report`" + (f" from {source}" if source else ""),
             r"% requires \usepackage{booktabs}",
             r"\begin{table}",
             r"\centering",
             r"\small",
             rf"\caption{{{table.caption.latex}}}",
             rf"\label{{tab:{table.key}}}",
             rf"\begin{{tabular}}{{{spec}}}",
             r"\toprule",
             " & ".join(c.latex for c in table.columns) + r" \\",
             r"\midrule"]
    for row in table.rows:
        lines.append(" & ".join(latex(cell) for cell in row) + r" \\")
    lines += [r"\bottomrule", r"\end{tabular}"]
    if table.notes:
        lines.append(r"\par\smallskip")
        lines.append(r"{\footnotesize " + " ".join(n.latex for n in table.notes) + "}")
    lines.append(r"\end{table}")
    return "\n".join(lines) + "\n"


def latex_document(tables):
    """A minimal document including every table, to check that they compile."""
    body = "\n".join(rf"\input{{{t.key}.tex}}" for t in tables)
    return ("\\documentclass{article}\n\\usepackage[a4paper,landscape,margin=15mm]{geometry}\n"
            "\\usepackage{booktabs}\n\\begin{document}\n" + body + "\n\\end{document}\n")
