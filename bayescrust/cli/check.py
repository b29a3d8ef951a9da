"""``bayescrust check``: validate a study file (layer, ``[profile]`` or ``[grid]`` study) and
print the resolved study."""

from __future__ import annotations

import sys

from ..config import dumps_toml, load_study, study_to_dict
from .layers import build, defaults_used
from .shell import InputError

__all__ = ["add_parser", "cmd_check"]


def _check_profile(path, quiet=False) -> int:
    from ..config.profile import profile_study_to_dict
    from .profile import load_profile_study

    ps = load_profile_study(path)  # validates every value and builds every layer model
    prof = ps.profile
    head = [f"{ps.source}: valid profile study ({prof.n_layers} layer(s)); run it with "
            "`bayescrust profile`, plan it with `bayescrust plan`.",
            f"thermal state: {prof.thermal.describe()}"]
    if quiet:
        sys.stdout.write(head[0] + "\n")
        return 0
    head += [f"compared state {n!r}: {st.describe()}" for n, st in ps.compare.items()]
    head += ["Resolved study (thermal parameters at their defaults are not written):"]
    text = dumps_toml(profile_study_to_dict(ps), header="\n".join(head))
    sys.stdout.write(text)
    return 0


def _check_grid(path, quiet=False) -> int:
    from ..config.grid import load_grid_study

    g = load_grid_study(path)  # validates every key of the study (the grid file is read by map)
    lines = [f"# {g.source}: valid grid study ({len(g.zones)} zone(s)) of `{g.file.name}`; run "
             "it with `bayescrust map`."]
    if quiet:
        sys.stdout.write(lines[0].removeprefix("# ") + "\n")
        return 0
    for z in g.zones:
        pri = "; ".join(f"{k}: {v.describe() if hasattr(v, 'describe') else v}"
                        for k, v in (z.priors or {}).items()) or "defaults"
        lines.append(f"# zone {z.name!r}: {z.top_km:g}-{z.bottom_km:g} km below the seafloor, "
                     f"rocks {', '.join(z.rocks)}; priors: {pri}")
    age = getattr(g.mapping, "age", None)
    if age is not None:
        lines.append(f"# crustal age: grid.age = {age!r} replaces the age_myr of every "
                     "half-space prior above, node by node")
    sys.stdout.write("\n".join(lines) + "\n")
    return 0


def cmd_check(args) -> int:
    from ..config import build_thermal_prior
    from .profile import has_table, is_profile_study

    if is_profile_study(args.study):
        return _check_profile(args.study, quiet=args.quiet)
    if has_table(args.study, "grid"):
        return _check_grid(args.study, quiet=args.quiet)
    study = load_study(args.study)
    for layer in study.layers:
        build(study, layer)  # API validation of observations and priors
    for th in study.thermal.values():
        try:
            build_thermal_prior(th)
        except (ValueError, TypeError) as exc:
            raise InputError(f"{study.source}: thermal.{th.name}: {exc}") from None
    if args.quiet:  # the verdict alone (an invalid file has already raised, exit code 2)
        sys.stdout.write(f"{study.source}: valid ({len(study.layers)} layer(s))\n")
        return 0
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
    sp = sub.add_parser("check", help="validate a study file (a layer, [profile] or [grid] "
                                      "study) and print the resolved study")
    sp.add_argument("study", metavar="STUDY.toml")
    sp.add_argument("-q", "--quiet", action="store_true",
                    help="print one line (the file is valid) instead of the resolved study")
    sp.set_defaults(func=cmd_check)
