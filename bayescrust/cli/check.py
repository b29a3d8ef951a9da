"""``bayescrust check``: validate a study file and print the resolved study."""

from __future__ import annotations

import sys

from ..config import dumps_toml, load_study, study_to_dict
from .layers import build, defaults_used
from .shell import InputError

__all__ = ["add_parser", "cmd_check"]


def cmd_check(args) -> int:
    from ..config import build_thermal_prior

    study = load_study(args.study)
    for layer in study.layers:
        build(study, layer)  # API validation of observations and priors
    for th in study.thermal.values():
        try:
            build_thermal_prior(th)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{study.source}: thermal.{th.name}: {exc}") from None
    data = study_to_dict(study)
    # every default a run would use (priors, interpretations, thermal prior, sampler,
    # forward model), per layer, under [run] which the study reader ignores
    data["run"] = {"defaults_used": defaults_used(study)}
    text = dumps_toml(data,
                      header=f"{study.source}: valid ({len(study.layers)} layer(s)). "
                             "Resolved study; every default a run uses is under "
                             "[run.defaults_used.<layer>]:")
    sys.stdout.write(text)
    return 0


def add_parser(sub) -> None:
    """Register the ``check`` command."""
    sp = sub.add_parser("check", help="validate a study file and print the resolved study")
    sp.add_argument("study", metavar="STUDY.toml")
    sp.add_argument("-q", "--quiet", action="store_true")
    sp.set_defaults(func=cmd_check)
