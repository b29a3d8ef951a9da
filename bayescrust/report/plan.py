"""Tables and the figure of a measurement plan (:class:`bayescrust.plan.PlanResult`).

Reads the plan's table; never recomputes anything. matplotlib is imported when drawing.
"""

from __future__ import annotations

import math

from .style import LINESTYLES, MARKERS, PALETTE, new_figure, style_context

__all__ = ["plan_table", "plan_figure", "PLAN_TABLE_COLUMNS", "profile_plan_table",
           "profile_plan_figure", "PROFILE_PLAN_COLUMNS", "data_fit_of", "misfit_title"]

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


#: (value, Monte Carlo error) column pairs of the readable plan tables, printed at two
#: significant figures of the error (``report.tables.printable_with_errors``).
PLAN_ERROR_PAIRS = {"P(decisive)": "P(decisive) MCSE", "E[P(true)]": "E[P(true)] MCSE",
                    "E[entropy] (bits)": "E[entropy] MCSE",
                    "T interval narrowing (°C)": "narrowing MCSE (°C)"}
#: The same for the profile plan table, whose errors cover the simulated data only.
PROFILE_PLAN_ERROR_PAIRS = {"P(decisive)": "P(decisive) sim. error",
                            "information gain (bits)": "gain sim. error",
                            "interval narrowing": "narrowing sim. error"}


def data_fit_of(plan) -> str:
    """The ``data_fit`` entry of every row of a plan's tables: today's posterior-predictive
    check, ``"ok"`` or ``"MISFIT (...)"`` (``""`` when no check was made).

    A profile plan names every misfitting layer in every row: the layers share the thermal
    state, so a layer the model cannot fit moves every question's answer.
    """
    from ..inference.trust import data_fit_label

    checks = getattr(plan, "predictive_check", None) or {}
    if "observables" in checks:  # one layer
        return data_fit_label(checks)
    if not checks:
        return ""
    bad = [f"{n}: {', '.join(c['flagged'])}" for n, c in checks.items() if c.get("misfit")]
    return f"MISFIT ({'; '.join(bad)})" if bad else "ok"


def misfit_title(title: str, plan) -> str:
    """A figure title, with a second line when today's data misfit."""
    fit = data_fit_of(plan)
    if not fit.startswith("MISFIT"):
        return title
    return f"{title}\nDATA {fit}: not recommendations (the model does not fit today's data)"


def _with_fit(table, plan, column="data_fit"):
    fit = data_fit_of(plan)
    return table.assign(**{column: fit}) if fit else table


def plan_table(plan, *, readable: bool = False):
    """The ranked table (every column), or with ``readable=True`` the published columns with
    readable headers (for Markdown and LaTeX); both end with today's ``data_fit``
    (:func:`data_fit_of`) when it was checked."""
    t = plan.table
    if not readable:
        return _with_fit(t, plan)
    out = t[list(PLAN_TABLE_COLUMNS)].rename(columns=PLAN_TABLE_COLUMNS)
    out.index.name = "candidate"
    return _with_fit(out, plan, "data fit")


def plan_figure(plan, *, fig=None, title=None):
    """Chance of a decisive answer and information gain against the datum's sigma.

    One curve per observable (log sigma axis; each observable in its own unit, given in the
    legend); error bars are +-2 Monte Carlo standard errors; the dotted line is today's value.
    """
    t = plan.table.copy()
    if "layer" in t.columns:  # profile plans: one curve per observable, mode and layer
        t["observable"] = [o + (f" ({m.replace('_', ' ')})" if m != "gaussian" else "")
                           + (f" in {la}" if la else "")
                           for o, m, la in zip(t["observable"], t["mode"], t["layer"],
                                               strict=True)]
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
                head, sep, rest = o.partition(" ")
                name = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density",
                        "heat_flow": "heat flow"}.get(head, head) + sep + rest
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
        if axes[0].get_legend_handles_labels()[0]:  # none when every sigma is inf
            axes[0].legend(loc="best")
        if title:
            fig.suptitle(title)
    return fig


#: Columns of the published profile plan table, with readable names.
PROFILE_PLAN_COLUMNS = {  # the errors: simulated data only (plan.today.PROFILE_ERROR_CAVEAT)
    "question": "question",
    "p_decisive": "P(decisive)",
    "p_decisive_mcse": "P(decisive) sim. error",
    "expected_p_true": "E[P(true)]",
    "information_gain_bits": "information gain (bits)",
    "information_gain_bits_mcse": "gain sim. error",
    "interval_narrowing": "interval narrowing",
    "interval_narrowing_mcse": "narrowing sim. error",
    "interval_unit": "unit",
    "relative_narrowing": "narrowing / today",
    "degenerate": "degenerate updates",
}


def profile_plan_table(pplan, *, readable: bool = False):
    """The long (candidate x question) table of a :class:`~bayescrust.plan.ProfilePlanResult`;
    with ``readable=True`` the published columns with readable headers."""
    t = pplan.table
    if not readable:
        return _with_fit(t, pplan)
    out = t[list(PROFILE_PLAN_COLUMNS)].rename(columns=PROFILE_PLAN_COLUMNS)
    out.index.name = "candidate"
    return _with_fit(out, pplan, "data fit")


def profile_plan_figure(pplan, *, fig=None, title=None):
    """Value of each candidate for every question of a profile, as two heat maps.

    Left: expected information gain (bits) on each interpretation question (the layers and the
    crust-mantle boundary); right: expected narrowing of each thermal parameter's interval, as a
    fraction of today's width. Rows: candidates in the ranking's order; each cell is annotated.
    """
    import numpy as np

    t = pplan.table
    cands = list(pplan.ranking.index)
    cls_q = [q for q, k in pplan.questions.items() if k != "thermal"]
    th_q = [q for q, k in pplan.questions.items() if k == "thermal"]

    def grid(qs, col):
        return np.array([[float(t[(t.index == c) & (t["question"] == q)][col].iloc[0])
                          for q in qs] for c in cands])

    panels = [(cls_q, "information_gain_bits", "expected information gain (bits)", "Blues")]
    if th_q:
        panels.append((th_q, "relative_narrowing", "interval narrowing / today's width",
                       "Oranges"))
    with style_context():
        width = 3.0 + 0.9 * len(cls_q) + (1.6 + 0.9 * len(th_q) if th_q else 0.0)
        fig = fig if fig is not None else new_figure(figsize=(width, 1.4 + 0.32 * len(cands)))
        axes = fig.subplots(1, len(panels), squeeze=False,
                            width_ratios=[max(len(p[0]), 1) for p in panels])[0]
        for ax, (qs, col, label, cmap) in zip(axes, panels, strict=True):
            g = grid(qs, col)
            hi = max(float(np.nanmax(g)) if np.isfinite(g).any() else 0.0, 1e-9)
            im = ax.imshow(np.clip(g, 0.0, None), aspect="auto", cmap=cmap, vmin=0.0, vmax=hi)
            for (i, j), v in np.ndenumerate(g):
                ax.text(j, i, f"{v:.2f}" if math.isfinite(v) else "-", ha="center",
                        va="center", fontsize=6.5, color="#000000" if v < 0.6 * hi else "#ffffff")
            ax.set_xticks(range(len(qs)))
            ax.set_xticklabels([q.removeprefix("thermal: ") for q in qs], rotation=35,
                               ha="right")
            ax.set_yticks(range(len(cands)))
            ax.set_yticklabels(cands if ax is axes[0] else [])
            ax.set_title(label, fontsize=8)
            fig.colorbar(im, ax=ax, fraction=0.05, pad=0.02)
        if title:
            fig.suptitle(title)
    return fig
