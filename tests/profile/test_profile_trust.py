"""A profile whose data the model cannot reproduce warns in every output; a tie between thermal
states is not called a preference; an MCMC report states its convergence.

The study files are made-up test inputs. The misfit case rests on a physical fact: Vp 9.5 km/s
is beyond every rock the package models at crustal depth (olivine, the fastest common mineral
of these rocks, averages ~8.3-8.4 km/s near room pressure; Abramson et al. 1997, JGR 102,
12253, from memory), so the predictive check must flag that layer; Vp 7.0 km/s at 2-6 km
(lower oceanic crust, White et al. 1992, JGR 97, 19683, common practice) must not be flagged.
"""

import math
from types import SimpleNamespace

import arviz as az
import matplotlib
import pandas as pd
import pytest

matplotlib.use("Agg")

from bayescrust import Layer, MisfitWarning  # noqa: E402
from bayescrust.cli import main  # noqa: E402
from bayescrust.profile import HalfSpaceState, Profile, exact_profile  # noqa: E402
from bayescrust.report.profile import profile_figure, thermal_verdict  # noqa: E402

STUDY = """
[profile]
name = "trust"
water_depth_km = 3.0
compare = ["half_space", "uncoupled"]
[profile.thermal]
state = "half_space"
age_myr = [1.0, 20.0]
[[profile.layers]]
name = "upper"
top_km = 0.0
bottom_km = 2.0
vp = [5.5, 0.2]
[[profile.layers]]
name = "lower"
top_km = 2.0
bottom_km = 6.0
vp = [VP, 0.1]
porosity = 0.0
[run]
seed = 3
"""


def _run(tmp_path, vp, *extra):
    study = tmp_path / "p.toml"
    study.write_text(STUDY.replace("VP", str(vp)), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["profile", str(study), "--out", str(out), "--no-figures", *extra]) == 0
    return out


def test_misfit_layer_is_flagged_in_report_tables_and_netcdf(tmp_path, capsys):
    out = _run(tmp_path, 9.5)
    assert "DATA MISFIT" in capsys.readouterr().err
    report = (out / "report.md").read_text(encoding="utf-8")
    assert report.index("Warning: data misfit in layer(s) lower") < report.index("Caution")
    assert "Vp observed 9.5" in report
    hyp = pd.read_csv(out / "hypotheses.csv")  # one column per index level
    fit = hyp.groupby("layer")["data_fit"].unique()
    assert list(fit["lower"]) == ["MISFIT (vp)"] and list(fit["upper"]) == ["ok"]
    assert (pd.read_csv(out / "boundary.csv")["data_fit"] == "MISFIT (in lower)").all()
    ans = pd.read_csv(out / "answers_by_state.csv")
    assert ans["data_fit"].str.startswith("MISFIT").any()
    attrs = az.from_netcdf(str(out / "posterior.nc")).attrs  # at the root
    assert attrs["data_fit"].startswith("MISFIT in lower: Vp observed 9.5")
    assert attrs["data_fit_by_layer"] == "upper: ok; lower: MISFIT (vp)"


def test_fitting_profile_has_caution_and_no_misfit_flag(tmp_path, capsys):
    out = _run(tmp_path, 7.0)
    assert "MISFIT" not in capsys.readouterr().err
    report = (out / "report.md").read_text(encoding="utf-8")
    assert "Caution" in report and "Key assumptions" in report
    assert "misfit" not in report.lower()
    assert (pd.read_csv(out / "hypotheses.csv")["data_fit"] == "ok").all()
    attrs = az.from_netcdf(str(out / "posterior.nc")).attrs  # at the root
    assert attrs["data_fit"] == "ok"
    ev = pd.read_csv(out / "thermal_evidence.csv")
    assert "best" in set(ev["best_vs_this"]) and "log10_bayes_factor_vs_best_error" in ev


def test_mcmc_report_states_convergence_and_smallest_layer_ess(tmp_path, capsys):
    out = _run(tmp_path, 7.0, "--method", "mcmc")
    report = (out / "report.md").read_text(encoding="utf-8")
    line = next(x for x in report.splitlines() if x.startswith("converged: "))
    assert line.startswith(("converged: yes", "converged: NO"))
    assert "smallest chain ESS" in line and "smallest layer importance ESS" in line
    assert "converged: " in capsys.readouterr().err


def test_figure_title_names_the_misfit_layer():
    layers = [Layer("upper", top_km=0.0, bottom_km=2.0, vp=(5.5, 0.2)),
              Layer("lower", top_km=2.0, bottom_km=6.0, vp=(9.5, 0.1))]
    with pytest.warns(MisfitWarning, match="layer 'lower'"):
        r = exact_profile(Profile(layers, HalfSpaceState(), water_depth_km=3.0), n_layer=2**10,
                          n_thermal=16, n_replicates=2, seed=0)
    assert r.misfit_layers == ["lower"]
    title = profile_figure(r).get_suptitle()
    assert "DATA MISFIT: lower: Vp observed 9.5" in title


def _comparison(log_z, err):
    """A comparison with the given log evidences (natural log) and errors, equal prior odds."""
    names = [f"state {k}" for k in range(len(log_z))]
    m = max(log_z)
    post = [math.exp(v - m) for v in log_z]
    post = [p / sum(post) for p in post]
    ev = pd.DataFrame({"log_evidence": log_z, "log_evidence_error": err,
                       "posterior_probability": post,
                       "posterior_probability_error": [0.002] * len(log_z)},
                      index=pd.Index(names, name="thermal_state"))
    return SimpleNamespace(evidence=ev)


def test_a_tie_is_not_called_favoured():
    # the demo profile's case: 0.475 against 0.443, log10 B = 0.03; on the Kass & Raftery
    # (1995, JASA 90, 773, p. 777) scale 2 ln B < 2 is "not worth more than a bare mention"
    text = thermal_verdict(_comparison([-5.5015, -5.4328], [0.0067, 0.0028]))
    assert "**none**" in text and "not worth more than a bare mention" in text
    assert "0.0298 +- 0.0032" in text  # the log10 Bayes factor with its error
    assert "state 1 0.5172 +- 0.0020 against state 0 0.4828 +- 0.0020" in text


def test_clear_evidence_names_the_state_and_its_category():
    # 2 ln B = 6.4 ("strong" on the Kass & Raftery 1995 scale: 6-10)
    text = thermal_verdict(_comparison([-10.0, -6.8], [0.05, 0.05]))
    assert "**state 1**" in text and '"strong"' in text and "unresolved" not in text
    assert "does not resolve" not in text


def test_evidence_within_its_error_of_a_bare_mention_is_called_unresolved():
    # 2 ln B = 2.4 ("positive"), but log10 B = 0.52 +- 0.31 reaches the bare-mention edge
    # (0.434) within two errors
    text = thermal_verdict(_comparison([-10.0, -8.8], [0.5, 0.5]))
    assert "**state 1**" in text and '"positive"' in text and "does not resolve" in text
