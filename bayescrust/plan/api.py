"""Public entry points: :func:`plan_layer` (a layer, from the exact path or a result) and
:func:`preposterior` (any :class:`~.ensemble.Ensemble`), and the :class:`PlanResult`."""

from __future__ import annotations

import dataclasses
import math
import time
import warnings
from dataclasses import dataclass, field

import numpy as np

from .candidates import as_candidates
from .ensemble import ensemble_from_design, ensemble_from_result
from .preposterior import Settings, current_state, evaluate

__all__ = ["PlanResult", "plan_layer", "preposterior", "RANK_KEYS", "sentence"]

#: Columns a plan may be ranked by (all "larger is better").
RANK_KEYS = ("information_gain_bits", "p_decisive", "expected_p_true", "interval_narrowing")

_COLUMNS = ("observable", "sigma", "unit", "expected_p_true", "expected_p_true_mcse",
            "expected_entropy_bits", "expected_entropy_bits_mcse", "information_gain_bits",
            "information_gain_bits_mcse", "p_decisive", "p_decisive_mcse",
            "expected_interval_width", "interval_narrowing", "interval_narrowing_mcse",
            "median_importance_ess", "degenerate", "reruns", "degenerate_after_rerun",
            "calibration_max_z")


@dataclass(frozen=True, eq=False)
class PlanResult:
    """Value of each candidate datum for one layer.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per candidate (index: its label), ranked by ``rank_by`` (rank 1 first):
        expected posterior probability of the true interpretation, expected entropy of the
        interpretation probabilities and information gain (bits), chance of a decisive answer,
        expected width and narrowing of the temperature interval (deg C), each with ``*_mcse``;
        degeneracy counts and ``calibration_max_z`` (largest |z| of the law-of-total-probability
        check over the hypotheses expected to be the truth of at least 10 simulated data, and
        to be false in as many).
    today : dict
        Today's class probabilities, entropy, decision and interval width.
    calibration : pandas.DataFrame
        Per candidate and hypothesis: today's probability, the average updated probability and
        its error.
    sentences : dict
        One plain-language sentence per candidate.
    class_names : tuple
    settings : dict
    predictive_check : dict
        Posterior-predictive check of today's data (:mod:`bayescrust.plan.today`; ``{}`` when
        not made, e.g. a hand-built ensemble).
    caveats : tuple of str
        What makes today's posterior a poor starting point (data misfit, too few effective
        states, an unconverged MCMC run); read them before the sentences.
    """

    table: object
    today: dict
    calibration: object
    sentences: dict
    class_names: tuple
    settings: dict
    predictive_check: dict = field(default_factory=dict)
    caveats: tuple = ()

    @property
    def misfit(self) -> bool:
        """True when the model cannot reproduce today's data (the sentences are then no
        recommendations)."""
        return bool(self.predictive_check.get("misfit", False))

    def __repr__(self) -> str:
        return (f"PlanResult(candidates={list(self.table.index)}, "
                f"ranked_by={self.settings.get('rank_by')!r}"
                + (", DATA MISFIT" if self.misfit else "") + ")")


def _pct(x):
    return f"{100 * x:.0f} %"


def _pm(se):
    return f"± {_pct(se)}" if se >= 0.005 else "± < 1 %"


def sentence(label, row, today, *, quantity_label="temperature interval",
             unit="°C", settings=None) -> str:
    """Plain-language summary of one candidate's row of the plan table."""
    s = settings or {}
    pd_, se = row["p_decisive"], row["p_decisive_mcse"]
    thr = (f"top interpretation >= {_pct(s.get('decisive_probability', 0.9))} or Bayes factor "
           f">= {s.get('decisive_bayes_factor', 10.0):g}")
    if today["decisive"]:
        head = f"Today's answer is already decisive ({thr}); {label} keeps it so in "
    else:
        head = f"{label} settles the question ({thr}) in "
    p0, p1 = today["expected_p_true"], row["expected_p_true"]
    p_se = float(row.get("expected_p_true_mcse", 0.0))
    moved = abs(p1 - p0) > 2 * (p_se if math.isfinite(p_se) else 0.0)
    text = (f"{head}~{_pct(pd_)} ({_pm(se)}) of cases; the expected probability of the "
            "true interpretation " + (f"goes from {_pct(p0)} to {_pct(p1)}" if moved else
                                      f"stays at ~{_pct(p0)} (within its Monte Carlo error)"))
    nar, nse = row["interval_narrowing"], row["interval_narrowing_mcse"]
    mass = _pct(s.get("interval", 0.94))
    if math.isfinite(nar) and today["interval_width"] > 0:
        if abs(nar) <= 2 * nse or abs(nar) < 0.5:
            text += f", and the {mass} {quantity_label} does not change noticeably"
        else:
            verb = "narrows" if nar > 0 else "widens"
            text += (f", and the {mass} {quantity_label} {verb} by ~{abs(nar):.0f} {unit} on "
                     f"average (from {today['interval_width']:.0f} {unit})")
    if row["information_gain_bits"] < 2 * max(row["information_gain_bits_mcse"], 1e-12) + 0.01:
        text += "; it adds almost nothing to what is known"
    return text + "."


def preposterior(ensemble, candidates, *, seed=None, rank_by="information_gain_bits",
                 **settings) -> PlanResult:
    """Value of each candidate datum for the states of ``ensemble``.

    Parameters
    ----------
    ensemble : Ensemble
    candidates : sequence of Candidate or (observable, sigma)
    seed : int or numpy.random.Generator, optional
        Each candidate gets its own spawned stream (results do not depend on the order).
    rank_by : str
        One of :data:`RANK_KEYS`.
    **settings
        :class:`~.preposterior.Settings` (``n_simulations``, ``decisive_probability``,
        ``decisive_bayes_factor``, ``interval``, ``quantity``, ``min_ess``, ``max_reruns``,
        ``rerun_points``).

    Returns
    -------
    PlanResult
    """
    import pandas as pd

    from ..inference.api import resolve_rng

    if rank_by not in RANK_KEYS:
        raise ValueError(f"rank_by must be one of {list(RANK_KEYS)}; got {rank_by!r}")
    s = Settings(**settings)
    cands = as_candidates(candidates, profile="heat_flow" in ensemble.quantities)
    rng, _ = resolve_rng(seed)
    streams = rng.spawn(len(cands))
    t0 = time.perf_counter()
    today = current_state(ensemble, s)
    rows, cal = [], []
    hyp_names = list(ensemble.hypotheses)
    for c, r in zip(cands, streams, strict=True):
        v = evaluate(ensemble, c, r, s)
        p0 = today["hypothesis_probabilities"]
        z = np.abs(v["calibration_mean"] - p0)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = np.where(v["calibration_mcse"] > 0, z / v["calibration_mcse"],
                         np.where(z > 1e-12, np.inf, 0.0))
        # an interpretation expected to be the truth of fewer than 10 simulated data cannot be
        # checked: its spread over the data (hence its error) is not seen
        z = z[np.minimum(p0, 1.0 - p0) * s.n_simulations >= 10.0]
        rows.append({"candidate": c.label, "observable": c.observable, "sigma": c.sigma,
                     "unit": c.unit, **{k: v[k] for k in _COLUMNS if k in v},
                     "calibration_max_z": float(np.max(z)) if z.size else 0.0})
        for h, p0, pm, ps in zip(hyp_names, today["hypothesis_probabilities"],
                                 v["calibration_mean"], v["calibration_mcse"], strict=True):
            cal.append({"candidate": c.label, "hypothesis": h, "today": float(p0),
                        "average_updated": float(pm), "mcse": float(ps)})
    table = pd.DataFrame(rows).set_index("candidate")[list(_COLUMNS)]
    table = table.sort_values(rank_by, ascending=False, kind="stable")
    table.insert(0, "rank", np.arange(1, len(table) + 1))
    out_settings = {**s.as_dict(), "rank_by": rank_by, "ensemble": ensemble.source,
                    "ensemble_size": ensemble.n,
                    "ensemble_importance_ess": ensemble.importance_ess(),
                    "time_s": time.perf_counter() - t0}
    sentences = {lab: sentence(lab, table.loc[lab], today, settings=out_settings)
                 for lab in table.index}
    return PlanResult(table=table, today=today, calibration=pd.DataFrame(cal),
                      sentences=sentences, class_names=tuple(ensemble.class_names),
                      settings=out_settings)


def plan_layer(layer, *, candidates=None, result=None, rocks=("gabbro", "harzburgite"),
               priors=None, hypotheses=None, model_error=None, likelihood="gaussian", nu=4.0,
               forward=None, seed=None, n_points=2**14, rank_by="information_gain_bits",
               **settings) -> PlanResult:
    """Which extra observation would settle the interpretation of ``layer``?

    Today's knowledge is the exact path's prior design (``n_points`` scrambled-Sobol states)
    weighted by the layer's likelihood, or - with ``result`` (a :class:`~bayescrust.LayerResult`
    of the same layer and model, e.g. from :func:`~bayescrust.invert_layer`) - its posterior
    draws. Each candidate datum is valued by preposterior simulation and importance
    reweighting (:mod:`bayescrust.plan.preposterior`); degenerate updates rerun the exact path.

    Parameters
    ----------
    layer : Layer
    candidates : sequence of Candidate or (observable, sigma), optional
        Default :func:`~bayescrust.plan.default_candidates`.
    result : LayerResult, optional
    rocks, priors, hypotheses, model_error, likelihood, nu, forward
        The layer model, as for :func:`bayescrust.exact_layer`.
    seed : int or numpy.random.Generator, optional
    n_points : int
        Design size of the exact path (power of two).
    rank_by : str
        Ranking column (:data:`RANK_KEYS`).
    **settings
        See :func:`preposterior`.

    Returns
    -------
    PlanResult

    Notes
    -----
    Profiles: a profile planner builds an :class:`~bayescrust.plan.Ensemble` from the joint
    states of its layers (quantities named per layer, plus ``heat_flow`` predicted by its
    thermal model) and calls :func:`preposterior`; nothing here depends on one layer except
    the builders.
    """
    from ..inference.api import _setup, resolve_rng

    cands = as_candidates(candidates, layer)
    other = sorted({c.layer for c in cands if c.layer not in (None, layer.name)})
    if other:
        raise ValueError(f"candidates name other layers {other}; this plan is for layer "
                         f"{layer.name!r} (use plan_profile for a profile)")
    rng, seed_val = resolve_rng(seed)
    r_design, r_plan = rng.spawn(2)
    model, hyps = _setup(layer, rocks, priors, hypotheses, model_error, likelihood, nu, forward)
    if result is not None:
        if getattr(result, "layer", None) != layer:
            raise ValueError("result must be a LayerResult of the same layer")
        ens = ensemble_from_result(result, hyps, model=model, model_error=model_error)
    else:
        ens = ensemble_from_design(model, hyps, r_design, n_points, model_error=model_error)
    plan = preposterior(ens, cands, seed=r_plan, rank_by=rank_by, **settings)
    plan.settings.update(layer=layer.name, seed=seed_val, n_points=int(ens.n))
    return _with_today_checks(plan, ens, result, layer.name)


def _with_today_checks(plan, ens, result, name):
    """The plan with today's predictive check and caveats (:mod:`.today`); warns on each."""
    from ..inference.trust import MisfitWarning, misfit_message
    from .preposterior import DegeneracyWarning
    from .today import MISFIT_PREFIX, caveats, layer_check

    check = layer_check(ens, result)
    s = plan.settings
    n_eff = s["ensemble_importance_ess"]
    ess = {} if result is not None else {"today's design": n_eff}
    notes = tuple(caveats({name: check}, ess, s["min_ess"], result=result))
    if check.get("misfit"):
        warnings.warn(f"plan of layer {name!r}: {misfit_message(check)} The plan's values are "
                      "computed under that model: no recommendations.", MisfitWarning,
                      stacklevel=3)
    if ess and n_eff < s["min_ess"]:
        warnings.warn(f"plan of layer {name!r}: today's design has an importance effective "
                      f"size of {n_eff:.0f}, below min_ess = {s['min_ess']:g}; use more design "
                      "points", DegeneracyWarning, stacklevel=3)
    sentences = ({k: MISFIT_PREFIX + v for k, v in plan.sentences.items()}
                 if check.get("misfit") else plan.sentences)
    return dataclasses.replace(plan, predictive_check=check, caveats=notes, sentences=sentences)
