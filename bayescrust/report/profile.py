"""Tables and the figure of a profile result (reads results; computes no physics).

The figure's solidus and serpentine-stability curves are passed in by the caller (the CLI
evaluates them with :mod:`bayescrust.physics.thermal`), so this module stays a reader.
"""

from __future__ import annotations

import numpy as np

from .style import PALETTE

__all__ = ["hypothesis_table", "boundary_table", "thermal_table", "evidence_table",
           "profile_figure", "interpretation_styles", "thermal_verdict", "convergence_line",
           "misfit_title_line"]

_HATCHES = ("", "//", "..", "xx", "\\\\", "oo")


def interpretation_styles(n):
    """``n`` distinct (colour, hatch) pairs for stacked interpretation bars.

    Up to 8: the package's Okabe-Ito palette (colour-blind safe). Up to 20: matplotlib's
    ``tab20`` colours (10 hues, dark and light). Beyond: the ``tab20`` colours again with a
    hatch pattern per cycle, so no two interpretations share both colour and hatch.
    """
    if n <= len(PALETTE):
        return [(c, "") for c in PALETTE[:n]]
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    tab = [to_hex(c) for c in colormaps["tab20"].colors]
    if n > len(tab) * len(_HATCHES):
        raise ValueError(f"at most {len(tab) * len(_HATCHES)} interpretations can be drawn; "
                         f"got {n}")
    return [(tab[j % len(tab)], _HATCHES[j // len(tab)]) for j in range(n)]


def hypothesis_table(result):
    """Per-layer hypotheses, wide: rows (layer, hypothesis), probability and mcse."""
    return result.hypotheses.set_index(["layer", "hypothesis"])


def _with_fit(table, result):
    """``table`` with the whole profile's ``data_fit`` (every layer enters these answers)."""
    fit = result.data_fit
    return table.assign(data_fit=fit) if fit else table


def boundary_table(result):
    """Crust-mantle boundary outcomes plus the thickness summary as trailing rows, with the
    whole profile's ``data_fit``."""
    import pandas as pd

    b = result.boundary.set_index("outcome")
    t = result.thickness
    extra = pd.DataFrame({"depth_km": [np.nan] * 3, "thickness_km": [t["mean_km"], t["sd_km"],
                                                                     t["median_km"]],
                          "probability": [np.nan] * 3, "mcse": [np.nan] * 3},
                         index=pd.Index(["thickness mean | boundary", "thickness sd | boundary",
                                         "thickness median | boundary"], name="outcome"))
    return _with_fit(pd.concat([b, extra]), result)


def thermal_table(result):
    """Thermal-parameter posterior summary, with the whole profile's ``data_fit``."""
    return _with_fit(result.thermal.set_index("parameter"), result)


def evidence_table(comparison):
    """Evidence of each thermal state (from :func:`compare_thermal_states`)."""
    return comparison.evidence


def thermal_verdict(comparison) -> str:
    """Which thermal state the whole profile favours, in one Markdown paragraph.

    The best state against the runner-up: log10 Bayes factor with its Monte Carlo error and
    its Kass & Raftery (1995) category (:func:`bayescrust.inference.hypotheses.evidence_category`,
    the package's one scale: ``2 ln B`` below 2 is "not worth more than a bare mention"). In
    that category no state is called favoured; a factor within two of its errors is called
    unresolved.
    """
    from ..inference.hypotheses import KASS_RAFTERY, evidence_category
    from .tables import _decimals

    ev = comparison.evidence.sort_values("log_evidence", ascending=False)
    names = list(ev.index)
    p = ev["posterior_probability"]
    pe = ev["posterior_probability_error"] if "posterior_probability_error" in ev else 0 * p

    def pm(x, e):  # rounded to the error's second significant figure (as the tables)
        d = _decimals(float(e)) if e > 0 else 3
        return f"{x:.{d}f} +- {e:.{d}f}"

    def prob(n):
        return pm(p[n], pe[n])

    best = names[0]
    if len(names) == 1:
        return (f"Thermal state favoured by the whole profile: only **{best}** was computed "
                "(no comparison).")
    second = names[1]
    le = ev["log_evidence_error"]
    lbf = float(ev["log_evidence"].iloc[0] - ev["log_evidence"].iloc[1]) / np.log(10.0)
    err = float(np.hypot(le.iloc[0], le.iloc[1])) / np.log(10.0)
    cat = evidence_category(lbf)
    tie = f"log10 Bayes factor {pm(lbf, err)}, \"{cat}\" (Kass & Raftery 1995)"
    probs = (f"{best} {prob(best)} against {second} {prob(second)} (posterior probabilities "
             "with equal prior weights)")
    if cat == KASS_RAFTERY[0][1]:
        return (f"Thermal state favoured by the whole profile: **none**. The best two are a "
                f"statistical tie: {probs}; {tie}. Report the answers under each state "
                "(answers_by_state.*), not one state's.")
    bare = KASS_RAFTERY[0][0] / (2.0 * np.log(10.0))  # the category's edge in log10 B
    unresolved = (" The Monte Carlo error does not resolve this factor (within two errors of "
                  "a bare mention); rerun with larger designs before quoting it."
                  if lbf - 2 * err < bare else "")
    return (f"Thermal state favoured by the whole profile: **{best}**: {probs}; {tie} for "
            f"{best} against {second}.{unresolved}")


def convergence_line(result) -> str:
    """MCMC: ``converged: yes|no`` (the one rule: the sampler's stopping rule and every R-hat
    below RHAT_MAX; the largest R-hat is given) with the smallest effective
    sizes: of the chain (thermal parameters or joint coordinates) and, for the collapsed
    scheme, of the layers' designs at the kept draws (below ~100 raise ``n_layer``,
    docs/profile.md). ``""`` for the exact path."""
    if result.method != "mcmc":
        return ""
    d = result.diagnostics
    parts = []
    ess, coords = d.get("ess") or [], d.get("coordinates") or []
    if len(ess):
        k = int(np.argmin(ess))
        name = f" ({coords[k]})" if k < len(coords) else ""
        parts.append(f"smallest chain ESS {float(ess[k]):.0f}{name}")
    lay = d.get("layer_ess_min")
    if lay:
        k = int(np.argmin(lay))
        flag = " (below ~100: raise n_layer)" if lay[k] < 100 else ""
        parts.append(f"smallest layer importance ESS {float(lay[k]):.0f} "
                     f"({result.profile.names[k]}){flag}")
    rule = d.get("convergence_rule") or "the sampler's stopping rule"
    if np.isfinite(d.get("max_r_hat", np.nan)):
        parts.insert(0, f"largest R-hat {float(d['max_r_hat']):.3f}")
    return (f"converged: {'yes' if d.get('converged') else 'NO'} ({rule}; "
            + "; ".join(parts) + ")")


def misfit_title_line(result) -> str:
    """A figure-title line naming the misfitting layers (``""`` when every layer fits)."""
    from ..inference.trust import misfit_details

    checks = result.predictive_check
    bad = result.misfit_layers
    if not bad:
        return ""
    return "DATA MISFIT: " + "; ".join(f"{n}: {misfit_details(checks[n])}" for n in bad)


def profile_figure(result, *, geotherm=None, solidus=None, serpentine=None, fig=None):
    """Five panels against depth: temperature, velocities, Vp/Vs, interpretations, boundary.

    Parameters
    ----------
    result : ProfileResult
    geotherm : (depth_km, lo, mid, hi), optional
        Geotherm band (e.g. 5 / 50 / 95 % of the posterior geotherm), deg C.
    solidus, serpentine : (depth_km, temperature_c), optional
        Peridotite solidus and serpentine stability limit.
    fig : matplotlib Figure, optional

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.figure import Figure

    prof = result.profile
    fig = fig or Figure(figsize=(16, 6.5))  # not pyplot: nothing left in its global state
    axes = fig.subplots(1, 5, sharey=True)
    mids = prof.mid_depths_km
    tops, bots = prof.tops_km, prof.bottoms_km
    lay = result.draws["layers"]
    # 1. temperature
    ax = axes[0]
    if geotherm is not None:
        z, lo, mid, hi = geotherm
        ax.fill_betweenx(z, lo, hi, color=PALETTE[0], alpha=0.2, label="geotherm 90 %")
        ax.plot(mid, z, color=PALETTE[0], lw=1)
    t = lay["temperature_c"]
    q = np.nanquantile(t, [0.05, 0.5, 0.95], axis=0)
    ax.errorbar(q[1], mids, xerr=[q[1] - q[0], q[2] - q[1]], fmt="o", color="k", ms=4,
                label="layer T (90 %)")
    if solidus is not None:
        ax.plot(solidus[1], solidus[0], "--", color=PALETTE[3], label="peridotite solidus")
    if serpentine is not None:
        ax.plot(serpentine[1], serpentine[0], ":", color=PALETTE[2], label="serpentine limit")
    ax.set_xlabel("temperature (deg C)")
    ax.set_ylabel("depth below seafloor (km)")
    ax.legend(fontsize=7, loc="lower left")
    # 2. velocities observed and predicted
    ax = axes[1]
    for k, c in (("vp", PALETTE[0]), ("vs", PALETTE[1])):
        p = np.nanquantile(lay[k], [0.05, 0.5, 0.95], axis=0)
        ax.errorbar(p[1], mids + 0.08, xerr=[p[1] - p[0], p[2] - p[1]], fmt="s", ms=3,
                    color=c, label=f"{k} predicted")
        for i, layer in enumerate(prof.layers):
            ob = layer.observed.get(k)
            if ob is not None:
                ax.errorbar(ob[0], mids[i] - 0.08, xerr=ob[1], fmt="o", mfc="none", color=c,
                            label=f"{k} observed" if i == 0 or "vp" != k else None)
    ax.set_xlabel("velocity (km/s)")
    handles, labels = ax.get_legend_handles_labels()
    keep = dict(zip(labels, handles, strict=True))
    ax.legend(keep.values(), keep.keys(), fontsize=7)
    # 3. Vp/Vs observed (a Vp/Vs datum, or Vp and Vs with first-order error propagation)
    #    and predicted
    ax = axes[2]
    ratio = lay["vp_vs"] if "vp_vs" in lay else lay["vp"] / lay["vs"]
    r = np.nanquantile(ratio, [0.05, 0.5, 0.95], axis=0)
    ax.errorbar(r[1], mids + 0.08, xerr=[r[1] - r[0], r[2] - r[1]], fmt="s", ms=3,
                color=PALETTE[2], label="Vp/Vs predicted")
    for i, layer in enumerate(prof.layers):
        ob = layer.observed
        if "vp_vs" in ob:
            val, err = ob["vp_vs"]
        elif "vp" in ob and "vs" in ob:
            val = ob["vp"][0] / ob["vs"][0]
            err = val * np.hypot(ob["vp"][1] / ob["vp"][0], ob["vs"][1] / ob["vs"][0])
        else:
            continue
        ax.errorbar(val, mids[i] - 0.08, xerr=err, fmt="o", mfc="none", color=PALETTE[2],
                    label="Vp/Vs observed")
    ax.set_xlabel("Vp/Vs")
    handles, labels = ax.get_legend_handles_labels()
    keep = dict(zip(labels, handles, strict=True))
    ax.legend(keep.values(), keep.keys(), fontsize=7)
    # 4. stacked interpretation probabilities
    ax = axes[3]
    h = result.hypotheses[result.hypotheses["hypothesis"] != "mantle rock"]
    names = list(dict.fromkeys(h["hypothesis"]))
    styles = interpretation_styles(len(names))
    for i, layer in enumerate(prof.names):
        left = 0.0
        sub = h[h["layer"] == layer].set_index("hypothesis")["probability"]
        for j, name in enumerate(names):
            w = float(sub.get(name, 0.0))
            colour, hatch = styles[j]
            ax.barh(mids[i], w, left=left, height=0.9 * (bots[i] - tops[i]), color=colour,
                    hatch=hatch or None, edgecolor="white" if hatch else None, linewidth=0,
                    label=name if i == 0 else None)
            left += w
    ax.set_xlabel("probability (hypotheses may overlap)")
    ax.set_xlim(0.0, 1.0)
    # below the panels, outside every axes, so it never covers the bars
    fig.legend(*ax.get_legend_handles_labels(), loc="lower center", fontsize=7.5,
               ncol=min(len(names), 6), frameon=False, title="interpretations (panel 4)",
               title_fontsize=8)
    n_rows = -(-len(names) // 6)
    # 5. boundary depth
    ax = axes[4]
    b = result.boundary
    ax.barh(b["depth_km"].iloc[:-1], b["probability"].iloc[:-1], height=0.3, color=PALETTE[4])
    ax.set_xlabel("P(crust-mantle boundary)")
    ax.text(0.02, 0.02, f"P(no boundary in section) = {b['probability'].iloc[-1]:.3f}",
            transform=ax.transAxes, fontsize=8)
    for a in axes:
        for z in tops:
            a.axhline(z, color="0.85", lw=0.5, zorder=0)
    axes[0].set_ylim(bots[-1], 0.0)
    method = {"exact": "exact path", "mcmc": "MCMC"}.get(result.method, result.method)
    bad = misfit_title_line(result)  # in the title, where a reader looks first
    fig.suptitle(f"{prof.name}\n{prof.thermal.label()} ({method})" + (f"\n{bad}" if bad else ""),
                 fontsize=9.5, color="#b00000" if bad else None)
    # room for the interpretation legend below the panels (about 0.2 in per row of entries)
    fig.subplots_adjust(left=0.05, right=0.99, top=0.85 if bad else 0.88,
                        bottom=min(0.45, (0.75 + 0.2 * n_rows) / fig.get_figheight()))
    return fig
