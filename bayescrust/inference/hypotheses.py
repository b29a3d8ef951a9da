"""Named interpretations (regions of parameter space) and their probabilities.

A hypothesis is ``{quantity: (lo, hi), ...}``: the AND of closed ranges ``lo <= x <= hi`` over
parameters, rock fractions (by rock name) and derived quantities (see
:data:`bayescrust.inference.model.DERIVED_QUANTITIES`); ``None`` or an infinite bound leaves a
side open.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["default_hypotheses", "validate_hypotheses", "indicators", "evidence_category",
           "KASS_RAFTERY"]

#: Kass & Raftery (1995, J. Am. Stat. Assoc. 90, 773, p. 777) categories on 2 ln(B).
KASS_RAFTERY = (
    (2.0, "not worth more than a bare mention"),
    (6.0, "positive"),
    (10.0, "strong"),
    (math.inf, "very strong"),
)

_INF = math.inf


def default_hypotheses(rocks) -> dict:
    """Default interpretations for the chosen rocks.

    - "cold gabbro": gabbroic fraction >= 0.5 and T <= 600 deg C (if a gabbroic rock is present);
    - "hot mantle": ultramafic fraction >= 0.5 and T >= 900 deg C;
    - "cold mantle": ultramafic fraction >= 0.5, T <= 600 deg C and effective serpentinisation
      <= 0.1;
    - "serpentinised mantle": ultramafic fraction >= 0.5 and effective serpentinisation >= 0.1
      (if a peridotite is present) - or serpentinite end-member fraction >= 0.5;
    - "porous basalt": basaltic fraction >= 0.5 and porosity >= 0.05 (if basalt/diabase present);
    - "melt present": effective melt fraction >= 0.005 (if a rock that can melt is present).

    Parameters
    ----------
    rocks : sequence of str
        Rock names (as in ``bayescrust.ROCKS``).

    Returns
    -------
    dict
        ``{name: {quantity: (lo, hi)}}``.

    Examples
    --------
    >>> sorted(default_hypotheses(("gabbro", "harzburgite")))
    ['cold gabbro', 'cold mantle', 'hot mantle', 'melt present', 'serpentinised mantle']
    """
    from ..physics.rocks import ROCKS

    rocks = tuple(rocks)
    unknown = [r for r in rocks if r not in ROCKS]
    if unknown:
        raise ValueError(f"rocks: unknown rock {unknown}; allowed {sorted(ROCKS)}")
    peridotite = any(ROCKS[r].ultramafic for r in rocks)
    serpentinite = any(r in ("serpentinite", "antigorite_serpentinite") for r in rocks)
    gabbroic = any(r in ("gabbro", "olivine_gabbro", "troctolite") for r in rocks)
    basaltic = any(r in ("basalt", "diabase") for r in rocks)
    h = {}
    if gabbroic:
        h["cold gabbro"] = {"gabbroic_fraction": (0.5, 1.0), "temperature_c": (-_INF, 600.0)}
    if peridotite or serpentinite:
        h["hot mantle"] = {"ultramafic_fraction": (0.5, 1.0), "temperature_c": (900.0, _INF)}
    if peridotite:
        h["cold mantle"] = {"ultramafic_fraction": (0.5, 1.0), "temperature_c": (-_INF, 600.0),
                            "serpentinization_effective": (0.0, 0.1)}
        h["serpentinised mantle"] = {"ultramafic_fraction": (0.5, 1.0),
                                     "serpentinization_effective": (0.1, 1.0)}
    elif serpentinite:
        h["serpentinised mantle"] = {"serpentine_fraction": (0.5, 1.0)}
    if basaltic:
        h["porous basalt"] = {"basaltic_fraction": (0.5, 1.0), "porosity": (0.05, 1.0)}
    if any(r != "serpentinite" and r != "antigorite_serpentinite" for r in rocks):
        h["melt present"] = {"melt_fraction_effective": (0.005, 1.0)}
    return h


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
