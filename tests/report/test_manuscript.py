"""Manuscript-ready outputs: tables, references, methods paragraph, figure fixes (issue 9)."""

import re

import numpy as np
import pandas as pd
import pytest

import bayescrust as bc
from bayescrust.report.citations import bibtex, methods_paragraph, references
from bayescrust.report.tables import printable_summary, to_latex


@pytest.fixture(scope="module")
def res():
    return bc.exact_layer(bc.Layer("lower crust", vp=(7.1, 0.1), top_km=4, bottom_km=6,
                                   water_depth_km=3), rocks=("gabbro", "harzburgite"), seed=1,
                          n_points=4096)


def test_summary_has_units_and_sd_based_rounding(res):
    t = printable_summary(res.summary)
    assert t.loc["temperature", "unit"] == "deg C" and t.loc["Vp", "unit"] == "km/s"
    assert t.loc["density", "unit"] == "g/cm^3"
    # mean and sd of a row share their decimal places (two significant figures of the sd)
    for _, r in t.iterrows():
        if r["sd"] and float(r["sd"]) > 0:
            dec = lambda s: len(s.split(".")[1]) if "." in s else 0  # noqa: E731
            assert dec(r["mean"]) == dec(r["sd"])
            digits = r["sd"].replace(".", "").lstrip("0")
            assert len(digits) == 2 or "." not in r["sd"]  # 2 significant figures (or integer)
    tex = to_latex(t, caption="c", label="tab:summary:lower_crust")
    assert r"g/cm$^{3}$" in tex and r"$^{\circ}$C" in tex and r"\toprule" in tex


def test_printed_digits_follow_the_errors():
    # a quantity constant in every draw printed 18 decimals of its floating-point sd; a rare
    # class printed "0.000 +- 0.000" for 0.00012 +- 0.00012; the Bayes factor had no error
    from bayescrust.report.tables import printable_hypotheses

    summ = pd.DataFrame({"mean": [1.0], "sd": [2e-16], "median": [1.0], "hdi_low": [1.0],
                         "hdi_high": [1.0], "r_hat": [np.nan], "ess_bulk": [np.nan]},
                        index=["gabbroic_fraction"])
    assert printable_summary(summ).loc["gabbroic fraction", "mean"] == "1.000"
    hyp = pd.DataFrame({"prior_probability": [0.0381, 0.44], "prior_mcse": [0.0007, 0.001],
                        "posterior_probability": [0.000123, 0.7045],
                        "posterior_mcse": [0.000118, 0.034], "bayes_factor_bound": ["=", "="],
                        "bayes_factor": [0.0031, 3.0], "log10_bayes_factor": [-2.51, 0.48],
                        "log10_bayes_factor_mcse": [0.43, 0.05],
                        "evidence_category": ["against: very strong", "positive"],
                        "data_fit": ["ok", "ok"], "converged": [True, False]},
                       index=["rare", "common"])
    t = printable_hypotheses(hyp)
    assert t.loc["rare", "posterior probability"] == "0.00012"
    assert t.loc["rare", "MC error"] == "0.00012"
    assert t.loc["common", "posterior probability"] == "0.705"
    assert t.loc["common", "MC error"] == "0.034"
    assert t.loc["rare", "log10 Bayes factor"] == "-2.51 ± 0.43"
    assert t.loc["common", "converged"] == "NO"


def test_latex_labels_unique_per_layer(tmp_path):
    from bayescrust.cli import main

    study = tmp_path / "s.toml"
    study.write_text('water_depth_km = 3.0\n[sampler]\nmethod = "exact"\nexact_points = 1024\n'
                     '[[layers]]\nname = "a"\ntop_km = 4.0\nbottom_km = 6.0\nvp = [7.1, 0.1]\n'
                     '[[layers]]\nname = "b"\ntop_km = 6.0\nbottom_km = 7.0\nvp = [7.8, 0.1]\n')
    out = tmp_path / "out"
    assert main(["invert", str(study), "--out", str(out), "--no-figures", "-q"]) == 0
    labels = re.findall(r"\\label\{([^}]*)\}", "".join(
        p.read_text() for p in out.rglob("*.tex")))
    assert len(labels) == len(set(labels)) == 6
    assert (out / "methods.md").is_file() and (out / "references.bib").is_file()
    # the top-level tables are the manuscript versions too (they were raw dumps: no units,
    # hdi_low/hdi_high without their level, every digit)
    top = (out / "summary.md").read_text()
    assert "94 % HDI" in top and "unit" in top and "hdi_low" not in top
    assert "log10 Bayes factor" in (out / "hypotheses.md").read_text()


def test_references_are_clean_and_bibtex_parses(res):
    refs = references(res)
    assert any(r.startswith("Hill, R. (1952)") for r in refs)
    assert not any("emcee" in r for r in refs)  # an exact-path run: no sampler to cite
    for r in refs:  # no internal notes in a reference list
        assert not re.search(r"placeholder|low confidence|not re-read|abstract", r), r
    bib = bibtex(refs)
    assert bib.count("@") == len(refs)
    keys = re.findall(r"@\w+\{([^,]+),", bib)
    assert len(keys) == len(set(keys))


def test_methods_paragraph_names_model_priors_sampler_and_checks(res):
    text = methods_paragraph({"lower crust": res})
    for word in ("Hill", "prior", "Kass & Raftery", "posterior-predictive", "Sobol"):
        assert word in text, word


def test_methods_paragraph_follows_each_run_settings(res):
    # it said "Voigt average (Hill, 1952)" for Voigt mixing, "corrects velocities for anelastic
    # dispersion" with the correction off, and gave the first layer's priors for every layer
    import warnings

    other = bc.exact_layer(bc.Layer("upper", vp=(7.3, 0.1), top_km=5, bottom_km=6,
                                    water_depth_km=3), rocks=("gabbro", "harzburgite"), seed=2,
                           n_points=1024, priors={"porosity": 0.0, "melt_fraction": 0.0},
                           forward={"mixing": "voigt", "anelastic": False})
    text = methods_paragraph({"lower crust": res, "upper": other})
    assert "Voigt average (Voigt, 1928)" in text and "Voigt-Reuss-Hill average (Hill, 1952)" in text
    assert "no anelastic correction" in text and "Jackson et al. (2002)" in text
    assert "lower crust:" in text and "upper:" in text  # per-layer priors and forward models
    assert any(r.startswith("Voigt, W. (1928)") for r in references(other))
    assert not any(r.startswith("Voigt, W.") for r in references(res))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        short = bc.invert_layer(bc.Layer("lower crust", vp=(7.1, 0.1), top_km=4, bottom_km=6,
                                         water_depth_km=3), seed=1, max_steps=60, min_ess=50)
    assert not short.converged
    assert "did NOT meet this rule" in methods_paragraph({"lower crust": short})


def test_corner_shows_effective_not_latent(res):
    from bayescrust.report.figures import effective_names, free_parameters

    names = effective_names(res.idata, free_parameters(res.idata))
    assert "melt_fraction" not in names and "serpentinization" not in names


def test_piled_at_bound_flags_a_posterior_against_the_prior_edge():
    from bayescrust.report.figures import piled_at_bound

    rng = np.random.default_rng(0)
    prior = rng.uniform(0, 1, 4000)
    assert piled_at_bound(rng.uniform(0, 0.01, 1000), prior) == "lower"
    assert piled_at_bound(rng.normal(0.5, 0.1, 1000), prior) == ""


def test_comparison_figure_draws_priors_and_the_evidence_scale():
    from bayescrust.report.figures import BARE_MENTION_LOG10, comparison_figure

    post = pd.DataFrame({"uniform": [0.6, 0.4], "hot": [0.2, 0.8]}, index=["a", "b"])
    prior = pd.DataFrame({"uniform": [0.5, 0.5], "hot": [0.5, 0.5]}, index=["a", "b"])
    ev = pd.DataFrame({"log_evidence": [-3.0, -3.2], "log_evidence_error": [0.01, 0.01]},
                      index=["uniform", "hot"])
    fig = comparison_figure(post, ev, prior_probabilities=prior)
    ax, axe = fig.axes[:2]
    labels = [t.get_text() for t in fig.legends[0].get_texts()]  # below the panels
    assert "uniform: prior" in labels and "hot: posterior" in labels
    lo, hi = axe.get_xlim()
    assert hi - lo >= 2.0  # a 0.1 difference in log10 evidence does not fill the axis
    # Kass & Raftery (1995): 2 ln B < 2 is "not worth more than a bare mention"
    assert BARE_MENTION_LOG10 == pytest.approx(2 / (2 * np.log(10)))


def test_partition_claim_needs_the_prior_draws_too():
    # "mantle", "not mantle" and "hot gabbro" overlap (prior probabilities sum to ~1.1), but
    # no posterior draw of a fast layer lies in the overlap: the posterior sum of 1 alone made
    # the report call them a partition
    from bayescrust.report.layer_report import layer_section

    layer = bc.Layer("um", vp=(8.1, 0.05), top_km=7.5, bottom_km=8.5, water_depth_km=3.0)
    hyp = {"mantle": {"ultramafic_fraction": (0.8, None)},
           "not mantle": {"ultramafic_fraction": (None, 0.8)},
           "hot gabbro": {"gabbro": (0.8, None), "temperature_c": (600, None)}}
    res = bc.invert_layer(layer, rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0},
                          hypotheses=hyp, seed=2, forward={"inclusion_scheme": "kuster_toksoz"})
    assert res.hypotheses["prior_probability"].sum() > 1.05
    assert abs(res.hypotheses["posterior_probability"].sum() - 1.0) < 1e-9
    line = next(x for x in layer_section("um", res) if "sum to" in x)
    assert "not a partition" in line


def test_predictive_figure_of_one_observable_keeps_title_and_legend_on_the_canvas(res):
    # at 3.4 in wide the title and the four-column legend of a Vp-only layer were cut off
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from bayescrust.report.figures import predictive_figure

    fig = predictive_figure(res.idata)
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    for artist in [*fig.texts, *fig.legends]:
        box = artist.get_window_extent(canvas.get_renderer())
        assert box.x0 >= 0 and box.x1 <= fig.bbox.width, (artist, box)
    plt.close(fig)


def test_corner_titles_say_what_interval_they_give(res):
    # corner's panel titles are a median and 5/95 % quantiles; the tables give 94 % HDIs, and
    # nothing on the figure said which was which
    import matplotlib.pyplot as plt

    from bayescrust.report.figures import corner_figure

    fig = corner_figure(res.idata)
    assert any("5 % and 95 % quantiles" in t.get_text() and "94 % HDI" in t.get_text()
               for t in fig.texts)
    plt.close(fig)


def test_comparison_figure_keeps_text_on_the_canvas_and_the_legend_off_the_bars():
    # its right title ran off the canvas and its legend covered the bars; no MC error bars
    import matplotlib.pyplot as plt
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    from bayescrust.report.figures import comparison_figure

    hyps, priors = ["cold gabbro", "hot mantle"], ["uniform", "hot axial"]
    p = pd.DataFrame([[0.9, 0.2], [0.1, 0.8]], index=hyps, columns=priors)
    e = pd.DataFrame({"log_evidence": [-1.0, -2.0], "log_evidence_error": [0.01, 0.02]},
                     index=priors)
    fig = comparison_figure(p, e, prior_probabilities=p * 0 + 0.5, errors=p * 0 + 0.01)
    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    r = canvas.get_renderer()
    texts = [*fig.texts, *fig.legends, *(a.title for a in fig.axes)]
    for t in texts:
        box = t.get_window_extent(r)
        assert box.x0 >= 0 and box.x1 <= fig.bbox.width, (t, box)
    bars_ax = fig.axes[0]
    assert bars_ax.get_legend() is None and fig.legends  # the legend sits below the panels
    assert any(len(c) for c in bars_ax.containers if hasattr(c, "errorbar") and c.errorbar)
    plt.close(fig)


def test_reference_list_gives_each_work_once():
    # One entry per cited work (common practice): a note on a work already listed in full
    # ("Yamauchi & Takei (2016) eq. for A_eta", "Abramson et al. (1997)", a second Mavko et al.
    # (2009) with "ch. 6") is not a second reference; two works of one first author and year
    # with other co-authors (Brown & Abramson 2016; Brown, Angel & Ross 2016) both stay.
    refs = references(["gabbro", "olivine_gabbro", "harzburgite"])
    assert not any("eq. for" in r or "section 4" in r for r in refs)
    assert sum(r.startswith("Yamauchi") for r in refs) == 1
    assert sum(r.startswith("Abramson") for r in refs) == 1
    assert sum(r.startswith("Mavko") for r in refs) == 1
    assert any(r.startswith("Brown & Abramson (2016)") for r in refs)
    assert any(r.startswith("Brown, Angel & Ross (2016)") for r in refs)


def test_methods_paragraph_states_the_forward_model_error(res):
    # The forward-model error sets the likelihood's width (2.7 % of a Vp is ~0.19 km/s, more
    # than a typical refraction error); a methods paragraph that omits it cannot be reproduced.
    text = methods_paragraph({"lower crust": res})
    for name, value in res.settings["model_error"].items():
        label = {"vp": "Vp", "vs": "Vs", "vp_vs": "Vp/Vs", "density": "density"}[name]
        assert f"{label} {100 * value:.1f} %" in text, name


def test_reference_list_is_alphabetical_and_cites_the_sampler_only_when_used():
    from bayescrust.report.citations import references

    class _Run:
        def __init__(self, method):
            self.settings = {"method": method, "rocks": ["gabbro"]}

    exact, mcmc = references(_Run("exact")), references(_Run("mcmc"))
    assert exact == sorted(exact, key=lambda r: (r.casefold(), r))
    assert not any(r.startswith(("Foreman-Mackey", "ter Braak", "Vehtari")) for r in exact)
    assert any(r.startswith("Foreman-Mackey") for r in mcmc)
    assert any(r.startswith("Kass") for r in exact)  # the Bayes-factor scale: every run
