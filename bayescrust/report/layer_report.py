"""Markdown sections of a run report: per-layer interpretations with their definitions, the
data-fit (posterior-predictive) check, the convergence word, and a methods paragraph.

Reads :class:`~bayescrust.inference.results.LayerResult` objects; computes nothing new.
"""

from __future__ import annotations

import math

from .tables import _decimals, _with_error, format_value, to_markdown

__all__ = ["interpretation_table", "layer_section", "definitions_text", "fit_table",
           "trust_lines"]

_LABEL = {"vp": "Vp (km/s)", "vs": "Vs (km/s)", "vp_vs": "Vp/Vs", "density": "density (g/cm^3)"}


def _bf_text(row) -> str:
    bf = row["bayes_factor"]
    if bf is None or (isinstance(bf, float) and math.isnan(bf)):
        return "undefined"
    side = row.get("bayes_factor_bound", "=")
    return ("" if side in ("=", "") else f"{side} ") + format_value(float(bf), 3)


def interpretation_table(hyp):
    """Readable interpretation table: prior (3 decimals), posterior at the place of two
    significant figures of its Monte Carlo error (as hypotheses.md), Bayes factor with its bound,
    category, and the mixing fraction (median and 5-95 % range) among each class's draws."""
    import pandas as pd

    q = str(hyp["mixing_quantity"].iloc[0]) if "mixing_quantity" in hyp and len(hyp) else ""
    rows = []
    for name, r in hyp.iterrows():
        mix = ""
        if q and not math.isnan(float(r["mixing_median"])):
            mix = (f"{r['mixing_median']:.2f} [{r['mixing_q05']:.2f}, "
                   f"{r['mixing_q95']:.2f}]")
        rows.append({
            "interpretation": name,
            "prior": f"{r['prior_probability']:.3f}",
            "posterior": " ± ".join(v for v in _with_error(float(r["posterior_probability"]),
                                                            float(r["posterior_mcse"])) if v),
            "Bayes factor": _bf_text(r),
            "evidence (Kass & Raftery 1995)": r["evidence_category"],
            f"{q.replace('_', ' ')} (median [5 %, 95 %])" if q else "mixing": mix or "–",
            "data fit": r.get("data_fit", ""),
        })
    return pd.DataFrame(rows).set_index("interpretation")


def definitions_text(settings: dict) -> list[str]:
    """Bullet list of the interpretations' definitions, from a result's settings."""
    from ..inference.hypotheses import describe_hypotheses

    hyps = {k: {q: tuple(v) for q, v in r.items()}
            for k, r in (settings.get("hypotheses") or {}).items()}
    return [f"- **{k}**: {v}" for k, v in describe_hypotheses(hyps).items()]


def fit_table(check: dict):
    """Posterior-predictive check as a table (observed, predicted mean and sd, z, p-value)."""
    import pandas as pd

    rows = []
    for k, v in check.get("observables", {}).items():
        rows.append({"observable": _LABEL.get(k, k), "observed": v["observed"],
                     "predicted mean": v["predicted_mean"], "predicted sd": v["predicted_sd"],
                     "z": v["z"], "p-value": v["p_value"],
                     "flag": "MISFIT" if k in check.get("flagged", ()) else "ok"})
    return pd.DataFrame(rows).set_index("observable")


def trust_lines(res) -> list[str]:
    """The warnings a reader must see beside a layer's probabilities (bold, first)."""
    return [f"> **Warning:** {m}" for m in res.warnings()]


def layer_section(name: str, res) -> list[str]:
    """Markdown lines of one layer: warnings, interpretations, definitions, fit, convergence."""
    d = res.diagnostics
    check = d.get("predictive_check", {})
    lines = [f"### {name}", ""]
    warn = trust_lines(res)
    if warn:
        lines += warn + [""]
    lines += [to_markdown(interpretation_table(res.hypotheses)), ""]
    total = float(res.hypotheses["posterior_probability"].sum())
    # a partition puts every draw in exactly one class, so the class fractions of one set of
    # draws sum to 1 exactly; the prior draws cover the whole space (posterior draws may miss
    # an overlap: "mantle", "not mantle" and "hot gabbro" summed to 1 after the data, 1.116
    # before)
    prior_total = float(res.hypotheses["prior_probability"].sum())
    partition = abs(total - 1.0) < 1e-9 and abs(prior_total - 1.0) < 1e-9
    lines += [f"Posterior probabilities sum to {total:.3f}"
              + (" (the interpretations partition the parameter space)." if partition else
                 f", prior probabilities to {prior_total:.3f} (the interpretations overlap or "
                 "leave gaps; they are not a partition)."), ""]
    lines += ["Definitions (every bound inclusive unless marked `<`):", ""]
    lines += definitions_text(res.settings) + [""]
    if check:
        lines += [f"Data fit: posterior-predictive check (two-sided p-value; flagged below "
                  f"{check['alpha']:g}):", "", to_markdown(fit_table(check), digits=3), ""]
    rule = d.get("convergence_rule", "")
    extra = ""
    if d.get("method") == "mcmc" and not math.isnan(d.get("max_r_hat", math.nan)):
        extra = f", max R-hat {d['max_r_hat']:.4f}"
    err = float(res.log_evidence_error)
    dec = min(6, max(3, _decimals(err))) if math.isfinite(err) and err > 0 else 3
    lines += [f"log evidence: {res.log_evidence:.{dec}f} ± {err:.{dec}f}; "
              f"converged: {'yes' if d.get('converged') else 'NO'} (rule: {rule}{extra})", ""]
    return lines
