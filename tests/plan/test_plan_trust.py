"""A plan starts from today's posterior: when the model cannot reproduce today's data, or today's
design rests on fewer effective states than the plan's own ``min_ess``, every output says so.

The study files are made-up test inputs. The misfit case rests on a physical fact: Vp 9.5 km/s
is beyond every rock the package models at crustal depth (olivine, the fastest common mineral
of these rocks, averages ~8.3-8.4 km/s near room pressure; Abramson et al. 1997, JGR 102,
12253, from memory), so the predictive check must flag it; Vp 7.1 km/s (typical of the lower
oceanic crust, White et al. 1992, JGR 97, 19683, common practice) must not be flagged.
"""

import textwrap
import warnings

import pandas as pd
import pytest

import bayescrust as bc
from bayescrust.cli import main
from bayescrust.plan import DegeneracyWarning


def _study(tmp_path, vp, name="plan.toml"):
    p = tmp_path / name
    p.write_text(textwrap.dedent(f"""\
        title = "plan trust (made-up numbers)"
        water_depth_km = 3.0
        seed = 2
        rocks = ["gabbro", "harzburgite"]

        [[layers]]
        name = "lower crust"
        top_km = 4.0
        bottom_km = 6.0
        vp = [{vp}, 0.1]

        [plan]
        simulations = 20
        design_points = 4096
        candidates = [{{ observable = "vs", sigma = 0.1 }}]
        """), encoding="utf-8")
    return p


def test_plan_of_a_layer_the_model_cannot_fit_warns_everywhere(tmp_path, capsys):
    out = tmp_path / "plan"
    assert main(["plan", str(_study(tmp_path, 9.5)), "--out", str(out), "--no-figures"]) == 0
    err = capsys.readouterr().err
    assert "DATA MISFIT" in err and "no recommendations" in err
    report = (out / "report.md").read_text(encoding="utf-8")
    # the warning opens the report, before the caution and before any number
    assert report.index("Warning: data misfit in layer(s) lower crust") < report.index(
        "Caution")
    assert "Vp observed 9.5" in report
    assert "not recommendations" in report and "Candidates, best first" not in report
    for f in ("plan.csv", "plan.md"):
        assert "MISFIT (vp)" in (out / f).read_text(encoding="utf-8"), f
    t = pd.read_csv(out / "plan.csv", index_col=0)
    assert (t["data_fit"] == "MISFIT (vp)").all()


def test_plan_of_a_layer_the_model_fits_has_no_misfit_flag(tmp_path, capsys):
    out = tmp_path / "plan"
    assert main(["plan", str(_study(tmp_path, 7.1)), "--out", str(out), "--no-figures"]) == 0
    err = capsys.readouterr().err
    assert "MISFIT" not in err
    report = (out / "report.md").read_text(encoding="utf-8")
    assert "misfit" not in report.lower() and "Candidates, best first" in report
    assert (pd.read_csv(out / "plan.csv", index_col=0)["data_fit"] == "ok").all()


def test_plan_layer_api_flags_misfit_and_withholds_recommendations():
    layer = bc.Layer("deep", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(9.5, 0.1))
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        plan = bc.plan_layer(layer, seed=1, candidates=[("vs", 0.1)], n_simulations=20,
                             n_points=2**12)
    assert plan.misfit and "DATA MISFIT" in repr(plan)
    assert any(issubclass(w.category, bc.MisfitWarning) for w in rec)
    assert plan.caveats[0].startswith("DATA MISFIT") and "not recommendations" in plan.caveats[0]
    assert all(s.startswith("Under a model that does not fit") for s in plan.sentences.values())


def test_today_below_min_ess_is_stated_and_warned():
    # a fitting layer whose design holds fewer effective states than min_ess (Kish 1965,
    # Survey Sampling, sec. 11.7: the plan's own degeneracy threshold); max_reruns = 0 keeps the
    # run short (each update is then kept, with the planner's own DegeneracyWarning)
    layer = bc.Layer("deep", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        plan = bc.plan_layer(layer, seed=1, candidates=[("vs", 0.1)], n_simulations=20,
                             n_points=2**10, min_ess=5000, max_reruns=0)
    ess = plan.settings["ensemble_importance_ess"]
    assert ess < 5000 and not plan.misfit
    assert any("below the plan's own threshold of 5000" in c and f"{ess:.0f}" in c
               for c in plan.caveats)
    assert any(issubclass(w.category, DegeneracyWarning) and "today's design" in str(w.message)
               for w in rec)
    # with enough effective states nothing is said
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ok = bc.plan_layer(layer, seed=1, candidates=[("vs", 0.1)], n_simulations=20,
                           n_points=2**12)
    assert ok.settings["ensemble_importance_ess"] >= 50 and ok.caveats == ()


PROFILE = textwrap.dedent("""\
    [profile]
    name = "trust (made-up numbers)"
    water_depth_km = 3.0
    pressure = "reference"

    [profile.thermal]
    state = "half_space"
    age_myr = [1.0, 20.0]
    mantle_temperature_c = 1350.0

    [[profile.layers]]
    name = "L1"
    top_km = 3.0
    bottom_km = 5.0
    vp = [7.1, 0.15]
    rocks = ["gabbro", "harzburgite"]

    [[profile.layers]]
    name = "L2"
    top_km = 5.0
    bottom_km = 7.0
    vp = [VP2, 0.1]
    rocks = ["gabbro", "harzburgite"]

    [plan]
    simulations = 50
    design_points = 4096
    candidates = [{ observable = "heat_flow", sigma = 10.0 }]

    [run]
    seed = 3
""")


@pytest.mark.parametrize("vp2, misfit", [(9.5, True), (7.8, False)])
def test_profile_plan_runs_each_layers_check(tmp_path, capsys, vp2, misfit):
    study = tmp_path / "p.toml"
    study.write_text(PROFILE.replace("VP2", str(vp2)), encoding="utf-8")
    out = tmp_path / "o"
    assert main(["plan", str(study), "--out", str(out), "--no-figures"]) == 0
    err = capsys.readouterr().err
    report = (out / "report.md").read_text(encoding="utf-8")
    assert "Caution" in report  # the profile plan report carries the caution text too
    fit = pd.read_csv(out / "plan.csv")["data_fit"]
    rank = pd.read_csv(out / "ranking.csv")["data_fit"]
    if misfit:
        assert "DATA MISFIT" in err
        assert report.index("Warning: data misfit in layer(s) L2") < report.index("Caution")
        assert "L1" not in report.split("Warning: data misfit in layer(s)")[1].split(".")[0]
        assert "not recommendations" in report
        assert (fit == "MISFIT (L2: vp)").all() and (rank == "MISFIT (L2: vp)").all()
    else:
        assert "MISFIT" not in err and "misfit" not in report.lower()
        assert (fit == "ok").all() and (rank == "ok").all()
