"""Tables and the figure of a measurement plan (:class:`bayescrust.plan.PlanResult`).

Reads the plan's table; never recomputes anything. matplotlib is imported when drawing.
"""

from __future__ import annotations

import math

from .style import LINESTYLES, MARKERS, PALETTE, new_figure, style_context

__all__ = ["plan_table", "plan_figure", "PLAN_TABLE_COLUMNS"]

#: Columns of the published plan table, with readable names.
PLAN_TABLE_COLUMNS = {
    "rank": "rank",
    "observable": "observable",
    "sigma": "sigma",
    "unit": "unit",
    "p_decisive": "P(decisive)",
    "p_decisive_mcse": "P(decisive) MCSE",
    "expected_p_true": "E[P(true)]",
    "expected_p_true_mcse": "E[P(true)] MCSE",
    "expected_entropy_bits": "E[entropy] (bits)",
    "expected_entropy_bits_mcse": "E[entropy] MCSE",
    "information_gain_bits": "information gain (bits)",
    "interval_narrowing": "T interval narrowing (°C)",
    "interval_narrowing_mcse": "narrowing MCSE (°C)",
    "degenerate": "degenerate updates",
    "reruns": "exact reruns",
}


def plan_table(plan, *, readable: bool = False):
    """The ranked table (every column), or with ``readable=True`` the published columns with
    readable headers (for Markdown and LaTeX)."""
    t = plan.table
    if not readable:
        return t
    out = t[list(PLAN_TABLE_COLUMNS)].rename(columns=PLAN_TABLE_COLUMNS)
    out.index.name = "candidate"
    return out


def plan_figure(plan, *, fig=None, title=None):
    """Chance of a decisive answer and information gain against the datum's sigma.

    One curve per observable (log sigma axis; each observable in its own unit, given in the
    legend); error bars are +-2 Monte Carlo standard errors; the dotted line is today's value.
    """
    t = plan.table
    obs = list(dict.fromkeys(t["observable"]))
    with style_context():
        fig = fig if fig is not None else new_figure(figsize=(7.6, 3.3))
        axes = fig.subplots(1, 2)
        panels = (("p_decisive", "chance of a decisive answer",
                   1.0 if plan.today["decisive"] else 0.0),
                  ("information_gain_bits", "expected information gain (bits)", 0.0))
        for ax, (key, ylabel, today) in zip(axes, panels, strict=True):
            for i, o in enumerate(obs):
                d = t[(t["observable"] == o) & t["sigma"].map(math.isfinite)].sort_values("sigma")
                if d.empty:
                    continue
                unit = d["unit"].iloc[0]
                name = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density"}.get(o, o)
                ax.errorbar(d["sigma"], d[key], yerr=2 * d[f"{key}_mcse"],
                            color=PALETTE[i % len(PALETTE)], ls=LINESTYLES[i % len(LINESTYLES)],
                            marker=MARKERS[i % len(MARKERS)], ms=3.5, capsize=2,
                            label=f"{name} ({unit})" if unit else name)
            ax.axhline(today, color="#000000", lw=0.8, ls=":", alpha=0.7)
            ax.set_xscale("log")
            from matplotlib.ticker import FormatStrFormatter, NullFormatter

            ticks = sorted({float(v) for v in t["sigma"] if math.isfinite(v)})
            if ticks:
                ax.set_xticks(ticks)
            ax.xaxis.set_major_formatter(FormatStrFormatter("%g"))
            ax.xaxis.set_minor_formatter(NullFormatter())
            ax.tick_params(axis="x", which="minor", bottom=False)
            ax.tick_params(axis="x", labelrotation=45)
            ax.set_xlabel("1-sigma error of the new datum (its unit)")
            ax.set_ylabel(ylabel)
        axes[0].set_ylim(-0.03, 1.03)
        axes[1].set_ylim(bottom=min(0.0, axes[1].get_ylim()[0]))
        axes[0].legend(loc="best")
        if title:
            fig.suptitle(title)
    return fig
