"""Tests for bayescrust.physics.thermal: published solidi, geotherms, identities, limits, errors."""

import numpy as np
import pytest
from scipy.special import erf

from bayescrust.physics import thermal
from bayescrust.physics.thermal import (
    gabbro_solidus_c,
    half_space_temperature_c,
    lithostatic_pressure_gpa,
    peridotite_solidus_c,
    plate_temperature_c,
    serpentine_stability_c,
)

SEC_PER_MYR = 3.15576e13


# --- published and computed values -------------------------------------------------------------


def test_hirschmann_solidus():
    # Hirschmann (2000) G3 1:1042 [verified abstract polynomial, values computed] at 1 / 3 GPa:
    # 1248.5 / 1473.4 C (+-0.1).
    assert peridotite_solidus_c([1.0, 3.0]) == pytest.approx([1248.5, 1473.4], abs=0.1)


def test_half_space():
    # [computed from the Turcotte & Schubert (Geodynamics) half-space formula]: Tm 1350,
    # kappa 1e-6, 10 Myr, z = 10 / 20 km -> 417.7 / 774.9 C (+-0.5: the residual reflects the
    # year length used for Myr).
    t = half_space_temperature_c([10.0, 20.0], 10.0)
    assert t == pytest.approx([417.7, 774.9], abs=0.5)


@pytest.mark.parametrize(
    ("z", "age", "expected"), [(5.0, 1.0, 635.7), (30.0, 50.0, 549.0)]
)
def test_half_space_worked_values(z, age, expected):
    # [computed from the same half-space formula, Tm 1350, kappa 1e-6], quoted to 0.1 C;
    # tolerance 0.5 C.
    assert half_space_temperature_c(z, age) == pytest.approx(expected, abs=0.5)


def test_plate_gdh1():
    # [computed from the cooling-plate series with GDH1 a = 95 km, Tm = 1450 C, Stein & Stein
    # 1992, partly from memory; kappa 1e-6]: 100 Myr, 50 km -> 792 +- 1 C; 10 Myr -> 448.6 /
    # 832.3 C at 10 / 20 km.
    assert plate_temperature_c(50.0, 100.0) == pytest.approx(792.0, abs=1.0)
    assert plate_temperature_c([10.0, 20.0], 10.0) == pytest.approx([448.6, 832.3], abs=0.5)


def test_lithostatic_pressure():
    # [computed: P = g sum(rho h), densities common practice]: 4.5 km water (1.03) + 6 km
    # crust (2.9) -> 216.2 MPa at the Moho (+-0.1); +10 km mantle (3.3) -> 539.9 MPa;
    # 2.5 km water + 6 km crust -> 196.0 MPa.
    p = lithostatic_pressure_gpa([6.0, 16.0], water_depth_km=4.5)
    assert p * 1e3 == pytest.approx([216.2, 539.9], abs=0.1)
    assert lithostatic_pressure_gpa(6.0, water_depth_km=2.5) * 1e3 == pytest.approx(196.0, abs=0.1)


def test_antigorite_matches_ulmer_trommsdorff():
    # Ulmer & Trommsdorff (1995) abstract [verified]: ~720 C at 2 GPa, ~690 at 3, ~620 at 5.
    assert serpentine_stability_c([2.0, 3.0, 5.0]) == pytest.approx([720.0, 690.0, 620.0])


@pytest.mark.xfail(strict=True, reason=(
    "the curve follows Ulmer & Trommsdorff's natural antigorite (verified above): 720 C at 2.0 "
    "GPa and 693 C at 2.9 GPa, 20 and 13 C above the tops of Bromiley & Pawley's Al-bearing "
    "(MASH) brackets"))
def test_antigorite_within_bromiley_pawley_brackets():
    # Bromiley & Pawley (2003) abstract [verified], Al-bearing (MASH) antigorite breakdown:
    # 660-700 C at 2.0 GPa, 660-680 C at 2.9 GPa. (This test allowed 40 C around the bracket
    # centre before, exactly the model's offset at 2.0 GPa.)
    t = serpentine_stability_c([2.0, 2.9])
    assert 660.0 <= t[0] <= 700.0 and 660.0 <= t[1] <= 680.0


def test_lizardite_limit():
    # Evans (2010) abstract [verified]: lizardite predominant at 50-300 C.
    assert np.all(serpentine_stability_c([0.0, 0.5, 2.0], kind="lizardite") == 300.0)


# --- identities and limits -----------------------------------------------------------------------


def test_half_space_matches_scipy_erf_form():
    z = np.linspace(0.0, 80.0, 17)
    age = 25.0
    expected = 1350.0 * erf(z * 1e3 / (2.0 * np.sqrt(1e-6 * age * SEC_PER_MYR)))
    assert half_space_temperature_c(z, age) == pytest.approx(expected, rel=1e-13, abs=1e-12)


def test_plate_and_half_space_agree_when_young():
    # While the cooling front is far above the plate base (2 sqrt(kappa t) << a) the two models
    # coincide; at 5 Myr, z <= 40 km the difference is < 1e-6 C.
    z = np.linspace(0.0, 40.0, 41)
    hs = half_space_temperature_c(z, 5.0, mantle_temperature_c=1450.0)
    pl = plate_temperature_c(z, 5.0)
    assert np.max(np.abs(hs - pl)) < 1e-6


def test_plate_series_switch_is_continuous():
    # Image series (young) and Fourier series (old) agree at the switch tau = 0.05.
    a_m = 95e3
    t_switch = 0.05 * a_m**2 / 1e-6 / SEC_PER_MYR
    z = np.linspace(0.0, 95.0, 39)
    lo = plate_temperature_c(z, t_switch * (1 - 1e-12))
    hi = plate_temperature_c(z, t_switch * (1 + 1e-12))
    assert np.max(np.abs(lo - hi)) < 1e-6


def test_plate_tends_to_linear_steady_state():
    z = np.linspace(0.0, 95.0, 20)
    t = plate_temperature_c(z, 4000.0)
    assert t == pytest.approx(1450.0 * z / 95.0, abs=1e-6)
    assert plate_temperature_c(150.0, 50.0) == pytest.approx(1450.0)  # below the plate


def test_zero_age_gives_mantle_temperature_not_nan():
    z = np.array([0.0, 1e-3, 1.0, 50.0])
    hs = half_space_temperature_c(z, 0.0)
    pl = plate_temperature_c(z, 0.0)
    assert np.all(np.isfinite(hs)) and np.all(np.isfinite(pl))
    assert hs[0] == 0.0 and pl[0] == 0.0
    assert np.all(hs[1:] == pytest.approx(1350.0)) and np.all(pl[1:] == pytest.approx(1450.0))


def test_geotherms_monotonic():
    z = np.linspace(0.0, 90.0, 50)
    for age in (0.5, 10.0, 80.0):
        assert np.all(np.diff(half_space_temperature_c(z, age)) >= 0)
        assert np.all(np.diff(plate_temperature_c(z, age)) >= -1e-9)
    ages = np.linspace(0.1, 150.0, 30)
    assert np.all(np.diff(plate_temperature_c(30.0, ages)) < 0)


def test_solidi_increase_with_pressure():
    p = np.linspace(0.0, 3.0, 31)
    assert np.all(np.diff(peridotite_solidus_c(p)) > 0)
    assert np.all(np.diff(gabbro_solidus_c(p)) > 0)


def test_gabbro_solidus_below_peridotite_at_low_pressure():
    # Dry basalt/gabbro begins to melt below dry peridotite at crustal pressures.
    p = np.linspace(0.0, 1.0, 11)
    assert np.all(gabbro_solidus_c(p) < peridotite_solidus_c(p))


def test_lizardite_below_antigorite():
    p = np.linspace(0.0, 6.0, 25)
    assert np.all(serpentine_stability_c(p, kind="lizardite") < serpentine_stability_c(p))


def test_pressure_increases_with_depth():
    z = np.linspace(0.0, 30.0, 31)
    p = lithostatic_pressure_gpa(z, water_depth_km=3.0)
    assert np.all(np.diff(p) > 0)
    assert p[0] == pytest.approx(1e-3 * 9.81 * 1.03 * 3.0)


def test_vectorised_equals_looped():
    rng = np.random.default_rng(3)
    z = rng.uniform(0.0, 120.0, (3, 4))
    age = rng.uniform(0.0, 200.0, (3, 4))
    hw = rng.uniform(1.0, 6.0, (3, 4))
    hs = half_space_temperature_c(z, age)
    pl = plate_temperature_c(z, age)
    pr = lithostatic_pressure_gpa(z, water_depth_km=hw)
    sp = serpentine_stability_c(z / 20.0)
    for idx in np.ndindex(z.shape):
        hs1 = float(half_space_temperature_c(z[idx], age[idx]))
        assert hs[idx] == pytest.approx(hs1, rel=1e-14)
        assert pl[idx] == pytest.approx(float(plate_temperature_c(z[idx], age[idx])), rel=1e-12)
        assert pr[idx] == pytest.approx(
            float(lithostatic_pressure_gpa(z[idx], water_depth_km=hw[idx])), rel=1e-14
        )
        assert sp[idx] == pytest.approx(float(serpentine_stability_c(z[idx] / 20.0)), rel=1e-14)


def test_broadcasting_profile_by_ages():
    z = np.linspace(0, 50, 6)[:, None]
    ages = np.array([1.0, 10.0, 100.0])[None, :]
    assert plate_temperature_c(z, ages).shape == (6, 3)
    assert half_space_temperature_c(z, ages).shape == (6, 3)


# --- errors --------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("call", "name"),
    [
        (lambda: half_space_temperature_c(10.0, -1.0), "age_myr"),
        (lambda: plate_temperature_c(-1.0, 10.0), "depth_km"),
        (lambda: plate_temperature_c(10.0, 10.0, plate_thickness_km=0.0), "plate_thickness_km"),
        (lambda: half_space_temperature_c(10.0, 10.0, diffusivity_m2_s=0.0), "diffusivity_m2_s"),
        (lambda: peridotite_solidus_c(12.0), "pressure_gpa"),
        (lambda: gabbro_solidus_c(-0.1), "pressure_gpa"),
        (lambda: serpentine_stability_c(1.0, kind="chrysotile"), "kind"),
        (lambda: lithostatic_pressure_gpa(5.0, water_depth_km=-1.0), "water_depth_km"),
        (lambda: lithostatic_pressure_gpa(np.nan, water_depth_km=1.0), "depth_below_seafloor_km"),
    ],
)
def test_rejects_bad_input(call, name):
    with pytest.raises(ValueError, match=name):
        call()


def test_every_data_group_has_source_and_tag():
    tags = {"verified", "from memory", "common practice", "computed"}
    d = thermal.THERMAL_DATA
    for group in (d["peridotite_solidus"], d["gabbro_solidus"], d["serpentine"]["lizardite"],
                  d["half_space"], d["plate"], d["time"], d["lithostatic"]):
        assert group["source"] and group["tag"] in tags
    atg = d["serpentine"]["antigorite"]
    assert atg["tag_high_pressure"] in tags and atg["tag_low_pressure"] in tags
