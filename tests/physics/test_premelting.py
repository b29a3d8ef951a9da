"""Tests for the Yamauchi & Takei (2016) near-solidus law: published curve, limits, KK, wiring."""

import numpy as np
import pytest

from bayescrust.physics import anelastic, premelting
from bayescrust.physics.anelastic import ANELASTIC_DATA, ATTENUATION_LAWS, velocity_factors
from bayescrust.physics.rocks import ForwardModel, rock_properties
from bayescrust.physics.thermal import peridotite_solidus_c

LAW = "yamauchi_takei2016"
C_TO_K = 273.15

# Yamauchi & Takei (2016, JGR 121:7790) Fig. 20: Vs (km/s) against temperature (deg C) of their
# calibrated mantle model at 50 and 75 km depth, 100 s period, d = d_r; points digitised from the
# figure in a public benchmark description of the YT16 parameterisation (data files
# "50km_picked.txt", "75km_picked.txt" beside it). A subset spanning the curve; the 482 C point
# of the 50 km curve is left out: it fixed the (inferred) modulus reference temperature.
FIG20 = {
    50.0: [(799.2, 4.4994), (1100.4, 4.4122), (1234.4, 4.3669),
           (1261.3, 4.3454), (1281.8, 4.3148), (1300.1, 4.2782), (1314.5, 4.2402),
           (1325.5, 4.2051)],
    75.0: [(822.2, 4.5312), (1024.1, 4.4747), (1194.5, 4.4252), (1256.7, 4.4021),
           (1284.2, 4.3809), (1301.0, 4.3576), (1316.7, 4.3270), (1331.9, 4.2927),
           (1342.8, 4.2631), (1351.5, 4.2381)],
}


def _fig20_model(depth_km, t_c):
    """Vs of YT16's own mantle model (their unrelaxed modulus, density, solidus) with this law."""
    ref = ANELASTIC_DATA["yamauchi_takei2016"]["mantle_reference"]
    p = depth_km / ref["depth_to_pressure_km_per_gpa"]
    t = np.asarray(t_c) + C_TO_K
    t_s = ref["solidus_k_at_50km"] + ref["solidus_gradient_k_per_km"] * (depth_km - 50.0)
    mu = premelting.mantle_shear_modulus_gpa(t, p)
    rho = ref["density_kg_m3"] * (1.0 - ref["thermal_expansion_k"]
                                  * (t - ref["density_reference_temperature_k"])
                                  + p / ref["bulk_modulus_gpa"])
    j1, j2 = premelting.compliance_ratio(
        t, p, 1.0 / ref["period_s"], ANELASTIC_DATA["yamauchi_takei2016"][
            "reference_grain_size_mm"], t_h=t / t_s)
    return np.sqrt(mu * 1e9 / rho) / 1e3 * premelting.shear_velocity_factor(j1, j2)


@pytest.mark.parametrize("depth_km", [50.0, 75.0])
def test_reproduces_published_figure_20(depth_km):
    # [verified: YT16 Fig. 20, digitised] Tolerance 0.012 km/s (0.3 %): the digitised points
    # scatter by ~0.003 km/s, and the elastic reference alone (T < 1100 C, no anelasticity)
    # sits 0.004 km/s below the curve; the near-solidus drop of 0.18 km/s at 50 km is
    # reproduced to within 0.01 km/s. T'_eta = 0.94 is from memory (docs/physics.md).
    t, vs = np.array(FIG20[depth_km]).T
    model = _fig20_model(depth_km, t)
    assert np.max(np.abs(model - vs)) < 0.012, np.round(model - vs, 4)


def test_figure_20_near_solidus_drop_at_50_km():
    # [verified: YT16 Fig. 20, digitised] Vs falls 0.162 km/s between 1234 and 1325 C at
    # 50 km (T/Ts 0.94 -> 1.0); the pre-melting peak carries most of it. Tolerance 15 %.
    model = _fig20_model(50.0, [1234.4, 1325.5])
    assert model[0] - model[1] == pytest.approx(4.3669 - 4.2051, rel=0.15)


def test_peak_parameters_match_published_piecewise_law():
    # [verified: YT16 A_P(T'), sigma_P(T') as quoted] A_P = 0.01 below 0.91, 0.01 + 0.4 (T'-0.91)
    # to 0.96, 0.03 above; sigma_P = 4 below 0.92, 4 + 37.5 (T'-0.92) to 1, 7 above.
    th = np.array([0.80, 0.91, 0.935, 0.96, 0.98, 1.0, 1.05])
    a_p, s_p = premelting.peak_parameters(th)
    np.testing.assert_allclose(a_p, [0.01, 0.01, 0.02, 0.03, 0.03, 0.03, 0.03], atol=1e-12)
    np.testing.assert_allclose(s_p, [4.0, 4.0, 4.5625, 5.5, 6.25, 7.0, 7.0], atol=1e-12)


def test_no_premelting_effect_below_091():
    # [YT16] Below T/Ts = 0.91 the homologous temperature enters nowhere (peak fixed at its
    # low-temperature amplitude and width, no extra viscosity drop): the compliance is the same
    # for any T' < 0.91 at the same (T, P, d, f).
    args = (1400.0, 1.0, 0.01, 1.0)
    base = premelting.compliance_ratio(*args, t_h=0.5)
    for th in (0.7, 0.85, 0.909):
        assert premelting.compliance_ratio(*args, t_h=th) == pytest.approx(base, rel=1e-15)
    j1, j2 = premelting.compliance_ratio(*args, t_h=0.99)
    assert premelting.shear_velocity_factor(j1, j2) < premelting.shear_velocity_factor(*base)


def test_local_kramers_kronig_relation():
    # [common practice: local Kramers-Kronig approximation, J2 = -(pi/2) dJ1/dln(omega) + the
    # Maxwell term, e.g. O'Connell & Budiansky 1978] checked by central differences in the
    # period; the YT16 closed forms satisfy it exactly, so the tolerance is the 1e-6 relative
    # error of the difference quotient.
    t, p, d = 1500.0, 1.5, 1.0
    for th in (0.85, 0.95, 1.0):
        for f in (1e-3, 1e-1, 5.0):
            h = 1e-4
            j1a, _ = premelting.compliance_ratio(t, p, f * np.exp(-h), d, t_h=th)
            j1b, _ = premelting.compliance_ratio(t, p, f * np.exp(h), d, t_h=th)
            _, j2 = premelting.compliance_ratio(t, p, f, d, t_h=th)
            ln_eta = premelting._log_viscosity(t, p, d, th)
            tau = np.exp(-np.log(2 * np.pi * f) - ln_eta
                         + np.log(premelting.mantle_shear_modulus_gpa(t, p) * 1e9))
            kk = -(np.pi / 2) * (j1b - j1a) / (2 * h)
            assert j2 - tau == pytest.approx(kk, rel=1e-6, abs=1e-15)


def test_dispersion_integral_against_scipy():
    # [closed form/scipy] Q^-1 over a band of frequencies integrates to the dispersion of the
    # real compliance: with the local KK relation, (1/2) ln(J1(f2)/J1(f1)) =
    # (1/pi) int_{ln f2}^{ln f1} Q^-1 dln f (Maxwell term removed), exactly. Tolerance 1e-6
    # relative: the quadrature error.
    from scipy.integrate import quad

    t, p, d, th = 1550.0, 1.5, 1.0, 0.97
    f1, f2 = 1.0, 1e-3

    def q_anelastic(lnf):
        f = np.exp(lnf)
        j1, j2 = premelting.compliance_ratio(t, p, f, d, t_h=th)
        tau = np.exp(-np.log(2 * np.pi * f) - premelting._log_viscosity(t, p, d, th)
                     + np.log(premelting.mantle_shear_modulus_gpa(t, p) * 1e9))
        return float((j2 - tau) / j1)

    integral, _ = quad(q_anelastic, np.log(f2), np.log(f1))
    j1_1, _ = premelting.compliance_ratio(t, p, f1, d, t_h=th)
    j1_2, _ = premelting.compliance_ratio(t, p, f2, d, t_h=th)
    disp = 0.5 * np.log(j1_2 / j1_1)  # ln Vs(f1)/Vs(f2) from the real compliance
    assert disp > 0.005
    assert disp == pytest.approx(integral / np.pi, rel=1e-6)


# --- limits and monotonicity ------------------------------------------------------------------


@pytest.mark.parametrize("law", sorted(ATTENUATION_LAWS))
def test_unrelaxed_limit_far_below_solidus(law):
    # [common practice] far below the solidus (400 C) anelasticity vanishes: Q^-1 < 1e-5 and the
    # velocity factors are 1 within 1e-5; at 1 kHz and 900 C they are 1 within 2e-3.
    fp, fs, q = velocity_factors(400.0, 0.3, frequency_hz=5.0, grain_size_mm=5.0, law=law)
    assert q < 1e-5 and 1 - fs < 1e-5 and 1 - fp < 1e-5
    fp, fs, q = velocity_factors(900.0, 0.3, frequency_hz=1e3, grain_size_mm=5.0, law=law)
    assert 1 - fs < 2e-3 and 0 <= 1 - fp <= 1 - fs


@pytest.mark.parametrize("law", sorted(ATTENUATION_LAWS))
@pytest.mark.parametrize("p", [0.3, 1.5])
def test_monotonic_in_temperature_grain_size_frequency(law, p):
    # [common practice] hotter, finer-grained rock at lower frequency is slower.
    t = np.linspace(600.0, float(peridotite_solidus_c(p)) + 30.0, 200)
    _, fs, _ = velocity_factors(t, p, frequency_hz=1.0, grain_size_mm=1.0, law=law)
    assert np.all(np.diff(fs) <= 1e-15)
    tc = float(peridotite_solidus_c(p)) - 20.0
    _, fs_d, _ = velocity_factors(tc, p, frequency_hz=1.0,
                                  grain_size_mm=np.geomspace(0.01, 50, 30), law=law)
    assert np.all(np.diff(fs_d) >= -1e-15)
    _, fs_f, _ = velocity_factors(tc, p, frequency_hz=np.geomspace(1e-4, 100, 30),
                                  grain_size_mm=1.0, law=law)
    assert np.all(np.diff(fs_f) >= -1e-15)


def test_vp_factor_smaller_effect_than_vs():
    # [Anderson & Given 1982, no bulk loss] the P factor is closer to 1 than the S factor.
    fp, fs, _ = velocity_factors(1500.0, 1.5, frequency_hz=0.01, grain_size_mm=1.0, vp_vs=1.8,
                                 law=LAW)
    assert 0 < 1 - fp < 1 - fs


# --- rock level -------------------------------------------------------------------------------


def _near_solidus(law, p=0.25):
    t = float(peridotite_solidus_c(p)) - 10.0
    return rock_properties("harzburgite", temperature_c=t, pressure_gpa=p, attenuation_law=law)


@pytest.mark.parametrize("law", sorted(ATTENUATION_LAWS))
@pytest.mark.xfail(strict=True, reason=(
    "melt-free harzburgite 10 C below the solidus at 0.25 GPa, 5 Hz, 5 mm: Vp 7.52 "
    "(jackson2002) / 7.54 (yamauchi_takei2016) km/s against 7.1-7.4; 0.12-0.14 km/s too fast"))
def test_hot_peridotite_near_solidus_reaches_published_range(law):
    # [common practice, design notes: melt-free peridotite near its solidus at low pressure can
    # fall to ~7.1-7.4 km/s]
    assert 7.1 <= float(_near_solidus(law).vp) <= 7.4


@pytest.mark.xfail(strict=True, reason=(
    "YT16 pre-melting at 0.25 GPa, 5 Hz lowers Vs by <0.01 % (4.339 vs 4.339 km/s unrelaxed): "
    "the calibrated viscosity there is ~4e23 Pa s (d = 5 mm), so the peak lies far below seismic "
    "frequencies; a 'markedly lower' Vs (>= 2 %) is not reproduced"))
def test_premelting_markedly_lowers_vs_at_low_pressure():
    # [common practice] pre-melting should lower Vs markedly (>= 2 %) just below the solidus.
    relaxed = float(_near_solidus(LAW).vs)
    t = float(peridotite_solidus_c(0.25)) - 10.0
    unrelaxed = float(rock_properties("harzburgite", temperature_c=t, pressure_gpa=0.25,
                                      anelastic=False).vs)
    assert relaxed <= 0.98 * unrelaxed


def test_premelting_lowers_vs_at_50km_depth_and_long_period():
    # [verified: YT16 Fig. 20] at 50 km (1.67 GPa) and 100 s the law lowers Vs by ~3-5 % just
    # below the solidus against the elastic trend; here on bayescrust's own harzburgite.
    p = 50.0 / 30.0
    t = float(peridotite_solidus_c(p)) - 5.0
    kw = dict(temperature_c=t, pressure_gpa=p, frequency_hz=0.01, grain_size_mm=1.0)
    relaxed = float(rock_properties("harzburgite", attenuation_law=LAW, **kw).vs)
    unrelaxed = float(rock_properties("harzburgite", anelastic=False, **kw).vs)
    assert 0.02 < 1 - relaxed / unrelaxed < 0.07


# --- wiring -----------------------------------------------------------------------------------


def test_forward_model_batches_and_matches_looped():
    rng = np.random.default_rng(3)
    fm = ForwardModel(rocks=("gabbro", "harzburgite"), attenuation_law=LAW)
    fr = rng.dirichlet(np.ones(2), size=(4, 3))
    t = rng.uniform(900.0, 1250.0, (4, 3))
    p = rng.uniform(0.1, 0.6, (4, 3))
    vp, vs, rho = fm(fr, t, p)
    assert vp.shape == vs.shape == rho.shape == (4, 3)
    for idx in np.ndindex(4, 3):
        a = fm(fr[idx], t[idx], p[idx])
        assert [vp[idx], vs[idx]] == pytest.approx([float(a[0]), float(a[1])], rel=1e-12)


def test_law_names_agree_with_study_file_reader():
    from bayescrust.config.forward import DEFAULT_ATTENUATION_LAW, FORWARD_KEYS

    assert sorted(FORWARD_KEYS["attenuation_law"]) == sorted(ATTENUATION_LAWS)
    assert DEFAULT_ATTENUATION_LAW == anelastic.DEFAULT_ATTENUATION_LAW
    assert ForwardModel(rocks=("gabbro",)).attenuation_law == DEFAULT_ATTENUATION_LAW


def test_unknown_law_is_refused_with_the_allowed_names():
    with pytest.raises(ValueError, match="yamauchi_takei2016"):
        ForwardModel(rocks=("gabbro",), attenuation_law="faul2005")
    with pytest.raises(ValueError, match="attenuation_law"):
        rock_properties("gabbro", temperature_c=20.0, pressure_gpa=0.1, attenuation_law="x")


def test_study_file_forward_section_selects_the_law():
    import textwrap

    from bayescrust.config import StudyError, build_layer, layer_arguments, parse_study
    from bayescrust.inference.model import LayerModel

    text = textwrap.dedent("""\
        title = "law wiring (made-up numbers)"
        water_depth_km = 3.0
        rocks = ["gabbro", "harzburgite"]
        thermal_prior = "flat"
        [thermal.flat]
        kind = "uniform"
        lo = 0.0
        hi = 1400.0
        [forward]
        attenuation_law = "%s"
        [[layers]]
        name = "deep"
        top_km = 5.0
        bottom_km = 7.0
        vp = [7.2, 0.1]
        """)
    study = parse_study(text % LAW)
    assert study.forward["attenuation_law"] == LAW
    spec = study.layers[0]
    model = LayerModel.build(build_layer(study, spec), **layer_arguments(study, spec))
    assert model.forward.attenuation_law == LAW
    with pytest.raises(StudyError, match="attenuation_law"):
        parse_study(text % "faul2005")


def test_cli_forward_takes_the_law(capsys):
    from bayescrust.cli import main

    t = float(peridotite_solidus_c(1.6)) - 5.0
    rows = {}
    for law in sorted(ATTENUATION_LAWS):
        assert main(["forward", "--rock", "harzburgite", "--temperature", f"{t}", "--pressure",
                     "1.6", "--attenuation-law", law, "--json"]) == 0
        rows[law] = __import__("json").loads(capsys.readouterr().out)["rows"][0]
    expected = rock_properties("harzburgite", temperature_c=t, pressure_gpa=1.6,
                               attenuation_law=LAW)
    assert rows[LAW]["vs"] == pytest.approx(float(expected.vs), rel=1e-12)
    assert rows[LAW]["vs"] != rows["jackson2002"]["vs"]
    assert main(["forward", "--rock", "harzburgite", "--temperature", "20", "--pressure", "0.1",
                 "--attenuation-law", "nope"]) == 2


def test_kernel_is_finite_at_extremes():
    # [numerical guard] the kernel never returns NaN/inf over the forward model's whole input
    # box, including zero grain size, T = 0 K and a fluid (vs = 0), and its factors stay in (0, 1].
    t = np.array([0.0, 1.0, 273.0, 1500.0, 2073.0, 3000.0])[:, None, None]
    p = np.array([0.0, 1.0, 15.0])[None, :, None]
    f = np.array([1e-5, 5.0, 1e3])[None, None, :]
    for d, vs in ((0.0, 4.0), (1e-3, 4.0), (100.0, 4.0), (5.0, 0.0)):
        fp, fs, q = ATTENUATION_LAWS[LAW](t, p, f, d, 7.5, vs)
        assert np.all(np.isfinite(fp)) and np.all(np.isfinite(fs)) and np.all(np.isfinite(q))
        assert np.all((fs > 0) & (fs <= 1)) and np.all((fp > 0) & (fp <= 1))
