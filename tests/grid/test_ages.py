"""Crustal age per column: constant, per-column variable, distance to the axis / spreading rate.

References: the unit identity km / (mm/yr) = Myr (closed form); the single-layer exact inversion
:func:`bayescrust.exact_layer` with a :class:`HalfSpaceCooling` prior at the node's age (an
independent code path: its own design drawn from the node's own prior, no importance ratio);
and the half-space geotherm's monotone cooling with age (Turcotte & Schubert, Geodynamics,
eq. 4.113: T decreases with age at fixed depth).
"""

import numpy as np
import pytest
import xarray as xr

from bayescrust import Layer, exact_layer
from bayescrust.grid import (
    GridInputError,
    GridMapping,
    Zone,
    grid_from_dataset,
    map_grid,
    variable_name,
)
from bayescrust.grid.source import grid_from_csv
from bayescrust.inference.thermal_priors import HalfSpaceCooling

HS_ZONE = Zone("lower", 1.5, 20.0, rocks=("gabbro", "harzburgite"),
               priors={"temperature_c": HalfSpaceCooling()})


def _ds(x, vp, vs=None, z_below=6.05, **extra):
    data = {"vp": (("x", "z"), np.full((len(x), 1), vp))}
    if vs is not None:
        data["vs"] = (("x", "z"), np.full((len(x), 1), vs))
    data.update(extra)
    return xr.Dataset(data, coords={"x": np.asarray(x, float), "z": [3.0 + z_below]})


def _mapping(age, vs=False, **kw):
    var = {"vp": "vp", "vs": "vs"} if vs else {"vp": "vp"}
    sig = {"vp": 0.1, "vs": 0.08} if vs else {"vp": 0.1}
    return GridMapping(variables=var, sigmas=sig, depth="z", seafloor=3.0, age=age, **kw)


def test_distance_and_half_rate_give_age_in_myr():
    # closed form: age = |x - axis| / half rate; 1 km / (1 mm/yr) = 1e6 mm / (mm/yr) = 1 Myr
    x = [-30.0, -10.0, 5.0, 10.0, 50.0]
    g = grid_from_dataset(_ds(x, 7.0), _mapping({"axis": 5.0, "half_rate_mm_yr": 10.0}))
    np.testing.assert_allclose(g.age_myr, [3.5, 1.5, 1e-3, 0.5, 4.5], rtol=1e-12)
    # a full rate is twice the half rate; a distance in metres is divided by 1000
    g2 = grid_from_dataset(_ds(np.asarray(x) * 1e3, 7.0),
                           _mapping({"axis": 5e3, "full_rate_mm_yr": 20.0,
                                     "distance_unit": "m"}))
    np.testing.assert_allclose(g2.age_myr, g.age_myr, rtol=1e-12)


def test_constant_and_per_column_ages(tmp_path):
    x = [0.0, 1.0, 2.0]
    g = grid_from_dataset(_ds(x, 7.0), _mapping(4.0))
    np.testing.assert_array_equal(g.age_myr, [4.0, 4.0, 4.0])
    g = grid_from_dataset(_ds(x, 7.0, age_col=("x", [1.0, 2.0, 8.0])), _mapping("age_col"))
    np.testing.assert_array_equal(g.age_myr, [1.0, 2.0, 8.0])
    # a CSV: an age column, or the distance column with a rate
    p = tmp_path / "nodes.csv"
    p.write_text("x,z,vp,age\n10,9.05,7.0,2.5\n40,9.05,7.1,6.0\n")
    m = GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="z", seafloor=3.0,
                    age="age")
    np.testing.assert_array_equal(grid_from_csv(p, m).age_myr, [2.5, 6.0])
    m = GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1}, depth="z", seafloor=3.0,
                    age={"axis": 0.0, "half_rate_mm_yr": 20.0})
    np.testing.assert_allclose(grid_from_csv(p, m).age_myr, [0.5, 2.0])


def test_bad_ages_are_refused_naming_the_variable():
    x = [0.0, 1.0]
    with pytest.raises(GridInputError, match="age_col.*\\[0, 200\\] Myr"):
        grid_from_dataset(_ds(x, 7.0, age_col=("x", [1.0, -2.0])), _mapping("age_col"))
    with pytest.raises(GridInputError, match="nope.*not found"):
        grid_from_dataset(_ds(x, 7.0), _mapping("nope"))
    with pytest.raises(GridInputError, match="age_col.*non-depth"):
        grid_from_dataset(_ds(x, 7.0, age_col=(("x", "z"), [[1.0], [2.0]])),
                          _mapping("age_col"))
    with pytest.raises(ValueError, match="exactly one of half_rate_mm_yr"):
        _mapping({"axis": 0.0})
    with pytest.raises(ValueError, match="half_rate_mm_yr: must be in \\(0, 300\\]"):
        _mapping({"half_rate_mm_yr": -1.0})
    with pytest.raises(ValueError, match="constant age must be in"):
        _mapping(500.0)


def test_node_with_age_equals_the_layer_inversion_at_that_age():
    """Three columns of ages 1, 5 and 20 Myr share one level design (their prior ratio is
    weighed per node); each node agrees with exact_layer under HalfSpaceCooling(age=A)."""
    x = [10.0, 50.0, 200.0]
    g = grid_from_dataset(_ds(x, 7.6, vs=4.25),
                          _mapping({"axis": 0.0, "half_rate_mm_yr": 10.0}, vs=True))
    np.testing.assert_allclose(g.age_myr, [1.0, 5.0, 20.0])
    m = map_grid(g, [HS_ZONE], seed=11, n_points=2**14, level_km=0.1, min_ess=1000,
                 n_refine=2**14)
    assert m.attrs["n_levels_batched"] == 1
    np.testing.assert_allclose(m.crustal_age.values.ravel(), [1.0, 5.0, 20.0])
    t_map = m.temperature_c_mean.values.ravel()
    n_checked = 0
    for j, age in enumerate([1.0, 5.0, 20.0]):
        layer = Layer("node", top_km=6.0, bottom_km=6.1, water_depth_km=3.0, vp=(7.6, 0.1),
                      vs=(4.25, 0.08))
        ref = exact_layer(layer, rocks=HS_ZONE.rocks, seed=12, n_points=2**14,
                          priors={"temperature_c": HalfSpaceCooling(age_myr=age)})
        for h, row in ref.hypotheses.iterrows():
            v = variable_name(h)
            p, se = float(m[v].values.ravel()[j]), float(m[f"{v}_mcse"].values.ravel()[j])
            tol = 4.0 * np.hypot(se, row["posterior_mcse"]) + 1e-3
            assert abs(p - row["posterior_probability"]) < tol, (age, h, p, row)
            n_checked += 1
        # posterior mean temperature: within 4 posterior sd / sqrt(ESS) of both, + 5 deg C
        t_ref = float(ref.summary.loc["temperature_c", "mean"])
        sd = float(m.temperature_c_sd.values.ravel()[j])
        ess = float(m.importance_ess.values.ravel()[j])
        assert abs(t_map[j] - t_ref) < 4 * sd / np.sqrt(ess) + 5.0, (age, t_map[j], t_ref)
    assert n_checked >= 12
    # and the ages matter: a 20 Myr node is far colder than a 1 Myr one at 6 km
    assert t_map[0] - t_map[2] > 300.0


def test_only_age_differs_temperature_falls_monotonically_with_age():
    """Identical data in every column, ages 0.5 ... 30 Myr: posterior T decreases with age at
    every depth, as the half-space geotherm does (no data can make the trend)."""
    ages = np.array([0.5, 1.0, 2.0, 4.0, 8.0, 15.0, 30.0])
    z = 3.0 + np.array([2.05, 4.05, 6.05])
    vp = np.array([6.8, 7.0, 7.6])
    ds = xr.Dataset({"vp": (("x", "z"), np.tile(vp, (ages.size, 1))),
                     "age": ("x", ages)}, coords={"x": np.arange(ages.size, dtype=float),
                                                  "z": z})
    g = grid_from_dataset(ds, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.15},
                                          depth="z", seafloor=3.0, age="age"))
    m = map_grid(g, [HS_ZONE], seed=3, n_points=2**13, level_km=0.1, min_ess=200)
    t = m.temperature_c_mean.transpose("x", "z").values
    assert np.all(np.isfinite(t))
    assert np.all(np.diff(t, axis=0) < 0), t
    # the geotherm's own trend (erf(z / 2 sqrt(kappa t))) falls by > 500 deg C here
    assert np.all(t[0] - t[-1] > 300.0), t


AGE_STUDY = """
seed = 2
[thermal.plate]
kind = "half_space"
[grid]
file = "g.nc"
depth = "z"
seafloor = 3.0
variables = {{ vp = "vp" }}
sigmas = {{ vp = 0.1 }}
{age}
level_km = 1.0
n_points = 1024
min_ess = 0
[[grid.zones]]
name = "lower"
top_km = 1.5
bottom_km = 20.0
rocks = ["gabbro", "harzburgite"]
{thermal}
"""


@pytest.mark.parametrize("age, expect", [
    ("age = 7.5", 7.5),
    ('age = "age_col"', "age_col"),
    ("age = { axis = 2.0, half_rate_mm_yr = 12.5 }",
     {"axis": 2.0, "half_rate_mm_yr": 12.5, "distance_unit": "km"}),
    ("age = { full_rate_mm_yr = 50.0, distance_unit = \"m\" }",
     {"axis": 0.0, "half_rate_mm_yr": 25.0, "distance_unit": "m"}),
])
def test_study_file_age_forms(age, expect):
    from bayescrust.config.grid import parse_grid_study

    st = parse_grid_study(AGE_STUDY.format(age=age, thermal='thermal_prior = "plate"'),
                          source="s.toml")
    assert st.mapping.age == expect


@pytest.mark.parametrize("age, thermal, key", [
    ("age = -1.0", 'thermal_prior = "plate"', "grid.age"),
    ("age = 250.0", 'thermal_prior = "plate"', "grid.age"),
    ("age = { axis = 0.0 }", 'thermal_prior = "plate"', "grid.age"),
    ("age = { half_rate_mm_yr = 0.0 }", 'thermal_prior = "plate"', "grid.age.half_rate_mm_yr"),
    ("age = { half_rate_mm_yr = 10.0, speed = 1 }", 'thermal_prior = "plate"', "speed"),
    ('age = { half_rate_mm_yr = 10.0, distance_unit = "mi" }', 'thermal_prior = "plate"',
     "grid.age.distance_unit"),
    ("age = 5.0", "", "grid.age"),  # no zone with a half-space prior: the age is unused
])
def test_study_file_bad_age_names_file_and_key(age, thermal, key):
    from bayescrust.config.errors import StudyError
    from bayescrust.config.grid import parse_grid_study

    with pytest.raises(StudyError) as err:
        parse_grid_study(AGE_STUDY.format(age=age, thermal=thermal), source="s.toml")
    assert "s.toml" in str(err.value) and key in str(err.value)


def test_map_command_with_age_from_distance(tmp_path, section):
    from bayescrust.cli import main

    section.isel(x=[0, 5]).to_netcdf(tmp_path / "g.nc", engine="h5netcdf")
    p = tmp_path / "study.toml"
    p.write_text(AGE_STUDY.format(age="age = { axis = 0.0, half_rate_mm_yr = 2.0 }",
                                  thermal='thermal_prior = "plate"'))
    assert main(["map", str(p), "--out", str(tmp_path / "out"), "-q"]) == 0
    ds = xr.open_dataset(tmp_path / "out" / "map.nc")
    # x = 0 and 10 km at 2 mm/yr: 0 (floored to 1e-3) and 5 Myr
    np.testing.assert_allclose(ds.crustal_age.isel(z=-1).values, [1e-3, 5.0], rtol=1e-6)
    assert ds.attrs["n_levels_batched"] > 0
    ds.close()


# a half-space geotherm makes the invented section's Vp ~8 km/s mantle too hot to fit: those
# nodes are flagged misfit (and warned about) by design
@pytest.mark.filterwarnings("ignore::bayescrust.inference.trust.MisfitWarning")
def test_ages_do_not_make_results_depend_on_chunking(section):
    """Per-node prior ratios are computed per node: chunking changes nothing (float32 BLAS
    rounding aside, as in test_fastpath.test_chunking_does_not_change_results)."""
    g = grid_from_dataset(section.isel(z=slice(30, 70, 8)),
                          _mapping({"axis": 4.0, "half_rate_mm_yr": 5.0}))
    kw = dict(seed=5, n_points=2**11, level_km=1.0, min_ess=60, n_refine=2**11)
    a = map_grid(g, [HS_ZONE], chunk_size=7, **kw)
    b = map_grid(g, [HS_ZONE], chunk_size=100_000, **kw)
    assert a.attrs["n_chunks"] > 1 and a.attrs["n_levels_batched"] > 0
    for v in a.data_vars:
        # fit_z, fit_p: (observed - predicted mean) / predictive sd (~0.1-0.2 km/s); the mean's
        # float32 rounding (~1e-6 of ~7 km/s) is ~5e-5 of z, and of p (|dp/dz| <= 0.8)
        atol = 1e-4 if v.startswith("fit_") else 1e-6
        np.testing.assert_allclose(a[v].values, b[v].values, rtol=2e-4, atol=atol, err_msg=v)
