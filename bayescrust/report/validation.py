"""Figure of the forward model against the published laboratory table.

Reads the entries of :func:`bayescrust.physics.labdata.lab_misfit` (computed elsewhere) and
draws, per observable, the published range of every row with the model value on it. Returns the
Figure; saving is the caller's job.
"""

from __future__ import annotations

from .style import PALETTE, new_figure, style_context

__all__ = ["lab_misfit_figure"]

_OBS = (("vp", "Vp (km/s)"), ("vp_ratio", "Vp / Vp(fresh)"), ("vp_vs", "Vp/Vs"),
        ("density", "density (g/cm$^3$)"))


def lab_misfit_figure(misfit, *, fig=None):
    """Model versus laboratory: one panel per observable, one row per laboratory condition.

    Parameters
    ----------
    misfit : list of dict
        Output of :func:`bayescrust.physics.labdata.lab_misfit`.
    fig : matplotlib.figure.Figure, optional
        Figure to draw into (cleared); a new one by default.

    Returns
    -------
    matplotlib.figure.Figure
        Published ranges as bars (grey for rows not used in the calibration), model values as
        dots (filled inside the range, open outside).
    """
    panels = [(k, lab) for k, lab in _OBS if any(e["observable"] == k for e in misfit)]
    with style_context():
        if fig is None:
            fig = new_figure((3.0 * len(panels), 0.28 * len({e["id"] for e in misfit}) + 1.4))
        else:
            fig.clear()
        ids = list(dict.fromkeys(e["id"] for e in misfit))
        axes = fig.subplots(1, len(panels), sharey=True, squeeze=False)[0]
        for ax, (k, lab) in zip(axes, panels, strict=True):
            for e in (e for e in misfit if e["observable"] == k):
                y = ids.index(e["id"])
                color = PALETTE[0] if e["calibrate"] else "0.6"
                ax.plot([e["low"], e["high"]], [y, y], color=color, lw=4, alpha=0.45,
                        solid_capstyle="butt")
                ax.plot(e["model"], y, "o", color=PALETTE[1],
                        mfc=PALETTE[1] if e["inside"] else "white", ms=5)
            ax.set_xlabel(lab)
        axes[0].set_yticks(range(len(ids)), ids)
        axes[0].invert_yaxis()
        fig.suptitle("forward model (dots) vs published laboratory ranges (bars)")
    return fig
