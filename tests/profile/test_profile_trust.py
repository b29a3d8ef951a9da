"""A profile whose data the model cannot reproduce warns in every output; an MCMC report states
its convergence.

The study files are made-up test inputs. The misfit case rests on a physical fact: Vp 9.5 km/s
is beyond every rock the package models at crustal depth (olivine, the fastest common mineral
of these rocks, averages ~8.3-8.4 km/s near room pressure; Abramson et al. 1997, JGR 102,
12253, from memory), so the predictive check must flag that layer; Vp 7.0 km/s at 2-6 km
(lower oceanic crust, White et al. 1992, JGR 97, 19683, common practice) must not be flagged.
"""

import ast

import arviz as az
import matplotlib
import pandas as pd
import pytest

matplotlib.use("Agg")

from bayescrust import Layer, MisfitWarning  # noqa: E402
from bayescrust.cli import main  # noqa: E402
from bayescrust.profile import HalfSpaceState, Profile, exact_profile  # noqa: E402
from bayescrust.report.profile import profile_figure  # noqa: E402

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
    hyp = pd.read_csv(out / "hypotheses.csv", index_col=0)  # index: "(layer, hypothesis)"
    layer = [ast.literal_eval(k)[0] for k in hyp.index]
    fit = hyp.groupby(layer)["data_fit"].unique()
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
