"""The result of planning for a profile: :class:`ProfilePlanResult`, its sentences and tables.

:func:`~bayescrust.plan.profile.plan_profile` values every candidate for every question
(:mod:`.profile_questions`), one :class:`~.api.PlanResult` per question and group of candidates
(the layer a datum is measured in, or heat flow). Here those are merged per question, written as
one plain-language paragraph per candidate (the ranking question's sentence and, for every other
thermal question, how its interval changes) and gathered into the long (candidate x question)
table.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .api import PlanResult, sentence

__all__ = ["ProfilePlanResult"]


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
