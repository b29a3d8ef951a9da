"""Planning for a profile: the value of a new datum in one layer, or of a surface heat flow.

Today's knowledge is the structured exact path's weighted design
(:func:`bayescrust.profile.exact.exact_design`): thermal points ``phi_j`` with posterior weights
``W_j`` and, per layer, design points with weights given each ``phi_j``. Joint states are drawn
from it stratified by thermal point: for every ``phi_j`` of every replicate, ``r`` design points
of each layer from its conditional weights (so the thermal design is kept whole, not resampled),
each joint state weighted ``W_j / R``. A joint state carries every layer's quantities, the
thermal parameters, the predicted heat flow and the crust-mantle boundary.

The same states answer several *questions*, each an :class:`~.ensemble.Ensemble` (same states and
weights; the question's classes and interval quantity), valued by :func:`~.api.preposterior`:

- per layer, its interpretations (the profile's hypotheses for the layer) and the interval of
  its temperature;
- the crust-mantle boundary: the first mantle layer (:data:`bayescrust.profile.MANTLE_RULE`)
  or "no boundary in the section", and the interval of its depth (the base of the section
  when there is none);
- per free thermal parameter, its interval (e.g. the crustal age or the mantle temperature).

A candidate datum in layer ``i`` follows that layer's likelihood (shared and correlated
forward-model errors, :mod:`.likelihood`); a heat-flow candidate the profile's heat-flow law
(:class:`bayescrust.profile.HeatFlow`: Gaussian, one-sided lower bound, or off). Updates are
importance reweighting of the joint states, exact for the design up to the stratified draw of
layer states. Degenerate updates (Kish effective size below ``min_ess``) are rerun exactly for a
subsample of at most ``max_reruns`` data (:class:`~.rerun.ProfileRerun`, each question's
``Ensemble.rerun``: new thermal points weighed with the stored layer designs); the table counts
them, and one :class:`~.preposterior.DegeneracyWarning` per candidate names the reruns that
stayed degenerate (more ``n_layer`` / ``n_thermal`` reduce them).
"""

from __future__ import annotations

import math
import time
import warnings
from dataclasses import dataclass, field

import numpy as np

from .api import RANK_KEYS, PlanResult, preposterior, sentence
from .candidates import (
    HEAT_FLOW_SIGMAS,
    Candidate,
    _check_candidates,
    as_candidates,
    default_profile_candidates,
)
from .ensemble import Ensemble, assign_classes, make_classes
from .preposterior import DegeneracyWarning, Settings, current_state
from .today import profile_today

__all__ = ["plan_profile", "ProfilePlanResult", "profile_states", "profile_ensemble",
           "default_profile_candidates", "BOUNDARY_QUESTION", "HEAT_FLOW_SIGMAS"]

BOUNDARY_QUESTION = "crust-mantle boundary"
_INTERVAL = "interval quantity"
_UNITS = {"_myr": "Myr", "_c": "°C", "_km": "km", "_w_mk": "W/m/K"}


def _unit(name):
    return next((u for s, u in _UNITS.items() if name.endswith(s)), "")


# --------------------------------------------------------------------------------- states
def _draw_rows(w, r, rng):
    """``r`` column indices per row of the row-stochastic ``w`` (J, N), by inverse CDF
    (vectorised over rows; rows that sum to zero give index 0, their states weigh nothing)."""
    j, n = w.shape
    cdf = np.cumsum(w, axis=1)
    tot = cdf[:, -1:]
    off = 2.0 * np.arange(j)[:, None] * np.maximum(tot, 1.0)
    u = rng.random((j, r)) * tot + off
    k = np.searchsorted((cdf + off).ravel(), u.ravel(), side="right") - np.repeat(
        np.arange(j) * n, r)
    return np.clip(k, 0, n - 1).reshape(j, r)


def profile_states(profile, design, rng, states_per_thermal=16) -> dict:
    """Joint weighted states of a profile from :func:`~bayescrust.profile.exact.exact_design`.

    Returns
    -------
    dict
        ``log_weights`` (n,); ``layers`` (one dict of quantities (n,) per layer); ``thermal``
        {parameter: (n,)}; ``heat_flow`` (n,) mW/m^2; ``boundary`` (n,) the index of the first
        mantle layer (``L`` for none); ``prior_layer`` (per layer, the prior probability of
        every design point, pooled over the thermal design, with its quantities) for prior class
        probabilities.
    """
    from ..inference.hypotheses import indicators
    from ..profile.spec import MANTLE_RULE

    th = profile.thermal
    r = int(states_per_thermal)
    mids = profile.mid_depths_km
    reps = design["replicates"]
    lw, thermal, layers, mantle = [], {k: [] for k in th.params}, [], []
    prior_layer = [[] for _ in range(profile.n_layers)]
    for rep in reps:
        phi = rep["phi"]
        with np.errstate(divide="ignore"):
            lw.append(np.repeat(np.log(rep["W"]) - math.log(len(reps)), r))
        vals = th.values(phi) if th.coupled else {}
        for k in thermal:
            thermal[k].append(np.repeat(vals[k], r))
        geo = th.geotherm_c(mids, phi) if th.coupled else None
        per = []
        for i, (w, q) in enumerate(zip(rep["layer_w"], rep["layer_q"], strict=True)):
            k = _draw_rows(w, r, rng).ravel()
            per.append({name: np.asarray(v)[k] for name, v in q.items()
                        if np.ndim(v) == 1 and np.shape(v)[0] == w.shape[1]})
            # prior of each design point: conditional temperature density over the proposal
            # (the exact path's importance weights without the likelihood), pooled over phi
            t = np.asarray(q["temperature_c"], float)
            lp = profile.log_temperature_density(t[None, :], None if geo is None
                                                 else geo[:, i][:, None])
            pw = np.exp(lp - np.max(lp, axis=1, keepdims=True))
            pw /= np.maximum(pw.sum(axis=1, keepdims=True), 1e-300)
            prior_layer[i].append((pw.mean(axis=0) / len(reps), q))
        layers.append(per)
        mantle.append(np.stack([indicators({"m": MANTLE_RULE}, p)["m"] for p in per], axis=1))
    out_layers = [{k: np.concatenate([rl[i][k] for rl in layers]) for k in layers[0][i]}
                  for i in range(profile.n_layers)]
    m = np.concatenate(mantle)
    boundary = np.where(m.any(axis=1), np.argmax(m, axis=1), profile.n_layers)
    thermal = {k: np.concatenate(v) for k, v in thermal.items()}
    if th.coupled:
        phi_all = np.concatenate([np.repeat(rep["phi"], r, axis=0) for rep in reps])
        heat = np.asarray(th.heat_flow_mw_m2(phi_all), float)
    else:  # as the exact path: the top layer's linear conductive gradient
        heat = (th.conductivity_w_mk * (out_layers[0]["temperature_c"]
                                        - th.surface_temperature_c) / mids[0])
    return {"log_weights": np.concatenate(lw), "layers": out_layers, "thermal": thermal,
            "heat_flow": heat, "boundary": boundary, "prior_layer": prior_layer}


def _questions(profile, design, states):
    """``{name: (kind, indicators (n,), class names, prior class probabilities, interval
    quantity (n,), interval label)}`` of every question (module docstring)."""
    from ..inference.hypotheses import indicators
    from ..profile.results import NO_BOUNDARY

    out = {}
    for i, name in enumerate(profile.names):
        hyps = {h: b for h, b in design["hypotheses"][i].items() if h != "mantle rock"}
        pri = states["prior_layer"][i]
        ind_d = [indicators(hyps, q) for _, q in pri]
        _, names = make_classes(ind_d[0], *ind_d[1:])
        pc = sum(np.bincount(np.maximum(assign_classes(ind, names), 0), weights=pw,
                             minlength=len(names)) for (pw, _), ind in zip(pri, ind_d,
                                                                          strict=True))
        ind = indicators(hyps, states["layers"][i])
        out[name] = ("interpretation", ind, names, pc / pc.sum(),
                     states["layers"][i]["temperature_c"], f"{name} temperature", "°C")
    outcomes = list(profile.names) + [NO_BOUNDARY]
    b = states["boundary"]
    ind = {o: b == k for k, o in enumerate(outcomes)}
    # prior: the first mantle layer under the prior, from each layer's prior mantle probability
    pm = np.array([sum(pw @ (np.asarray(q["ultramafic_fraction"]) >= 0.5) for pw, q in pri)
                   for pri in states["prior_layer"]])
    surv = np.concatenate([[1.0], np.cumprod(1.0 - pm)])
    pb = np.append(pm * surv[:-1], surv[-1])
    depth = np.append(profile.tops_km, profile.bottoms_km[-1])[b]
    out[BOUNDARY_QUESTION] = ("boundary", ind, tuple(outcomes), pb / pb.sum(), depth,
                              "boundary depth", "km")
    for k in (profile.thermal.free if profile.thermal.coupled else ()):
        out[f"thermal: {k}"] = ("thermal", ind, tuple(outcomes), pb / pb.sum(),
                                states["thermal"][k], k, _unit(k))
    return out


def profile_ensemble(profile, design, states, question, group=None) -> Ensemble:
    """The :class:`Ensemble` of one question whose candidates are measured in layer ``group``
    (a layer name; ``None`` for heat flow)."""
    from .ensemble import _model_errors

    kind, ind, names, pc, interval, _, _ = _questions_cache(profile, design, states)[question]
    q = {"heat_flow": states["heat_flow"], **states["thermal"], _INTERVAL: interval}
    existing, me, lik, nu, rho = {}, {}, "gaussian", 4.0, None
    if group is not None:
        i = profile.names.index(group)
        model = design["models"][i]
        q.update(states["layers"][i])
        q.update(states["thermal"])
        q[_INTERVAL] = interval
        existing = dict(profile.layers[i].observed)
        me = _model_errors(model, profile.model_error)
        lik, nu, rho = model.likelihood, float(model.nu or 4.0), model.error_correlation
    classes = assign_classes(ind, names)
    lw = np.where(classes >= 0, states["log_weights"], -np.inf)
    return Ensemble(quantities=q, log_weights=lw, hypotheses=ind, boxes={},
                    classes=np.maximum(classes, 0), class_names=tuple(names),
                    prior_probabilities=np.asarray(pc, float), existing=existing,
                    model_error=me, error_correlation=rho, likelihood=lik, nu=nu,
                    source="profile exact design",
                    rerun=_rerun_cache(profile, design, states).for_question(question))


def _questions_cache(profile, design, states):
    if "_questions" not in states:
        states["_questions"] = _questions(profile, design, states)
    return states["_questions"]


def _rerun_cache(profile, design, states):
    """One :class:`~.rerun.ProfileRerun` per set of states (shared by every question)."""
    from .rerun import ProfileRerun

    if "_rerun" not in states:
        states["_rerun"] = ProfileRerun(profile, design, _questions_cache(profile, design,
                                                                          states))
    return states["_rerun"]


# --------------------------------------------------------------------------------- result
@dataclass(frozen=True, eq=False)
class ProfilePlanResult:
    """Value of each candidate datum for every question of a profile.

    Attributes
    ----------
    plans : dict
        ``{question: PlanResult}``, each over every candidate (the layer planner's columns; its
        interval columns are the question's interval quantity).
    table : pandas.DataFrame
        Long table, one row per (candidate, question): ``kind`` (``interpretation``,
        ``boundary`` or ``thermal``), the candidate's observable / layer / mode / sigma, the
        metrics with Monte Carlo errors (class metrics blank for thermal questions), today's
        entropy and interval width, the interval's unit and ``relative_narrowing``.
    ranking : pandas.DataFrame
        The ``rank_question``'s plan table (ranked by ``rank_by``).
    sentences : dict
        One plain-language paragraph per candidate.
    questions : dict
        ``{question: kind}``.
    settings : dict
        Also today's importance effective sizes: ``thermal_importance_ess`` and
        ``layer_importance_ess`` (per layer, of its design's marginal posterior weights).
    predictive_check : dict
        ``{layer: posterior-predictive check of today's data}`` (:mod:`.today`).
    caveats : tuple of str
        What makes today's posterior a poor starting point (data misfit in a layer, too few
        effective states); read them before the sentences.
    """

    plans: dict
    table: object
    ranking: object
    sentences: dict
    questions: dict
    settings: dict
    predictive_check: dict = field(default_factory=dict)
    caveats: tuple = ()

    @property
    def misfit_layers(self) -> list[str]:
        """Layers whose data the model cannot reproduce today."""
        return [n for n, c in self.predictive_check.items() if c.get("misfit")]

    def __repr__(self) -> str:
        return (f"ProfilePlanResult(candidates={list(self.ranking.index)}, "
                f"questions={list(self.questions)}"
                + (f", DATA MISFIT in {self.misfit_layers}" if self.misfit_layers else "")
                + ")")


def _merge(parts):
    """One :class:`PlanResult` from the per-layer-group results of one question."""
    import pandas as pd

    first = parts[0]
    key = first.settings["rank_by"]
    table = pd.concat([p.table for p in parts]).drop(columns="rank")
    table = table.sort_values(key, ascending=False, kind="stable")
    table.insert(0, "rank", np.arange(1, len(table) + 1))
    return PlanResult(table=table, today=first.today,
                      calibration=pd.concat([p.calibration for p in parts], ignore_index=True),
                      sentences={k: v for p in parts for k, v in p.sentences.items()},
                      class_names=first.class_names,
                      settings={**first.settings,
                                "time_s": sum(p.settings["time_s"] for p in parts)})


def _thermal_clause(name, row, today, unit):
    nar, se = row["interval_narrowing"], row["interval_narrowing_mcse"]
    w0 = today["interval_width"]
    if not (math.isfinite(nar) and w0 > 0) or abs(nar) <= 2 * se or abs(nar) < 0.02 * w0:
        return f"the {name} interval does not change noticeably"
    verb = "narrows" if nar > 0 else "widens"
    return (f"the {name} interval {verb} by ~{abs(nar):.3g} {unit} ({100 * abs(nar) / w0:.0f} %"
            f" of today's {w0:.3g} {unit})")


def _sentences(plans, questions, rank_question, interval_mass):
    out = {}
    rank = plans[rank_question]
    for lab in rank.table.index:
        kind = questions[rank_question]
        if kind == "thermal":
            text = (f"{lab}: " + _thermal_clause(rank_question.split(": ", 1)[1],
                                                 rank.table.loc[lab], rank.today,
                                                 rank.settings.get("interval_unit", "")) + ".")
        else:
            text = f"{rank_question}: " + sentence(
                lab, rank.table.loc[lab], rank.today, settings=rank.settings,
                quantity_label=rank.settings["interval_label"] + " interval",
                unit=rank.settings["interval_unit"])
        extra = [_thermal_clause(q.split(": ", 1)[1], p.table.loc[lab], p.today,
                                 p.settings["interval_unit"])
                 for q, p in plans.items() if questions[q] == "thermal" and q != rank_question]
        if extra:
            text += f" Thermal state ({interval_mass}): " + "; ".join(extra) + "."
        out[lab] = text
    return out


_CLASS_COLS = ("expected_p_true", "expected_p_true_mcse", "expected_entropy_bits",
               "expected_entropy_bits_mcse", "information_gain_bits",
               "information_gain_bits_mcse", "p_decisive", "p_decisive_mcse",
               "calibration_max_z")


def _long_table(plans, questions, cands):
    import pandas as pd

    by_label = {c.label: c for c in cands}
    rows = []
    for q, p in plans.items():
        t = p.table.copy()
        t["question"] = q
        t["kind"] = questions[q]
        t["layer"] = [by_label[lab].layer or "" for lab in t.index]
        t["mode"] = [by_label[lab].mode for lab in t.index]
        t["today_entropy_bits"] = p.today["entropy_bits"]
        t["today_interval_width"] = p.today["interval_width"]
        t["interval_unit"] = p.settings["interval_unit"]
        with np.errstate(divide="ignore", invalid="ignore"):
            t["relative_narrowing"] = t["interval_narrowing"] / p.today["interval_width"]
        if questions[q] == "thermal":
            t.loc[:, list(_CLASS_COLS)] = np.nan
        rows.append(t.drop(columns="rank"))
    out = pd.concat(rows)
    out.index.name = "candidate"
    first = ["question", "kind", "observable", "layer", "mode", "sigma", "unit"]
    return out[first + [c for c in out.columns if c not in first]]


# --------------------------------------------------------------------------------- API
def plan_profile(profile, *, candidates=None, seed=None, rank_question=BOUNDARY_QUESTION,
                 rank_by=None, n_layer=2**12, n_thermal=256, n_replicates=2,
                 states_per_thermal=16, forward=None, design=None,
                 **settings) -> ProfilePlanResult:
    """Which extra observation would best settle the open questions of ``profile``?

    Parameters
    ----------
    profile : bayescrust.profile.Profile
    candidates : sequence of Candidate or (observable, sigma), optional
        Layer observables name their ``layer``; ``heat_flow`` takes a ``mode``. Default
        :func:`default_profile_candidates` for the layer whose interpretation is least certain
        today.
    seed : int or numpy.random.Generator, optional
    rank_question : str
        The question the ranking and sentences follow: a layer name, ``"crust-mantle
        boundary"`` or ``"thermal: <parameter>"``.
    rank_by : str, optional
        One of :data:`~bayescrust.plan.RANK_KEYS`; default ``information_gain_bits``
        (``interval_narrowing`` for a thermal question).
    n_layer, n_thermal, n_replicates, forward
        Design of the exact path (:func:`~bayescrust.profile.exact.exact_design`).
    states_per_thermal : int
        Joint states drawn per thermal point (module docstring).
    design : dict, optional
        A precomputed :func:`~bayescrust.profile.exact.exact_design` of the same profile.
    **settings
        :class:`~.preposterior.Settings` (``n_simulations``, ``decisive_probability``, ...;
        not ``quantity``, which each question sets).

    Returns
    -------
    ProfilePlanResult
    """
    from ..inference.api import resolve_rng
    from ..profile.exact import exact_design
    from ..profile.spec import Profile

    if not isinstance(profile, Profile):
        raise ValueError("plan_profile: profile must be a bayescrust.profile.Profile")
    if rank_by is not None and rank_by not in RANK_KEYS:
        raise ValueError(f"rank_by must be one of {list(RANK_KEYS)}; got {rank_by!r}")
    if "quantity" in settings:
        raise ValueError("plan_profile: 'quantity' is set per question; do not pass it")
    if not 1 <= int(states_per_thermal) <= 4096:
        raise ValueError(f"states_per_thermal must be in [1, 4096]; got {states_per_thermal!r}")
    s = Settings(**settings)
    names = (list(profile.names) + [BOUNDARY_QUESTION]
             + [f"thermal: {k}" for k in (profile.thermal.free if profile.thermal.coupled
                                          else ())])
    if rank_question not in names:
        raise ValueError(f"rank_question must be one of {names}; got {rank_question!r}")
    if candidates is not None:
        candidates = _check_candidates(profile, as_candidates(candidates, profile=True))
    t0 = time.perf_counter()
    rng, seed_val = resolve_rng(seed)
    r_design, r_states, r_plan = rng.spawn(3)
    if design is None:
        design = exact_design(profile, n_layer=n_layer, n_thermal=n_thermal,
                              n_replicates=n_replicates, rng=r_design, forward=forward)
    states = profile_states(profile, design, r_states, states_per_thermal)
    qs = _questions_cache(profile, design, states)
    questions = {q: v[0] for q, v in qs.items()}
    if candidates is None:
        ent = {name: current_state(profile_ensemble(profile, design, states, name), s)[
            "entropy_bits"] for name in profile.names}
        candidates = default_profile_candidates(profile, max(ent, key=ent.get))
    cands = _check_candidates(profile, as_candidates(candidates, profile=True))
    if profile.n_layers == 1:
        cands = tuple(c if c.observable == "heat_flow" or c.layer else
                      Candidate(c.observable, c.sigma, c.model_error, c.label,
                                layer=profile.names[0]) for c in cands)
    groups = {}
    for c in cands:
        groups.setdefault(None if c.observable == "heat_flow" else c.layer, []).append(c)
    streams = iter(r_plan.spawn(len(groups) * len(qs)))
    plans, degenerate, kept = {}, {}, {}
    for q, (kind, *_, label, unit) in qs.items():
        key = rank_by or ("interval_narrowing" if kind == "thermal" else
                          "information_gain_bits")
        parts = []
        for g, cs in groups.items():
            ens = profile_ensemble(profile, design, states, q, g)
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", DegeneracyWarning)
                part = preposterior(ens, cs, seed=next(streams), rank_by=key,
                                    **(s.as_dict() | {"quantity": _INTERVAL}))
            for w in caught:
                if not issubclass(w.category, DegeneracyWarning):
                    warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
            part.settings.update(interval_label=label, interval_unit=unit)
            parts.append(part)
        plans[q] = _merge(parts)
        for lab, row in plans[q].table.iterrows():
            n_deg, n_rr = int(row["degenerate"]), int(row["reruns"])
            # kept as they are: all degenerate data when nothing was rerun, else the reruns
            # that stayed degenerate (they stand for the degenerate stratum)
            n_kept = int(row["degenerate_after_rerun"]) if n_rr else n_deg
            degenerate[lab] = max(degenerate.get(lab, (0, 0)), (n_kept, n_rr or n_deg))
            kept[lab] = kept.get(lab, False) or (n_rr == 0 and n_deg > 0)
    for lab, (n_kept, n_of) in degenerate.items():
        if not n_kept:
            continue
        if kept[lab]:
            what = (f"degenerate for up to {n_kept} of {s.n_simulations} simulated data and "
                    "max_reruns is 0; values of those data kept")
        else:
            what = (f"still degenerate after the exact rerun for up to {n_kept} of {n_of} "
                    "rerun data; their values kept")
        warnings.warn(f"candidate {lab!r}: importance reweighting {what} (effective size < "
                      f"{s.min_ess:g}; more n_layer / n_thermal reduce this)",
                      DegeneracyWarning, stacklevel=2)
    mass = f"{100 * s.interval:.0f} % intervals"
    out_settings = {**s.as_dict(), "seed": seed_val, "rank_question": rank_question,
                    "rank_by": plans[rank_question].settings["rank_by"],
                    "n_states": int(states["log_weights"].shape[0]),
                    "n_thermal_points": int(sum(r["phi"].shape[0] for r in
                                                design["replicates"])),
                    "states_per_thermal": int(states_per_thermal),
                    "profile": profile.name, "time_s": time.perf_counter() - t0}
    del out_settings["quantity"]
    checks, notes, sentences = profile_today(profile, design, out_settings, s.min_ess,
                                             _sentences(plans, questions, rank_question, mass))
    return ProfilePlanResult(plans=plans, table=_long_table(plans, questions, cands),
                             ranking=plans[rank_question].table, sentences=sentences,
                             questions=questions, settings=out_settings,
                             predictive_check=checks, caveats=notes)

