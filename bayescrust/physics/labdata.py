"""The forward model against published laboratory rock velocities.

``physics/data/lab_rocks.toml`` holds one row per laboratory condition (rock, pressure,
temperature, published ranges of Vp, Vp/Vs, density or of Vp relative to the fresh rock, with
source and tag). :func:`lab_misfit` evaluates the forward model at every row,
:func:`calibrated_model_error` turns the misfit of the calibration rows into a forward-model error
per observable, and :func:`validation_report` formats the table that ``bayescrust forward
--validate`` prints. The calibrated error is stored in ``physics/data/model_error.toml`` (read by
:data:`MODEL_ERROR`); a test recomputes it from the table so the two cannot drift apart.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from ._data import load_table

__all__ = [
    "LAB_ROWS",
    "MODEL_ERROR",
    "LabRow",
    "calibrated_model_error",
    "lab_misfit",
    "validation_report",
]

_OBSERVABLES = ("vp", "vp_ratio", "vp_vs", "density")
_TAGS = ("verified", "from memory", "common practice", "computed")


@dataclass(frozen=True)
class LabRow:
    """One laboratory condition with the published ranges of its observables."""

    id: str
    rock: str
    pressure_gpa: float
    temperature_c: float
    serpentinization: float
    ranges: Mapping[str, tuple[float, float]]
    source: str
    tag: str
    calibrate: bool


def _parse_rows(table) -> tuple[LabRow, ...]:
    from .rocks import ROCKS

    rows, seen = [], set()
    for i, r in enumerate(table.get("rows", [])):
        where = f"lab_rocks.toml: rows[{i}]"
        rid = r.get("id")
        if not isinstance(rid, str) or rid in seen:
            raise ValueError(f"{where}.id: missing or repeated; got {rid!r}")
        seen.add(rid)
        if r.get("rock") not in ROCKS:
            raise ValueError(f"{where} ({rid}).rock: unknown rock {r.get('rock')!r}")
        if r.get("tag") not in _TAGS or not r.get("source"):
            raise ValueError(f"{where} ({rid}): needs a source and a tag in {list(_TAGS)}")
        ranges = {}
        for k in _OBSERVABLES:
            if k in r:
                lo, hi = (float(v) for v in r[k])
                if not 0.0 < lo <= hi:
                    raise ValueError(f"{where} ({rid}).{k}: expected [low, high], 0 < low <= high")
                ranges[k] = (lo, hi)
        if not ranges:
            raise ValueError(f"{where} ({rid}): no observable among {list(_OBSERVABLES)}")
        rows.append(LabRow(
            id=rid, rock=r["rock"], pressure_gpa=float(r["pressure_gpa"]),
            temperature_c=float(r["temperature_c"]),
            serpentinization=float(r.get("serpentinization", 0.0)), ranges=ranges,
            source=r["source"], tag=r["tag"], calibrate=bool(r.get("calibrate", True)),
        ))
    return tuple(rows)


#: The shipped laboratory table, one :class:`LabRow` per condition.
LAB_ROWS: tuple[LabRow, ...] = _parse_rows(load_table("lab_rocks"))

_ME = load_table("model_error")
#: Default forward-model error per observable (fraction of the predicted value), measured as the
#: root-mean-square fractional misfit of the model against the calibration rows of the
#: laboratory table (see ``data/model_error.toml`` and docs/physics.md).
MODEL_ERROR: dict[str, float] = {
    k: float(_ME["model_error"][k]) for k in ("vp", "vs", "vp_vs", "density")
}


def lab_misfit(rows=None, **forward_options) -> list[dict]:
    """Evaluate the forward model at every laboratory row.

    Parameters
    ----------
    rows : sequence of LabRow, optional
        Default :data:`LAB_ROWS`.
    **forward_options
        Passed to :class:`bayescrust.physics.rocks.ForwardModel` (e.g. ``mixing="voigt"``,
        ``serpentine_mixing="mineral_hill"``) to compare model variants.

    Returns
    -------
    list of dict
        One entry per (row, observable): ``id``, ``rock``, ``pressure_gpa``,
        ``observable``, ``model``, ``low``, ``high``, ``centre``, ``misfit`` (model - centre),
        ``fraction`` (misfit / centre), ``inside`` (model within [low, high]), ``calibrate``,
        ``tag``, ``source``.
    """
    from .rocks import ForwardModel

    rows = LAB_ROWS if rows is None else rows
    out = []
    for r in rows:  # a few dozen laboratory rows: one small batch each, not a hot path
        fm = ForwardModel(rocks=(r.rock,), **forward_options)
        one = np.ones((2, 1))
        vp, vs, rho = fm(one, r.temperature_c, r.pressure_gpa,
                         serpentinization=np.array([r.serpentinization, 0.0]))
        model = {"vp": vp[0], "vp_vs": vp[0] / vs[0], "density": rho[0],
                 "vp_ratio": vp[0] / vp[1]}
        for k, (lo, hi) in r.ranges.items():
            m = float(model[k])
            c = 0.5 * (lo + hi)
            out.append(dict(
                id=r.id, rock=r.rock, pressure_gpa=r.pressure_gpa, observable=k, model=m,
                low=lo, high=hi, centre=c, misfit=m - c, fraction=(m - c) / c,
                inside=lo <= m <= hi, calibrate=r.calibrate, tag=r.tag, source=r.source,
            ))
    return out


def calibrated_model_error(misfit=None, *, floor=0.005) -> dict[str, float]:
    """Forward-model error per observable from the laboratory misfit.

    Parameters
    ----------
    misfit : list of dict, optional
        Output of :func:`lab_misfit` (default: computed with the default model).
    floor : float
        Smallest error returned (the precision of the laboratory averages themselves, ~0.5 %,
        common practice).

    Returns
    -------
    dict
        ``{"vp", "vs", "vp_vs", "density"}`` -> fraction of the predicted value. Vp uses the
        absolute Vp rows and the Vp-ratio rows together; Vs has no rows of its own and is set from
        Vp and Vp/Vs in quadrature (Vs = Vp / (Vp/Vs)).

    Notes
    -----
    The error of each observable is the root mean square of the fractional misfit
    (model - centre) / centre over the calibration rows, combined in quadrature with the
    half-width of each published range divided by sqrt(3) (the standard deviation of a uniform
    distribution over the range), so a model at the centre of a wide range is still given the
    range's own uncertainty.
    """
    misfit = lab_misfit() if misfit is None else misfit
    groups = {"vp": ("vp", "vp_ratio"), "vp_vs": ("vp_vs",), "density": ("density",)}
    out = {}
    for name, keys in groups.items():
        sq = [e["fraction"] ** 2 + ((e["high"] - e["low"]) / (2.0 * e["centre"])) ** 2 / 3.0
              for e in misfit if e["calibrate"] and e["observable"] in keys]
        out[name] = max(floor, math.sqrt(sum(sq) / len(sq))) if sq else floor
    out["vs"] = math.hypot(out["vp"], out["vp_vs"])
    return {k: round(out[k], 4) for k in ("vp", "vs", "vp_vs", "density")}


def validation_report(misfit=None) -> str:
    """The model-versus-laboratory table as text (what ``bayescrust forward --validate`` prints).

    Returns
    -------
    str
        One line per (row, observable) with the model value, the published range, the misfit
        and whether the model is inside the range; then the RMS misfit per observable and the
        calibrated model error.
    """
    misfit = lab_misfit() if misfit is None else misfit
    lines = ["# forward model versus published laboratory data (data/lab_rocks.toml)",
             f"{'row':32s} {'observable':10s} {'model':>7s} {'published':>13s} "
             f"{'misfit':>8s} {'%':>6s}  in  tag"]
    for e in misfit:
        flag = "yes" if e["inside"] else "NO "
        cal = "" if e["calibrate"] else " (not calibrated: circular)"
        lines.append(
            f"{e['id']:32s} {e['observable']:10s} {e['model']:7.3f} "
            f"{e['low']:6.3f}-{e['high']:<6.3f} {e['misfit']:+8.3f} {100 * e['fraction']:+6.1f}"
            f"  {flag} {e['tag']}{cal}")
    n_in = sum(e["inside"] for e in misfit if e["calibrate"])
    n = sum(e["calibrate"] for e in misfit)
    lines.append(f"# inside the published range: {n_in} of {n} calibration entries")
    me = calibrated_model_error(misfit)
    lines.append("# calibrated forward-model error (fraction): "
                 + ", ".join(f"{k} {v:.4f}" for k, v in me.items()))
    return "\n".join(lines)
