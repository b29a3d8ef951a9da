"""The per-node results of a map: their names (:func:`result_keys`) and the quality flags."""

from __future__ import annotations

from .fit import FIT_KEYS
from .levels import MANTLE_KEY, zone_hypotheses
from .weigh import STAT_QUANTITIES

__all__ = ["QUALITY_FLAGS", "result_keys"]

#: quality flag values (CF ``flag_values`` / ``flag_meanings``); ``misfit`` (the data are
#: outside what the model can produce, :mod:`bayescrust.grid.fit`) wins over good / refined /
#: poor: no importance ESS makes such a node's probabilities usable
QUALITY_FLAGS = {"good": 0, "refined": 1, "poor": 2, "masked": 3, "misfit": 4}


def _hyps_of_zone(zone):
    h = zone_hypotheses(zone)  # the names every level design of the zone uses
    h[MANTLE_KEY] = {"ultramafic_fraction": (0.5, 1.0)}
    return h


def result_keys(zones):
    """Names of the per-node results (the union of every zone's interpretations)."""
    names = []
    for z in zones:
        for h in _hyps_of_zone(z):
            if h not in names:
                names.append(h)
    keys = ["importance_ess", "table_error", "quality", *FIT_KEYS]
    keys += [f"p:{h}" for h in names] + [f"mcse:{h}" for h in names]
    for q in STAT_QUANTITIES:
        keys += [f"{q}:{s}" for s in ("mean", "sd", "hdi_low", "hdi_high")]
    return keys, names
