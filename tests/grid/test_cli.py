"""``bayescrust map``: outputs, CF attributes, bad input with exit code 2."""

import numpy as np
import pytest
import xarray as xr

from bayescrust.cli import main

STUDY = """
title = "tiny invented section"
seed = 3
[grid]
file = "g.nc"
depth = "z"
seafloor = 3.0
variables = {{ vp = "vp" }}
sigmas = {{ vp = {sigma} }}
level_km = 1.0
n_points = 1024
min_ess = 0
[[grid.zones]]
name = "lower"
top_km = 1.5
bottom_km = 20.0
rocks = ["gabbro", "harzburgite"]
"""


def _setup(tmp_path, section, sigma="0.1"):
    section.isel(x=[0, 1]).to_netcdf(tmp_path / "g.nc", engine="h5netcdf")
    p = tmp_path / "study.toml"
    p.write_text(STUDY.format(sigma=sigma))
    return p


def test_map_command_writes_netcdf_summary_and_maps(tmp_path, section):
    study = _setup(tmp_path, section)
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "-q"]) == 0
    ds = xr.open_dataset(out / "map.nc")
    assert ds["p_mantle"].attrs["units"] == "1"
    assert ds["temperature_c_mean"].attrs["units"] == "degC"
    assert ds["vp_mean"].attrs["units"] == "km s-1"
    assert ds.attrs["Conventions"].startswith("CF")
    assert np.isnan(ds["p_mantle"].isel(x=0, z=0))          # above the zone: masked
    assert int(ds["quality"].isel(x=0, z=0)) == 3
    ds.close()
    assert (out / "column_summary.csv").read_text().startswith("distance,")
    assert (out / "maps" / "map_p_mantle.png").exists()
    assert (out / "maps" / "map_p_mantle.pdf").exists()
    assert not (tmp_path / "out.checkpoint.zarr").exists()


def test_bad_grid_study_exits_2_and_names_the_key(tmp_path, section, capsys):
    study = _setup(tmp_path, section, sigma='"vp_error"')
    assert main(["map", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
    assert "vp_error" in capsys.readouterr().err
    study.write_text(STUDY.format(sigma="-1"))
    assert main(["map", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
    assert "grid.sigmas.vp" in capsys.readouterr().err


def test_map_refuses_a_store_that_is_a_user_folder_or_overlaps_the_output(tmp_path, section,
                                                                          capsys):
    study = _setup(tmp_path, section)
    mine = tmp_path / "mydata"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me")
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "--store", str(mine), "-q",
                 "--no-figures"]) == 2
    err = capsys.readouterr().err
    assert "--store" in err and "mydata" in err and "not a checkpoint store" in err
    assert (mine / "notes.txt").read_text() == "keep me" and not out.exists()
    for store in (out, out / "ckpt", tmp_path):  # equal to, inside, holding --out
        assert main(["map", str(study), "--out", str(out), "--store", str(store), "-q",
                     "--no-figures"]) == 2
        assert "--store" in capsys.readouterr().err
    assert (mine / "notes.txt").exists() and not out.exists()


def test_map_resumes_from_and_then_removes_its_own_store(tmp_path, section):
    from bayescrust.config.grid import load_grid_study
    from bayescrust.grid import map_grid, read_grid

    study = _setup(tmp_path, section)
    st = load_grid_study(study)
    store = tmp_path / "ck.zarr"
    map_grid(read_grid(st.file, st.mapping), st.zones, seed=st.seed, store=store,
             **st.options)
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "--store", str(store), "-q",
                 "--no-figures"]) == 0
    with xr.open_dataset(out / "map.nc") as ds:
        assert ds.attrs["n_chunks_computed"] == 0          # everything came from the store
    assert not store.exists()


def test_map_refuses_a_store_of_other_settings_as_bad_input(tmp_path, section, capsys):
    # a store made with another seed: exit 2 naming --store, no output folder, store kept
    from bayescrust.config.grid import load_grid_study
    from bayescrust.grid import map_grid, read_grid

    study = _setup(tmp_path, section)
    st = load_grid_study(study)
    store = tmp_path / "ck.zarr"
    map_grid(read_grid(st.file, st.mapping), st.zones, seed=st.seed + 1, store=store,
             **st.options)
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "--store", str(store), "-q",
                 "--no-figures"]) == 2
    err = capsys.readouterr().err
    assert "another input or other settings" in err and "--store" in err
    assert not out.exists() and store.exists()


STUDY_3D = """
seed = 3
[grid]
file = "g3.nc"
depth = "z"
seafloor = "sf"
{distance}
variables = {{ vp = "vp" }}
sigmas = {{ vp = 0.1 }}
level_km = 1.0
n_points = 1024
min_ess = 0
[[grid.zones]]
name = "lower"
top_km = 0.0
bottom_km = 20.0
rocks = ["gabbro", "harzburgite"]
"""


def _setup_3d(tmp_path, distance=""):
    """A tiny invented (x, y, z) volume with a seafloor varying over x and y."""
    x, y, z = np.array([0.0, 10.0, 20.0]), np.array([0.0, 5.0]), np.arange(2.0, 12.0, 0.5)
    sf = np.array([[2.0, 2.5], [3.0, 3.5], [4.0, 4.5]])
    vp = np.clip(4.5 + 0.5 * (z[None, None, :] - sf[:, :, None]), 2.0, 8.2)
    xr.Dataset({"vp": (("x", "y", "z"), vp), "sf": (("x", "y"), sf)},
               coords={"x": x, "y": y, "z": z}).to_netcdf(tmp_path / "g3.nc", engine="h5netcdf")
    p = tmp_path / "study3.toml"
    p.write_text(STUDY_3D.format(distance=distance))
    return p


def test_map_of_a_3d_grid_writes_its_section_maps(tmp_path):
    study = _setup_3d(tmp_path)
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "-q"]) == 0
    assert (out / "maps" / "map_p_mantle.png").exists()
    assert (out / "maps" / "map_p_mantle.pdf").exists()


def test_overlapping_zones_are_refused_naming_the_file_and_both_zones(tmp_path, section,
                                                                       capsys):
    study = _setup(tmp_path, section)
    study.write_text(STUDY.format(sigma="0.1") + '[[grid.zones]]\nname = "deep"\n'
                     'top_km = 0.5\nbottom_km = 2.0\nrocks = ["gabbro"]\n')
    assert main(["map", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
    err = capsys.readouterr().err
    assert "study.toml" in err and "grid.zones[0]" in err and "grid.zones[1]" in err
    assert "overlap" in err and not (tmp_path / "o").exists()


def test_the_distance_setting_reaches_the_column_summary_and_the_maps(tmp_path):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    import pandas as pd

    from bayescrust.report.grid_maps import section_map

    study = _setup_3d(tmp_path, distance='distance = "y"')
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "-q"]) == 0
    df = pd.read_csv(out / "column_summary.csv")
    assert list(df.columns[:2]) == ["distance", "x"]          # y is the distance; x beside it
    assert len(df) == 6 and not df.duplicated(["distance", "x"]).any()
    assert sorted(set(df["distance"])) == [0.0, 5.0] and sorted(set(df["x"])) == [0, 10, 20]
    with xr.open_dataset(out / "map.nc") as ds:
        assert ds.attrs["distance"] == "y"
        fig = section_map(ds, "p_mantle")
        assert fig.axes[0].get_xlabel() == "y"
        plt.close(fig)


def test_map_of_a_single_column_grid(tmp_path, section):
    import pandas as pd

    study = _setup(tmp_path, section)
    section.isel(x=0).drop_vars("x").to_netcdf(tmp_path / "g.nc", engine="h5netcdf")  # (z,)
    for extra in (["--no-figures"], []):
        out = tmp_path / f"out{len(extra)}"
        assert main(["map", str(study), "--out", str(out), "-q", *extra]) == 0
        df = pd.read_csv(out / "column_summary.csv")
        assert len(df) == 1 and df["n_nodes"][0] > 0 and np.isfinite(df["mantle_depth_km"][0])
        with xr.open_dataset(out / "map.nc") as ds:
            assert ds["p_mantle"].dims == ("z",)
    assert (out / "maps" / "map_p_mantle.png").exists()


def test_a_grid_study_without_seafloor_is_refused_naming_the_key(tmp_path, section, capsys):
    study = _setup(tmp_path, section)
    for ref in ("seafloor", "sea_level"):
        study.write_text(STUDY.format(sigma="0.1").replace(
            "seafloor = 3.0", f'depth_reference = "{ref}"'))
        assert main(["map", str(study), "--out", str(tmp_path / "o"), "-q"]) == 2
        err = capsys.readouterr().err
        assert "study.toml" in err and "grid.seafloor" in err and "missing" in err
    assert not (tmp_path / "o").exists()


def test_a_dim_named_distance_does_not_overwrite_the_distance_column():
    # distance setting "y"; the other horizontal dim happens to be called "distance": its values
    # go to "distance_coordinate", the distance column keeps y (it took the other dim's values)
    from bayescrust.grid.output import column_summary

    d, y, z = np.array([0.0, 10.0]), np.array([100.0, 200.0, 300.0]), np.arange(0.0, 10.0)
    p = np.broadcast_to(np.clip((z - 5) / 4 + 0.5, 0, 1), (2, 3, 10)).copy()
    zz = np.broadcast_to(z, (2, 3, 10)).copy()
    ds = xr.Dataset({"p_mantle": (("distance", "y", "z"), p),
                     "depth_below_seafloor": (("distance", "y", "z"), zz),
                     "seafloor_depth": (("distance", "y"), np.zeros((2, 3)))},
                    coords={"distance": d, "y": y, "z": z}, attrs={"distance": "y"})
    df = column_summary(ds)
    assert sorted(set(df["distance"])) == [100.0, 200.0, 300.0]
    assert sorted(set(df["distance_coordinate"])) == [0.0, 10.0]
    assert np.allclose(df["mantle_depth_km"], 5.0)  # P(mantle) crosses 0.5 at z = 5 (by design)
    # float32 maps: the crossing depths carry no float32 noise digits (they printed
    # 1.4468600749969482 in column_summary.csv)
    ds32 = ds.assign(p_mantle=ds["p_mantle"].astype(np.float32) * np.float32(0.999),
                     depth_below_seafloor=ds["depth_below_seafloor"].astype(np.float32) * 1.1)
    text = column_summary(ds32).to_csv(index=False)
    assert max(len(x.split(".")[-1]) for x in text.replace(",", "\n").split() if "." in x) <= 4


def test_section_map_refuses_a_distance_that_is_not_a_horizontal_dim():
    # as the column summary does; the maps used to fall back to the first dim silently
    from bayescrust.report.grid_maps import _section

    z = np.arange(0.0, 4.0)
    ds = xr.Dataset({"p_mantle": (("x", "z"), np.zeros((2, 4))),
                     "seafloor_depth": (("x",), np.zeros(2))},
                    coords={"x": [0.0, 1.0], "z": z}, attrs={"distance": "y"})
    with pytest.raises(ValueError, match="'y' is not a horizontal dim"):
        _section(ds, "p_mantle")
    assert _section(ds, "p_mantle", distance="x")[2] == "x"


def test_readme_states_the_grid_age_not_the_replaced_age_prior(tmp_path, section):
    # `[grid] age` replaces the age_myr prior of every half-space zone (docs/grid.md), so the
    # README's assumptions must give the ages the map used (here |x - 0| / 10 mm/yr: 0.001-1
    # Myr over x = 0..10 km), not the zone's unused default "Uniform(2, 20)".
    section.isel(x=[0, 5]).to_netcdf(tmp_path / "g.nc", engine="h5netcdf")
    text = STUDY.format(sigma="0.1").replace(
        "[grid]", '[thermal.plate]\nkind = "half_space"\n[grid]\ndistance = "x"\n'
                  'age = { axis = 0.0, half_rate_mm_yr = 10.0 }')
    text += 'thermal_prior = "plate"\n'
    p = tmp_path / "study.toml"
    p.write_text(text)
    out = tmp_path / "out"
    assert main(["map", str(p), "--out", str(out), "-q", "--no-figures"]) == 0
    readme = (out / "README.md").read_text()
    zone_line = next(line for line in readme.splitlines() if line.startswith("- zone 'lower'"))
    assert "Uniform(2, 20)" not in zone_line
    assert "crustal age from grid.age: 0.001-1 Myr" in zone_line


def test_section_map_depth_axis_carries_the_grid_unit_and_points_down():
    # A section in metres was drawn as "z (km)" with 4000-12000 on it; a node list (CSV) had no
    # depth label, depth increasing upwards, and a masked first node made matplotlib warn.
    # Depth axes of sections point down (common practice).
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from bayescrust.report.grid_maps import section_map

    z = np.array([3000.0, 4000.0, 5000.0])
    ds = xr.Dataset({"p_mantle": (("x", "z"), np.full((2, 3), 0.5))},
                    coords={"x": [0.0, 1.0], "z": z},
                    attrs={"distance": "x", "depth_unit": "m"})
    fig = section_map(ds, "p_mantle")
    assert fig.axes[0].get_ylabel() == "z (m)"
    plt.close(fig)
    p = np.array([np.nan, 0.2, 0.9])
    nodes = xr.Dataset({"p_mantle": (("node",), p)},
                       coords={"node": np.arange(3), "x": ("node", [0.0, 0.0, 1.0]),
                               "z": ("node", [3.5, 4.5, 5.5])},
                       attrs={"distance": "x", "depth_reference": "sea_level"})
    fig = section_map(nodes, "p_mantle")
    ax = fig.axes[0]
    assert ax.get_ylabel() == "depth below sea level (km)"
    assert ax.yaxis_inverted()
    plt.close(fig)


def test_a_node_list_in_metres_is_written_with_its_depths_in_km_and_says_so(tmp_path):
    # A CSV grid's node depths are converted to km when read; map.nc said depth_unit = "m"
    # beside z = 3.5 ... 6.5 and gave z no unit at all.
    import pandas as pd

    pd.DataFrame({"dist": [0.0, 0.0, 5.0], "depth": [4500.0, 6000.0, 6500.0],
                  "vp": [6.8, 7.6, 7.7]}).to_csv(tmp_path / "n.csv", index=False)
    study = tmp_path / "study.toml"
    study.write_text(STUDY.format(sigma="0.1").replace('file = "g.nc"', 'file = "n.csv"')
                     .replace('depth = "z"', 'depth = "depth"\ndepth_unit = "m"\n'
                              'distance = "dist"\ndepth_reference = "sea_level"')
                     .replace("seafloor = 3.0", "seafloor = 3000.0"))
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out), "-q", "--no-figures"]) == 0
    with xr.open_dataset(out / "map.nc") as ds:
        assert float(ds["z"].max()) == pytest.approx(6.5)
        assert ds["z"].attrs["units"] == "km"
        assert ds.attrs["depth_unit"] == "km"


def test_check_validates_a_grid_study(tmp_path, section, capsys):
    # README: `bayescrust check` validates a study before a run; a valid [grid] study exited 2
    # ("a [grid] study; run it with `bayescrust map`") without being checked.
    study = _setup(tmp_path, section)
    assert main(["check", str(study)]) == 0
    out = capsys.readouterr().out
    assert "valid grid study" in out and "zone 'lower'" in out and "bayescrust map" in out
    study.write_text(STUDY.format(sigma="0.1").replace("level_km = 1.0", "level_km = -1.0"))
    assert main(["check", str(study)]) == 2
    assert "grid.level_km" in capsys.readouterr().err
