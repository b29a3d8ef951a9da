"""Figures of layer results. Each function takes results, draws, and returns the Figure.

No function here computes physics or inference: they read ``LayerResult.idata`` (arviz
InferenceData), hypothesis tables and chart tables produced elsewhere. They accept ``fig=`` (or
``ax=``), never call ``show()`` or ``savefig()``; saving is the caller's job. matplotlib and corner
are imported inside the functions.
"""

from __future__ import annotations

import textwrap

import numpy as np

from ..inference.model import DERIVED_QUANTITIES, SCALAR_PARAMETERS
from .style import (
    LINESTYLES,
    MARKERS,
    PALETTE,
    PRIOR_GREY,
    label,
    new_figure,
    short_label,
    style_context,
)

__all__ = [
    "free_parameters",
    "corner_figure",
    "trace_figure",
    "predictive_figure",
    "marginals_figure",
    "probability_chart",
    "comparison_figure",
    "forward_figure",
    "effective_names",
    "piled_at_bound",
]

#: Scalar parameters and derived quantities (the latter are not shown in corner plots).
_SCALARS = set(SCALAR_PARAMETERS)
_DERIVED = set(DERIVED_QUANTITIES)


def _draws(idata, group: str, name: str) -> np.ndarray:
    ds = getattr(idata, group)
    return np.asarray(ds[name].values, float)


def free_parameters(idata) -> list[str]:
    """Posterior variables that vary and are model parameters (rock fractions, T, porosity, ...).

    Uses ``idata.attrs['parameter_names']`` when the inference package stored it; otherwise every
    non-constant (chain, draw) variable that is not a derived quantity.
    """
    post = idata.posterior
    stored = (getattr(idata, "attrs", None) or {}).get("parameter_names")
    # the sampled coordinates plus the last rock fraction (one minus the others)
    names = [v for v in post.data_vars if v not in _DERIVED]
    if stored:
        sampled = set(str(stored).split(","))
        names = [v for v in names if v in sampled or v not in _SCALARS]
    out = []
    for v in names:
        if v not in post.data_vars or post[v].ndim != 2:
            continue
        x = np.asarray(post[v].values, float)
        if np.isfinite(x).all() and np.ptp(x) > 0:
            out.append(str(v))
    return out


def _drop_last_fraction(idata, names):
    """Rock fractions sum to one: the last varying fraction adds nothing to a corner plot."""
    fr = [n for n in names if n not in _SCALARS]
    if len(fr) >= 2:
        names = [n for n in names if n != fr[-1]]
    return names


#: Latent parameter -> the effective quantity a reader should see (the latent melt fraction
#: only acts above the solidus, the latent serpentinisation only below the stability limit).
EFFECTIVE = {"melt_fraction": "melt_fraction_effective",
             "serpentinization": "serpentinization_effective"}


def effective_names(idata, names) -> list[str]:
    """``names`` with latent melt / serpentinisation replaced by their effective values; an
    effective quantity that never varies (e.g. always zero) is left out."""
    post = idata.posterior
    out = []
    for n in names:
        e = EFFECTIVE.get(n)
        if e is None:
            out.append(n)
        elif e in post.data_vars and np.ptp(np.asarray(post[e].values, float)) > 0:
            out.append(e)
    return out


def _readable(name) -> str:
    """A user's key (``young_plate``) as a label (``young plate``)."""
    return str(name).replace("_", " ")


def _fig(fig, figsize):
    if fig is None:
        return new_figure(figsize=figsize)
    return fig


def corner_figure(idata, *, var_names=None, fig=None, color=PALETTE[0], bins=30):
    """Corner plot of the posterior (``corner``), with 5/50/95 % quantiles.

    Parameters
    ----------
    idata : arviz.InferenceData
        Result with a ``posterior`` group.
    var_names : sequence of str, optional
        Variables to show (default :func:`free_parameters`).
    fig : matplotlib.figure.Figure, optional
        Figure to draw into (empty, or with K x K axes).
    """
    try:
        import corner
    except ImportError as exc:  # pragma: no cover - corner is a dependency
        raise ImportError("corner plots need the 'corner' package: pip install corner") from exc
    names = (list(var_names) if var_names is not None
             else effective_names(idata, _drop_last_fraction(idata, free_parameters(idata))))
    if not names:
        raise ValueError("corner_figure: no varying posterior variable to plot")
    data = np.column_stack([_draws(idata, "posterior", n).ravel() for n in names])
    k = len(names)
    with style_context():
        if fig is None:
            fig = new_figure(figsize=(1.9 * k + 0.8, 1.9 * k + 0.8), layout=None)
        if k == 1:
            ax = fig.axes[0] if fig.axes else fig.add_subplot()
            ax.hist(data[:, 0], bins=bins, color=color, histtype="stepfilled", alpha=0.6)
            ax.set_xlabel(label(names[0]))
            ax.set_yticks([])
            return fig
        if not fig.axes:
            fig.subplots(k, k)
        corner.corner(data, labels=[short_label(n) for n in names], fig=fig, color=color, bins=bins,
                      quantiles=[0.05, 0.5, 0.95], show_titles=True, title_fmt=".3g",
                      title_kwargs={"fontsize": 7}, label_kwargs={"fontsize": 8},
                      plot_datapoints=False, fill_contours=True, smooth=1.0, max_n_ticks=3,
                      labelpad=0.05)
        for ax in fig.axes:  # keep rotated tick labels from running into each other
            ax.tick_params(labelsize=6.5)
        # the panel titles are corner's: say what they are (the tables give 94 % HDIs)
        fig.text(0.98, 0.98, "titles: median, -/+ to the 5 % and 95 % quantiles\n"
                 "(equal-tailed 90 % interval; the tables give 94 % HDIs)",
                 ha="right", va="top", fontsize=7)
    return fig


def trace_figure(idata, *, var_names=None, fig=None, max_chains=16):
    """Trace of the chains (walkers) per variable, with the marginal histogram of all chains
    beside it.

    At most ``max_chains`` walkers are drawn (more lines only blacken the panel and slow the
    rendering); their lines are rasterised in vector formats, the axes and text stay vector.
    """
    names = list(var_names) if var_names is not None else free_parameters(idata)
    if not names:
        raise ValueError("trace_figure: no varying posterior variable to plot")
    with style_context():
        fig = _fig(fig, (7.0, 1.5 * len(names) + 0.6))
        axes = fig.subplots(len(names), 2, squeeze=False, width_ratios=(3, 1), sharey="row")
        for i, n in enumerate(names):
            x = _draws(idata, "posterior", n)
            ax, axh = axes[i]
            for c in range(min(x.shape[0], max_chains)):
                ax.plot(x[c], color=PALETTE[c % 6], lw=0.5, alpha=0.35, rasterized=True)
            # long labels (e.g. serpentinisation) wrap, so that neighbouring rows do not overlap
            ax.set_ylabel(textwrap.fill(label(n), 22), fontsize=7.5)
            axh.hist(x.ravel(), bins=40, orientation="horizontal", color=PALETTE[0], alpha=0.6)
            axh.set_xticks([])
        axes[-1, 0].set_xlabel("draw (after burn-in and thinning)")
        shown = min(x.shape[0], max_chains)
        fig.suptitle(f"Trace of {shown} of {x.shape[0]} chains (walkers)" if shown < x.shape[0]
                     else f"Trace of {shown} chains (walkers)")
    return fig


def _sigma_of(idata, name):
    """The observation's 1-sigma error, stored by the inference in ``constant_data``."""
    ds = getattr(idata, "constant_data", None)
    key = f"{name}_sigma"
    if ds is not None and key in ds:
        return float(np.asarray(ds[key].values).ravel()[0])
    return None


def predictive_figure(idata, *, fig=None, sigma=None):
    """Predicted observables under the prior and the posterior against the observed values.

    Parameters
    ----------
    idata : arviz.InferenceData
        Needs ``observed_data``; predictions are the posterior (and prior, if present) variables
        of the same names.
    sigma : dict, optional
        1-sigma error per observed quantity, drawn as a band (default: read from the result).
    """
    obs = [str(v) for v in idata.observed_data.data_vars if v in idata.posterior]
    if not obs:
        raise ValueError("predictive_figure: no observed quantity with a posterior prediction")
    has_prior = hasattr(idata, "prior")
    with style_context():
        # wide enough for the title and the legend row even with one panel (3.4 in cut both)
        fig = _fig(fig, (max(3.0 * len(obs) + 0.4, 6.6), 2.8 if len(obs) > 1 else 3.0))
        axes = fig.subplots(1, len(obs), squeeze=False)[0]
        for ax, n in zip(axes, obs, strict=True):
            value = float(np.asarray(idata.observed_data[n].values).ravel()[0])
            post = _draws(idata, "posterior", n).ravel()
            s = (sigma or {}).get(n) if sigma else _sigma_of(idata, n)
            lo = np.nanmin(post)
            hi = np.nanmax(post)
            if has_prior and n in idata.prior:
                pri = _draws(idata, "prior", n).ravel()
                pri = pri[np.isfinite(pri)]
                lo, hi = min(lo, np.quantile(pri, 0.005)), max(hi, np.quantile(pri, 0.995))
                bins = np.linspace(lo, hi, 50)
                ax.hist(pri, bins=bins, density=True, histtype="step", color=PRIOR_GREY,
                        label="prior predictive")
            else:
                bins = 40
            ax.hist(post, bins=bins, density=True, color=PALETTE[0], alpha=0.55,
                    label="posterior predictive")
            if s is not None:
                ax.axvspan(value - s, value + s, color=PALETTE[1], alpha=0.18,
                           label="observed ±1σ")
            ax.axvline(value, color=PALETTE[1], lw=1.8, label="observed")
            ax.set_xlabel(label(n))
            ax.set_yticks([])
        axes[0].set_ylabel("probability density")
        fig.legend(*axes[-1].get_legend_handles_labels(), loc="outside lower center",
                   ncols=4 if len(obs) > 1 else 2)  # below the panels, clear of the data
        fig.suptitle("Predicted versus observed\n(forward-model predictions, no noise added)"
                     if len(obs) == 1 else
                     "Predicted versus observed (forward-model predictions, no noise added)")
    return fig


def marginals_figure(idata, *, var_names=None, fig=None, ncols=3):
    """Prior (grey outline) versus posterior (filled) marginal of each variable."""
    names = list(var_names) if var_names is not None else free_parameters(idata)
    if not names:
        raise ValueError("marginals_figure: no varying posterior variable to plot")
    nrows = int(np.ceil(len(names) / ncols))
    ncols = min(ncols, len(names))
    with style_context():
        fig = _fig(fig, (2.6 * ncols + 0.3, 2.1 * nrows + 0.5))
        axes = fig.subplots(nrows, ncols, squeeze=False).ravel()
        for ax, n in zip(axes, names, strict=False):
            post = _draws(idata, "posterior", n).ravel()
            arrays = [post]
            pri = None
            if hasattr(idata, "prior") and n in idata.prior:
                pri = _draws(idata, "prior", n).ravel()
                pri = pri[np.isfinite(pri)]
                arrays.append(pri)
            allv = np.concatenate(arrays)
            bins = np.linspace(np.min(allv), np.max(allv), 40)
            if pri is not None and pri.size:
                ax.hist(pri, bins=bins, density=True, histtype="step", color=PRIOR_GREY, lw=1.3,
                        label="prior")
            ax.hist(post, bins=bins, density=True, color=PALETTE[0], alpha=0.6, label="posterior")
            ax.set_xlabel(label(n))
            ax.set_yticks([])
            side = piled_at_bound(post, pri)
            if side:
                ax.set_title(f"piled at the prior's {side} bound", color=PALETTE[1],
                             fontsize=7.5)
        for ax in axes[len(names):]:
            ax.set_visible(False)
        axes[0].legend(loc="best")
        fig.suptitle("Prior and posterior marginals")
    return fig


#: A posterior is "piled against a prior bound" when this share of its draws lies in the outer
#: 2 % of the prior's range (a uniform posterior would put 2 % there; ``common practice``).
PILED_SHARE = 0.2


def piled_at_bound(post, prior) -> str:
    """'lower' / 'upper' when the posterior crowds a bound of the prior's range, else ''."""
    if prior is None or not np.size(prior):
        return ""
    lo, hi = float(np.min(prior)), float(np.max(prior))
    if not hi > lo:
        return ""
    edge = 0.02 * (hi - lo)
    post = np.asarray(post, float)
    if np.mean(post <= lo + edge) >= PILED_SHARE:
        return "lower"
    if np.mean(post >= hi - edge) >= PILED_SHARE:
        return "upper"
    return ""


def probability_chart(table, *, fig=None, observed=None, title=None, misfit=None):
    """Probability of each interpretation against observed Vp; one panel per thermal prior.

    Parameters
    ----------
    table : pandas.DataFrame
        Long format with columns ``vp`` (km/s), ``hypothesis``, ``probability`` and optionally
        ``thermal_prior`` and ``mcse`` (drawn as a +-2 MCSE band).
    observed : (float, float), optional
        The layer's observed Vp and 1-sigma error, drawn as a grey band.
    misfit : dict, optional
        ``{thermal prior: [(lo, hi), ...]}``: Vp ranges whose data the model cannot reproduce
        (:func:`bayescrust.cli.chart.misfit_ranges`), hatched over half a grid step beyond
        each end, with a note in the panel.
    """
    priors = list(dict.fromkeys(table["thermal_prior"])) if "thermal_prior" in table else [None]
    hyps = list(dict.fromkeys(table["hypothesis"]))
    n = len(priors)
    with style_context():
        fig = _fig(fig, (2.9 * n + 2.2, 3.3))
        axes = fig.subplots(1, n, squeeze=False, sharey=True)[0]
        for j, (ax, pr) in enumerate(zip(axes, priors, strict=True)):
            sub = table if pr is None else table[table["thermal_prior"] == pr]
            if observed is not None:
                v, s = observed
                ax.axvspan(v - s, v + s, color="#000000", alpha=0.08, lw=0)
                ax.axvline(v, color="#000000", lw=0.8, alpha=0.6)
            _misfit_spans(ax, (misfit or {}).get(pr if pr is None else str(pr)),
                          np.unique(sub["vp"].to_numpy(float)), label=j == 0)
            for i, h in enumerate(hyps):
                d = sub[sub["hypothesis"] == h].sort_values("vp")
                if d.empty:
                    continue
                c = PALETTE[i % len(PALETTE)]
                ax.plot(d["vp"], d["probability"], color=c, ls=LINESTYLES[i % len(LINESTYLES)],
                        marker=MARKERS[i % len(MARKERS)], ms=2.5, label=h if j == 0 else None)
                if "mcse" in d:
                    ax.fill_between(d["vp"], d["probability"] - 2 * d["mcse"],
                                    d["probability"] + 2 * d["mcse"], color=c, alpha=0.15, lw=0)
            ax.set_ylim(-0.02, 1.02)
            ax.set_xlabel("observed Vp (km/s)")
            if pr is not None:
                ax.set_title(f"thermal prior: {_readable(pr)}")
        axes[0].set_ylabel("posterior probability")
        fig.legend(loc="outside right center")
        if title:
            fig.suptitle(title)
    return fig


def _misfit_spans(ax, ranges, grid, *, label):
    """Hatch the Vp ranges the model cannot reproduce (half a grid step beyond each end)."""
    if not ranges:
        return
    half = 0.5 * float(np.min(np.diff(grid))) if grid.size > 1 else 0.0
    for k, (lo, hi) in enumerate(ranges):
        ax.axvspan(lo - half, hi + half, facecolor="none", edgecolor=MISFIT_COLOUR, hatch="xx",
                   lw=0, alpha=0.5, zorder=0,
                   label="data misfit: the model\ncannot produce this Vp"
                   if label and k == 0 else None)
    lo, hi = max(ranges, key=lambda r: r[1] - r[0])  # named in the widest range
    ax.text(0.5 * (lo + hi), 0.5, "DATA\nMISFIT", transform=ax.get_xaxis_transform(),
            fontsize=7, color=MISFIT_COLOUR, fontweight="bold", ha="center", va="center",
            bbox={"facecolor": "white", "edgecolor": "none", "alpha": 0.8, "pad": 1.5})


#: Colour of misfit warnings in figures.
MISFIT_COLOUR = "#b00000"


#: |log10 B| below which evidence is "not worth more than a bare mention" (Kass & Raftery
#: 1995, 2 ln B < 2, i.e. log10 B < 1 / ln 10 = 0.434).
BARE_MENTION_LOG10 = 1.0 / np.log(10.0)


def comparison_figure(probabilities, evidence=None, *, prior_probabilities=None, errors=None,
                      fig=None, title=None):
    """Interpretation probabilities under each thermal-state prior, and each prior's evidence.

    Parameters
    ----------
    probabilities : pandas.DataFrame
        Index: hypotheses; columns: thermal-state priors; values: posterior probabilities.
    evidence : pandas.DataFrame, optional
        Index: thermal-state priors; columns ``log_evidence`` and ``log_evidence_error`` (natural
        log). Drawn relative to the largest, as log10 of the evidence ratio, with the band in
        which the evidence is "not worth more than a bare mention" (Kass & Raftery 1995) and an
        axis at least two log10 units wide, so that small differences look small.
    prior_probabilities : pandas.DataFrame, optional
        Same shape as ``probabilities``: each interpretation's prior probability under each
        thermal-state prior, drawn as an outline bar beside the posterior's filled bar.
    errors : pandas.DataFrame, optional
        Same shape as ``probabilities``: their Monte Carlo errors, drawn as error bars.
    """
    hyps = list(probabilities.index)
    priors = list(probabilities.columns)
    with style_context():
        fig = _fig(fig, (8.4 if evidence is not None else 6.2, 3.8))
        if evidence is not None:
            ax, axe = fig.subplots(1, 2, width_ratios=(2.3, 1))
        else:
            ax, axe = fig.add_subplot(), None
        x = np.arange(len(hyps))
        per = 2 if prior_probabilities is not None else 1
        w = 0.8 / max(len(priors) * per, 1)
        hatches = ("", "///", "..", "xx", "\\\\", "oo")
        for j, pr in enumerate(priors):
            c = PALETTE[j % len(PALETTE)]
            off = (per * j - (per * len(priors) - 1) / 2) * w
            if prior_probabilities is not None:
                ax.bar(x + off, prior_probabilities.loc[hyps, pr].to_numpy(float), w,
                       facecolor="none", edgecolor=c, lw=1.0, ls="--",
                       label=f"{_readable(pr)}: prior")
                off += w
            ax.bar(x + off, probabilities[pr].to_numpy(float), w, color=c,
                   hatch=hatches[j % len(hatches)], edgecolor="white", lw=0.5,
                   label=f"{_readable(pr)}: posterior" if per == 2 else _readable(pr),
                   yerr=None if errors is None else errors.loc[hyps, pr].to_numpy(float),
                   error_kw={"ecolor": "#000000", "elinewidth": 0.8, "capsize": 2})
        ax.set_xticks(x, [str(h) for h in hyps], rotation=25, ha="right")
        ax.set_ylim(0, 1.02)
        ax.set_ylabel("probability" + ("" if errors is None else " (bars: ±1 MC error)"))
        # below the panels: inside, it covered the bars of the last interpretations
        fig.legend(*ax.get_legend_handles_labels(), title="thermal-state prior",
                   loc="outside lower center", ncols=min(len(priors) * per, 6), fontsize=7)
        if axe is not None:
            le = evidence.loc[priors, "log_evidence"].to_numpy(float)
            err = evidence.loc[priors, "log_evidence_error"].to_numpy(float)
            rel = (le - np.max(le)) / np.log(10.0)
            y = np.arange(len(priors))
            axe.axvspan(-BARE_MENTION_LOG10, 0, color=PRIOR_GREY, alpha=0.2, lw=0,
                        label="not worth more than\na bare mention")
            for j in range(len(priors)):
                axe.errorbar(rel[j], y[j], xerr=err[j] / np.log(10.0), fmt=MARKERS[j % 8],
                             color=PALETTE[j % len(PALETTE)], capsize=3)
            axe.axvline(0, color="#000000", lw=0.6)
            axe.set_xlim(min(-2.0, float(np.min(rel)) - 0.3), 0.25)
            axe.set_yticks(y, [_readable(p) for p in priors])
            axe.invert_yaxis()
            axe.set_xlabel("log10 evidence relative to best")
            axe.set_title("evidence\n(Kass & Raftery 1995 scale)")
            axe.legend(loc="best", fontsize=6.5)
        if title:
            fig.suptitle(title)
    return fig


def forward_figure(table, *, x="temperature_c", fig=None, ax=None, title=None):
    """Forward-model velocities (and density) against one varied input.

    Parameters
    ----------
    table : pandas.DataFrame
        Columns ``x`` and ``vp``, ``vs`` (km/s), optionally ``density``.
    """
    with style_context():
        if ax is None:
            fig = _fig(fig, (5.2, 3.4))
            ax = fig.add_subplot()
        else:
            fig = ax.figure
        d = table.sort_values(x)
        ax.plot(d[x], d["vp"], color=PALETTE[0], marker=MARKERS[0], ms=3, label="Vp")
        ax.plot(d[x], d["vs"], color=PALETTE[1], ls="--", marker=MARKERS[1], ms=3, label="Vs")
        ax.set_xlabel(label(x))
        ax.set_ylabel("velocity (km/s)")
        if "density" in d:
            ax2 = ax.twinx()
            ax2.plot(d[x], d["density"], color=PALETTE[2], ls=":", label="density")
            ax2.set_ylabel(label("density"))
            ax2.spines["right"].set_visible(True)
            h1, l1 = ax.get_legend_handles_labels()
            h2, l2 = ax2.get_legend_handles_labels()
            ax.legend(h1 + h2, l1 + l2, loc="best")
        else:
            ax.legend(loc="best")
        if title:
            ax.set_title(title)
    return fig
