"""``bayescrust check``: validate a study file and print the resolved study."""

from __future__ import annotations

import sys

from ..config import dumps_toml, load_study, study_to_dict
from .layers import build
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
    text = dumps_toml(study_to_dict(study),
                      header=f"{study.source}: valid ({len(study.layers)} layer(s)). "
                             "Resolved study, defaults filled in:")
    sys.stdout.write(text)
    return 0


def add_parser(sub) -> None:
    """Register the ``check`` command."""
    sp = sub.add_parser("check", help="validate a study file and print the resolved study")
    sp.add_argument("study", metavar="STUDY.toml")
    sp.add_argument("-q", "--quiet", action="store_true")
    sp.set_defaults(func=cmd_check)
