"""The caution that accompanies every written report."""

from __future__ import annotations

__all__ = ["CAUTION", "caution_text", "misfit_banner"]

CAUTION = (
    "Caution: these probabilities are model-dependent. They follow from the forward model "
    "(mineral elastic data, mixing rule, pore and crack shapes, attenuation law), from the "
    "priors (thermal state, porosity, rock fractions) and from the interpretations as defined "
    "in the study file; different but defensible choices can change them. They are not "
    "measurements. Decisions of consequence (for example site hazard assessment or the "
    "siting of a drill hole) must rest with licensed professional practice, using these results "
    "at most as one input among others."
)


def caution_text(assumptions: dict | None = None) -> str:
    """The caution paragraph followed by a bullet list of the key assumptions of a run.

    Parameters
    ----------
    assumptions : dict, optional
        ``{what: how}`` pairs, e.g. ``{"thermal prior": "half_space(age_myr=...)"}``.
    """
    lines = [CAUTION]
    if assumptions:
        lines.append("")
        lines.append("Key assumptions of this run:")
        lines += [f"- {k}: {v}" for k, v in assumptions.items()]
    return "\n".join(lines) + "\n"


def misfit_banner(checks: dict, *, what: str = "their probabilities") -> list[str]:
    """Markdown lines opening a report when the model cannot reproduce some layers' data.

    Parameters
    ----------
    checks : dict
        ``{layer name: predictive check}`` (:func:`bayescrust.inference.trust.predictive_check`);
        only the flagged ones are named.
    what : str
        What is conditional on the misfitting model (e.g. "today's probabilities and every
        value of a new datum").

    Returns
    -------
    list of str
        Empty when every layer fits; else the warning, one line per flagged layer, and a blank.
    """
    from ..inference.trust import misfit_details

    flagged = {n: c for n, c in checks.items() if c and c.get("misfit")}
    if not flagged:
        return []
    alpha = next(iter(flagged.values()))["alpha"]
    lines = [f"> **Warning: data misfit in layer(s) {', '.join(flagged)}.** The model cannot "
             "reproduce the observations there (posterior-predictive check, p < "
             f"{alpha:g}); {what} are conditional on a model that does not fit.", ">"]
    lines += [f"> - {n}: {misfit_details(c)}" for n, c in flagged.items()]
    return lines + [""]
