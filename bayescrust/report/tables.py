"""Plain-text writers of result tables: CSV, Markdown and LaTeX (booktabs).

Small hand-written writers (no optional dependencies). They take a :class:`pandas.DataFrame`
(such as ``LayerResult.summary`` or ``LayerResult.hypotheses``) and return text; writing files is
the caller's job.
"""

from __future__ import annotations

import csv
import io
import math
import numbers

__all__ = ["format_value", "to_csv", "to_markdown", "to_latex", "TABLE_FORMATS"]


def format_value(value, digits: int = 4) -> str:
    """Format one cell: numbers to ``digits`` significant figures, NaN as empty, inf as 'inf'."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, numbers.Integral):
        return str(int(value))
    if isinstance(value, numbers.Real):
        x = float(value)
        if math.isnan(x):
            return ""
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        if x == 0:
            return "0"
        if 1e-3 <= abs(x) < 1e5:
            decimals = max(0, digits - 1 - int(math.floor(math.log10(abs(x)))))
            return f"{x:.{decimals}f}"
        return f"{x:.{max(digits - 1, 0)}e}"
    return "" if value is None else str(value)


def _rows(df, index: bool):
    cols = list(df.columns)
    header = ([df.index.name or ""] if index else []) + [str(c) for c in cols]
    body = []
    for idx, row in zip(df.index, df.itertuples(index=False), strict=True):
        body.append(([idx] if index else []) + list(row))
    return header, body


def to_csv(df, *, index: bool = True) -> str:
    """CSV text with full precision (``repr`` of floats), header row first."""
    header, body = _rows(df, index)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    for row in body:
        w.writerow([_csv_cell(v) for v in row])
    return buf.getvalue()


def _csv_cell(v):
    if isinstance(v, bool):
        return str(v).lower()
    if isinstance(v, numbers.Real) and not isinstance(v, numbers.Integral):
        x = float(v)
        return "nan" if math.isnan(x) else repr(x)
    return v


def to_markdown(df, *, index: bool = True, digits: int = 4) -> str:
    """GitHub-flavoured Markdown table; numbers right-aligned to ``digits`` significant figures."""
    header, body = _rows(df, index)
    cells = [[format_value(v, digits).replace("|", "\\|") for v in row] for row in body]
    numeric = [all(isinstance(row[j], numbers.Real) and not isinstance(row[j], bool)
                   for row in body) if body else False for j in range(len(header))]
    widths = [max([len(h)] + [len(r[j]) for r in cells] + [3]) for j, h in enumerate(header)]

    def line(vals):
        out = []
        for j, v in enumerate(vals):
            out.append(v.rjust(widths[j]) if numeric[j] else v.ljust(widths[j]))
        return "| " + " | ".join(out) + " |"

    sep = "| " + " | ".join(("-" * (widths[j] - 1) + ":") if numeric[j] else "-" * widths[j]
                            for j in range(len(header))) + " |"
    return "\n".join([line(header), sep] + [line(r) for r in cells]) + "\n"


_LATEX_SPECIAL = {
    "\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_",
    "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}",
}


def _tex(s: str) -> str:
    return "".join(_LATEX_SPECIAL.get(c, c) for c in s)


def to_latex(df, *, index: bool = True, digits: int = 4, caption: str | None = None,
             label: str | None = None) -> str:
    """A LaTeX ``table`` with a booktabs ``tabular`` (needs ``\\usepackage{booktabs}``)."""
    header, body = _rows(df, index)
    numeric = [all(isinstance(row[j], numbers.Real) and not isinstance(row[j], bool)
                   for row in body) if body else False for j in range(len(header))]
    spec = "".join("r" if n else "l" for n in numeric)
    lines = [r"\begin{table}", r"\centering"]
    if caption:
        lines.append(rf"\caption{{{_tex(caption)}}}")
    if label:
        lines.append(rf"\label{{{label}}}")
    lines += [rf"\begin{{tabular}}{{{spec}}}", r"\toprule",
              " & ".join(_tex(h) for h in header) + r" \\", r"\midrule"]
    for row in body:
        vals = []
        for v in row:
            s = format_value(v, digits)
            vals.append({"inf": r"$\infty$", "-inf": r"$-\infty$"}.get(s) or _tex(s))
        lines.append(" & ".join(vals) + r" \\")
    lines += [r"\bottomrule", r"\end{tabular}", r"\end{table}"]
    return "\n".join(lines) + "\n"


#: Table format name -> (file suffix, writer).
TABLE_FORMATS = {"csv": (".csv", to_csv), "md": (".md", to_markdown), "tex": (".tex", to_latex)}
