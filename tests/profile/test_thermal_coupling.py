"""Thermal states of a profile against published relations, and internal identities."""

import math

import numpy as np
import pytest

from bayescrust import Layer
from bayescrust.physics.thermal import half_space_temperature_c
from bayescrust.profile import (
    AxialHotState,
    HalfSpaceState,
    HeatFlow,
    PlateState,
    Profile,
    Uncoupled,
)
from bayescrust.profile.exact import _log_weights
from bayescrust.profile.thermal import CONDUCTIVITY

_GDH1 = CONDUCTIVITY["gdh1"]
_K = CONDUCTIVITY["conductivity"]["lithosphere_gdh1"]["value"]
_KAPPA_GDH1 = _K / (_GDH1["density_kg_m3"] * _GDH1["heat_capacity_j_kg_k"])


@pytest.mark.parametrize("age", [1.0, 4.0, 25.0, 50.0])
def test_half_space_heat_flow_matches_stein_stein_1992(age):
    # Stein & Stein (1992): q = 510 / sqrt(t) mW/m^2 for t <= 55 Myr (textbook excerpt,
    # verified); with GDH1's own constants (k, rho, cp, Tm, from memory) the half-space relation
    # q = k Tm / sqrt(pi kappa t) must reproduce it; 1 % covers the rounding of 510.
    q = float(HalfSpaceState(age_myr=age, mantle_temperature_c=_GDH1["mantle_temperature_c"],
                             conductivity_w_mk=_K, diffusivity_m2_s=_KAPPA_GDH1)
              .heat_flow_mw_m2(np.zeros((1, 0)))[0])
    assert q * math.sqrt(age) == pytest.approx(_GDH1["heat_flow_young_mw_m2_sqrt_myr"], rel=0.01)


def test_default_half_space_heat_flow_in_published_range():
    # Parsons & Sclater (1977): 11.3 ucal/cm^2/s / sqrt(t) = 473 mW/m^2 / sqrt(t) (abstract,
    # verified); Stein & Stein (1992): 510. The package default (Tm 1350 C, kappa 1e-6, GDH1 k)
    # gives ~425: below both published fits by 10-17 % (it is the conventional T&S constant
    # set, not a fit to heat flow). The check fixes that the default lies within 20 % of them.
    ps = CONDUCTIVITY["parsons_sclater_1977"]
    q_ps = ps["heat_flow_ucal_cm2_s_sqrt_myr"] * ps["ucal_cm2_s_to_mw_m2"]
    assert 470 < q_ps < 476
    q = float(HalfSpaceState(age_myr=1.0, mantle_temperature_c=1350.0)
              .heat_flow_mw_m2(np.zeros((1, 0)))[0])
    assert 0.8 * q_ps < q < 1.0 * _GDH1["heat_flow_young_mw_m2_sqrt_myr"]


@pytest.mark.parametrize("age", [80.0, 120.0, 160.0])
def test_plate_heat_flow_matches_gdh1_old_relation(age):
    # Stein & Stein (1992): q = 48 + 96 exp(-0.0278 t) for t > 55 Myr (verified excerpt);
    # GDH1 plate (a = 95 km, Tm = 1450 C, k = 3.138, rho cp from memory). 3 %: the published
    # exponential is itself a fit to the plate series.
    a, b, c = _GDH1["heat_flow_old_mw_m2"]
    st = PlateState(age_myr=age, mantle_temperature_c=_GDH1["mantle_temperature_c"],
                    plate_thickness_km=_GDH1["plate_thickness_km"], conductivity_w_mk=_K,
                    diffusivity_m2_s=_KAPPA_GDH1)
    q = float(st.heat_flow_mw_m2(np.zeros((1, 0)))[0])
    assert q == pytest.approx(a + b * math.exp(-c * age), rel=0.03)


def test_plate_equals_half_space_when_young():
    # identity: the plate series equals the half-space result for kappa t / a^2 << 1
    hs = HalfSpaceState(age_myr=2.0, mantle_temperature_c=1400.0)
    pl = PlateState(age_myr=2.0, mantle_temperature_c=1400.0, plate_thickness_km=95.0)
    z = np.array([1.0, 5.0, 10.0])
    phi = np.zeros((1, 0))
    assert np.allclose(hs.geotherm_c(z, phi), pl.geotherm_c(z, phi), atol=1e-6)
    assert float(hs.heat_flow_mw_m2(phi)[0]) == pytest.approx(float(pl.heat_flow_mw_m2(phi)[0]),
                                                               rel=1e-8)


def test_geotherm_reuses_physics_half_space():
    st = HalfSpaceState()
    phi = np.array([[5.0, 1300.0], [20.0, 1400.0]])
    z = np.array([2.0, 7.0])
    want = half_space_temperature_c(z[None, :], phi[:, :1], mantle_temperature_c=phi[:, 1:])
    assert np.allclose(st.geotherm_c(z, phi), want)


def test_axial_state_is_hot_and_continuous():
    st = AxialHotState(lens_depth_km=2.0, mush_offset_c=-50.0)
    phi = np.zeros((1, 0))
    z = np.array([1.999999, 2.000001, 5.0])
    t = st.geotherm_c(z, phi)[0]
    assert abs(t[0] - t[1]) < 1e-2  # continuous at the lens
    assert t[2] > 1000.0  # mush near the peridotite solidus (~1150 C at ~0.2 GPa; Hirschmann)


def _profile(thermal, hf=None):
    layers = [Layer("a", top_km=0.0, bottom_km=1.0, vp=(4.5, 0.2)),
              Layer("b", top_km=1.0, bottom_km=5.0, vp=(6.8, 0.1)),
              Layer("c", top_km=5.0, bottom_km=8.0, vp=(8.0, 0.1))]
    return Profile(layers, thermal, water_depth_km=3.0, heat_flow=hf)


def test_fast_weights_equal_truncated_density():
    prof = _profile(HalfSpaceState())
    rng = np.random.default_rng(0)
    t = rng.uniform(0, 1600, 500)
    ll = rng.normal(size=500)
    geo = np.array([10.0, 500.0, 1590.0])
    lo, hi = prof.temperature_range_c
    want = ll[None, :] + prof.log_temperature_density(t[None, :], geo[:, None]) + math.log(
        hi - lo)
    assert np.allclose(_log_weights(prof, ll, t, geo, -math.log(hi - lo)), want)


def test_truncated_density_normalised():
    prof = _profile(HalfSpaceState(scatter_c=80.0))
    t = np.linspace(0, 1600, 16001)
    for g in (5.0, 800.0, 1580.0):
        d = np.exp(prof.log_temperature_density(t, g))
        assert np.trapezoid(d, t) == pytest.approx(1.0, rel=1e-4)


def test_overburden_pressure_column():
    # Hydrostatic column (Turcotte & Schubert 2002 sec. 2.2), worked by hand: water 3 km of
    # 1.03, layer a (1 km) 2.6, layer b (4 km) 2.9, half of c with reference 3.3 (1.5 km).
    prof = _profile(HalfSpaceState())
    p = prof.pressures_gpa(np.array([2.6, 2.9, 3.1]))
    want_c = 9.81e-3 * (1.03 * 3 + 2.6 * 1 + 2.9 * 4 + 3.3 * 1.5)
    assert p[2] == pytest.approx(want_c, rel=1e-12)
    assert p[0] == pytest.approx(9.81e-3 * (1.03 * 3 + 2.9 * 0.5), rel=1e-12)


def test_heat_flow_modes():
    hf = HeatFlow(100.0, 10.0, "lower_bound")
    ll = hf.log_likelihood(np.array([50.0, 100.0, 200.0]))
    assert ll[0] < -5 and ll[1] == pytest.approx(math.log(0.5)) and ll[2] > -1e-6
    assert np.all(HeatFlow(100.0, 10.0, "off").log_likelihood(np.array([1.0, 1e3])) == 0)
    with pytest.raises(ValueError, match="mode"):
        HeatFlow(100.0, 10.0, "maybe")


def test_profile_errors_name_the_problem():
    layers = [Layer("a", top_km=0.0, bottom_km=1.0, vp=(4.5, 0.2)),
              Layer("b", top_km=1.5, bottom_km=5.0, vp=(6.8, 0.1))]
    with pytest.raises(ValueError, match="contiguous"):
        Profile(layers, HalfSpaceState())
    with pytest.raises(ValueError, match="temperature_c"):
        Profile(layers[:1], HalfSpaceState(), priors=[{"temperature_c": 300.0}])
    with pytest.raises(ValueError, match="scatter_c"):
        HalfSpaceState(scatter_c=0.0)


def test_uncoupled_heat_flow_and_evidence_runs():
    from bayescrust.profile import exact_profile

    r = exact_profile(_profile(Uncoupled(), HeatFlow(200.0, 50.0)), n_layer=2**10,
                      n_replicates=2, seed=0)
    assert math.isfinite(r.log_evidence) and r.thermal.empty


def test_profile_figure_shows_observed_and_predicted_vp_vs():
    # the profile figure carries a Vp/Vs panel: predicted per layer, and observed where a layer
    # has Vp and Vs (the ratio and its first-order error)
    import matplotlib

    matplotlib.use("Agg")
    from bayescrust.profile import exact_profile
    from bayescrust.report.profile import profile_figure

    layers = [Layer("a", top_km=1.0, bottom_km=4.0, vp=(6.8, 0.1), vs=(3.8, 0.1)),
              Layer("b", top_km=4.0, bottom_km=7.0, vp=(8.0, 0.1))]
    r = exact_profile(Profile(layers, Uncoupled(), water_depth_km=3.0), n_layer=2**10,
                      n_replicates=2, seed=0)
    import matplotlib.pyplot as plt

    fig = profile_figure(r)
    assert plt.get_fignums() == []  # a Figure, not left open in pyplot's global state
    ax = [a for a in fig.axes if a.get_xlabel() == "Vp/Vs"]
    assert len(ax) == 1
    labels = ax[0].get_legend_handles_labels()[1]
    assert "Vp/Vs predicted" in labels and "Vp/Vs observed" in labels
