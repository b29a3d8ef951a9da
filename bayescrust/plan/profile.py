"""Planning for a profile: the value of a new datum in one layer, or of a surface heat flow.

:func:`plan_profile` draws joint states of the profile from today's knowledge, the structured
exact path's weighted design (:func:`bayescrust.profile.exact.exact_design`), and values every
candidate for every question the states answer: per layer its interpretations and the interval
of its temperature, the crust-mantle boundary and the interval of its depth, and the interval of
each free thermal parameter (:mod:`.profile_questions`: the stratified draw of the states, one
:class:`~.ensemble.Ensemble` per question). The default candidates are in :mod:`.candidates`;
the result, its sentences and its long table in :mod:`.profile_result`.

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

import time
import warnings

from .api import RANK_KEYS, preposterior
from .candidates import (
    HEAT_FLOW_SIGMAS,
    Candidate,
    _check_candidates,
    as_candidates,
    default_profile_candidates,
)
from .preposterior import DegeneracyWarning, Settings, current_state
from .profile_questions import (
    _INTERVAL,
    BOUNDARY_QUESTION,
    _questions_cache,
    profile_ensemble,
    profile_states,
)
from .profile_result import ProfilePlanResult, _long_table, _merge, _sentences
from .today import profile_today

__all__ = ["plan_profile", "ProfilePlanResult", "profile_states", "profile_ensemble",
           "default_profile_candidates", "BOUNDARY_QUESTION", "HEAT_FLOW_SIGMAS"]


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
        Joint states drawn per thermal point (:mod:`.profile_questions`).
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

