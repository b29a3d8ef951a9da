"""Rock-level predictions against laboratory measurements and facts of the trade.

The model predicts these from mineral data alone; no number here was used to build it.
Tags: `verified` = the number was seen in the published text; `from memory` = recalled, not
re-read; `common practice` = a fact of the trade with no single source.
"""

import numpy as np
import pytest

from bayescrust import rock_properties
from bayescrust.physics.thermal import peridotite_solidus_c

COLD = 25.0  # deg C, laboratory temperature


def _vp_vs(rock, **kw):
    r = rock_properties(rock, **kw)
    return float(r.vp), float(r.vs), float(r.density)


def test_cold_gabbro_at_600_mpa_vp_and_density():
    # Christensen & Mooney 1995, JGR 100:9761, gabbro-norite-troctolite average at 600 MPa:
    # Vp ~7.0-7.2 km/s, density 2.93-3.00 (from memory). Density: +0.005 for the rounding of
    # the quoted range.
    vp, vs, rho = _vp_vs("gabbro", temperature_c=COLD, pressure_gpa=0.6)
    assert 7.0 <= vp <= 7.2
    assert 2.93 <= rho <= 3.005


@pytest.mark.xfail(strict=True, reason="model gabbro Vp/Vs 1.789 at 600 MPa: 0.011 below the "
                   "published band 1.80-1.87, 0.05 below its centre 1.84")
def test_cold_gabbro_vp_vs_at_600_mpa():
    # Christensen 1996, JGR 101:3139 abstract (verified): gabbro Poisson's ratio 0.29 ->
    # Vp/Vs 1.84; band 1.80-1.87 for the spread of gabbro-norite-troctolite (from memory).
    vp, vs, _ = _vp_vs("gabbro", temperature_c=COLD, pressure_gpa=0.6)
    assert 1.80 <= vp / vs <= 1.87


@pytest.mark.xfail(strict=True, reason="model gabbro Vp 7.14 km/s at 200 MPa: 0.04 above the "
                   "published 6.9-7.1 band")
def test_cold_gabbro_vp_at_200_mpa():
    # Christensen & Mooney 1995 / Christensen 1996 gabbro at 200 MPa: Vp 6.9-7.1 (from memory)
    vp, _, _ = _vp_vs("gabbro", temperature_c=COLD, pressure_gpa=0.2)
    assert 6.9 <= vp <= 7.1


@pytest.mark.xfail(strict=True, reason="model diabase Vp 7.08 km/s, density 3.04 at 200 MPa: "
                   "0.18 km/s and 0.04 g/cm3 above the published ranges (6.6-6.9, 2.9-3.0)")
def test_diabase_at_200_mpa():
    # Diabase near 200 MPa: Vp 6.6-6.9 km/s, density 2.90-3.00 (Christensen & Mooney 1995;
    # Christensen 1996; from memory)
    vp, _, rho = _vp_vs("diabase", temperature_c=COLD, pressure_gpa=0.2)
    assert 6.6 <= vp <= 6.9
    assert 2.90 <= rho <= 3.00


def test_diabase_and_basalt_not_faster_than_gabbro():
    # Sheeted-dike diabase and crystalline basalt are not faster than Layer 3 gabbro in the
    # laboratory (Christensen & Mooney 1995 averages: diabase ~0.3 km/s slower; from memory)
    g, _, _ = _vp_vs("gabbro", temperature_c=COLD, pressure_gpa=0.2)
    for rock in ("diabase", "basalt"):
        vp, _, _ = _vp_vs(rock, temperature_c=COLD, pressure_gpa=0.2)
        assert vp <= g, rock


def test_cold_peridotite_near_8_km_s():
    # Uppermost mantle under old ocean floor 7.9-8.3 km/s (Raitt 1956 GSA Bull. 67:1623 mean
    # 8.24, verified; de Melo et al. 2020 BSSA Pn 8.1 +- 0.3 under > 20 Ma crust, verified).
    # Cold lid at ~0.3-0.6 GPa, 100-400 C (common practice).
    for rock in ("harzburgite", "lherzolite"):
        for t, p in ((100.0, 0.3), (400.0, 0.6)):
            vp, vs, _ = _vp_vs(rock, temperature_c=t, pressure_gpa=p)
            assert 7.9 <= vp <= 8.4, (rock, t, p, vp)
            # Christensen 1996 (verified abstract): dunite Poisson's ratio 0.25 -> Vp/Vs 1.73;
            # ultramafic rocks 0.26 +- 0.02 (Gao et al. 2001 EPSL 192:523, verified) -> 1.70-1.81
            assert 1.70 <= vp / vs <= 1.81


def test_lower_crust_gabbro_in_layer_3_range():
    # Layer 3: 6.7-7.2 km/s (design fact of the trade, common practice; White, McKenzie &
    # O'Nions 1992 JGR 97:19683, from memory). 4-6 km below the seafloor under 3 km of water:
    # ~0.15-0.2 GPa; 200-700 C off axis.
    for t in (200.0, 450.0, 700.0):
        vp, _, _ = _vp_vs("gabbro", temperature_c=t, pressure_gpa=0.18)
        assert 6.7 <= vp <= 7.2, (t, vp)


@pytest.mark.xfail(strict=True, reason="model gabbro at 200 C, 0.18 GPa: Vp 7.06 km/s, 0.06 "
                   "above the Carlson & Miller 2004 Layer 3 range 6.7-7.0")
def test_lower_crust_gabbro_in_carlson_miller_range():
    # Carlson & Miller 2004 JGR 109 (verified): Layer 3 velocities 6.7-7.0 km/s
    vp, _, _ = _vp_vs("gabbro", temperature_c=200.0, pressure_gpa=0.18)
    assert 6.7 <= vp <= 7.0


def test_peridotite_near_solidus_with_melt_near_7_1_to_7_4():
    # Peridotite near its solidus at low pressure with a few percent of melt falls towards
    # 7.1-7.4 km/s (common practice); ~3.6 % Vp per 1 % melt in realistic films
    # (Hammond & Humphreys 2000 JGR 105:10975, from memory). Melt-free near the solidus the
    # uppermost mantle near the axis is ~7.5-7.9 km/s (Vaddineni et al. 2021 JGR 126, 7.8;
    # MAR 45 N median valley 7.5, verified).
    p = 0.25
    t = float(peridotite_solidus_c(p)) + 10.0
    vp_dry, _, _ = _vp_vs("harzburgite", temperature_c=t, pressure_gpa=p)
    assert 7.4 <= vp_dry <= 7.9
    vp_melt, _, _ = _vp_vs(
        "harzburgite", temperature_c=t, pressure_gpa=p, melt_fraction=0.02, melt_aspect_ratio=0.05
    )
    assert 7.0 <= vp_melt <= 7.45
    # melt slows Vs proportionally more than Vp: dlnVs/dlnVp ~2 (Hammond & Humphreys 2000)
    r0 = rock_properties("harzburgite", temperature_c=t, pressure_gpa=p)
    r1 = rock_properties("harzburgite", temperature_c=t, pressure_gpa=p, melt_fraction=0.01)
    ratio = np.log(r1.vs / r0.vs) / np.log(r1.vp / r0.vp)
    assert 1.4 <= float(ratio) <= 3.0


@pytest.mark.xfail(strict=True, reason="no serpentinisation gives all three: where density <= 2.70 "
                   "(s >= 0.82) model Vs <= 2.772 km/s, at least 0.028 below 2.8")
def test_highly_serpentinised_peridotite():
    # Highly serpentinised harzburgite/dunite at 200 MPa: Vp 5.5-6.1, Vs 2.8-3.3, density
    # 2.55-2.70 (Courtier, Hart & Christensen 2004, Proc. ODP SR 195 ch. 11, verified). Some
    # serpentinisation between 70 and 100 % (such samples; from memory) must give all three.
    s = np.linspace(0.7, 1.0, 61)
    r = rock_properties("harzburgite", temperature_c=COLD, pressure_gpa=0.2, serpentinization=s)
    ok = ((5.5 <= r.vp) & (r.vp <= 6.1) & (2.8 <= r.vs) & (r.vs <= 3.3)
          & (2.55 <= r.density) & (r.density <= 2.70))
    assert np.any(ok)


@pytest.mark.parametrize("s", [0.1, 0.2, 0.3, 0.5])
def test_partial_serpentinization_follows_carlson_miller(s):
    # Carlson & Miller 2003, GRL 30(5):1250 (verified abstract): a 1 % drop in Vp per 2.4 %
    # serpentine, Vp/Vp0 = 1 - s/2.4, to ~50 %; +-0.01 in the ratio for the scatter of their
    # compilation (from memory).
    kw = dict(temperature_c=COLD, pressure_gpa=0.2)
    vp0, _, _ = _vp_vs("harzburgite", **kw)
    vp, vs, _ = _vp_vs("harzburgite", serpentinization=s, **kw)
    assert vp / vp0 == pytest.approx(1.0 - s / 2.4, abs=0.01)
    # Poisson's ratio of lizardite-serpentinised peridotite rises from ~0.25 to ~0.37 with
    # serpentine (Christensen 2004 Int. Geol. Rev. 46:795, from memory), +-0.02
    r2 = (vp / vs) ** 2
    assert (r2 - 2) / (2 * (r2 - 1)) == pytest.approx(0.25 + 0.12 * s, abs=0.02)


def test_former_serpentine_mixing_misses_carlson_miller():
    # The former scheme (serpentine minerals inside the Hill average) drops Vp faster than the
    # laboratory line: more than 0.015 below 1 - s/2.4 at s = 0.2 (Carlson & Miller 2003,
    # verified). Guards against a silent return to it.
    kw = dict(temperature_c=COLD, pressure_gpa=0.2)
    from bayescrust import ForwardModel

    fm = ForwardModel(rocks=("harzburgite",), serpentine_mixing="mineral_hill")
    vp, _, _ = fm(np.ones((2, 1)), COLD, 0.2, serpentinization=np.array([0.0, 0.2]))
    assert vp[1] / vp[0] < 1.0 - 0.2 / 2.4 - 0.015
    vp_new, _, _ = _vp_vs("harzburgite", serpentinization=0.2, **kw)
    assert vp_new > vp[1]


def test_vp_vs_distinguishes_rock_types():
    # Christensen 1996 (verified abstract): Poisson's ratio falls from gabbro (0.29) to dunite
    # (0.25); serpentinite has high Poisson's ratio. Antigorite rocks are faster with lower
    # Poisson's ratio than lizardite rocks (Watanabe, Kasami & Ohshima 2007, EPS 59:233, verified).
    kw = dict(temperature_c=COLD, pressure_gpa=0.3)
    ratio = {}
    vp = {}
    for rock in ("gabbro", "troctolite", "dunite", "serpentinite", "antigorite_serpentinite"):
        a, b, _ = _vp_vs(rock, **kw)
        ratio[rock], vp[rock] = a / b, a
    assert ratio["serpentinite"] > max(ratio["gabbro"], ratio["troctolite"])
    assert min(ratio["gabbro"], ratio["troctolite"]) > ratio["dunite"] + 0.03
    assert vp["antigorite_serpentinite"] > vp["serpentinite"]
    assert ratio["antigorite_serpentinite"] < ratio["serpentinite"]


def test_temperature_derivatives_crack_free_rock():
    # Gabbro: Kern & Richter 1981, J. Geophys. 49:47 (verified abstract): at 600 MPa, 20-500 C,
    # crack-free rocks have dVp/dT -1.6e-4 to -4.9e-4 and dVs/dT -1.4e-4 to -3.9e-4 km/s/C.
    a = rock_properties("gabbro", temperature_c=20.0, pressure_gpa=0.6)
    b = rock_properties("gabbro", temperature_c=500.0, pressure_gpa=0.6)
    assert -4.94e-4 <= float(b.vp - a.vp) / 480.0 <= -1.6e-4
    assert -3.93e-4 <= float(b.vs - a.vs) / 480.0 <= -1.39e-4
    # Peridotites: Christensen 1979, JGR 84:6849 (verified abstract): at 200 MPa, 25-300 C,
    # dVp/dT = -0.5e-3 to -0.6e-3 km/s/C; +-0.03e-3 for rounding of the quoted range.
    for rock in ("harzburgite", "lherzolite", "dunite"):
        a = rock_properties(rock, temperature_c=25.0, pressure_gpa=0.2)
        b = rock_properties(rock, temperature_c=300.0, pressure_gpa=0.2)
        assert -6.3e-4 <= float(b.vp - a.vp) / 275.0 <= -4.7e-4, rock


def test_pressure_derivative_of_gabbro():
    # Above crack closure, rock Vp rises ~0.1-0.2 km/s per GPa (mineral K' ~ 4-5; olivine
    # 0.085 km/s/GPa from Abramson et al. 1997, verified); common practice range 0.05-0.25.
    a = rock_properties("gabbro", temperature_c=COLD, pressure_gpa=0.6)
    b = rock_properties("gabbro", temperature_c=COLD, pressure_gpa=1.0)
    slope = float(b.vp - a.vp) / 0.4
    assert 0.05 <= slope <= 0.25


@pytest.mark.parametrize("porosity", [0.05, 0.15, 0.25])
def test_porous_basalt_in_layer_2_range(porosity):
    # Layer 2A/2B: 2.5-5.6 km/s (Carlson 1998, from memory; Layer 2 4.5-5.6 km/s, Tanimoto in
    # AGU Reference Shelf, verified): basalt with 5-25 % seawater-filled cracks and pores
    # (aspect ratio 0.05) near the seafloor must fall in 2.5-6.0 km/s.
    vp, vs, _ = _vp_vs(
        "basalt", temperature_c=5.0, pressure_gpa=0.04, porosity=porosity, aspect_ratio=0.05
    )
    assert 2.5 <= vp <= 6.0
    assert vs < vp / 1.6
