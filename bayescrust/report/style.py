"""Visual style of bayescrust figures: palette, labels with units, figure factory.

The palette is the 8-colour set of Okabe & Ito (2008), distinguishable under the common forms
of colour-vision deficiency; line styles and markers double the colour code so that figures also
read in greyscale print.
"""

from __future__ import annotations

__all__ = ["PALETTE", "LINESTYLES", "MARKERS", "label", "new_figure", "style_context",
           "PRIOR_GREY", "short_label"]

#: Okabe & Ito colour-blind-safe colours, most distinct first (black last).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#F0E442",
           "#000000")
LINESTYLES = ("-", "--", ":", "-.", (0, (5, 1, 1, 1, 1, 1)), (0, (1, 3)))
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
PRIOR_GREY = "#8c8c8c"

_RC = {
    "font.size": 9.0,
    "axes.titlesize": 9.5,
    "axes.labelsize": 9.0,
    "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0,
    "legend.fontsize": 8.0,
    "legend.frameon": False,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": False,
    "lines.linewidth": 1.4,
    "savefig.dpi": 200,
    "figure.dpi": 100,
    "pdf.fonttype": 42,
}

#: Quantity name -> axis label with unit.
_LABELS = {
    "temperature_c": "temperature (°C)",
    "porosity": "porosity (volume fraction)",
    "aspect_ratio": "pore aspect ratio",
    "melt_fraction": "melt fraction (volume)",
    "melt_aspect_ratio": "melt aspect ratio",
    "serpentinization": "serpentinisation (fraction of ultramafic volume)",
    "vp": "Vp (km/s)",
    "vs": "Vs (km/s)",
    "vp_vs": "Vp/Vs",
    "density": "density (g/cm³)",
    "pressure_gpa": "pressure (GPa)",
    "ultramafic_fraction": "ultramafic fraction (volume)",
    "gabbroic_fraction": "gabbroic fraction (volume)",
    "basaltic_fraction": "basaltic fraction (volume)",
    "solidus_c": "solidus (°C)",
    "melt_fraction_effective": "melt fraction, effective",
    "serpentinization_effective": "serpentinisation, effective",
    "serpentine_fraction": "serpentine fraction (volume)",
}


_SHORT = {
    "temperature_c": "T (°C)", "porosity": "porosity", "aspect_ratio": "aspect ratio",
    "melt_fraction": "melt frac.", "melt_aspect_ratio": "melt aspect", "serpentinization":
    "serpentinisation", "vp": "Vp (km/s)", "vs": "Vs (km/s)", "vp_vs": "Vp/Vs",
    "density": "ρ (g/cm³)", "ultramafic_fraction": "ultramafic frac.",
    "melt_fraction_effective": "melt (effective)",
    "serpentinization_effective": "serpentinis. (effective)",
}


def short_label(name: str) -> str:
    """Compact axis label for crowded figures (corner plots)."""
    return _SHORT.get(name, f"{name.replace('_', ' ')} frac.")


def label(name: str) -> str:
    """Axis label with unit for a quantity name (rock names become 'NAME fraction')."""
    if name in _LABELS:
        return _LABELS[name]
    return f"{name.replace('_', ' ')} fraction"


def style_context():
    """A matplotlib ``rc_context`` with the bayescrust style."""
    import matplotlib

    return matplotlib.rc_context(_RC)


def new_figure(figsize=(6.0, 4.0), **kw):
    """A stand-alone Figure (no pyplot state) in the bayescrust style."""
    from matplotlib.figure import Figure

    with style_context():
        return Figure(figsize=figsize, layout=kw.pop("layout", "constrained"), **kw)
