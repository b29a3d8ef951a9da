"""The caution that accompanies every written report."""

from __future__ import annotations

__all__ = ["CAUTION", "caution_text"]

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
