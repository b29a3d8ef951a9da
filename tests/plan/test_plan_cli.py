"""The ``plan`` command and the ``[plan]`` study-file section (structural checks; the study is a
made-up test input, no value in it is a check value)."""

import textwrap
import tomllib

import numpy as np
import pandas as pd
import pytest

from bayescrust.cli import main
from bayescrust.config import StudyError, parse_study

STUDY = textwrap.dedent("""\
    title = "plan test (made-up numbers)"
    water_depth_km = 3.0
    seed = 7
    rocks = ["gabbro", "harzburgite"]

    [priors]
    melt_fraction = 0.0
    serpentinization = 0.0

    [hypotheses.crust]
    ultramafic_fraction = [0.0, 0.5]

    [hypotheses.mantle]
    ultramafic_fraction = [0.5, 1.0]

    [[layers]]
    name = "lower crust"
    top_km = 4.0
    bottom_km = 6.0
    vp = [7.1, 0.1]

    [[layers]]
    name = "other"
    top_km = 1.0
    bottom_km = 2.0
    vp = [6.0, 0.2]

    [plan]
    layer = "lower crust"
    simulations = 200
    design_points = 2048
    candidates = [
      { observable = "vs", sigma = [0.05, 0.2] },
      { observable = "density", sigma = 0.05, label = "gravity density" },
      { observable = "vs", sigma = inf, label = "nothing" },
    ]
    """)


@pytest.fixture
def study(tmp_path):
    p = tmp_path / "plan.toml"
    p.write_text(STUDY, encoding="utf-8")
    return p


def test_plan_command_writes_every_output(study, tmp_path, capsys):
    out = tmp_path / "plan"
    assert main(["plan", str(study), "--out", str(out), "-q"]) == 0
    for f in ("plan.csv", "plan.md", "plan.tex", "plan.png", "plan.pdf", "calibration.csv",
              "report.md", "run.toml"):
        assert (out / f).is_file(), f
    t = pd.read_csv(out / "plan.csv", index_col=0)
    assert list(t.index) == list(t.sort_values("information_gain_bits",
                                               ascending=False).index)
    assert set(t.index) == {"Vs ± 0.05 km/s", "Vs ± 0.2 km/s", "gravity density", "nothing"}
    assert t.loc["nothing", "information_gain_bits"] == pytest.approx(0.0, abs=1e-12)
    assert t.loc["nothing", "rank"] == 4
    cal = pd.read_csv(out / "calibration.csv")
    assert np.all(np.abs(cal["average_updated"] - cal["today"]) <= 4 * cal["mcse"] + 1e-12)
    report = (out / "report.md").read_text(encoding="utf-8")
    assert "of cases" in report and "Caution" in report
    run = tomllib.loads((out / "run.toml").read_text(encoding="utf-8"))
    assert run["plan"]["layer"] == "lower crust" and len(run["plan"]["candidates"]) == 4
    assert run["run"]["command"] == "plan"
    # the echo is itself a valid study file with the same plan
    again = parse_study((out / "run.toml").read_text(encoding="utf-8"))
    assert again.plan == parse_study(STUDY).plan


def test_cli_candidates_override_the_study(study, tmp_path):
    out = tmp_path / "p2"
    assert main(["plan", str(study), "--out", str(out), "-q", "--no-figures",
                 "--candidate", "vp_vs:0.03", "--simulations", "50"]) == 0
    t = pd.read_csv(out / "plan.csv", index_col=0)
    assert list(t.index) == ["Vp/Vs ± 0.03"]
    assert not (out / "plan.png").exists()


@pytest.mark.parametrize("bad, key", [
    ("[plan]\nsimulation = 10\n", "plan.simulation"),
    ("[plan]\ncandidates = [{ observable = \"gravity\", sigma = 1 }]\n",
     "plan.candidates[0].observable"),
    ("[plan]\ncandidates = [{ observable = \"vs\", sigma = [0.1, -1] }]\n",
     "plan.candidates[0].sigma[1]"),
    ("[plan]\ndesign_points = 3000\n", "plan.design_points"),
    ("[plan]\nlayer = \"lower crus\"\n", "plan.layer"),
    ("[plan]\nrank_by = \"cost\"\n", "plan.rank_by"),
])
def test_bad_plan_section_names_file_and_key(bad, key):
    text = STUDY[:STUDY.index("[plan]")] + bad
    with pytest.raises(StudyError) as exc:
        parse_study(text, source="s.toml")
    assert str(exc.value).startswith("s.toml") and key in str(exc.value)


def test_bad_cli_candidate_exit_2(study, tmp_path, capsys):
    assert main(["plan", str(study), "--out", str(tmp_path / "x"), "-q",
                 "--candidate", "vs=0.1"]) == 2
    assert "OBSERVABLE:SIGMA" in capsys.readouterr().err
    assert not (tmp_path / "x").exists()


def test_plan_of_the_baseline_alone_draws_its_figure_without_a_stray_warning(study, tmp_path,
                                                                             capsys):
    # `--candidate vp_vs:inf` (measure nothing) has no finite sigma to draw: the figure must
    # not print matplotlib's "No artists with labels found to put in legend" to the user.
    out = tmp_path / "p3"
    assert main(["plan", str(study), "--out", str(out), "-q", "--candidate", "vp_vs:inf",
                 "--simulations", "50"]) == 0
    assert (out / "plan.png").is_file()
    assert "legend" not in capsys.readouterr().err
