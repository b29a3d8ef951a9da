"""A clean reference list, BibTeX, and a generated methods paragraph for a run.

:func:`bayescrust.citations` lists every ``source`` string behind the data a forward model uses,
internal notes included (placeholders, confidence remarks). Here only full references are kept
(``Authors (Year) Title. Journal ...``), notes in parentheses after them are cut, and the
statistical methods of the inference are added.
"""

from __future__ import annotations

import re

__all__ = ["INFERENCE_REFERENCES", "references", "bibtex", "methods_paragraph"]

#: References of the inference and diagnostics (not data; cited by every run).
INFERENCE_REFERENCES = (
    "Foreman-Mackey, D., Hogg, D. W., Lang, D. & Goodman, J. (2013) emcee: The MCMC Hammer. "
    "Publ. Astron. Soc. Pac. 125:306-312",
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
    """Clean reference list of a run (or of the given rocks): data sources, then methods.

    Internal notes of the data files (placeholders, confidence remarks, derivations) are left
    out; duplicates are removed; order is stable.
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
    return list(dict.fromkeys(out + short + list(INFERENCE_REFERENCES)))


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


def methods_paragraph(results: dict) -> str:
    """A methods paragraph for a run (forward model, priors, sampler, diagnostics), with the
    references it cites; ``results`` maps layer names to ``LayerResult`` objects."""
    from ..inference.trust import PPC_ALPHA, RHAT_MAX

    first = next(iter(results.values()))
    s = first.settings
    fwd = s.get("forward") or {}
    mixing = fwd.get("mixing", "hill")
    incl = fwd.get("inclusion_scheme", "dem")
    rocks = sorted({r for res in results.values() for r in res.settings.get("rocks", ())})
    method = s.get("method")
    names = {"temperature_c": "temperature (deg C)", "serpentinization": "serpentinisation"}
    pri = "; ".join(f"{names.get(k, k.replace('_', ' '))}: {v}"
                    for k, v in (s.get("priors") or {}).items())
    lines = [
        f"Each of {len(results)} layer(s) was interpreted by Bayesian inference with "
        f"bayescrust. The forward model mixes end-member rocks ({', '.join(rocks)}) from "
        f"single-mineral elastic data with the {mixing.replace('_', '-').title()} average "
        "(Hill, 1952), adds pores, cracks and melt as spheroidal inclusions "
        f"({'differential effective medium' if incl == 'dem' else incl.replace('_', '-')}; "
        "Berryman, 1980; Norris, 1985), and corrects velocities for anelastic dispersion; "
        "melt is effective only above the solidus and serpentinisation only below the "
        "serpentine stability limit.",
        f"Priors were: {pri or 'the package defaults'}; the likelihood was "
        f"{s.get('likelihood', 'gaussian')}, with measurement and forward-model errors "
        "added in quadrature.",
    ]
    if method == "mcmc":
        smp = s.get("sampler") or {}
        lines.append(
            f"The posterior was sampled with emcee (Foreman-Mackey et al., 2013) using "
            f"differential-evolution and snooker moves (ter Braak & Vrugt, 2008), "
            f"{smp.get('n_walkers', '')} walkers, run for at least "
            f"{smp.get('tau_factor', 50):g} autocorrelation times and an effective sample size "
            f"of at least {smp.get('min_ess', '')}; a run counts as converged when that rule "
            f"is met and every rank-normalised R-hat is below {RHAT_MAX:g} (Vehtari et al., "
            "2021). Evidences were estimated by importance sampling.")
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
