"""Tests of bayescrust.physics.minerals: published values, identities, derivatives, errors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.optimize import brentq

from bayescrust.physics import minerals as M
from bayescrust.physics._data import CELSIUS_TO_KELVIN
from bayescrust.physics.minerals import (
    MINERALS,
    _eulerian_strain,
    _mineral_state,
    list_minerals,
    load_minerals,
    mineral_properties,
    mineral_table,
)

T_MIN_C, T_MAX_C = -20.0, 1800.0
P_MAX = 10.0


def _vel(name, t_c=25.0, p=0.0):
    props = mineral_properties(name, temperature_c=t_c, pressure_gpa=p)
    return float(props.vp), float(props.vs)


# --------------------------------------------------------------------------------------------
# (a) Ambient values against published numbers outside the project.
# Each row: the published density and moduli of the cited source (or velocities where the paper
# quotes them), checked against the table. Rows whose numbers were built by the project itself
# (averages, interpolations, back-calculations) are not here: they are checked against
# independent published facts further below. Tolerance: rounding of the published figures.
AMBIENT = [
    # name, rho, Ks, G, tol (relative), source
    ("olivine", 3.355, 129.4, 78.0, 1e-3,
     "Abramson et al. 1997 JGR 102:12253 abstract [verified]"),
    ("diopside", 3.27, 114.6, 72.7, 1e-3,
     "Sang et al. 2011 Am. Min. 96:224 abstract, K 114.6(7), G 72.7(4) [verified]"),
    ("hornblende", 3.15, 99.0, 64.0, 1e-3,
     "Brown & Abramson 2016 PEPI, pargasite end of the Ca-amphibole series K 99, G 64 "
     "[verified: preprint abstract]; rho [from memory]"),
    ("antigorite", 2.62, 67.9, 38.5, 1e-3,
     "Bezacier et al. 2010 EPSL 289:198 VRH [from memory]"),
    ("spinel", 3.578, 198.0, 108.0, 0.01,
     "Bass 1995 AGU Ref. Shelf 2 table: Ks 197-200, G 108-109 [from memory]"),
]
#: Required minerals without an AMBIENT row, and why (each has its own test below).
NOT_IN_AMBIENT = {
    "orthopyroxene": "mid-range of a published range: test_opx_within_published_range",
    "clinopyroxene": "Di-Hd average computed by the project: test_mantle_cpx_between_end_members",
    "albite": "test_plagioclase_against_angel_and_christensen",
    "andesine": "test_plagioclase_against_angel_and_christensen",
    "labradorite": "test_plagioclase_against_angel_and_christensen",
    "bytownite": "test_plagioclase_against_angel_and_christensen",
    "anorthite": "test_plagioclase_against_angel_and_christensen",
    "lizardite": "back-calculated from rock velocities: any check against them is circular",
    "magnetite": "test_magnetite_is_adiabatic",
}


@pytest.mark.parametrize(
    ("name", "rho", "ks", "g", "tol", "source"), AMBIENT, ids=[a[0] for a in AMBIENT]
)
def test_ambient_values_match_published(name, rho, ks, g, tol, source):
    m = MINERALS[name]
    assert m.rho == pytest.approx(rho, rel=tol), source
    assert m.ks == pytest.approx(ks, rel=tol), source
    assert m.g == pytest.approx(g, rel=tol), source


def test_every_required_mineral_is_checked():
    assert {a[0] for a in AMBIENT} | set(NOT_IN_AMBIENT) == set(M.REQUIRED_MINERALS)


def _poisson(name):
    vp, vs = _vel(name)
    r2 = (vp / vs) ** 2
    return (r2 - 2.0) / (2.0 * (r2 - 1.0))


PLAGIOCLASE_AN = {"andesine": 48, "labradorite": 60, "bytownite": 78, "anorthite": 96}


def test_plagioclase_against_angel_and_christensen():
    # Angel's X-ray compression: K_T = 54.1 + 0.39 An (An < 50), 59.5 + 0.23 An (An > 50)
    # [verified: abstract]. These are static (Reuss-like) values; a Hill-average adiabatic Ks
    # must lie above them (Hill >= Reuss and Ks >= KT), and within 12 % (the Voigt-Reuss
    # spread of strongly anisotropic feldspar, Brown et al. 2016 abstract: highly anisotropic)
    for name, an in PLAGIOCLASE_AN.items():
        kt = 54.1 + 0.39 * an if an < 50 else 59.5 + 0.23 * an
        ks = MINERALS[name].ks
        assert kt < ks < 1.12 * kt, (name, kt, ks)
    # Christensen 1996 JGR 101:3139 [verified: abstract]: Poisson's ratio of plagioclase rises
    # from albite to a predicted 0.31 for anorthite (+-0.01 for the rounding of "0.31").
    nus = [_poisson(n) for n in ("albite", "andesine", "labradorite", "anorthite")]
    assert all(b > a for a, b in zip(nus, nus[1:], strict=False))
    assert _poisson("anorthite") == pytest.approx(0.31, abs=0.01)


def test_opx_within_published_range():
    # En80-En90: rho 3.29-3.31, Ks 108-110, G 74-76 (Bass 1995 table; Chai et al. 1997)
    # [from memory]; En100 Ks 107.6, G 76.8 (Jackson et al. 1999, verified) nearby.
    m = MINERALS["orthopyroxene"]
    assert 3.29 <= m.rho <= 3.31 and 108 <= m.ks <= 110 and 74 <= m.g <= 76


def test_mantle_cpx_between_end_members():
    # Between diopside (Sang et al. 2011, verified) and hedenbergite (Kandelin & Weidner 1988:
    # Hill G ~62, rho ~3.66, from memory): Fe lowers G and raises density.
    m, di = MINERALS["clinopyroxene"], MINERALS["diopside"]
    assert di.rho < m.rho < 3.66 and 62.0 < m.g < di.g


def test_augite_within_published_range_and_below_diopside():
    # Fe-Al augite: Ks 95-110, G 58-67, rho 3.30-3.40 [from memory, physics reference sheet];
    # end-member diopside's G (72.7, Sang et al. 2011, verified) is an upper bound.
    m = MINERALS["augite"]
    assert 95 <= m.ks <= 110 and 58 <= m.g <= 67 and 3.30 <= m.rho <= 3.40
    assert m.g < MINERALS["diopside"].g


def test_fe_olivine_has_higher_poisson_ratio():
    # Christensen 1996 [verified: abstract]: Fe for Mg in olivine raises Poisson's ratio;
    # Fe raises density (fayalite ~4.39, from memory).
    assert _poisson("olivine_fo75") > _poisson("olivine") + 0.005
    assert MINERALS["olivine"].rho < MINERALS["olivine_fo75"].rho < 4.39


def test_actinolite_on_the_brown_abramson_trends():
    # Brown & Abramson 2016 [verified: preprint abstract]: Ca-amphibole Ks does not vary with Fe,
    # 85 GPa for tremolite; G from 47 (ferro-actinolite) to 64 (pargasite).
    m = MINERALS["actinolite"]
    assert m.ks == pytest.approx(85.0, abs=0.5)
    assert 47.0 < m.g < 64.0


# Mookherjee & Mainprice 2014 (GRL 41:1506) Table 3: zero-pressure first-principles stiffness of
# clinochlore, GPa (monoclinic; read in a public script quoting the table, see minerals.toml).
_CHLORITE_CIJ = {"11": 197.8, "22": 202.3, "33": 135.1, "44": 24.5, "55": 24.4, "66": 70.3,
                 "12": 60.7, "13": 21.1, "15": 3.3, "23": 34.1, "25": 0.2, "35": 0.4, "46": 0.1}


def _vrh_bounds(cij):
    """Voigt and Reuss bounds of K and G from a 6x6 stiffness matrix (Hill 1952 closed forms)."""
    c = np.zeros((6, 6))
    for k, v in cij.items():
        i, j = int(k[0]) - 1, int(k[1]) - 1
        c[i, j] = c[j, i] = v
    s = np.linalg.inv(c)
    kv = (np.trace(c[:3, :3]) + 2 * (c[0, 1] + c[0, 2] + c[1, 2])) / 9
    gv = (np.trace(c[:3, :3]) - (c[0, 1] + c[0, 2] + c[1, 2]) + 3 * np.trace(c[3:, 3:])) / 15
    kr = 1 / (np.trace(s[:3, :3]) + 2 * (s[0, 1] + s[0, 2] + s[1, 2]))
    gr = 15 / (4 * np.trace(s[:3, :3]) - 4 * (s[0, 1] + s[0, 2] + s[1, 2])
               + 3 * np.trace(s[3:, 3:]))
    return kv, kr, gv, gr


def test_chlorite_is_the_hill_average_of_the_published_tensor():
    # [verified: MM14 Table 3 Cij; Hill 1952 average, closed form] Ks, G of the table within
    # 0.01 GPa (rounding of the stored values) of the Hill average of the published tensor, and
    # the ambient velocities those moduli and rho = 2.71 give (within 0.002 km/s).
    kv, kr, gv, gr = _vrh_bounds(_CHLORITE_CIJ)
    k, g = (kv + kr) / 2, (gv + gr) / 2
    m = MINERALS["chlorite"]
    assert m.ks == pytest.approx(k, abs=0.01)
    assert m.g == pytest.approx(g, abs=0.01)
    vp, vs = _vel("chlorite")
    assert vp == pytest.approx(math.sqrt((k + 4 * g / 3) / 2.71), abs=2e-3)
    assert vs == pytest.approx(math.sqrt(g / 2.71), abs=2e-3)


def test_chlorite_reuss_bulk_modulus_matches_x_ray_compression():
    # [verified: Welch & Crichton 2002, Eur. J. Mineral. 14:561, abstract] X-ray K_T0 of
    # clinochlore 81.0 +- 0.5 GPa (K' = 4); a hydrostatic X-ray modulus is a Reuss-type average.
    # Tolerance 3 GPa: first-principles (GGA) moduli and Ks - K_T (~1 %) differ by a few GPa.
    _, kr, _, _ = _vrh_bounds(_CHLORITE_CIJ)
    assert kr == pytest.approx(81.0, abs=3.0)


def test_chlorite_is_softer_in_shear_than_the_gabbro_minerals():
    # [common practice] chlorite, a sheet silicate, is softer in shear and lighter than the
    # pyroxene and amphiboles it replaces.
    for other in ("augite", "hornblende", "actinolite"):
        assert MINERALS["chlorite"].g < MINERALS[other].g
        assert MINERALS["chlorite"].rho < MINERALS[other].rho


def test_magnetite_is_adiabatic():
    # Ultrasonic stiffnesses C11 273, C12 106, C44 97.1 GPa (Bass 1995 table, from memory) give
    # Ks = (C11 + 2 C12)/3 = 161.7; the isothermal X-ray value 181-183 (Nakagiri et al.,
    # verified) must not be used for seismic speeds.
    m = MINERALS["magnetite"]
    assert m.ks == pytest.approx((273.0 + 2 * 106.0) / 3.0, rel=2e-3)
    assert m.ks < 175.0


def test_fo90_ambient_velocities():
    # Fo90 rho 3.355, K 129.4, G 78.0 -> Vp 8.341, Vs 4.822, nu 0.249
    # (+/- 0.001) [Abramson et al. 1997 inputs, arithmetic computed].
    vp, vs = _vel("olivine")
    assert vp == pytest.approx(8.341, abs=1e-3)
    assert vs == pytest.approx(4.822, abs=1e-3)
    r2 = (vp / vs) ** 2
    assert (r2 - 2) / (2 * (r2 - 1)) == pytest.approx(0.249, abs=1e-3)


# --------------------------------------------------------------------------------------------
# (b) Identities.
@pytest.mark.parametrize("name", sorted(MINERALS))
def test_reference_state_returns_table_values(name):
    # At 25 C (the reference temperature) and P = 0 the model must return the table exactly
    # (rounding-level tolerance).
    m = MINERALS[name]
    p = mineral_properties(name, temperature_c=25.0, pressure_gpa=0.0)
    assert float(p.density) == pytest.approx(m.rho, rel=1e-12)
    assert float(p.bulk_modulus) == pytest.approx(m.ks, rel=1e-12)
    assert float(p.shear_modulus) == pytest.approx(m.g, rel=1e-12)


@pytest.mark.parametrize("name", sorted(MINERALS))
def test_density_monotonic_in_t_and_p(name):
    t = np.linspace(T_MIN_C, T_MAX_C, 50)
    rho_t = mineral_properties(name, temperature_c=t, pressure_gpa=0.5).density
    assert np.all(np.diff(rho_t) < 0)
    p = np.linspace(0.0, P_MAX, 50)
    rho_p = mineral_properties(name, temperature_c=500.0, pressure_gpa=p).density
    assert np.all(np.diff(rho_p) > 0)


@pytest.mark.parametrize("name", sorted(MINERALS))
def test_tabulated_temperature_derivatives_reproduced_at_reference(name):
    # The Anderson-Grueneisen parameters are fixed from dKs/dT, dG/dT at T0, so the model's own
    # derivatives at (25 C, 0 GPa) equal the tabulated ones; 0.5 % covers the central difference.
    m = MINERALS[name]
    h = 0.5
    hi = mineral_properties(name, temperature_c=25.0 + h, pressure_gpa=0.0)
    lo = mineral_properties(name, temperature_c=25.0 - h, pressure_gpa=0.0)
    assert float(hi.bulk_modulus - lo.bulk_modulus) / (2 * h) == pytest.approx(m.dksdt, rel=5e-3)
    assert float(hi.shear_modulus - lo.shear_modulus) / (2 * h) == pytest.approx(m.dgdt, rel=5e-3)
    rho_hi, rho_lo = float(hi.density), float(lo.density)
    dlnrho = (math.log(rho_hi) - math.log(rho_lo)) / (2 * h)
    assert -dlnrho == pytest.approx(m.alpha_at(298.15), rel=1e-4)


@pytest.mark.parametrize("name", sorted(MINERALS))
def test_tabulated_pressure_derivatives_reproduced_at_zero_pressure(name):
    # Finite-strain moduli with K_T in the strain coefficient give dKs/dP = K', dG/dP = G' at
    # P = 0 exactly; 1 % covers the one-sided difference over 0.01 GPa.
    m = MINERALS[name]
    h = 0.01
    hi = mineral_properties(name, temperature_c=25.0, pressure_gpa=h)
    lo = mineral_properties(name, temperature_c=25.0, pressure_gpa=0.0)
    assert float(hi.bulk_modulus - lo.bulk_modulus) / h == pytest.approx(m.ksp, rel=1e-2)
    assert float(hi.shear_modulus - lo.shear_modulus) / h == pytest.approx(m.gp, rel=1e-2)


def test_vectorised_equals_looped():
    rng = np.random.default_rng(20240611)
    names = sorted(MINERALS)
    table = mineral_table(names)
    t_k = rng.uniform(T_MIN_C + CELSIUS_TO_KELVIN, T_MAX_C + CELSIUS_TO_KELVIN, size=(7, 5))
    p = rng.uniform(0.0, P_MAX, size=(7, 5))
    rho, ks, g = _mineral_state(table, t_k, p)
    assert rho.shape == ks.shape == g.shape == (7, 5, len(names))
    for idx in np.ndindex(t_k.shape):
        for j, name in enumerate(names):
            r1, k1, g1 = _mineral_state(mineral_table([name]), t_k[idx], p[idx])
            assert r1.shape == (1,)
            np.testing.assert_allclose(
                [rho[idx][j], ks[idx][j], g[idx][j]], [r1[0], k1[0], g1[0]], rtol=1e-13
            )


def test_kernel_broadcasts_batch_shapes():
    table = mineral_table(["olivine", "labradorite"])
    t_k = np.linspace(300.0, 1500.0, 4)[:, None]
    p = np.linspace(0.0, 2.0, 3)[None, :]
    rho, ks, g = _mineral_state(table, t_k, p)
    assert rho.shape == (4, 3, 2)
    rho0, _, _ = _mineral_state(table, 800.0, 1.0)
    assert rho0.shape == (2,)


def test_finite_and_positive_over_documented_range():
    table = mineral_table(sorted(MINERALS))
    t_k = np.linspace(T_MIN_C, T_MAX_C, 91)[:, None] + CELSIUS_TO_KELVIN
    p = np.linspace(0.0, P_MAX, 51)[None, :]
    for arr in _mineral_state(table, t_k, p):
        assert np.all(np.isfinite(arr))
        assert np.all(arr > 0)


def test_public_shape_follows_inputs():
    p = mineral_properties("olivine", temperature_c=[100.0, 200.0, 300.0], pressure_gpa=1.0)
    assert p.vp.shape == (3,)
    p0 = mineral_properties("olivine", temperature_c=100.0, pressure_gpa=1.0)
    assert p0.vp.shape == ()


# --------------------------------------------------------------------------------------------
# Birch-Murnaghan solve.
def _bm3_pressure(f, kt, kp):
    return 3.0 * kt * f * (1.0 + 2.0 * f) ** 2.5 * (1.0 + 1.5 * (kp - 4.0) * f)


@pytest.mark.parametrize("name", sorted(MINERALS))
def test_bm3_strain_reproduces_pressure(name):
    m = MINERALS[name]
    p = np.linspace(0.0, P_MAX, 41)
    for kt in (m.ks, 0.6 * m.ks):  # ambient and strongly heat-softened K_T
        f = _eulerian_strain(np.full_like(p, kt), 1.5 * (m.ksp - 4.0), p)
        np.testing.assert_allclose(_bm3_pressure(f, kt, m.ksp), p, rtol=0, atol=1e-9)
        # independent bracketing root-finder; |df| < 1e-10 for P <= 5 is a numerical accuracy
        # target (common practice: far below any physical uncertainty of the strain)
        for pi, fi in zip(p[p <= 5.0], f[p <= 5.0], strict=True):
            ref = brentq(
                lambda x, pi=pi, kt=kt: _bm3_pressure(x, kt, m.ksp) - pi, -1e-3, 0.5, xtol=1e-15
            )
            assert abs(fi - ref) < 1e-10


# --------------------------------------------------------------------------------------------
# (c) Olivine derivatives against published values.
def test_olivine_temperature_derivatives_of_velocity():
    # Isaak 1992 JGR 97:1871 (Fo90): dKs/dT = -0.016, dG/dT = -0.0135 GPa/K [from memory];
    # with alpha = 2.65e-5 /K and Abramson et al. 1997 ambient values these give
    # dVp/dT = -4.96e-4 and dVs/dT = -3.53e-4 km/s/K [computed]. 2 % tolerance: the published
    # derivatives carry 7-12 % uncertainty; 2 % still catches any sign or unit slip.
    h = 1.0
    vp_hi, vs_hi = _vel("olivine", 25.0 + h)
    vp_lo, vs_lo = _vel("olivine", 25.0 - h)
    rho, ks, g, a = 3.355, 129.4, 78.0, MINERALS["olivine"].alpha_at(298.15)
    m = ks + 4 * g / 3
    dvp = 0.5 * math.sqrt(m / rho) * ((-0.016 - 4 * 0.0135 / 3) / m + a)
    dvs = 0.5 * math.sqrt(g / rho) * (-0.0135 / g + a)
    assert dvp == pytest.approx(-4.96e-4, rel=1e-2)
    assert (vp_hi - vp_lo) / (2 * h) == pytest.approx(dvp, rel=2e-2)
    assert (vs_hi - vs_lo) / (2 * h) == pytest.approx(dvs, rel=2e-2)


@pytest.mark.xfail(strict=True, reason=(
    "Fo90 at 1300 K, 0 GPa: Ks 109.9 and G 62.1 GPa, 1.4 GPa below the softest ends of Isaak's "
    "(1992) linear slopes (Vp 0.07, Vs 0.05 km/s slow): constant Anderson-Grueneisen parameters "
    "with a rising alpha(T) steepen dM/dT at high temperature"))
def test_olivine_high_temperature_moduli_within_published_slopes():
    # Isaak 1992 JGR 97:1871 [from memory, as in the olivine row's source]: Fo90 Ks and G fall
    # nearly linearly over 300-1500 K, dKs/dT = -0.016 +- 0.002, dG/dT = -0.0135 +- 0.001
    # GPa/K. At 1300 K the model must lie within those slopes. (This test allowed 5 % of the
    # central trend before, which the model's 3.0 % and 3.7 % passed.)
    p = mineral_properties("olivine", temperature_c=1300.0 - CELSIUS_TO_KELVIN, pressure_gpa=0.0)
    dt = 1300.0 - 298.15
    assert 129.4 - 0.018 * dt <= float(p.bulk_modulus) <= 129.4 - 0.014 * dt
    assert 78.0 - 0.0145 * dt <= float(p.shear_modulus) <= 78.0 - 0.0125 * dt


def test_olivine_pressure_derivatives_of_velocity():
    # Abramson et al. 1997 abstract [verified]: K = 129.4 + 4.29P, G = 78 + 1.71P, K_T = 126.3
    # -> dVp/dP = 0.0844, dVs/dP = 0.0338 km/s/GPa [computed]. 2 %: the model's K_T (from
    # Ks/(1 + alpha gamma T)) is 1.5 % above Abramson's X-ray K_T.
    h = 0.02
    vp_hi, vs_hi = _vel("olivine", 25.0, h)
    vp_lo, vs_lo = _vel("olivine", 25.0, 0.0)
    assert (vp_hi - vp_lo) / h == pytest.approx(0.0844, rel=2e-2)
    assert (vs_hi - vs_lo) / h == pytest.approx(0.0338, rel=2e-2)


def test_olivine_moduli_at_5_gpa_match_abramson_fits():
    # Abramson et al. 1997 [verified]: K_HS(5) = 150.85, G_HS(5) = 85.875 (with G'' = -0.027).
    # 1 %: BM3 curvature differs from their polynomial fits by < 1 % over 0-5 GPa.
    p = mineral_properties("olivine", temperature_c=25.0, pressure_gpa=5.0)
    assert float(p.bulk_modulus) == pytest.approx(150.85, rel=1e-2)
    assert float(p.shear_modulus) == pytest.approx(85.875, rel=1e-2)


# --------------------------------------------------------------------------------------------
# Errors and loader.
def test_unknown_name_lists_valid_names():
    with pytest.raises(ValueError, match="valid names.*olivine"):
        mineral_properties("olivene", temperature_c=25.0, pressure_gpa=0.0)
    with pytest.raises(ValueError, match="unknown mineral"):
        mineral_table(["olivine", "quartzz"])
    with pytest.raises(ValueError, match="at least one"):
        mineral_table([])


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"temperature_c": -30.0, "pressure_gpa": 0.0}, r"temperature_c must be in \[-20, 1800\]"),
        ({"temperature_c": 1900.0, "pressure_gpa": 0.0}, "temperature_c"),
        ({"temperature_c": 25.0, "pressure_gpa": -0.1}, r"pressure_gpa must be in \[0, 10\]"),
        ({"temperature_c": 25.0, "pressure_gpa": 12.0}, "pressure_gpa"),
        ({"temperature_c": float("nan"), "pressure_gpa": 0.0}, "temperature_c must be finite"),
        ({"temperature_c": [1.0, 2.0], "pressure_gpa": [1.0, 2.0, 3.0]}, "do not broadcast"),
        ({"temperature_c": "warm", "pressure_gpa": 0.0}, "temperature_c must be a number"),
    ],
)
def test_bad_input_raises_clear_valueerror(kwargs, match):
    with pytest.raises(ValueError, match=match):
        mineral_properties("olivine", **kwargs)


def test_list_minerals():
    rows = list_minerals()
    assert [r["name"] for r in rows] == sorted(MINERALS)
    for r in rows:
        assert set(r) == {"name", "description", "rho", "ks", "g", "source", "tag"}
        assert r["tag"] in {"verified", "from memory", "common practice", "computed"}
        assert r["source"]


def test_minerals_are_frozen():
    with pytest.raises(AttributeError):
        MINERALS["olivine"].ks = 1.0  # type: ignore[misc]
    with pytest.raises(TypeError):
        MINERALS["new"] = MINERALS["olivine"]  # type: ignore[index]


_MINIMAL = """
[meta]
reference_temperature_k = 298.15
"""


def _entry(name, **over):
    vals = {
        "rho": 3.0,
        "ks": 100.0,
        "g": 50.0,
        "ksp": 4.0,
        "gp": 1.5,
        "dksdt": -0.01,
        "dgdt": -0.01,
        "gamma_th": 1.0,
    }
    vals.update(over)
    lines = [f"[minerals.{name}]", 'description = "test"', "alpha = [3e-5, 0.0, 0.0]"]
    lines += [f"{k} = {v}" for k, v in vals.items() if v is not None]
    for grp in ("elastic", "pressure", "temperature", "thermal"):
        lines += [f'source_{grp} = "s"', f'tag_{grp} = "computed"']
    return "\n".join(lines) + "\n"


def test_loader_accepts_complete_file():
    text = _MINIMAL + "".join(_entry(n) for n in M.REQUIRED_MINERALS)
    t_ref, minerals = load_minerals(text)
    assert t_ref == 298.15 and set(minerals) == set(M.REQUIRED_MINERALS)


@pytest.mark.parametrize(
    ("override", "match"),
    [
        ({"g": -5.0}, r"olivine\.g.*positive"),
        ({"ks": 0.0}, r"olivine\.ks.*positive"),
        ({"rho": None}, "missing key 'rho'"),
        ({"dgdt": 0.01}, r"olivine\.dgdt"),
    ],
)
def test_loader_rejects_bad_values(override, match):
    text = _MINIMAL + "".join(
        _entry(n, **(override if n == "olivine" else {})) for n in M.REQUIRED_MINERALS
    )
    with pytest.raises(ValueError, match=match):
        load_minerals(text)


def test_loader_rejects_missing_required_mineral():
    text = _MINIMAL + "".join(_entry(n) for n in M.REQUIRED_MINERALS if n != "spinel")
    with pytest.raises(ValueError, match="missing required minerals.*spinel"):
        load_minerals(text)


def test_loader_rejects_unknown_tag():
    text = _MINIMAL + "".join(_entry(n) for n in M.REQUIRED_MINERALS)
    text = text.replace('tag_thermal = "computed"', 'tag_thermal = "guessed"', 1)
    with pytest.raises(ValueError, match="tag_thermal"):
        load_minerals(text)
