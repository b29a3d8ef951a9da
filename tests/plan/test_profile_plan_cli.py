"""``bayescrust plan`` on a ``[profile]`` study and the profile study's ``[plan]`` section
(structural checks; the study is a made-up test input, no value in it is a check value)."""

import textwrap

import pandas as pd
import pytest

from bayescrust.cli import main
from bayescrust.config.errors import StudyError
from bayescrust.config.profile import parse_profile_study

STUDY = textwrap.dedent("""\
    [profile]
    name = "tiny (made-up numbers)"
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
    vp = [7.3, 0.15]
    rocks = ["gabbro", "harzburgite"]

    [[profile.layers]]
    name = "L2"
    top_km = 5.0
    bottom_km = 7.0
    vp = [7.7, 0.15]
    rocks = ["gabbro", "harzburgite"]

    [plan]
    simulations = 100
    design_points = 4096
    rank_question = "thermal: age_myr"
    candidates = [
      { observable = "heat_flow", sigma = [10.0, 20.0] },
      { observable = "heat_flow", sigma = 10.0, mode = "lower_bound", max_deficit = 300.0 },
      { observable = "vs", sigma = 0.1, layer = "L1" },
    ]

    [run]
    seed = 3
""")


def test_plan_command_on_a_profile_study(tmp_path):
    study = tmp_path / "p.toml"
    study.write_text(STUDY)
    out = tmp_path / "out"
    assert main(["plan", str(study), "--out", str(out), "--quiet"]) == 0
    for f in ("plan.csv", "plan.md", "plan.tex", "ranking.csv", "calibration.csv", "report.md",
              "run.toml", "plan.png", "ranking.png"):
        assert (out / f).is_file(), f
    t = pd.read_csv(out / "plan.csv", index_col=0)
    assert set(t["question"]) == {"L1", "L2", "crust-mantle boundary", "thermal: age_myr"}
    assert len(t) == 4 * 4
    r = pd.read_csv(out / "ranking.csv", index_col=0)
    assert list(r["rank"]) == [1, 2, 3, 4]
    assert r["interval_narrowing"].is_monotonic_decreasing  # ranked by the thermal question
    report = (out / "report.md").read_text()
    assert "Candidates, best first for: thermal: age_myr" in report
    assert "# seed used: 3" in (out / "run.toml").read_text()


def test_plan_command_profile_cli_candidates(tmp_path):
    study = tmp_path / "p.toml"
    study.write_text(STUDY)
    out = tmp_path / "out"
    assert main(["plan", str(study), "--out", str(out), "--quiet", "--no-figures",
                 "--candidate", "heat_flow:15:lower_bound", "--candidate", "vs:0.2@L2",
                 "--simulations", "50"]) == 0
    r = pd.read_csv(out / "ranking.csv", index_col=0)
    assert set(r.index) == {"heat flow ± 15 mW/m^2 (lower bound)", "Vs ± 0.2 km/s in L2"}


@pytest.mark.parametrize("arg", ["vs:0.1@L9", "heat_flow:10@L1", "vs:0.1:lower_bound",
                                 "heat_flow:-1"])
def test_plan_command_profile_bad_candidate(tmp_path, arg, capsys):
    study = tmp_path / "p.toml"
    study.write_text(STUDY)
    rc = main(["plan", str(study), "--out", str(tmp_path / "o"), "--quiet", "--no-figures",
               "--candidate", arg])
    assert rc == 2
    assert "candidate" in capsys.readouterr().err


@pytest.mark.parametrize("old,new,key", [
    ('layer = "L1" }', 'layer = "L9" }', "plan.candidates[2].layer"),
    ('sigma = 0.1, layer', 'sigma = 0.1, mode = "lower_bound", layer', "plan.candidates[2].mode"),
    ('max_deficit = 300.0', 'max_deficit = -3.0', "plan.candidates[1].max_deficit"),
    ('mode = "lower_bound", max_deficit = 300.0', 'max_deficit = 300.0',
     "plan.candidates[1].max_deficit"),
])
def test_profile_plan_section_errors_name_the_key(old, new, key):
    assert old in STUDY
    with pytest.raises(StudyError, match=key.replace("[", r"\[").replace("]", r"\]")):
        parse_profile_study(STUDY.replace(old, new), source="p.toml")


def test_profile_plan_section_is_read():
    s = parse_profile_study(STUDY, source="p.toml")
    assert s.plan.rank_question == "thermal: age_myr"
    c = s.plan.candidates
    assert [x.observable for x in c] == ["heat_flow", "heat_flow", "heat_flow", "vs"]
    assert c[2].mode == "lower_bound" and c[2].max_deficit == 300.0 and c[3].layer == "L1"


def test_plan_command_profile_uses_the_study_rank_by(tmp_path, monkeypatch):
    import bayescrust.plan as bplan

    seen = {}
    real = bplan.plan_profile

    def spy(*a, **kw):
        seen.update(kw)
        return real(*a, **kw)

    monkeypatch.setattr(bplan, "plan_profile", spy)
    study = tmp_path / "p.toml"
    study.write_text(STUDY.replace('rank_question = "thermal: age_myr"',
                                   'rank_question = "crust-mantle boundary"\n'
                                   'rank_by = "p_decisive"')
                     .replace("simulations = 100", "simulations = 50")
                     .replace("design_points = 4096", "design_points = 1024"))
    out = tmp_path / "out"
    assert main(["plan", str(study), "--out", str(out), "--quiet", "--no-figures"]) == 0
    assert seen["rank_by"] == "p_decisive"
    r = pd.read_csv(out / "ranking.csv", index_col=0)
    assert r["p_decisive"].is_monotonic_decreasing


def test_profile_design_points_is_four_times_each_layer_design(tmp_path, monkeypatch):
    import bayescrust.config.plan as cplan
    import bayescrust.plan as bplan

    seen = {}

    def fake(*a, **kw):
        seen.update(kw)
        raise ValueError("stop here")

    monkeypatch.setattr(bplan, "plan_profile", fake)
    study = tmp_path / "p.toml"
    study.write_text(STUDY)
    assert main(["plan", str(study), "--out", str(tmp_path / "o"), "-q", "--no-figures"]) == 2
    assert seen["n_layer"] == 4096 // 4  # the study's design_points = 4096
    doc = " ".join(cplan.__doc__.split())
    assert "each layer's design has a quarter of ``design_points``" in doc
