"""The per-node data fit of a map: nodes whose data the model cannot produce are flagged misfit.

References: the single-layer path's posterior-predictive check (bayescrust.exact_layer's
``predictive_check``, inference/trust.py, Gelman, Meng & Stern 1996; its threshold PPC_ALPHA =
0.01 is ``common practice``) run on the same node, and the forward model itself (a Vp it
produces for the zone's rock must fit; a Vp above anything it produces for that rock must not).
Before this check a node at Vp 9.5 km/s in a gabbro zone was flagged "good" with
P(cold gabbro) = 1 and a predicted Vp of ~7.1 km/s.
"""

import contextlib
import warnings

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from bayescrust import Layer, exact_layer
from bayescrust.grid import QUALITY_FLAGS, GridMapping, Zone, grid_from_dataset, map_grid
from bayescrust.inference.trust import PPC_ALPHA, MisfitWarning

GABBRO = Zone("gabbro", 1.5, 20.0, rocks=("gabbro",))
WATER_KM, DEPTH_KM = 3.0, 4.25             # node depth below the seafloor


def _gabbro_vp(temperature_c, pressure_gpa):
    from bayescrust import ForwardModel

    vp, _, _ = ForwardModel(rocks=("gabbro",))(np.ones((1, 1)), np.array([temperature_c]),
                                               np.array([pressure_gpa]))
    return float(np.ravel(vp)[0])


def _nodes(vps, vss=None, depth_km=DEPTH_KM):
    """One column of nodes 0.5 km apart from ``depth_km`` below the seafloor."""
    z = WATER_KM + depth_km + 0.5 * np.arange(len(vps))
    data = {"vp": (("x", "z"), [list(vps)])}
    obs = {"vp": 0.1}
    if vss is not None:
        data["vs"] = (("x", "z"), [list(vss)])
        obs["vs"] = 0.08
    ds = xr.Dataset(data, coords={"x": [0.0], "z": z})
    return grid_from_dataset(ds, GridMapping(variables={k: k for k in obs}, sigmas=obs,
                                             depth="z", seafloor=WATER_KM))


def test_a_node_at_vp_9_5_in_gabbro_is_misfit_and_a_node_the_model_makes_is_not():
    from bayescrust.physics.thermal import lithostatic_pressure_gpa

    p = float(lithostatic_pressure_gpa(DEPTH_KM + 0.5, water_depth_km=WATER_KM))
    fits = _gabbro_vp(400.0, p)                       # a Vp the model makes at that depth
    # out of reach: the model's gabbro at 0 deg C and 4 GPa (stiffest corner of its tables)
    assert _gabbro_vp(0.0, 4.0) < 9.5 - 1.0
    with pytest.warns(MisfitWarning, match=r"DATA MISFIT at 1 of 2 nodes"):
        m = map_grid(_nodes([9.5, fits]), [GABBRO], seed=1, n_points=2**12, level_km=0.5,
                     min_ess=30)
    q = m.quality.values.ravel()
    fp, fz = m.fit_p.values.ravel(), m.fit_z.values.ravel()
    assert q[0] == QUALITY_FLAGS["misfit"] and fp[0] < PPC_ALPHA and fz[0] > 5.0
    assert q[1] in (QUALITY_FLAGS["good"], QUALITY_FLAGS["refined"])
    assert fp[1] >= PPC_ALPHA and abs(fz[1]) < 2.6          # ~2.6 sd <=> p = 0.01
    assert m.attrs["n_misfit"] == 1 and m.attrs["misfit_threshold"] == PPC_ALPHA
    assert "misfit" in m.quality.attrs["flag_meanings"].split()
    assert list(m.quality.attrs["flag_values"]) == list(QUALITY_FLAGS.values())
    assert m.fit_p.attrs["misfit_threshold"] == PPC_ALPHA


def test_a_grid_whose_data_the_model_makes_does_not_warn():
    from bayescrust.physics.thermal import lithostatic_pressure_gpa

    vps = [_gabbro_vp(t, float(lithostatic_pressure_gpa(DEPTH_KM + 0.5 * i,
                                                             water_depth_km=WATER_KM)))
           for i, t in enumerate((200.0, 500.0, 800.0))]
    m = map_grid(_nodes(vps), [GABBRO], seed=1, n_points=2**12, level_km=0.5, min_ess=30)
    # (warnings are errors in the tests: no MisfitWarning was raised)
    assert m.attrs["n_misfit"] == 0
    assert np.all(m.fit_p.values >= PPC_ALPHA)


# (Vp, Vs) in km/s: out of reach, far, fits, fits; a pair whose Vp and Vs each fit but whose
# Vp/Vs does not (the layer check's pair test); a pair that fits; then the Student-t likelihood
CASES = [((9.5,), None, "gaussian"), ((7.9,), None, "gaussian"), ((6.9,), None, "gaussian"),
         ((7.25,), None, "gaussian"), ((7.0,), (3.3,), "gaussian"),
         ((7.0,), (3.9,), "gaussian"), ((9.5,), None, "student_t"),
         ((6.9,), None, "student_t"), ((7.0,), (3.3,), "student_t")]


@pytest.mark.parametrize("vp, vs, likelihood", CASES)
def test_the_node_check_is_the_layer_predictive_check(vp, vs, likelihood):
    """Same standardised residual as the layer path (within Monte Carlo error: both estimate
    the posterior mean and sd of the prediction by importance weighing of their own designs,
    ESS >= ~250, so E[m] differs by ~0.15 / sqrt(250) ~ 0.01 km/s, ~0.05 of z at a predictive
    sd of ~0.2; the pair's z is first order at the posterior means, ~1 % of z), the same
    verdict on nodes whose p-value is far from the threshold, and the same tail probability
    of a single observable within 30 % where it is above 1e-5 (the map takes the posterior of
    the prediction as normal; measured within 12 %, docs/grid.md)."""
    obs = {"vp": (vp[0], 0.1)} if vs is None else {"vp": (vp[0], 0.1), "vs": (vs[0], 0.08)}
    layer = Layer("node", top_km=DEPTH_KM, bottom_km=DEPTH_KM + 0.1, water_depth_km=WATER_KM,
                  **obs)
    lik = dict(likelihood=likelihood, nu=4.0)
    with warnings.catch_warnings():  # the layer path warns on its own misfit: read its verdict
        warnings.simplefilter("ignore", MisfitWarning)
        ref = exact_layer(layer, rocks=GABBRO.rocks, seed=2, n_points=2**13,
                          **lik).predictive_check
    with pytest.warns(MisfitWarning) if ref["misfit"] else contextlib.nullcontext():
        m = map_grid(_nodes(vp, vs, depth_km=DEPTH_KM + 0.05), [GABBRO], seed=1,
                     n_points=2**13, level_km=0.1, min_ess=100, **lik)
    worst = min(ref["observables"].values(), key=lambda v: v["p_value"])
    fz, fp = float(m.fit_z.values.ravel()[0]), float(m.fit_p.values.ravel()[0])
    assert abs(fz - worst["z"]) < 0.1 + 0.01 * abs(worst["z"]), (fz, worst)
    assert (int(m.quality.values.ravel()[0]) == QUALITY_FLAGS["misfit"]) == ref["misfit"]
    if vs is None and worst["p_value"] > 1e-5:
        assert abs(fp / worst["p_value"] - 1.0) < 0.3, (fp, worst)
    if vs is not None and vs[0] == 3.3:  # the pair case: each marginal fits, the ratio not
        assert ref["observables"]["vp"]["p_value"] > PPC_ALPHA
        assert ref["observables"]["vs"]["p_value"] > PPC_ALPHA
        assert ref["misfit"]


def test_student_t_with_two_degrees_of_freedom_leaves_the_node_z_undefined():
    # nu <= 2: infinite variance (common practice), so z = residual / sd is undefined; the map
    # stored 0 (a perfect fit) while the layer check says NaN
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", MisfitWarning)
        m = map_grid(_nodes((7.9,), None, depth_km=DEPTH_KM + 0.05), [GABBRO], seed=1,
                     n_points=2**12, level_km=0.1, min_ess=100, likelihood="student_t", nu=2.0)
    assert np.isnan(float(m.fit_z.values.ravel()[0]))
    assert 0.0 <= float(m.fit_p.values.ravel()[0]) <= 1.0

def test_an_ensemble_of_equal_members_is_one_member():
    """The members' mixture of one law is that law (common practice): fit_p and fit_z of a
    node whose K members are equal are those of the single value."""
    from bayescrust.grid.fit import node_fit

    class Model:  # what node_fit reads of a layer model
        model_error, error_correlation, nu = {"vp": 0.02, "vs": 0.02}, 0.5, 4.0

    stats = {"vp:mean": np.array([7.0, 7.1]), "vp:sd": np.array([0.05, 0.2])}
    y = np.array([7.4, 9.0])
    for lik in ("gaussian", "student_t"):
        Model.likelihood = lik
        one = node_fit(Model, stats, {"vp": y}, {"vp": np.full(2, 0.1)})
        ens = node_fit(Model, stats, {"vp": np.repeat(y[:, None], 3, axis=1)},
                       {"vp": np.full(2, 0.1)})
        # float32 work; relative agreement in the far tail too (Vp 9.0: p ~1e-15 Gaussian),
        # which the members' path lost when it formed 1 - F
        np.testing.assert_allclose(ens, one, rtol=1e-5)


def test_map_command_warns_counts_and_cautions_on_misfit_nodes(tmp_path, capsys):
    from bayescrust.cli import main
    from bayescrust.report.caution import CAUTION

    rows = ["x,depth,vp"] + [f"{x},{d},{vp}" for x in (0.0, 5.0)
                             for d, vp in ((4.25, 6.9), (4.75, 6.95), (5.25, 7.0))]
    rows[-2] = "5.0,4.75,9.5"                          # one node out of the gabbro's reach
    (tmp_path / "nodes.csv").write_text("\n".join(rows) + "\n")
    study = tmp_path / "study.toml"
    study.write_text('title = "misfit"\nseed = 3\n[grid]\nfile = "nodes.csv"\n'
                     'depth = "depth"\ndepth_reference = "seafloor"\nseafloor = 3.0\n'
                     'distance = "x"\nvariables = { vp = "vp" }\nsigmas = { vp = 0.1 }\n'
                     'level_km = 0.5\nn_points = 1024\nmin_ess = 0\n[[grid.zones]]\n'
                     'name = "gabbro"\ntop_km = 0.0\nbottom_km = 20.0\nrocks = ["gabbro"]\n')
    out = tmp_path / "out"
    assert main(["map", str(study), "--out", str(out)]) == 0
    err = capsys.readouterr().err
    assert "bayescrust: warning: map: MisfitWarning: DATA MISFIT at 1 of 6 nodes" in err
    readme = (out / "README.md").read_text()
    assert "**Warning: data misfit at 1 of 6 nodes.**" in readme
    assert CAUTION in readme and "1 data misfit" in readme
    df = pd.read_csv(out / "column_summary.csv")
    assert df["n_misfit"].tolist() == [0, 1] and df["n_poor"].tolist() == [0, 0]
    with xr.open_dataset(out / "map.nc") as ds:
        i = int(np.flatnonzero(ds["vp_observed"].values == 9.5)[0])
        assert int(ds.quality.values[i]) == QUALITY_FLAGS["misfit"]
        assert ds.attrs["n_misfit"] == 1
    assert (out / "maps" / "map_p_cold_gabbro.png").exists()


def test_section_maps_grey_and_hatch_misfit_nodes():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from bayescrust.report.grid_maps import MISFIT_LABEL, section_map

    z = np.arange(0.0, 4.0)
    q = np.zeros((3, 4), np.int8)
    q[1, 2] = QUALITY_FLAGS["misfit"]
    ds = xr.Dataset({"p_mantle": (("x", "z"), np.full((3, 4), 0.5)),
                     "quality": (("x", "z"), q),
                     "seafloor_depth": (("x",), np.zeros(3))},
                    coords={"x": [0.0, 1.0, 2.0], "z": z})
    fig = section_map(ds, "p_mantle")
    ax = fig.axes[0]
    mesh = ax.collections[0]                     # the probability: no colour at the misfit node
    shown = np.ma.getmaskarray(mesh.get_array()).reshape(4, 3)   # (z, x)
    assert shown[2, 1] and shown.sum() == 1
    hatched = [c for c in ax.collections[1:] if c.get_hatch()]
    assert len(hatched) == 1
    assert MISFIT_LABEL in [t.get_text() for t in ax.get_legend().get_texts()]
    plt.close(fig)
    ds["quality"][:] = 0                         # no misfit: no hatching, no legend entry
    fig = section_map(ds, "p_mantle")
    assert not any(c.get_hatch() for c in fig.axes[0].collections)
    plt.close(fig)


def test_column_summary_counts_poor_and_misfit_nodes_per_column():
    """n_poor: nodes below min_ess whatever their flag (a misfit node can be poor too);
    n_misfit: quality misfit; masked nodes count in neither (the flags' definitions)."""
    from bayescrust.grid import column_summary

    z = np.arange(0.0, 4.0)
    q = np.array([[0, 2, 4, 3], [4, 0, 1, 0]], np.int8)
    ess = np.array([[500.0, 10.0, 5.0, np.nan], [800.0, 400.0, 200.0, 300.0]])
    ds = xr.Dataset({"p_mantle": (("x", "z"), np.zeros((2, 4))),
                     "depth_below_seafloor": (("x", "z"), np.tile(z, (2, 1))),
                     "quality": (("x", "z"), q), "importance_ess": (("x", "z"), ess),
                     "seafloor_depth": (("x",), np.zeros(2))},
                    coords={"x": [0.0, 1.0], "z": z}, attrs={"min_ess": 100.0})
    df = column_summary(ds)
    assert df["n_poor"].tolist() == [2, 0] and df["n_misfit"].tolist() == [1, 1]
