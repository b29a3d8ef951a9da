"""End-to-end tests of the command line, each in a temporary folder."""

import json
import sys
import tomllib

import numpy as np
import pandas as pd
import pytest

from bayescrust.cli import main

PARTITION = ("crust", "cold mantle", "warm mantle")  # as in conftest.SMALL_STUDY

# Sums of probabilities of hypotheses that partition the space are 1 up to floating-point
# rounding of a weighted mean (the exact path) - hence 1e-9, not a statistical tolerance.
SUM_TOL = 1e-9


def test_check_prints_resolved_study(small_study, capsys):
    assert main(["check", str(small_study)]) == 0
    out = capsys.readouterr().out
    data = tomllib.loads(out)
    assert [lay["name"] for lay in data["layers"]] == ["lower crust", "lower crust with Vs"]
    assert data["layers"][0]["thermal_prior"] == "flat"
    assert data["layers"][0]["hypotheses"]["warm mantle"]["temperature_c"] == [700.0, np.inf]


def test_check_minimal_file_gets_defaults(tmp_path, capsys):
    p = tmp_path / "min.toml"
    p.write_text('water_depth_km = 3\n[[layers]]\nname = "x"\ntop_km = 4\nbottom_km = 6\n'
                 'vp = [7.1, 0.1]\n')
    assert main(["check", str(p)]) == 0
    data = tomllib.loads(capsys.readouterr().out)
    assert data["seed"] == 0 and data["rocks"] and data["sampler"]["method"] == "mcmc"


def test_invert_writes_every_output(small_study, tmp_path):
    import arviz as az

    out = tmp_path / "run"
    assert main(["invert", str(small_study), "--out", str(out), "-q"]) == 0
    for name in ("summary", "hypotheses"):
        for ext in ("csv", "md", "tex"):
            assert (out / f"{name}.{ext}").is_file()
    run = tomllib.loads((out / "run.toml").read_text())
    assert run["run"]["command"] == "invert" and run["seed"] == 7
    assert run["run"]["method"] == "exact"
    assert "Caution" in (out / "report.md").read_text()
    hyp = pd.read_csv(out / "hypotheses.csv")
    assert {"layer", "hypothesis", "prior_probability", "posterior_probability",
            "posterior_mcse", "bayes_factor", "log10_bayes_factor"} <= set(hyp.columns)
    for _, g in hyp.groupby("layer"):
        assert set(g["hypothesis"]) == set(PARTITION)
        assert abs(g["posterior_probability"].sum() - 1) < SUM_TOL
        assert abs(g["prior_probability"].sum() - 1) < SUM_TOL
    summ = pd.read_csv(out / "summary.csv")
    assert {"layer", "quantity", "mean", "sd", "median", "hdi_low", "hdi_high", "r_hat",
            "ess_bulk"} <= set(summ.columns)
    for slug in ("lower_crust", "lower_crust_with_vs"):
        sub = out / "layers" / slug
        idata = az.from_netcdf(sub / "posterior.nc")
        for group in ("posterior", "prior", "observed_data", "log_likelihood", "sample_stats"):
            assert hasattr(idata, group), group
        for fig in ("corner", "predictive", "marginals"):
            for ext in ("png", "pdf"):
                assert (sub / "figures" / f"{fig}.{ext}").stat().st_size > 1000
    assert not list(tmp_path.glob(".run.partial-*"))


def test_invert_same_seed_same_tables(small_study, tmp_path):
    a, b = tmp_path / "a", tmp_path / "b"
    for out in (a, b):
        assert main(["invert", str(small_study), "--out", str(out), "-q", "--no-figures",
                     "--layer", "lower crust"]) == 0
    assert (a / "hypotheses.csv").read_text() == (b / "hypotheses.csv").read_text()


def test_run_toml_records_the_seed_used_and_reruns(small_study, tmp_path):
    # run.toml echoes the resolved study with the seed actually used (--seed overrides the
    # file's), keeps provenance under [run], and is itself a valid study file
    a, b = tmp_path / "a", tmp_path / "b"
    assert main(["invert", str(small_study), "--out", str(a), "-q", "--no-figures",
                 "--layer", "lower crust", "--seed", "11"]) == 0
    run = tomllib.loads((a / "run.toml").read_text())
    assert run["seed"] == 11 and run["run"]["seed"] == 11
    assert "bayescrust_version" in run["run"]
    assert main(["invert", str(a / "run.toml"), "--out", str(b), "-q", "--no-figures",
                 "--layer", "lower crust"]) == 0
    assert (a / "hypotheses.csv").read_text() == (b / "hypotheses.csv").read_text()


def test_run_toml_records_the_method_used(small_study, tmp_path):
    # --method exact on an MCMC study: run.toml kept method = "mcmc", so re-running it
    # silently changed every probability
    small_study.write_text(small_study.read_text().replace('method = "exact"',
                                                           'method = "mcmc"'))
    a, b = tmp_path / "a", tmp_path / "b"
    assert main(["invert", str(small_study), "--out", str(a), "-q", "--no-figures",
                 "--layer", "lower crust", "--method", "exact"]) == 0
    assert tomllib.loads((a / "run.toml").read_text())["sampler"]["method"] == "exact"
    assert main(["invert", str(a / "run.toml"), "--out", str(b), "-q", "--no-figures",
                 "--layer", "lower crust"]) == 0
    assert (a / "hypotheses.csv").read_text() == (b / "hypotheses.csv").read_text()


def test_invert_mcmc_small_run(small_study, tmp_path):
    text = small_study.read_text().replace(
        'method = "exact"\nexact_points = 2048',
        'method = "mcmc"\nwalkers = 16\nmin_ess = 50\nmax_steps = 400')
    small_study.write_text(text)
    out = tmp_path / "mc"
    rc = main(["invert", str(small_study), "--out", str(out), "-q", "--layer", "lower crust"])
    assert rc == 0
    assert (out / "layers" / "lower_crust" / "figures" / "trace.png").is_file()
    hyp = pd.read_csv(out / "hypotheses.csv")
    # MCMC indicator means of a partition sum to 1 exactly up to rounding.
    assert abs(hyp["posterior_probability"].sum() - 1) < SUM_TOL


def test_compare_tables_and_figure(small_study, tmp_path):
    out = tmp_path / "cmp"
    assert main(["compare", str(small_study), "--out", str(out), "-q"]) == 0
    ev = pd.read_csv(out / "evidence.csv")
    assert {"layer", "thermal_prior", "log_evidence", "log_evidence_error",
            "log10_bayes_factor_vs_best"} <= set(ev.columns)
    assert set(ev["thermal_prior"]) == {"flat", "axis"}
    for _, g in ev.groupby("layer"):
        assert g["log10_bayes_factor_vs_best"].max() == 0
        assert abs(g["posterior_probability_equal_odds"].sum() - 1) < SUM_TOL
    cmp_ = pd.read_csv(out / "comparison.csv")
    for _, g in cmp_.groupby(["layer", "thermal_prior"]):
        assert abs(g["posterior_probability"].sum() - 1) < SUM_TOL
    assert (out / "figures" / "comparison_lower_crust.pdf").is_file()


def test_chart_table(small_study, tmp_path):
    out = tmp_path / "chart"
    rc = main(["chart", str(small_study), "--layer", "lower crust", "--out", str(out),
               "--points", "4", "-q"])
    assert rc == 0
    t = pd.read_csv(out / "chart.csv")
    assert list(t.columns) == ["thermal_prior", "vp", "hypothesis", "probability", "mcse",
                               "ppc_p_value", "data_fit"]
    assert len(t) == 2 * 4 * 3
    assert np.allclose(t.groupby(["thermal_prior", "vp"])["probability"].sum(), 1, atol=SUM_TOL)
    assert (out / "chart.png").is_file() and (out / "chart.pdf").is_file()


def test_chart_needs_layer_when_several(small_study, tmp_path, capsys):
    rc = main(["chart", str(small_study), "--out", str(tmp_path / "c"), "-q"])
    assert rc == 2
    assert "--layer" in capsys.readouterr().err
    assert not (tmp_path / "c").exists()


def test_forward_json_and_range(tmp_path, capsys):
    rc = main(["forward", "--rock", "gabbro", "--temperature", "0:1000:5", "--pressure", "0.2",
               "--json", "--plot", str(tmp_path / "f.png")])
    assert rc == 0
    data = json.loads(capsys.readouterr().out)
    assert len(data["rows"]) == 5
    vp = [r["vp"] for r in data["rows"]]
    assert all(np.diff(vp) < 0)  # velocities fall with temperature at fixed pressure
    assert (tmp_path / "f.png").is_file()


def test_forward_table_single(capsys):
    assert main(["forward", "--rock", "harzburgite", "--temperature", "20",
                 "--pressure", "0.1"]) == 0
    out = capsys.readouterr().out
    assert "vp" in out and len(out.strip().splitlines()) == 3


def test_demo_runs(tmp_path):
    out = tmp_path / "demo"
    assert main(["demo", "--out", str(out), "-q", "--points", "3"]) == 0
    assert (out / "README.md").is_file()
    assert "invented" in (out / "README.md").read_text().lower()
    assert (out / "study" / "tallowmere_ridge.toml").is_file()
    assert (out / "invert" / "hypotheses.csv").is_file()
    assert (out / "compare" / "evidence.csv").is_file()
    assert (out / "chart" / "chart.png").is_file()
    assert (out / "plan" / "plan.csv").is_file() and (out / "plan" / "plan.png").is_file()
    assert (out / "profile_plan" / "plan.csv").is_file()
    assert (out / "profile_plan" / "plan.png").is_file()
    # the demo carries a layer the model cannot fit, and says so where a newcomer starts
    assert "DATA MISFIT" in (out / "README.md").read_text()
    hyp = pd.read_csv(out / "invert" / "hypotheses.csv")
    for _, g in hyp.groupby("layer"):  # every demo layer's interpretations partition the space
        assert abs(g["posterior_probability"].sum() - 1) < SUM_TOL
    # outputs name the published folder, never the temporary one the demo was written into
    # (profile/run.toml named '.demo.partial-...')
    for f in out.rglob("*"):
        if f.suffix in (".toml", ".md", ".csv", ".tex"):
            assert ".partial" not in f.read_text(encoding="utf-8"), f


def test_demo_second_process_echoes_its_warnings(tmp_path, monkeypatch, capsys):
    # the demo's MCMC, comparison and chart parts run in a second process with their messages
    # captured: their warnings (e.g. not converged) must still reach the terminal, their
    # progress output must not
    import argparse

    import bayescrust.cli.demo as demo

    def fake_invert(args, study, dest, **kw):
        print("sampling: 100%|####| 300/300", file=sys.stderr)
        print("bayescrust: warning: layer 'x': ConvergenceWarning: not converged",
              file=sys.stderr)

    monkeypatch.setattr(demo, "do_invert", fake_invert)
    monkeypatch.setattr(demo, "do_compare", lambda *a, **k: None)
    monkeypatch.setattr(demo, "do_chart", lambda *a, **k: None)
    args = argparse.Namespace(quiet=False, points=3, seed=None)
    times, lines = demo._second_part(args, None, tmp_path, "exact", True)
    assert set(times) == {"mcmc", "compare", "chart"}
    assert lines == ["bayescrust: warning: layer 'x': ConvergenceWarning: not converged"]
    assert capsys.readouterr().err == ""

    class Done:
        def result(self):
            return times, lines

    demo._finish_second_part(args, Done(), None)
    assert "ConvergenceWarning: not converged" in capsys.readouterr().err


@pytest.mark.parametrize("command", ["invert", "compare"])
def test_run_failure_exit_1_no_output(small_study, tmp_path, monkeypatch, capsys, command):
    import bayescrust.inference.api as api

    def boom(*a, **k):
        raise RuntimeError("simulated failure")

    monkeypatch.setattr(api, "exact_layer", boom)
    out = tmp_path / "failed"
    assert main([command, str(small_study), "--out", str(out), "-q"]) == 1
    err = capsys.readouterr().err
    assert "simulated failure" in err and "Traceback" not in err
    assert not out.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".failed")]


def test_forward_warns_beyond_the_deepest_layer(capsys):
    # a layer may reach 5 GPa (Layer's pressure_gpa range); beyond it forward still computes
    # but must say the numbers are extrapolated (it said nothing at 9 GPa)
    assert main(["forward", "--rock", "harzburgite", "--temperature", "1000",
                 "--pressure", "9"]) == 0
    assert "above 5 GPa" in capsys.readouterr().err
    assert main(["forward", "--rock", "harzburgite", "--temperature", "1000",
                 "--pressure", "4"]) == 0
    assert "above 5 GPa" not in capsys.readouterr().err


def test_forward_lists_catalogue_and_accepts_a_mineral(capsys):
    # issue: "a user can ask for one mineral at (P, T), and list the minerals and rocks with
    # their sources"; olivine Fo90 at 25 C, 1 bar: Vp 8.341 (Abramson et al. 1997, verified)
    assert main(["forward", "--list"]) == 0
    out = capsys.readouterr().out
    assert "Abramson" in out and "harzburgite" in out and "[verified]" in out
    assert main(["forward", "--rock", "olivine", "--temperature", "25", "--pressure", "0",
                 "--json"]) == 0
    rows = json.loads(capsys.readouterr().out)["rows"]
    assert abs(rows[0]["vp"] - 8.341) < 0.005
    assert main(["forward", "--rock", "olivin", "--temperature", "25", "--pressure", "0"]) == 2
    assert "did you mean 'olivine'" in capsys.readouterr().err


def test_demo_map_records_the_final_name_of_its_input(tmp_path):
    import argparse

    import xarray as xr

    from bayescrust.cli.demo import demo_grid

    work, final = tmp_path / ".demo.partial-x", tmp_path / "demo"
    (work / "study").mkdir(parents=True)
    (work / "map").mkdir()
    demo_grid(argparse.Namespace(seed=0), work / "map", work / "study", final / "study")
    with xr.open_dataset(work / "map" / "map.nc") as ds:
        assert ds.attrs["source"] == str(final / "study" / "tallowmere_section.nc")


def test_compare_report_states_the_bare_mention_edge_of_its_categories(small_study, tmp_path):
    # Kass & Raftery (1995): 2 ln B < 2 is "not worth more than a bare mention", i.e.
    # |log10 B| < 1 / ln 10 = 0.434. The evidence categories of every table use that edge, so
    # the report must not quote 0.5 (a log10 B of 0.47 is "positive" in hypotheses.csv).
    out = tmp_path / "cmp"
    assert main(["compare", str(small_study), "--out", str(out), "--no-figures", "-q"]) == 0
    text = (out / "report.md").read_text()
    assert "log10 Bayes factor below 0.43" in text
    assert "below 0.5" not in text


def test_chart_title_names_the_other_observations_held_fixed(small_study):
    # The chart varies Vp only; a figure read alone (in a manuscript) must say the layer's other
    # data (here Vs 3.9 +- 0.1 km/s) were held, or it reads as a Vp-only chart.
    from bayescrust.cli.chart import chart_title
    from bayescrust.config import load_study

    study = load_study(small_study)
    with_vs = next(lay for lay in study.layers if lay.name == "lower crust with Vs")
    assert "Vs 3.9 ± 0.1 km/s held fixed" in chart_title(with_vs)
    vp_only = next(lay for lay in study.layers if lay.name == "lower crust")
    assert "held" not in chart_title(vp_only)


def test_compare_tables_say_when_a_run_did_not_converge(small_study, tmp_path):
    # hypotheses.csv carries `converged` so that a table read on its own says when its numbers
    # come from an unconverged run; comparison.csv and evidence.csv must too.
    text = small_study.read_text().replace('method = "exact"', 'method = "mcmc"\nmax_steps = 100')
    study = tmp_path / "short.toml"
    study.write_text(text)
    out = tmp_path / "cmp"
    assert main(["compare", str(study), "--out", str(out), "--no-figures", "-q",
                 "--layer", "lower crust"]) == 0
    for name in ("comparison", "evidence"):
        t = pd.read_csv(out / f"{name}.csv")
        assert "converged" in t.columns, name
        assert not t["converged"].any(), name
