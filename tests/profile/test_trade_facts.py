"""Facts of the trade (common practice) on whole profiles.

Sources for the ranges: White, McKenzie & O'Nions (1992) J. Geophys. Res. 97:19683 (normal
oceanic crust 7.1 +- 0.8 km thick from refraction; Layer 3 6.7-7.2 km/s) and Christeson, Goff
& Reece (2019) Rev. Geophys. 57:504 (mean igneous crust ~6 km in modern surveys); uppermost
mantle Pn ~7.9-8.2 km/s away from ridges (e.g. Raitt 1963; common practice). The ranges are
recalled, tagged `common practice`.
"""

import numpy as np
import pytest

from bayescrust import ForwardModel, Layer
from bayescrust.profile import HalfSpaceState, Profile, exact_profile


def _section():
    return [Layer("2A", top_km=0.0, bottom_km=0.6, vp=(4.3, 0.2)),
            Layer("2B", top_km=0.6, bottom_km=2.0, vp=(5.9, 0.15)),
            Layer("3A", top_km=2.0, bottom_km=4.5, vp=(6.8, 0.1)),
            Layer("3B", top_km=4.5, bottom_km=6.5, vp=(7.05, 0.1)),
            Layer("M", top_km=6.5, bottom_km=9.0, vp=(8.05, 0.1), vs=(4.6, 0.1))]


def _cold_velocity(rock, layer_index, age=20.0):
    prof = Profile(_section(), HalfSpaceState(age_myr=age, mantle_temperature_c=1350.0),
                   water_depth_km=4.0)
    t = prof.thermal.geotherm_c(prof.mid_depths_km, np.zeros((1, 0)))[0]
    p = prof.pressures_gpa(prof.reference_densities())
    vp, _, _ = ForwardModel(rocks=(rock,))(np.ones(1), t[layer_index], p[layer_index])
    return float(vp)


@pytest.mark.parametrize("i", [2, 3])
def test_layer3_gabbro_velocity_on_a_20_myr_geotherm(i):
    # Layer 3 ~6.7-7.2 km/s (White et al. 1992; common practice): crack-free gabbro at the
    # half-space temperature of its depth must fall in it.
    assert 6.7 <= _cold_velocity("gabbro", i) <= 7.2


def test_uppermost_mantle_velocity_away_from_ridge():
    # Uppermost mantle ~7.9-8.2 km/s away from ridges (common practice): harzburgite at 7.75 km
    # on a 20 Myr half-space geotherm.
    assert 7.9 <= _cold_velocity("harzburgite", 4) <= 8.2


def test_normal_section_gives_normal_crustal_thickness():
    # A section with textbook layer velocities (2A 4.3, 2B 5.9, Layer 3 6.8-7.05, Pn 8.05 km/s
    # below 6.5 km) should put the boundary at the base of Layer 3 with crust 6-7 km thick
    # (White et al. 1992; Christeson et al. 2019): the most probable outcome is the top of M.
    prof = Profile(_section(), HalfSpaceState(), water_depth_km=4.0)
    r = exact_profile(prof, n_layer=2**12, n_thermal=64, n_replicates=2, seed=4)
    b = r.boundary.set_index("outcome")["probability"]
    assert b.idxmax() == "M"
    assert 6.0 <= r.boundary.set_index("outcome").loc["M", "thickness_km"] <= 7.0
