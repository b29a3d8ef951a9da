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
import re

__all__ = ["format_value", "to_csv", "to_markdown", "to_latex", "TABLE_FORMATS", "UNITS",
           "printable_summary", "printable_hypotheses", "printable_with_errors"]

#: Unit of each summarised quantity (rock and family fractions are volume fractions).
UNITS = {
    "temperature_c": "deg C", "solidus_c": "deg C", "porosity": "vol. fraction",
    "aspect_ratio": "-", "melt_aspect_ratio": "-", "melt_fraction": "vol. fraction",
    "melt_fraction_effective": "vol. fraction", "serpentinization": "fraction of ultramafic",
    "serpentinization_effective": "fraction of ultramafic",
    "serpentine_fraction": "vol. fraction", "vp": "km/s", "vs": "km/s", "vp_vs": "-",
    "density": "g/cm^3",
}


#: Readable names of summarised quantities (others: underscores become spaces).
READABLE = {"temperature_c": "temperature", "solidus_c": "solidus", "vp": "Vp", "vs": "Vs",
            "vp_vs": "Vp/Vs", "serpentinization": "serpentinisation (latent)",
            "melt_fraction": "melt fraction (latent)",
            "serpentinization_effective": "serpentinisation (effective)",
            "melt_fraction_effective": "melt fraction (effective)"}


def _decimals(sd: float, sig: int = 2, scale: float = 0.0) -> int:
    """Decimal places that give ``sd`` ``sig`` significant figures (0 to 6). An sd that is
    floating-point noise against ``scale`` (below 1e-9 of it: a quantity constant in every
    draw) counts as zero: 3 decimals, not the 18 its noise would ask for."""
    if (not (isinstance(sd, float) and math.isfinite(sd)) or sd <= 0
            or sd <= 1e-9 * abs(scale)):
        return 3
    return min(6, max(0, sig - 1 - int(math.floor(math.log10(sd)))))


def _with_error(p: float, se: float) -> tuple[str, str]:
    """A probability and its Monte Carlo error at the decimal place of two significant figures
    of the error (2 to 5 decimals): 0.705 and 0.034, 0.00012 and 0.00012 (not 0.000 +- 0.000)."""
    if not math.isfinite(p):
        return "", ""
    d = min(5, max(2, _decimals(float(se)) if math.isfinite(se) and se > 0 else 3))
    return f"{p:.{d}f}", ("" if not math.isfinite(se) else f"{se:.{d}f}")


def printable_summary(df):
    """Posterior summary for a manuscript: a unit column, and every value of a row rounded to
    the decimal place of two significant figures of its sd (mean, median, HDI alike);
    R-hat to 3 decimals, ESS to an integer. Cells are strings; CSV keeps full precision."""
    import pandas as pd

    rows = []
    for q, r in df.iterrows():
        d = _decimals(float(r["sd"]), scale=float(r["mean"]))

        def f(x, d=d):
            return "" if not math.isfinite(float(x)) else f"{float(x):.{d}f}"

        rows.append({"quantity": READABLE.get(str(q), str(q).replace("_", " ")),
                     "unit": UNITS.get(str(q), "vol. fraction"),
                     "mean": f(r["mean"]), "sd": f(r["sd"]), "median": f(r["median"]),
                     "94 % HDI": f"[{f(r['hdi_low'])}, {f(r['hdi_high'])}]",
                     "R-hat": "" if not math.isfinite(float(r["r_hat"]))
                     else f"{float(r['r_hat']):.3f}",
                     "ESS (bulk)": "" if not math.isfinite(float(r["ess_bulk"]))
                     else f"{float(r['ess_bulk']):.0f}"})
    return pd.DataFrame(rows).set_index("quantity")


def printable_with_errors(df, pairs: dict, *, general=()):
    """A copy of ``df`` for Markdown and LaTeX: each value column of ``pairs`` (``{value column:
    its error column}``) and its error at the decimal place of two significant figures of the
    error (0.1250 and 0.0167 become 0.125 and 0.017; 1.666 and 0.581 become 1.67 and 0.58);
    columns in ``general`` (e.g. a datum's sigma) in the shortest form (0.03, not 0.03000).
    Cells of those columns become strings; CSV keeps full precision."""
    out = df.copy()
    for v, e in pairs.items():
        if v not in out.columns or e not in out.columns:
            continue
        vals, errs = [], []
        for x, se in zip(df[v].to_numpy(float), df[e].to_numpy(float), strict=True):
            d = _decimals(float(se)) if math.isfinite(se) and se > 0 else 3
            vals.append("" if not math.isfinite(x) else f"{x:.{d}f}")
            errs.append("" if not math.isfinite(se) else f"{se:.{d}f}")
        out[v], out[e] = vals, errs
    for c in general:
        if c in out.columns:
            out[c] = [format_value(x, 6) if isinstance(x, str) else f"{float(x):g}"
                      for x in df[c]]
    return out


def printable_hypotheses(df):
    """Interpretation table for a manuscript: probabilities and their Monte Carlo error at the
    decimal place of two significant figures of that error, the Bayes factor to 3 significant
    figures with its bound, log10 of it with its Monte Carlo error, and the category."""
    import pandas as pd

    rows = []
    for h, r in df.iterrows():
        bf = float(r["bayes_factor"])
        side = str(r.get("bayes_factor_bound", "="))
        bf_s = "undefined" if not math.isfinite(bf) else (
            ("" if side in ("=", "") else side + " ") + format_value(bf, 3))
        pri, _ = _with_error(float(r["prior_probability"]),
                             float(r.get("prior_mcse", math.nan)))
        post, err = _with_error(float(r["posterior_probability"]), float(r["posterior_mcse"]))
        lbf, lbf_se = float(r.get("log10_bayes_factor", math.nan)), float(
            r.get("log10_bayes_factor_mcse", math.nan))
        lbf_s = "" if not math.isfinite(lbf) else (
            f"{lbf:.2f}" + (f" ± {lbf_se:.2f}" if math.isfinite(lbf_se) else "")
            if side in ("=", "") else f"{side} {lbf:.2f} (bound)")
        rows.append({"interpretation": h, "prior probability": pri,
                     "posterior probability": post, "MC error": err,
                     "Bayes factor": bf_s, "log10 Bayes factor": lbf_s,
                     "evidence": str(r["evidence_category"]),
                     "data fit": str(r.get("data_fit", "")),
                     "converged": "" if "converged" not in r.index else (
                         "yes" if bool(r["converged"]) else "NO")})
    return pd.DataFrame(rows).set_index("interpretation")



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
    """Header and body rows; each level of a multi-level index is a column of its own (a
    tuple in one cell reads as ``('2A extrusives', 'hot gabbro')`` in every format)."""
    cols = list(df.columns)
    levels = df.index.nlevels if index else 0
    names = [n or "" for n in df.index.names] if levels else []
    header = names + [str(c) for c in cols]
    body = []
    for idx, row in zip(df.index, df.itertuples(index=False), strict=True):
        key = list(idx) if levels > 1 else [idx] if levels else []
        body.append(key + list(row))
    return header, body


def to_csv(df, *, index: bool = True) -> str:
    """CSV text with full precision (``repr`` of floats; a float32 column, such as a map's
    depths, at its own precision: 1.44686, not 1.4468600749969482), header row first."""
    import numpy as np

    f32 = [c for c, t in df.dtypes.items() if t == np.float32]
    if f32:  # the shortest decimal that reads back to the same float32
        df = df.copy()
        for c in f32:
            df[c] = [float(str(x)) for x in df[c].to_numpy()]
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
    numeric = [all((isinstance(row[j], numbers.Real) and not isinstance(row[j], bool))
                   or (isinstance(row[j], str) and bool(_NUMBERISH.match(row[j])))
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


_TEX_UNITS = ((r"cm\textasciicircum{}3", r"cm$^{3}$"), ("deg C", r"$^{\circ}$C"))
_NUMBERISH = re.compile(r"^[<>]?\s*\[?-?[0-9.e+-]*(, -?[0-9.e+-]*\])?$")


def _tex(s: str) -> str:
    out = "".join(_LATEX_SPECIAL.get(c, c) for c in s)
    for a, b in _TEX_UNITS:
        out = out.replace(a, b)
    return out


def to_latex(df, *, index: bool = True, digits: int = 4, caption: str | None = None,
             label: str | None = None) -> str:
    """A LaTeX ``table`` with a booktabs ``tabular`` (needs ``\\usepackage{booktabs}``)."""
    header, body = _rows(df, index)
    numeric = [all((isinstance(row[j], numbers.Real) and not isinstance(row[j], bool))
                   or (isinstance(row[j], str) and bool(_NUMBERISH.match(row[j])))
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
