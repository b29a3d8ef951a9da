"""``bayescrust profile``: invert a whole profile from a ``[profile]`` study file."""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np

from .shell import (
    InputError,
    Warnings,
    add_common_options,
    folder_command,
    save_figure,
    say,
    write_table,
    write_text,
)

__all__ = ["add_parser", "cmd_profile", "do_profile", "profile_figure_curves",
           "is_profile_study", "load_profile_study", "profile_assumptions"]


def has_table(path, name: str) -> bool:
    """Whether ``path`` is a readable TOML file with a top-level ``name`` table."""
    import tomllib

    try:
        return name in tomllib.loads(Path(path).read_text(encoding="utf-8"))
    except (OSError, tomllib.TOMLDecodeError, UnicodeDecodeError):
        return False  # the layer-study reader reports the problem


def is_profile_study(path) -> bool:
    """Whether ``path`` is a readable TOML file with a ``[profile]`` table."""
    return has_table(path, "profile")


def load_profile_study(path, source=None):
    """Read and validate a profile study; ``source`` names it in messages and outputs
    (default: ``path``)."""
    from ..config.profile import parse_profile_study

    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except OSError as exc:
        raise InputError(f"{p}: cannot read the study file: {exc.strerror}") from exc
    return parse_profile_study(text, source=str(source or p))


def profile_assumptions(profile) -> dict:
    """Key assumptions of a profile run, for the caution text of its reports."""
    hf = profile.heat_flow
    a = {"thermal state": profile.thermal.label(),
         "pressure": f"{profile.pressure} (temperature range {profile.temperature_range_c[0]:g}"
                     f"-{profile.temperature_range_c[1]:g} deg C)",
         "heat flow": ("none" if hf is None else
                       f"{hf.value:g} +- {hf.sigma:g} mW/m^2, {hf.mode.replace('_', ' ')}"),
         "rocks": "; ".join(f"{n}: {', '.join(r)}" for n, r in
                            zip(profile.names, profile.rocks, strict=True)),
         "likelihood": "gaussian (" + ("default forward-model error"
                                       if profile.model_error is None
                                       else f"model error {profile.model_error}") + ")",
         "priors": "; ".join(f"{n}: " + (", ".join(f"{k} {_prior(v)}" for k, v in p.items())
                                          or "defaults")
                             for n, p in zip(profile.names, profile.priors, strict=True)),
         "interpretations": "as named in the study file (or the package defaults)"}
    return a


def _prior(v) -> str:
    return v.describe() if hasattr(v, "describe") else f"{v:g}" if isinstance(
        v, (int, float)) else str(v)


def profile_figure_curves(result, n=60):
    """Geotherm band, peridotite solidus and serpentine limit against depth (for the figure).

    The serpentine limit is that of the serpentine the layers' forward model used
    (``result.settings["serpentine"]``; the forward model's default, lizardite, if unknown)."""
    from ..physics import thermal as th

    prof = result.profile
    z = np.linspace(0.0, float(prof.bottoms_km[-1]), n)
    p = th.lithostatic_pressure_gpa(z, water_depth_km=prof.water_depth_km)
    kind = result.settings.get("serpentine") or "lizardite"
    curves = {"solidus": (z, th.peridotite_solidus_c(p)),
              "serpentine": (z, th.serpentine_stability_c(p, kind=kind))}
    state = prof.thermal
    d = result.draws["thermal"]
    if state.coupled and d:
        rng = np.random.default_rng(0)
        k = rng.choice(len(next(iter(d.values()))), size=min(400, len(next(iter(d.values())))),
                       replace=False)
        phi = np.stack([d[name][k] for name in state.free], axis=1) if state.free else \
            np.zeros((k.size, 0))
        g = state.geotherm_c(z, phi)
        lo, mid, hi = np.quantile(g, [0.05, 0.5, 0.95], axis=0)
        curves["geotherm"] = (z, lo, mid, hi)
    return curves


def _write_result(res, dest: Path, figures: bool, label: str):
    from ..report import profile as R  # noqa: N812

    dest.mkdir(parents=True, exist_ok=True)
    write_table(dest, "hypotheses", R.hypothesis_table(res),
                caption=f"Interpretations per layer ({label})")
    write_table(dest, "boundary", R.boundary_table(res),
                caption=f"Crust-mantle boundary and igneous crustal thickness ({label})")
    if not res.thermal.empty:
        write_table(dest, "thermal", R.thermal_table(res),
                    caption=f"Thermal parameters ({label})")
    idata = res.to_idata()
    tmp = dest / "posterior.nc.part"
    idata.to_netcdf(str(tmp))
    tmp.replace(dest / "posterior.nc")
    if figures:
        c = profile_figure_curves(res)
        fig = R.profile_figure(res, geotherm=c.get("geotherm"), solidus=c["solidus"],
                               serpentine=c["serpentine"])
        save_figure(fig, dest / "figures", "profile")
        import matplotlib.pyplot as plt

        plt.close(fig)


def do_profile(args, study, dest: Path, *, method="exact", figures=True, exact_options=None):
    """Run a profile study into ``dest``; returns ``(result, comparison or None)``.

    ``exact_options`` (design sizes of :func:`exact_profile`) lets the demo trade precision
    for time; the Monte Carlo errors in the tables say what precision was reached."""
    from ..profile import compare_thermal_states, exact_profile, invert_profile
    from ..report.caution import caution_text, misfit_banner
    from ..report.profile import convergence_line, evidence_table, thermal_verdict

    seed = args.seed if getattr(args, "seed", None) is not None else (study.seed or 0)
    warn = Warnings(args)
    t0 = time.perf_counter()
    prof = study.profile
    with warn.catch(prof.name):
        if method == "mcmc":
            res = invert_profile(prof, seed=seed)
        else:
            res = exact_profile(prof, seed=seed, **(exact_options or {}))
    _write_result(res, dest, figures, f"{prof.thermal.describe()}, {method}")
    comp = None
    if study.compare:
        with warn.catch(f"{prof.name}: thermal-state comparison"):
            same = {n: res for n, st in study.compare.items()
                    if st.describe() == prof.thermal.describe()}
            comp = compare_thermal_states(prof, study.compare, seed=seed, done=same,
                                          **(exact_options or {}))
        write_table(dest, "thermal_evidence", evidence_table(comp),
                    caption="Evidence of each thermal state for the whole profile (exact path)")
        write_table(dest, "answers_by_state", comp.answers.set_index(["thermal_state", "layer"]),
                    caption="How each answer moves between thermal states")
    wall = time.perf_counter() - t0
    lines = [f"# Profile {prof.name}", "",
             *misfit_banner(res.predictive_check,
                            what="the answers of the whole profile (every layer enters them "
                                 "through the thermal state)"),
             caution_text(profile_assumptions(prof)),
             f"Thermal state: {prof.thermal.describe()}; method: "
             f"{method}; seed {seed}; {wall:.1f} s.", ""]
    if method == "exact":
        lines += [f"log evidence {res.log_evidence:.3f} +- {res.log_evidence_error:.3f}", ""]
    else:
        lines += [convergence_line(res), ""]
    lines += ["Data fit per layer (posterior-predictive check): " + "; ".join(
        f"{n}: {c}" for n, c in dict(zip(res.hypotheses["layer"],
                                         res.hypotheses["data_fit"], strict=True)).items()), ""]
    pb = res.thickness
    lines += [f"P(no crust-mantle boundary in the section) = {pb['p_no_boundary']:.3f}; igneous "
              f"crustal thickness given a boundary: {pb['mean_km']:.2f} +- {pb['sd_km']:.2f} km",
              ""]
    if comp is not None:
        lines += [thermal_verdict(comp), ""]
        other = {n: r.misfit_layers for n, r in comp.results.items() if r.misfit_layers}
        if other:
            lines += ["Data misfit under the compared thermal states: " + "; ".join(
                f"{n}: {', '.join(b)}" for n, b in other.items()) + ". The evidence of a "
                "state that cannot fit the data measures how badly it fails, not which state "
                "is right.", ""]
    if warn.messages:
        lines += ["## Warnings", ""] + [f"- {m}" for m in warn.messages] + [""]
    lines += ["Files: hypotheses.*, boundary.*, thermal.*, thermal_evidence.*, "
              "answers_by_state.* (CSV, Markdown, LaTeX); posterior.nc (arviz, layer "
              "dimension); figures/profile.(png|pdf); run.toml (the resolved study and seed, "
              "to repeat the run).", ""]
    write_text(dest / "report.md", "\n".join(lines))
    write_text(dest / "run.toml", _run_toml(study, seed, method, exact_options))
    for n in res.misfit_layers:
        say(args, f"layer {n!r}: DATA MISFIT, see report.md")
    if method == "mcmc":
        say(args, convergence_line(res))
    say(args, f"profile {prof.name}: done in {wall:.1f} s")
    return res, comp


def _run_toml(study, seed, method, exact_options) -> str:
    """The resolved profile study with the seed used, re-readable by ``bayescrust profile``
    (a profile study's ``[run]`` holds only the seed: the provenance is in the header)."""
    from .. import __version__
    from ..config import dumps_toml
    from ..config.profile import profile_study_to_dict

    data = profile_study_to_dict(study)
    data["run"] = {"seed": int(seed)}
    head = [f"Resolved configuration of this run, written by bayescrust {__version__} "
            f"(command profile, method {method}, seed {seed}, from {study.source}).",
            f"Re-run with: bayescrust profile run.toml --out NEW_FOLDER --method {method}"]
    if exact_options:
        head.append("This run used smaller exact designs than the defaults ("
                    + ", ".join(f"{k} = {v}" for k, v in exact_options.items())
                    + "): a re-run agrees within the Monte Carlo errors, not to the digit.")
    return dumps_toml(data, header="\n".join(head))


def cmd_profile(args) -> int:
    study = load_profile_study(args.study)
    return folder_command(args, lambda tmp: do_profile(args, study, tmp,
                                                       method=args.method or "exact",
                                                       figures=not args.no_figures))


def add_parser(sub) -> None:
    """Register the ``profile`` command."""
    sp = sub.add_parser("profile", help="invert a whole profile (layers tied by one thermal "
                                        "state) from a [profile] study file")
    sp.add_argument("study", metavar="PROFILE.toml")
    add_common_options(sp, method=False)
    sp.add_argument("--method", choices=("exact", "mcmc"), default=None,
                    help="the structured exact path (default) or MCMC (the collapsed scheme; "
                         "joint for the uncoupled state); a profile study file has no method key")
    sp.set_defaults(func=cmd_profile)
