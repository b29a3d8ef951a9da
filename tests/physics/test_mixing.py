"""Tests of bayescrust.physics.mixing: worked examples, bound orderings and identities.

Check values are [computed] from the Voigt-Reuss and Hashin-Shtrikman formulas of Mavko, Mukerji
& Dvorkin 2009 (Rock Physics Handbook, §4.1-4.2) with the inputs of the Handbook's worked
examples: quartz K 36, G 45; calcite K 75, G 31; water K 2.2, G 0 GPa; quartz 80 % of the solid.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from bayescrust.physics.mixing import (
    MIXING_RULES,
    hashin_shtrikman,
    hill,
    hs_average,
    reuss,
    voigt,
)

K3 = np.array([36.0, 75.0, 2.2])  # quartz, calcite, water (Handbook example inputs)
G3 = np.array([45.0, 31.0, 0.0])


def handbook_fractions(phi):
    """Quartz 80 % and calcite 20 % of the solid, porosity ``phi`` of water."""
    return np.array([0.8 * (1 - phi), 0.2 * (1 - phi), phi])


# ---------------------------------------------------------------------------------------------
# values computed from the Handbook formulas and example inputs
# ---------------------------------------------------------------------------------------------
def test_voigt_reuss_handbook_example():
    # [computed from the Mavko, Mukerji & Dvorkin 2009 (Rock Physics Handbook) Voigt and Reuss
    # formulas], Handbook example inputs at phi = 0.27; quoted to 0.01 GPa
    f = handbook_fractions(0.27)
    assert voigt(f, K3) == pytest.approx(32.57, abs=0.01)
    assert reuss(f, K3) == pytest.approx(7.10, abs=0.01)
    assert voigt(f, G3) == pytest.approx(30.81, abs=0.01)
    assert reuss(f, G3) == 0.0  # exactly: a fluid is present


def test_hashin_shtrikman_handbook_example():
    # [computed from the Hashin & Shtrikman 1963 bounds as given by Mavko, Mukerji & Dvorkin
    # 2009 (Rock Physics Handbook)], Handbook example inputs at phi = 0.27; the Handbook's own
    # result "K_HS+ ~ 26.9, K_HS- ~ 7.1" [from memory]; quoted to 0.01 GPa
    k_lo, k_up, g_lo, g_up = hashin_shtrikman(handbook_fractions(0.27), K3, G3)
    assert k_up == pytest.approx(26.91, abs=0.01)
    assert k_lo == pytest.approx(7.10, abs=0.01)
    assert g_up == pytest.approx(24.62, abs=0.01)
    assert g_lo == 0.0


def test_hashin_shtrikman_handbook_mixture_phi_020():
    # [computed from the Mavko, Mukerji & Dvorkin 2009 (Rock Physics Handbook) Voigt, Reuss and
    # Hashin-Shtrikman formulas], Handbook example inputs at phi = 0.20; quoted to 0.01 GPa
    f = handbook_fractions(0.20)
    k_lo, k_up, g_lo, g_up = hashin_shtrikman(f, K3, G3)
    assert (k_up, k_lo, g_up, g_lo) == pytest.approx((30.36, 9.02, 28.40, 0.0), abs=0.01)
    assert voigt(f, K3) == pytest.approx(35.48, abs=0.01)
    assert voigt(f, G3) == pytest.approx(33.76, abs=0.01)
    assert reuss(f, K3) == pytest.approx(9.02, abs=0.01)


def test_hs_upper_quartz_water():
    # [computed from the Hashin-Shtrikman formulas of Mavko, Mukerji & Dvorkin 2009 (Rock
    # Physics Handbook) with quartz K 36, G 45 + 20 % water K 2.2, G 0]; quoted to 0.001 GPa
    _, k_up, g_lo, g_up = hashin_shtrikman([0.8, 0.2], [36.0, 2.2], [45.0, 0.0])
    assert k_up == pytest.approx(26.589, abs=0.001)
    assert g_up == pytest.approx(29.483, abs=0.001)
    assert g_lo == 0.0


def test_two_phase_hs_matches_closed_form():
    # two-phase Hashin-Shtrikman (1963) form (Mavko et al. 2009 §4.1); the N-phase Berryman
    # (1995) form must agree to rounding (1e-12 relative)
    k1, g1, k2, g2, f1 = 80.0, 40.0, 20.0, 10.0, 0.7
    f2 = 1.0 - f1
    k_hs = k1 + f2 / (1.0 / (k2 - k1) + f1 / (k1 + 4.0 * g1 / 3.0))
    g_hs = g1 + f2 / (1.0 / (g2 - g1) + 2.0 * f1 * (k1 + 2.0 * g1) / (5.0 * g1 * (k1 + 4 * g1 / 3)))
    _, k_up, _, g_up = hashin_shtrikman([f1, f2], [k1, k2], [g1, g2])
    assert k_up == pytest.approx(k_hs, rel=1e-12)
    assert g_up == pytest.approx(g_hs, rel=1e-12)


# ---------------------------------------------------------------------------------------------
# identities
# ---------------------------------------------------------------------------------------------
@st.composite
def mixtures(draw):
    n = draw(st.integers(1, 5))
    w = np.array(draw(st.lists(st.floats(0.0, 1.0), min_size=n, max_size=n)))
    if w.sum() == 0.0:
        w[0] = 1.0
    f = w / w.sum()
    k = np.array(draw(st.lists(st.floats(0.0, 300.0), min_size=n, max_size=n)))
    g = np.array(draw(st.lists(st.floats(0.0, 150.0), min_size=n, max_size=n)))
    return f, k, g


@settings(max_examples=300, deadline=None)
@given(mixtures())
def test_bounds_are_ordered(mix):
    # Reuss <= HS- <= HS+ <= Voigt for any mixture; 1e-9 relative slack for rounding
    f, k, g = mix
    k_lo, k_up, g_lo, g_up = hashin_shtrikman(f, k, g)
    for lo_r, lo_hs, up_hs, up_v in (
        (reuss(f, k), k_lo, k_up, voigt(f, k)),
        (reuss(f, g), g_lo, g_up, voigt(f, g)),
    ):
        tol = 1e-9 * (1.0 + up_v)
        assert lo_r <= lo_hs + tol
        assert lo_hs <= up_hs + tol
        assert up_hs <= up_v + tol
        assert np.all(np.isfinite([lo_r, lo_hs, up_hs, up_v]))


@pytest.mark.parametrize("name", sorted(MIXING_RULES))
def test_one_phase_mix_returns_the_phase(name):
    k, g = MIXING_RULES[name]([1.0], [129.4], [78.0])
    assert (k, g) == pytest.approx((129.4, 78.0), rel=1e-14)


@pytest.mark.parametrize("name", sorted(MIXING_RULES))
def test_identical_phases_return_the_phase(name):
    k, g = MIXING_RULES[name]([0.2, 0.3, 0.5], [50.0] * 3, [30.0] * 3)
    assert (k, g) == pytest.approx((50.0, 30.0), rel=1e-14)


def test_zero_fraction_phase_is_ignored():
    # a phase that is absent must not move the HS bounds (its moduli are not an extreme)
    with_absent = hashin_shtrikman([0.6, 0.4, 0.0], [80.0, 40.0, 500.0], [40.0, 20.0, 0.0])
    without = hashin_shtrikman([0.6, 0.4], [80.0, 40.0], [40.0, 20.0])
    assert with_absent == pytest.approx(without, rel=1e-14)


def test_dry_pores_give_zero_lower_bounds_without_warnings():
    # k = g = 0 pores: lower bounds and Reuss are exactly 0 (warnings are errors in tests)
    k_lo, k_up, g_lo, g_up = hashin_shtrikman([0.9, 0.1], [80.0, 0.0], [40.0, 0.0])
    assert k_lo == 0.0 and g_lo == 0.0
    assert 0.0 < k_up < 80.0 and 0.0 < g_up < 40.0


def test_rules_share_one_signature_and_agree():
    f = handbook_fractions(0.1)
    kv, gv = MIXING_RULES["voigt"](f, K3, G3)
    kr, gr = MIXING_RULES["reuss"](f, K3, G3)
    kh, gh = MIXING_RULES["hill"](f, K3, G3)
    # assert_allclose, not approx: approx applies no tolerance to 0-d arrays inside a tuple
    np.testing.assert_allclose([kh, gh], [(kv + kr) / 2, (gv + gr) / 2], rtol=1e-14)
    np.testing.assert_allclose([kh, gh], hill(f, K3, G3), rtol=1e-14)
    k_lo, k_up, g_lo, g_up = hashin_shtrikman(f, K3, G3)
    assert MIXING_RULES["hashin_shtrikman"](f, K3, G3) == pytest.approx(
        ((k_lo + k_up) / 2, (g_lo + g_up) / 2), rel=1e-14
    )
    assert hs_average(f, K3, G3) == pytest.approx(MIXING_RULES["hashin_shtrikman"](f, K3, G3))


@pytest.mark.parametrize("name", sorted(MIXING_RULES))
def test_vectorised_equals_looped(name):
    rng = np.random.default_rng(42)
    f = rng.dirichlet(np.ones(4), size=(3, 5))
    k = rng.uniform(0.0, 200.0, (3, 5, 4))
    g = rng.uniform(0.0, 100.0, (3, 5, 4))
    g[..., -1] = 0.0  # a fluid phase
    rule = MIXING_RULES[name]
    kv, gv = rule(f, k, g)
    assert kv.shape == gv.shape == (3, 5)
    for i in range(3):
        for j in range(5):
            kl, gl = rule(f[i, j], k[i, j], g[i, j])
            assert kv[i, j] == pytest.approx(kl, rel=1e-13)
            assert gv[i, j] == pytest.approx(gl, rel=1e-13)


def test_moduli_broadcast_over_batch():
    # per-phase moduli shaped (n,) broadcast against fractions shaped batch + (n,)
    f = np.array([[0.5, 0.5], [1.0, 0.0]])
    assert voigt(f, [10.0, 30.0]) == pytest.approx([20.0, 10.0])


# ---------------------------------------------------------------------------------------------
# errors
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    "fractions, match",
    [
        ([1.2, -0.2], "fractions must be in"),
        ([0.5, 0.5 + 2e-6], "must sum to 1"),
        ([0.3, 0.3], "must sum to 1"),
        ([0.5, np.nan], "must be finite"),
        (1.0, "phase axis"),
    ],
)
@pytest.mark.parametrize("fn", [voigt, reuss])
def test_bad_fractions_raise(fn, fractions, match):
    with pytest.raises(ValueError, match=match):
        fn(fractions, np.ones(np.shape(fractions) or (1,)))


def test_fraction_sum_within_tolerance_is_accepted():
    assert voigt([0.5, 0.5 + 5e-7], [10.0, 10.0]) == pytest.approx(10.0, rel=1e-6)


@pytest.mark.parametrize("fn", [hill, hashin_shtrikman, hs_average] + list(MIXING_RULES.values()))
def test_bad_moduli_raise(fn):
    with pytest.raises(ValueError, match="must be >= 0"):
        fn([0.5, 0.5], [10.0, -1.0], [5.0, 5.0])
    with pytest.raises(ValueError, match="fractions must sum"):
        fn([0.5, 0.6], [10.0, 1.0], [5.0, 5.0])
    with pytest.raises(ValueError, match="does not broadcast"):
        fn([0.5, 0.5], [10.0, 1.0, 3.0], [5.0, 5.0])


def test_hot_path_kernels_equal_public_rules_for_positive_moduli():
    # the forward model's unguarded kernels (minerals only: moduli > 0) equal the public rules
    from bayescrust.physics.mixing import _MIXING_KERNELS, MIXING_RULES

    rng = np.random.default_rng(3)
    f = rng.dirichlet(np.ones(4), size=200)
    f[:5, 0] = 0.0
    f[:5] /= f[:5].sum(-1, keepdims=True)
    k = rng.uniform(30, 200, (200, 4))
    g = rng.uniform(10, 110, (200, 4))
    for name, rule in MIXING_RULES.items():
        np.testing.assert_allclose(_MIXING_KERNELS[name](f, k, g), rule(f, k, g), rtol=1e-12)


def test_serpentinite_composite_is_the_two_phase_hashin_shtrikman_upper_bound():
    # The default serpentinisation mixing (serpentinization.hs_upper_two_phase) against the
    # textbook two-phase form (Hashin & Shtrikman 1963 as written in Mavko et al. 2009, sec.
    # 4.1): K+ = K1 + f2 / (1/(K2 - K1) + f1/(K1 + 4/3 G1)),
    # G+ = G1 + f2 / (1/(G2 - G1) + 2 f1 (K1 + 2 G1) / (5 G1 (K1 + 4/3 G1))), phase 1 the
    # stiffer (fresh peridotite ~ K 125, G 75; serpentinite ~ K 55, G 21 GPa). Nothing compared
    # it with the bound before: K + 4G in place of K + 2G in its zeta passed every test.
    from bayescrust.physics.serpentinization import hs_upper_two_phase

    k1, g1, k2, g2 = 125.0, 75.0, 55.0, 21.0
    for f2 in (0.1, 0.3, 0.7):
        f1 = 1.0 - f2
        k_ref = k1 + f2 / (1.0 / (k2 - k1) + f1 / (k1 + 4.0 * g1 / 3.0))
        g_ref = g1 + f2 / (1.0 / (g2 - g1) + 2.0 * f1 * (k1 + 2.0 * g1)
                           / (5.0 * g1 * (k1 + 4.0 * g1 / 3.0)))
        k, g = hs_upper_two_phase(k1, g1, k2, g2, f2)
        np.testing.assert_allclose([float(k), float(g)], [k_ref, g_ref], rtol=1e-12)
