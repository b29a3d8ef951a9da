"""A clean reference list, BibTeX, and a generated methods paragraph for a run.

:func:`bayescrust.citations` lists every ``source`` string behind the data a forward model uses,
internal notes included (placeholders, confidence remarks). Here only full references are kept
(``Authors (Year) Title. Journal ...``), notes in parentheses after them are cut, and the
statistical methods of the inference are added.
"""

from __future__ import annotations

import re

__all__ = ["INFERENCE_REFERENCES", "SETTING_REFERENCES", "references", "bibtex",
           "methods_paragraph"]

#: References of the inference and diagnostics (not data; cited by every run).
INFERENCE_REFERENCES = (
    "Foreman-Mackey, D., Hogg, D. W., Lang, D. & Goodman, J. (2013) emcee: The MCMC Hammer. "
    "Publ. Astron. Soc. Pac. 125:306-312",
    "ter Braak, C. J. F. (2006) A Markov Chain Monte Carlo version of the genetic algorithm "
    "Differential Evolution: easy Bayesian computing for real parameter spaces. Stat. Comput. "
    "16:239-249",
    "ter Braak, C. J. F. & Vrugt, J. A. (2008) Differential Evolution Markov Chain with snooker "
    "updater and fewer chains. Stat. Comput. 18:435-446",
    "Vehtari, A., Gelman, A., Simpson, D., Carpenter, B. & Buerkner, P.-C. (2021) "
    "Rank-normalization, folding, and localization: an improved R-hat for assessing convergence "
    "of MCMC. Bayesian Anal. 16:667-718",
    "Gelman, A., Meng, X.-L. & Stern, H. (1996) Posterior predictive assessment of model fitness "
    "via realized discrepancies. Stat. Sin. 6:733-807",
    "Kass, R. E. & Raftery, A. E. (1995) Bayes factors. J. Am. Stat. Assoc. 90:773-795",
    "Kumar, R., Carroll, C., Hartikainen, A. & Martin, O. (2019) ArviZ a unified library for "
    "exploratory analysis of Bayesian models in Python. J. Open Source Softw. 4:1143",
)

#: Inference references that only an MCMC run uses (the sampler, its moves, R-hat).
_MCMC_ONLY = ("Foreman-Mackey", "ter Braak", "Vehtari")

#: References of the averaging rules and inclusion schemes a methods paragraph may name that
#: the data files do not cite (listed when the run used them).
SETTING_REFERENCES = {
    "voigt": "Voigt, W. (1928) Lehrbuch der Kristallphysik. Teubner, Leipzig",
    "reuss": "Reuss, A. (1929) Berechnung der Fliessgrenze von Mischkristallen auf Grund der "
             "Plastizitaetsbedingung fuer Einkristalle. Z. Angew. Math. Mech. 9:49-58",
    "kuster_toksoz": "Kuster, G. T. & Toksoz, M. N. (1974) Velocity and attenuation of seismic "
                     "waves in two-phase media: Part I. Theoretical formulations. Geophysics "
                     "39:587-606",
}

_FULL = re.compile(r"^(?P<authors>(?:[A-Z]|[a-z]+ [A-Z])[^()]{1,200}?) "
                   r"\((?P<year>\d{4})[a-z]?\) (?P<rest>.+)$")


def _clean(ref: str) -> str | None:
    """The reference part of a source string, or None for an internal note."""
    m = _FULL.match(ref.strip())
    if not m:
        return None
    rest = re.split(r" \(|; |, abstract", m["rest"], maxsplit=1)[0]
    return f"{m['authors']} ({m['year']}) {rest.rstrip(' .;,')}"


def references(rocks_or_result=None) -> list[str]:
    """Clean reference list of a run (or of the given rocks): the data sources its rocks and
    forward-model settings use (its attenuation law only; no serpentinisation data without a
    peridotite) and the methods, in alphabetical order.

    Internal notes of the data files (placeholders, confidence remarks, derivations) are left
    out; duplicates are removed.
    """
    from ..physics.sources import citations

    sources = citations(rocks_or_result)
    out = [c for c in (_clean(s) for s in sources) if c]
    # free-form source notes (e.g. a mineral's "Hill averages of ... Brown, Angel & Ross 2016,
    # Elasticity of plagioclase feldspars, JGR ...") still name their references: keep each as
    # "Authors (Year)" unless the full reference is already listed
    short = []
    for s in sources:
        if _clean(s):
            continue
        for authors, year in _INLINE.findall(s):
            first = authors.split()[0].rstrip(",")
            if not any(r.startswith(first) and f"({year})" in r for r in out):
                short.append(f"{authors} ({year})")
    used = []
    if hasattr(rocks_or_result, "settings"):  # a run: the rules its forward model named
        fwd = rocks_or_result.settings.get("forward") or {}
        used = [SETTING_REFERENCES[v] for v in (fwd.get("mixing"), fwd.get("inclusion_scheme"))
                if v in SETTING_REFERENCES]
    inference = list(INFERENCE_REFERENCES)
    if getattr(rocks_or_result, "settings", {}).get("method") == "exact":  # no sampler, no R-hat
        inference = [r for r in inference if not r.startswith(_MCMC_ONLY)]
    refs = _one_per_work(list(dict.fromkeys(out + short + used + inference)))
    return sorted(refs, key=lambda r: (r.casefold(), r))  # a manuscript's order: alphabetical


_AUTHOR_YEAR = re.compile(r"^(?P<authors>.+?) \((?P<year>\d{4})[a-z]?\)")
_SURNAME = re.compile(r"[A-Z][a-z][A-Za-z'\-]+")


def _one_per_work(refs: list[str]) -> list[str]:
    """Drop an entry whose year matches a longer entry whose surnames include all of its own:
    a note on a work already listed ("X & Y (2016) eq. for ...", "X et al. (1997)")."""
    keys = []
    for r in refs:
        m = _AUTHOR_YEAR.match(r)
        keys.append((frozenset(_SURNAME.findall(m["authors"])), m["year"]) if m else None)
    keep = []
    for i, r in enumerate(refs):
        k = keys[i]
        covered = k is not None and k[0] and any(
            j != i and kj is not None and kj[1] == k[1] and k[0] <= kj[0]
            and (len(refs[j]), -j) > (len(r), -i) for j, kj in enumerate(keys))
        if not covered:
            keep.append(r)
    return keep


#: An inline citation "Surname[, Surname][ & Surname| et al.] [(]YYYY" inside a source note.
_INLINE = re.compile(r"\b((?:[A-Z][a-z][A-Za-z'\-]+)(?:(?:, | & | and )[A-Z][a-z][A-Za-z'\-]+)*"
                     r"(?: et al\.)?),? \(?((?:19|20)\d\d)\b")


def _key(authors: str, year: str, seen: set) -> str:
    first = re.sub(r"[^A-Za-z]", "", authors.split(",")[0].split(" ")[0]) or "ref"
    key = f"{first}{year}"
    k, i = key, 0
    while k in seen:
        i += 1
        k = f"{key}{chr(ord('a') + i - 1)}"
    seen.add(k)
    return k


def bibtex(refs) -> str:
    """BibTeX entries (``@article`` or ``@book``) of clean references ``Authors (Year) Title.
    Journal``; the journal part keeps volume and pages as printed."""
    seen: set = set()
    entries = []
    for ref in refs:
        m = _FULL.match(ref)
        if not m:
            short = re.match(r"^(?P<authors>.+) \((?P<year>\d{4})\)$", ref)
            if short:  # an inline citation of a data note: authors and year only
                key = _key(short["authors"], short["year"], seen)
                authors = " and ".join(a.strip() for a in re.split(r",? & |, ", short["authors"]))
                entries.append(f"@misc{{{key},\n  author = {{{authors}}},\n  year = "
                               f"{{{short['year']}}},\n  note = {{cited in bayescrust's data "
                               "files; full reference in the source note}\n}")
            continue
        title, _, venue = m["rest"].partition(". ")
        key = _key(m["authors"], m["year"], seen)
        authors = " and ".join(a.strip() for a in re.split(r",? & |, (?=[A-Z][a-z-]+, )",
                                                          m["authors"]) if a.strip())
        kind = "article" if re.search(r"\d+:\d", venue) else "book"
        field = "journal" if kind == "article" else "publisher"
        entries.append(f"@{kind}{{{key},\n  author = {{{authors}}},\n  year = {{{m['year']}}},"
                       f"\n  title = {{{{{title.strip()}}}}},\n  {field} = {{{venue.strip()}}}"
                       "\n}")
    return "\n\n".join(entries) + "\n"


#: Names of the observables in a methods sentence.
_OBS_LABEL = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density"}

#: The averaging rule of the solid, as a methods sentence names it (``[forward] mixing``).
_MIXING_TEXT = {
    "hill": "Voigt-Reuss-Hill average (Hill, 1952)",
    "voigt": "Voigt average (Voigt, 1928)",
    "reuss": "Reuss average (Reuss, 1929)",
    "hashin_shtrikman": "mean of the Hashin-Shtrikman bounds (Hashin & Shtrikman, 1963)",
}
#: The inclusion scheme for pores, cracks and melt (``[forward] inclusion_scheme``).
_INCLUSION_TEXT = {
    "dem": "differential effective medium; Berryman, 1980; Norris, 1985",
    "self_consistent": "self-consistent scheme; Berryman, 1980",
    "kuster_toksoz": "Kuster & Toksoz, 1974",
}
#: The anelastic correction (``[forward] attenuation_law``).
_ANELASTIC_TEXT = {
    "jackson2002": "corrects velocities for anelastic dispersion with the attenuation law of "
                   "Jackson et al. (2002) and the first-order correction of Karato (1993)",
    "yamauchi_takei2016": "corrects velocities for anelasticity with the near-solidus master "
                          "curve of Yamauchi & Takei (2016)",
}


def _grouped(per_layer: dict) -> str:
    """``{layer: text}`` as one phrase; layers with the same text share it."""
    groups: dict[str, list] = {}
    for name, text in per_layer.items():
        groups.setdefault(text, []).append(name)
    if len(groups) == 1:
        return next(iter(groups))
    return "; ".join(f"{', '.join(names)}: {text}" for text, names in groups.items())


def methods_paragraph(results: dict) -> str:
    """A methods paragraph for a run (forward model, priors, sampler, diagnostics), with the
    references it cites; ``results`` maps layer names to ``LayerResult`` objects. The forward
    model, priors and rocks are read from each layer's own settings."""
    from ..config.forward import DEFAULT_ATTENUATION_LAW
    from ..inference.sampler import MOVES_DESCRIPTION
    from ..inference.trust import PPC_ALPHA, RHAT_MAX

    first = next(iter(results.values()))
    s = first.settings
    method = s.get("method")
    names = {"temperature_c": "temperature (deg C)", "serpentinization": "serpentinisation"}

    def forward_text(fwd):
        mixing = _MIXING_TEXT.get(fwd.get("mixing", "hill"), fwd.get("mixing"))
        incl = fwd.get("inclusion_scheme", "dem")
        if fwd.get("anelastic", True):
            law = fwd.get("attenuation_law", DEFAULT_ATTENUATION_LAW)
            anel = _ANELASTIC_TEXT.get(law, f"corrects velocities for anelasticity ({law})")
        else:
            anel = "uses unrelaxed velocities (no anelastic correction)"
        return (f"single-mineral elastic data with the {mixing}, adds pores, cracks and melt as "
                f"spheroidal inclusions ({_INCLUSION_TEXT.get(incl, incl)}), and {anel}")

    def prior_text(st):
        return "; ".join(f"{names.get(k, k.replace('_', ' '))}: {v}"
                         for k, v in (st.get("priors") or {}).items()) or "the package defaults"

    def error_text(st):
        me = st.get("model_error") or {}
        text = ", ".join(f"{_OBS_LABEL.get(k, k)} {100 * float(v):.1f} %" for k, v in me.items())
        rho = st.get("model_error_correlation")
        if ("vp" in me and "vs" in me and rho is not None
                and st.get("likelihood", "gaussian") == "gaussian"):
            text += f"; Vp and Vs errors correlated, {float(rho):.2f}"
        return text or "none"

    per = {n: r.settings for n, r in results.items()}
    rocks = _grouped({n: ", ".join(st.get("rocks", ())) for n, st in per.items()})
    lines = [
        f"Each of {len(results)} layer(s) was interpreted by Bayesian inference with "
        f"bayescrust. The forward model mixes end-member rocks ({rocks}) from "
        f"{_grouped({n: forward_text(st.get('forward') or {}) for n, st in per.items()})}; "
        "melt is effective only above the solidus and serpentinisation only below the "
        "serpentine stability limit.",
        f"Priors were: {_grouped({n: prior_text(st) for n, st in per.items()})}; the "
        f"likelihood was {s.get('likelihood', 'gaussian')}, with measurement and "
        f"forward-model errors added in quadrature (the forward-model error as a fraction "
        f"of the predicted value: {_grouped({n: error_text(st) for n, st in per.items()})}).",
    ]
    if method == "mcmc":
        smp = s.get("sampler") or {}
        lines.append(
            f"The posterior was sampled with emcee (Foreman-Mackey et al., 2013) using a "
            f"mixture of moves ({MOVES_DESCRIPTION}; ter Braak, 2006; ter Braak & Vrugt, "
            f"2008), {smp.get('n_walkers', '')} walkers; a run stops once it has lasted at "
            f"least {smp.get('tau_factor', 50):g} autocorrelation times and reached an "
            f"effective sample size of at least {smp.get('min_ess', '')}, and counts as "
            f"converged when that rule is met and every rank-normalised R-hat is below "
            f"{RHAT_MAX:g} (Vehtari et al., 2021). Evidences were estimated by importance "
            "sampling.")
        unconverged = [n for n, r in results.items() if not r.converged]
        if unconverged:
            lines.append(f"The run(s) of layer(s) {', '.join(unconverged)} did NOT meet this "
                         "rule (not converged); their numbers are not reliable.")
    else:
        lines.append(
            "The posterior and the evidence were computed by randomised quasi-Monte Carlo "
            "integration over the prior (scrambled Sobol points through the prior quantiles), "
            "with an adaptive importance-sampling stage where the posterior is concentrated.")
    lines.append(
        "Interpretations are regions of parameter space; their probabilities are posterior "
        "fractions with Monte Carlo errors, compared with their prior probabilities by Bayes "
        "factors on the scale of Kass & Raftery (1995), bounded from the number of draws where "
        "a class received none. The fit of the data was assessed with posterior-predictive "
        f"p-values per observable (Gelman et al., 1996), flagged below {PPC_ALPHA:g}; "
        "diagnostics were computed with ArviZ (Kumar et al., 2019).")
    flagged = [n for n, r in results.items() if r.misfit]
    if flagged:
        lines.append(f"The data of layer(s) {', '.join(flagged)} were not reproduced by the "
                     "model (posterior-predictive check) and their probabilities are reported "
                     "with that caution.")
    return " ".join(lines) + "\n"
