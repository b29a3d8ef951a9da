"""Named interpretations (regions of parameter space) and their probabilities.

A hypothesis is ``{quantity: (lo, hi), ...}``: the AND of closed ranges ``lo <= x <= hi`` over
parameters, rock fractions (by rock name) and derived quantities (see
:data:`bayescrust.inference.model.DERIVED_QUANTITIES`); ``None`` or an infinite bound leaves a
side open.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["default_hypotheses", "default_rocks", "depth_zone", "describe_hypotheses",
           "validate_hypotheses", "indicators", "evidence_category", "KASS_RAFTERY", "MOSTLY",
           "DEPTH_ZONES"]

#: Kass & Raftery (1995, J. Am. Stat. Assoc. 90, 773, p. 777) categories on 2 ln(B).
KASS_RAFTERY = (
    (2.0, "not worth more than a bare mention"),
    (6.0, "positive"),
    (10.0, "strong"),
    (math.inf, "very strong"),
)

_INF = math.inf


#: Lithology cut: a class "mostly X" needs rock family X to make up at least this volume
#: fraction; below it in every family a draw is "mixed / transition" (``common practice``:
#: a rock named after a family is dominated by it; 0.8 keeps 50/50 mixtures out of both).
MOSTLY = 0.8
#: Serpentine volume fraction of the rock (from serpentinised peridotite or serpentinite) above
#: which a mantle rock is "serpentinised" (``common practice``).
SERPENTINISED = 0.1
#: Effective melt fraction above which a rock is "partially molten" (``common practice``).
MOLTEN = 0.005
#: Temperature dividing cold from hot mantle, deg C (``common practice``).
HOT_MANTLE_C = 900.0
#: Temperature dividing cold from hot gabbro, deg C (``common practice``).
HOT_GABBRO_C = 600.0
#: Porosity above which a basalt or diabase is "porous" (``common practice``).
POROUS = 0.05

#: Depth zones below the seafloor (mid-depth of a layer, km) and their default rock sets:
#: Layer 2 (extrusives and dikes) above the porosity transition of the default priors; Layer 3
#: (gabbros) down to the normal crustal thickness of ``physics/data/thermal.toml``
#: (``[lithostatic] crust_thickness_km``); below it the uppermost mantle, where gabbro is kept
#: for the crust-mantle transition.
DEPTH_ZONES = (
    ("Layer 2", ("basalt", "diabase")),
    ("Layer 3", ("gabbro", "olivine_gabbro")),
    ("uppermost mantle", ("gabbro", "harzburgite")),
)

_LITHOLOGY = (("basaltic", "basalt / diabase"), ("gabbroic", "gabbro"),
              ("ultramafic", "mantle"))
_NEXT_BELOW = float(np.nextafter(MOSTLY, -_INF))


def depth_zone(mid_depth_km: float) -> str:
    """Name of the depth zone of a layer's mid-depth below the seafloor (see DEPTH_ZONES)."""
    from ..physics._data import load_table
    from .model import _DEPTH_POROUS_KM

    moho = float(load_table("thermal")["lithostatic"]["crust_thickness_km"])
    if mid_depth_km < _DEPTH_POROUS_KM:
        return "Layer 2"
    return "Layer 3" if mid_depth_km < moho else "uppermost mantle"


def default_rocks(mid_depth_km: float) -> tuple[str, ...]:
    """Default end-member rocks of a layer from its depth zone (see :data:`DEPTH_ZONES`).

    Examples
    --------
    >>> default_rocks(0.5), default_rocks(3.0), default_rocks(6.5)
    (('basalt', 'diabase'), ('gabbro', 'olivine_gabbro'), ('gabbro', 'harzburgite'))
    """
    return dict(DEPTH_ZONES)[depth_zone(mid_depth_km)]


def default_hypotheses(rocks, *, porosity_max: float | None = None) -> dict:
    """Default interpretations for the chosen rocks: a partition of the parameter space.

    Every posterior draw falls in exactly one class. Lithology first: "mostly X" when rock
    family X (basaltic, gabbroic, ultramafic - peridotites and serpentinites) makes up
    >= :data:`MOSTLY` of the volume; "mixed / transition" when no family does (offered when
    two or more families are present). Then the state within each lithology:

    - mantle: "serpentinised mantle" (serpentine >= 0.1 of the rock volume), else "partially
      molten mantle" (effective melt >= 0.005), else "hot mantle" (T >= 900 deg C) or
      "cold mantle" (T < 900 deg C);
    - gabbro: "partially molten gabbro" (effective melt >= 0.005), else "hot gabbro"
      (T >= 600 deg C) or "cold gabbro";
    - basalt / diabase: "porous basalt / diabase" (porosity >= 0.05) or "low-porosity basalt /
      diabase"; not split when ``porosity_max`` (the prior's upper bound) is below 0.05.

    Parameters
    ----------
    rocks : sequence of str
        Rock names (as in ``bayescrust.ROCKS``).
    porosity_max : float, optional
        Upper bound of the porosity prior.

    Returns
    -------
    dict
        ``{name: {quantity: (lo, hi)}}``; the boxes are disjoint and cover the space.

    Examples
    --------
    >>> sorted(default_hypotheses(("gabbro", "harzburgite")))  # doctest: +NORMALIZE_WHITESPACE
    ['cold gabbro', 'cold mantle', 'hot gabbro', 'hot mantle', 'mixed / transition',
     'partially molten gabbro', 'partially molten mantle', 'serpentinised mantle']
    """
    from ..physics.rocks import ROCKS
    from .model import _BASALTIC, _GABBROIC

    rocks = tuple(rocks)
    unknown = [r for r in rocks if r not in ROCKS]
    if unknown:
        raise ValueError(f"rocks: unknown rock {unknown}; allowed {sorted(ROCKS)}")
    present = {
        "basaltic": any(r in _BASALTIC for r in rocks),
        "gabbroic": any(r in _GABBROIC for r in rocks),
        "ultramafic": any(r not in _BASALTIC and r not in _GABBROIC for r in rocks),
    }
    fams = [f for f, _ in _LITHOLOGY if present[f]]
    several = len(fams) > 1
    h = {}
    for fam, label in _LITHOLOGY:
        if not present[fam]:
            continue
        base = {f"{fam}_fraction": (MOSTLY, 1.0)} if several else {}
        if fam == "ultramafic":
            fresh = {**base, "serpentine_fraction": (0.0, SERPENTINISED)}
            dry = {**fresh, "melt_fraction_effective": (0.0, MOLTEN)}
            h["serpentinised mantle"] = {**base, "serpentine_fraction": (SERPENTINISED, 1.0)}
            h["partially molten mantle"] = {**fresh, "melt_fraction_effective": (MOLTEN, 1.0)}
            h["hot mantle"] = {**dry, "temperature_c": (HOT_MANTLE_C, _INF)}
            h["cold mantle"] = {**dry, "temperature_c": (-_INF, HOT_MANTLE_C)}
        elif fam == "gabbroic":
            dry = {**base, "melt_fraction_effective": (0.0, MOLTEN)}
            h["partially molten gabbro"] = {**base, "melt_fraction_effective": (MOLTEN, 1.0)}
            h["hot gabbro"] = {**dry, "temperature_c": (HOT_GABBRO_C, _INF)}
            h["cold gabbro"] = {**dry, "temperature_c": (-_INF, HOT_GABBRO_C)}
        elif porosity_max is not None and porosity_max <= POROUS:
            h[label] = base or {"basaltic_fraction": (0.0, 1.0)}
        else:
            h[f"porous {label}"] = {**base, "porosity": (POROUS, 1.0)}
            h[f"low-porosity {label}"] = {**base, "porosity": (0.0, POROUS)}
    if several:
        h["mixed / transition"] = {f"{f}_fraction": (0.0, _NEXT_BELOW) for f in fams}
    return _disjoint(h)


def _disjoint(h: dict) -> dict:
    """Make shared cut points belong to one side only (upper bounds open by one ulp)."""
    cuts = {}
    for ranges in h.values():
        for q, (lo, _hi) in ranges.items():
            cuts.setdefault(q, set()).add(lo)
    out = {}
    for name, ranges in h.items():
        out[name] = {q: (lo, float(np.nextafter(hi, -_INF)) if hi in cuts[q] and
                         math.isfinite(hi) else hi) for q, (lo, hi) in ranges.items()}
    return out


def describe_hypotheses(hypotheses: dict) -> dict[str, str]:
    """Readable definition of each interpretation, e.g. ``"ultramafic_fraction >= 0.8 and ..."``."""
    out = {}
    for name, ranges in hypotheses.items():
        parts = []
        for q, (lo, hi) in ranges.items():
            lo_s = None if not math.isfinite(lo) else f"{lo:.4g}"
            hi_s = None if not math.isfinite(hi) else f"{hi:.4g}"
            up = float(np.nextafter(hi, _INF)) if math.isfinite(hi) else hi
            strict = math.isfinite(hi) and float(f"{up:.4g}") == up and float(hi_s) != hi
            op, hi_s = ("<", f"{up:.4g}") if strict else ("<=", hi_s)
            if lo_s and hi_s:
                parts.append(f"{lo_s} <= {q} {op} {hi_s}")
            elif lo_s:
                parts.append(f"{q} >= {lo_s}")
            elif hi_s:
                parts.append(f"{q} {op} {hi_s}")
            else:
                parts.append(f"any {q}")
        out[name] = " and ".join(parts)
    return out


def validate_hypotheses(hypotheses, allowed) -> dict:
    """Check names, quantities and ranges; return ``{name: {q: (lo, hi)}}`` with float bounds."""
    if not isinstance(hypotheses, dict):
        raise ValueError(f"hypotheses must be a dict name -> {{quantity: (lo, hi)}}; got "
                         f"{type(hypotheses).__name__}")
    out = {}
    for name, ranges in hypotheses.items():
        if not isinstance(ranges, dict) or not ranges:
            raise ValueError(f"hypothesis {name!r} must be a non-empty dict {{quantity: (lo, hi)}}")
        clean = {}
        for q, rng in ranges.items():
            if q not in allowed:
                raise ValueError(f"hypothesis {name!r}: unknown quantity {q!r}; allowed "
                                 f"{sorted(allowed)}")
            try:
                lo, hi = rng
                lo = -_INF if lo is None else float(lo)
                hi = _INF if hi is None else float(hi)
            except (TypeError, ValueError) as exc:
                raise ValueError(f"hypothesis {name!r}: {q} must be a (lo, hi) pair; got "
                                 f"{rng!r}") from exc
            if math.isnan(lo) or math.isnan(hi) or not lo < hi:
                raise ValueError(f"hypothesis {name!r}: {q} range must satisfy lo < hi; got "
                                 f"({lo:g}, {hi:g})")
            clean[q] = (lo, hi)
        out[str(name)] = clean
    return out


def indicators(hypotheses: dict, quantities: dict) -> dict[str, np.ndarray]:
    """Boolean membership of each sample in each hypothesis (arrays shaped like the quantities)."""
    out = {}
    for name, ranges in hypotheses.items():
        m = None
        for q, (lo, hi) in ranges.items():
            x = quantities[q]
            inside = (x >= lo) & (x <= hi)
            m = inside if m is None else (m & inside)
        out[name] = m
    return out


def evidence_category(log10_bf: float) -> str:
    """Kass & Raftery (1995) category of a Bayes factor given as log10(B).

    Uses their scale on ``2 ln B``: 0-2 not worth more than a bare mention, 2-6 positive,
    6-10 strong, > 10 very strong; negative values are labelled "against: ...".
    """
    if math.isnan(log10_bf):
        return "undefined"
    two_ln_b = 2.0 * math.log(10.0) * log10_bf
    mag = abs(two_ln_b)
    label = next(lab for lim, lab in KASS_RAFTERY if mag < lim or lim == math.inf)
    return label if two_ln_b >= 0 else f"against: {label}"
