"""Pores: Gassmann saturation, Walsh crack closure, connected versus isolated pore fluid."""

import numpy as np
import pytest

from bayescrust import rock_properties
from bayescrust.physics.pores import close_cracks, gassmann, walsh_closing_pressure_gpa


def test_gassmann_worked_example():
    # K0 80, K_dry 40, G_dry 30, phi 0.05, K_fl 2.3 -> K_sat 49.14 (Gassmann 1951 formula as in
    # Mavko et al. 2009 sec. 6.3; arithmetic [computed], a code-correctness oracle)
    k, g = gassmann(40.0, 30.0, 80.0, 2.3, 0.05)
    assert float(k) == pytest.approx(49.14, abs=0.01)
    assert float(g) == 30.0


def test_gassmann_limits():
    # identities of the formula: a fluid as stiff as the mineral gives the mineral; an empty
    # pore (K_fl -> 0) leaves the dry frame; saturation never softens
    assert float(gassmann(40.0, 30.0, 80.0, 80.0, 0.1)[0]) == pytest.approx(80.0, rel=1e-12)
    assert float(gassmann(40.0, 30.0, 80.0, 1e-9, 0.1)[0]) == pytest.approx(40.0, abs=1e-6)
    kf = np.linspace(0.1, 5, 20)
    assert np.all(gassmann(40.0, 30.0, 80.0, kf, 0.1)[0] > 40.0)


def test_walsh_closing_pressure_is_about_alpha_e():
    # Walsh 1965: P_c = pi alpha E / (4 (1 - nu^2)); "~alpha E" (common practice):
    # the ratio pi/(4(1-nu^2)) is 0.79-0.86 for nu 0-0.3
    for k, g in ((80.0, 40.0), (60.0, 36.0), (130.0, 78.0)):
        e = 9 * k * g / (3 * k + g)
        r = float(walsh_closing_pressure_gpa(1e-3, k, g)) / (1e-3 * e)
        assert 0.78 < r < 0.87


def test_cracks_above_closing_pressure_are_shut():
    phi, ar = close_cracks(0.02, 1e-3, 1.0, 80.0, 40.0)
    assert float(phi) == 0.0
    phi, ar = close_cracks(0.02, 1e-3, 0.0, 80.0, 40.0)
    assert float(phi) == 0.02 and float(ar) == 1e-3


def test_cracks_thin_linearly_below_the_closing_pressure():
    # Walsh 1965: a penny crack's aperture falls linearly with normal stress and its radius stays,
    # so porosity and aspect ratio both scale by (1 - P_e / P_c) between the end points (only
    # the end points were checked: squaring the factor passed every test)
    pc = float(walsh_closing_pressure_gpa(1e-3, 80.0, 40.0))
    for x in (0.25, 0.5, 0.9):
        phi, ar = close_cracks(0.02, 1e-3, x * pc, 80.0, 40.0)
        assert float(phi) == pytest.approx(0.02 * (1 - x), rel=1e-12)
        assert float(ar) == pytest.approx(1e-3 * (1 - x), rel=1e-12)


def test_thin_cracks_close_at_depth_in_the_forward_model():
    # 1 % cracks of aspect 1e-3 in gabbro: open at zero effective pressure, shut at 0.2 GPa
    # (P_c ~ 0.1 GPa); shut cracks return the crack-free rock
    kw = dict(temperature_c=200.0, pressure_gpa=0.2, porosity=0.01, aspect_ratio=1e-3)
    solid = rock_properties("gabbro", temperature_c=200.0, pressure_gpa=0.2)
    open_ = rock_properties("gabbro", pore_pressure_gpa=0.2, **kw)
    shut = rock_properties("gabbro", pore_pressure_gpa=0.0, **kw)
    assert float(open_.vp) < float(solid.vp) - 1.0
    np.testing.assert_allclose([shut.vp, shut.vs], [solid.vp, solid.vs], rtol=1e-6)


def test_round_pores_relaxed_equals_unrelaxed():
    # For spherical pores wave-induced pressure is the same in every pore, so connected
    # (Gassmann) and isolated fluid give nearly the same moduli (common practice; Mavko et al.
    # 2009 ch. 6-7): within 0.5 %
    kw = dict(temperature_c=5.0, pressure_gpa=0.04, porosity=0.1, aspect_ratio=1.0)
    a = rock_properties("basalt", pore_fluid="connected", **kw)
    b = rock_properties("basalt", pore_fluid="isolated", **kw)
    np.testing.assert_allclose([a.vp, a.vs], [b.vp, b.vs], rtol=5e-3)


def test_high_layer_2_vp_vs_needs_thin_cracks():
    # Layer 2A/2B Poisson's ratios of 0.33-0.44 (Vp/Vs 2.0-2.9) are reported from seafloor
    # compliance; Vp/Vs >= 1.9 needs aspect ratios <= ~0.02 (project review; from memory).
    # Basalt with 10 % saturated pores at 5 MPa effective pressure (3 km water, 300 m deep):
    kw = dict(temperature_c=5.0, pressure_gpa=0.038, pore_pressure_gpa=0.0333, porosity=0.1)
    round_ = rock_properties("basalt", aspect_ratio=0.1, **kw)
    cracks = rock_properties("basalt", aspect_ratio=0.01, **kw)
    assert float(round_.vp_vs) < 1.8
    assert float(cracks.vp_vs) > 1.9


def test_pore_water_is_not_empty_space():
    # Saturating cracks raises Vp and leaves Vs nearly unchanged (Nur & Simmons 1969, from
    # memory; Gassmann 1951): dry frame vs saturated at 5 % porosity, aspect 0.03
    from bayescrust.physics import inclusions

    k_d, g_d = inclusions.dem(80.0, 40.0, [0.0], [0.0], [0.03], [0.05])
    k_s, g_s = gassmann(k_d, g_d, 80.0, 2.3, 0.05)
    assert float(k_s) > 1.5 * float(k_d) and float(g_s) == pytest.approx(float(g_d))
