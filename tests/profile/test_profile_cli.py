"""The ``profile`` command, the ``[profile]`` study section and the NetCDF output."""

from importlib.resources import files

import arviz as az
import pandas as pd
import pytest

from bayescrust.cli import main
from bayescrust.config.errors import StudyError
from bayescrust.config.profile import parse_profile_study

DEMO = files("bayescrust").joinpath("demo", "tallowmere_profile.toml").read_text("utf-8")
SMALL = """
[profile]
name = "small"
water_depth_km = 3.0
compare = ["half_space", "uncoupled"]
[profile.thermal]
state = "half_space"
age_myr = [1.0, 20.0]
[profile.heat_flow]
value = 120.0
sigma = 20.0
mode = "lower_bound"
[[profile.layers]]
name = "upper"
top_km = 0.0
bottom_km = 2.0
vp = [5.5, 0.2]
[[profile.layers]]
name = "lower"
top_km = 2.0
bottom_km = 6.0
vp = [7.0, 0.1]
porosity = 0.0
[run]
seed = 3
"""


def test_demo_profile_study_parses():
    st = parse_profile_study(DEMO, source="demo.toml")
    assert st.profile.n_layers == 5 and set(st.compare) == {"half_space", "axial", "uncoupled"}
    assert st.profile.heat_flow.mode == "lower_bound"


@pytest.mark.parametrize("bad, key", [
    ("water_depth_km = 3.0", "water_depth_km = 30.0"),
    ('state = "half_space"', 'state = "lukewarm"'),
    ('mode = "lower_bound"', 'mode = "upper"'),
    ("bottom_km = 2.0", "bottom_km = 2.5"),
])
def test_bad_profile_study_names_file_and_key(bad, key):
    with pytest.raises(StudyError) as e:
        parse_profile_study(SMALL.replace(bad, key), source="bad.toml")
    assert "bad.toml" in str(e.value)


def test_profile_command_writes_tables_and_netcdf(tmp_path):
    study = tmp_path / "p.toml"
    study.write_text(SMALL, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["profile", str(study), "--out", str(out), "--no-figures", "-q"]) == 0
    for stem in ("hypotheses", "boundary", "thermal", "thermal_evidence", "answers_by_state"):
        for ext in ("csv", "md", "tex"):
            assert (out / f"{stem}.{ext}").is_file()
    idata = az.from_netcdf(str(out / "posterior.nc"))
    assert idata.posterior["temperature_c"].dims[-1] == "layer"
    assert list(idata.posterior["layer"].values) == ["upper", "lower"]
    assert "boundary_km" in idata.posterior
    # the observed values per layer, on the same layer coordinate (arviz 0.2x and 1.x alike)
    vp = idata.observed_data["observed_vp"]
    assert vp.dims == ("layer",) and list(vp["layer"].values) == ["upper", "lower"]
    assert vp.values.tolist() == [5.5, 7.0]
    assert (out / "report.md").read_text().count("Thermal state favoured") == 1
    # a parameter held fixed (the conductivity, GDH1's 3.138 W/m/K by default) is reported
    # exactly: sd and Monte Carlo error 0, not numpy's rounding noise of a constant (8.9e-16)
    th = pd.read_csv(out / "thermal.csv", index_col=0)
    row = th.loc["conductivity_w_mk"]
    assert row["sd"] == 0.0 and row["mcse"] == 0.0 and row["q05"] == row["q95"]


def test_profile_command_bad_file_exit_code(tmp_path):
    study = tmp_path / "p.toml"
    study.write_text(SMALL.replace("sigma = 20.0", "sigma = -1.0"), encoding="utf-8")
    assert main(["profile", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
    assert not (tmp_path / "o").exists()


@pytest.mark.parametrize("old, new, key, allowed", [
    ("porosity = 0.0", "porosity = [0.0, 2.0]", "profile.layers[1].porosity[1]", "[0, 0.5]"),
    ('vp = [5.5, 0.2]', 'vp = [5.5, 0.2]\nmelt_fraction = 0.9', "profile.layers[0].melt_fraction",
     "[0, 0.3]"),
    ('state = "half_space"', 'state = "plate"\nplate_thickness_km = 5.0',
     "profile.thermal.plate_thickness_km", "[10, 300] km"),
    ("age_myr = [1.0, 20.0]", "age_myr = [1.0, 20.0]\nmantle_temperature_c = 100.0",
     "profile.thermal.mantle_temperature_c", "[800, 1800] deg C"),
    ("age_myr = [1.0, 20.0]", "age_myr = 5000.0", "profile.thermal.age_myr", "(0, 200] Myr"),
    ("age_myr = [1.0, 20.0]", "age_myr = [1.0, 20.0]\nconductivity_w_mk = -3.0",
     "profile.thermal.conductivity_w_mk", "(0, 10] W/m/K"),
    ('vp = [5.5, 0.2]', 'vp = [5.5, 0.2]\nrocks = ["gabbro", "serpentinite"]',
     "profile.layers[0].rocks", "temperature_range_c = [0, 1600]"),
    ('compare = ["half_space", "uncoupled"]', "temperature_range_c = [500.0, 400.0]",
     "profile.temperature_range_c", "lo < hi"),
])
def test_profile_values_a_run_would_refuse_are_refused_when_read(tmp_path, capsys, old, new, key,
                                                                 allowed):
    assert old in SMALL
    study = tmp_path / "p.toml"
    study.write_text(SMALL.replace(old, new), encoding="utf-8")
    assert main(["profile", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
    err = capsys.readouterr().err
    assert err.count("error") == 1 and "run failed" not in err
    assert f"{study}: {key}:" in err and allowed in err
    assert not (tmp_path / "o").exists()


# the main state's default conductivity (3.138) set explicitly: the compared axial state reads
# it too and its own default differs (2.2), so the echo must keep the line
DEMO_K = DEMO.replace('state = "half_space"\nage_myr = [0.5, 30.0]',
                      'state = "half_space"\nage_myr = [0.5, 30.0]\nconductivity_w_mk = 3.138')


@pytest.mark.parametrize("text", [SMALL, DEMO, DEMO_K], ids=["small", "demo", "shared-key"])
def test_check_validates_a_profile_study_and_echoes_it(tmp_path, capsys, text):
    study = tmp_path / "p.toml"
    study.write_text(text, encoding="utf-8")
    assert main(["check", str(study)]) == 0
    out = capsys.readouterr().out
    assert f"{study}: valid profile study" in out and "unknown key" not in out
    a, b = (parse_profile_study(t, source="x.toml") for t in (text, out))
    if text is DEMO_K:
        assert DEMO_K != DEMO and "axial" in a.compare
    assert a.profile.describe() == b.profile.describe()
    assert {n: s.describe() for n, s in a.compare.items()} == \
        {n: s.describe() for n, s in b.compare.items()}
    assert a.seed == b.seed and a.plan == b.plan


def test_check_refuses_a_bad_profile_study_naming_file_and_key(tmp_path, capsys):
    study = tmp_path / "p.toml"
    study.write_text(SMALL.replace("porosity = 0.0", "porosity = 0.9"), encoding="utf-8")
    assert main(["check", str(study)]) == 2
    err = capsys.readouterr().err
    assert f"{study}: profile.layers[1].porosity:" in err and "[0, 0.5]" in err


def test_profile_method_help_names_the_real_default(capsys):
    assert main(["profile", "--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    assert "study file)" not in text and "exact path (default)" in text


@pytest.mark.parametrize("thermal, extra, key, values", [
    ('state = "uncoupled"\nhi = 1800.0', "", "profile.thermal.hi", ("1800", "1600")),
    ('state = "uncoupled"\nlo = 100.0', "temperature_range_c = [200.0, 1200.0]\n",
     "profile.thermal.lo", ("100", "200")),
    ('state = "uncoupled"\nhi = 1100.0', "temperature_range_c = [0.0, 1000.0]\n",
     "profile.thermal.hi", ("1100", "1000")),
])
def test_uncoupled_state_outside_the_temperature_range_is_refused(tmp_path, capsys, thermal,
                                                                   extra, key, values):
    text = SMALL.replace('compare = ["half_space", "uncoupled"]\n', extra).replace(
        'state = "half_space"\nage_myr = [1.0, 20.0]', thermal)
    study = tmp_path / "p.toml"
    study.write_text(text, encoding="utf-8")
    assert main(["check", str(study)]) == 2
    err = capsys.readouterr().err
    assert f"{study}: {key}:" in err and all(v in err for v in values)
    assert "temperature_range_c" in err


def test_uncoupled_defaults_are_clipped_to_the_temperature_range():
    from bayescrust import Layer
    from bayescrust.profile import Profile
    from bayescrust.profile.thermal import Uncoupled

    text = SMALL.replace("water_depth_km = 3.0", "water_depth_km = 3.0\n"
                                                 "temperature_range_c = [0.0, 1000.0]")
    st = parse_profile_study(text, source="p.toml")
    unc = st.compare["uncoupled"]
    assert (unc.lo, unc.hi) == (0.0, 1000.0)  # not Uncoupled's 0-1400
    with pytest.raises(ValueError, match="1800.*1600|1600.*1800"):
        Profile([Layer("a", top_km=0.0, bottom_km=2.0, vp=(5.5, 0.2))], Uncoupled(hi=1800.0))


def test_profile_writes_a_run_toml_that_repeats_the_run(tmp_path):
    # every other command wrote run.toml; profile did not, so a profile result could not be
    # traced to its settings and seed (docs/interpretation.md promises it)
    import shlex

    study = tmp_path / "p.toml"
    study.write_text(SMALL, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["profile", str(study), "--out", str(out), "--no-figures", "-q",
                 "--seed", "7"]) == 0
    text = (out / "run.toml").read_text()
    line = next(x for x in text.splitlines() if "Re-run with:" in x)
    words = [str(out / "run.toml") if w == "run.toml" else
             str(tmp_path / "again") if w == "NEW_FOLDER" else w
             for w in shlex.split(line.split("Re-run with:")[1])]
    assert words[:2] == ["bayescrust", "profile"]
    assert main(words[1:] + ["--no-figures", "-q"]) == 0
    for stem in ("hypotheses", "boundary", "thermal"):
        assert (tmp_path / "again" / f"{stem}.csv").read_text() == \
            (out / f"{stem}.csv").read_text(), stem


def test_a_gap_between_profile_layers_names_the_layer_key_and_the_expected_depth():
    # The error must name the key to edit (profile.layers[1].top_km) and the value it must take,
    # not "profile: profile: layer 'lower' ..." under the whole [profile] table.
    with pytest.raises(StudyError) as e:
        parse_profile_study(SMALL.replace("top_km = 2.0", "top_km = 2.5"), source="bad.toml")
    msg = str(e.value)
    assert "bad.toml: profile.layers[1].top_km:" in msg
    assert "got 2.5" in msg and "2 km" in msg
    assert "profile: profile:" not in msg


def test_profile_netcdf_carries_a_unit_on_every_variable(tmp_path):
    # As a layer's posterior.nc (README: "posterior.nc carries a units attribute on every
    # variable"): a profile's file read on its own must say km/s, deg C, Myr, km, ...
    study = tmp_path / "p.toml"
    study.write_text(SMALL, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["profile", str(study), "--out", str(out), "--no-figures", "-q"]) == 0
    idata = az.from_netcdf(str(out / "posterior.nc"))
    for group in ("posterior", "observed_data"):
        ds = idata[group] if hasattr(idata, "children") else getattr(idata, group)
        for v in ds.data_vars:
            assert ds[v].attrs.get("units"), (group, v)
    post = idata.posterior
    assert post["vp"].attrs["units"] == "km/s" and post["temperature_c"].attrs["units"] == "deg C"
    assert post["age_myr"].attrs["units"] == "Myr" and post["boundary_km"].attrs["units"] == "km"
    assert post["conductivity_w_mk"].attrs["units"] == "W m-1 K-1"
