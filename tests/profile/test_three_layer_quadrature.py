"""Structured exact path and joint MCMC against an independent brute-force quadrature.

A 3-layer profile in which each layer has one rock and only its temperature free (porosity,
melt and serpentinisation fixed at 0), tied by a half-space geotherm with an uncertain age and
a heat-flow datum, with overburden pressure from the sampled densities. The brute force
integrates the joint posterior on a tensor grid (Gauss-Legendre in age, trapezoid in each layer
temperature), evaluating the forward model at every (T_A, T_B, T_C) with the pressures from the
densities above, so it includes the density coupling the exact path approximates.
"""

import math

import numpy as np
import pytest
from scipy import stats

from bayescrust import ForwardModel, Layer
from bayescrust.inference.priors import Uniform
from bayescrust.physics.thermal import THERMAL_DATA
from bayescrust.profile import HalfSpaceState, HeatFlow, Profile, exact_profile, invert_profile

T_B, T_C = 170.0, 290.0  # near the posterior medians, midway between grid nodes (20 C)
FIX = {"porosity": 0.0, "melt_fraction": 0.0, "serpentinization": 0.0}


def _profile():
    layers = [Layer("A", top_km=1.0, bottom_km=2.5, vp=(6.55, 0.1)),
              Layer("B", top_km=2.5, bottom_km=5.0, vp=(6.75, 0.1), vs=(3.70, 0.08)),
              Layer("C", top_km=5.0, bottom_km=7.0, vp=(7.85, 0.12))]
    th = HalfSpaceState(age_myr=Uniform(1.0, 20.0), mantle_temperature_c=1350.0,
                        scatter_c=60.0)
    return Profile(layers, th, water_depth_km=3.0, rocks=[("gabbro",), ("gabbro",),
                                                          ("harzburgite",)],
                   priors=[FIX, FIX, FIX], heat_flow=HeatFlow(130.0, 25.0),
                   pressure="overburden",
                   hypotheses=[None, {"warm": {"temperature_c": (T_B, math.inf)}},
                               {"warm": {"temperature_c": (T_C, math.inf)}}])


def _brute_force(prof, n_age=48, n_t=81):
    lo, hi = prof.temperature_range_c
    th = prof.thermal
    x, w = np.polynomial.legendre.leggauss(n_age)
    ages = 1.0 + 19.0 * 0.5 * (x + 1.0)
    w_age = 0.5 * w  # prior density 1/19 times d(age) = 19/2 dx
    temps = np.linspace(lo, hi, n_t)
    w_t = np.full(n_t, temps[1] - temps[0])
    w_t[[0, -1]] *= 0.5
    # conditional temperature densities: truncated normal around the erf geotherm (T&S 4-113)
    kappa, sec = th.diffusivity_m2_s, THERMAL_DATA["time"]["seconds_per_myr"]
    mids = prof.mid_depths_km
    geo = 1350.0 * np.array([[math.erf(z * 1e3 / (2 * math.sqrt(kappa * a * sec))) for z in mids]
                             for a in ages])  # (n_age, 3)
    s = th.scatter_c
    cond = stats.truncnorm.pdf(temps[None, None, :], (lo - geo[..., None]) / s,
                               (hi - geo[..., None]) / s, loc=geo[..., None], scale=s)
    q_pred = 1e3 * 3.138 * 1350.0 / np.sqrt(math.pi * kappa * ages * sec)
    l_hf = stats.norm.pdf(130.0, q_pred, 25.0)
    # forward model with overburden pressure, top-down
    g = 1e-3 * THERMAL_DATA["lithostatic"]["gravity_m_s2"]
    rho_w = THERMAL_DATA["lithostatic"]["water_density"]
    ref = prof.reference_densities()
    h = prof.bottoms_km - prof.tops_km
    base = g * (rho_w * 3.0 + ref[0] * 1.0 + ref * h / 2)
    gab, hz = ForwardModel(rocks=("gabbro",)), ForwardModel(rocks=("harzburgite",))
    models = prof.layer_models()

    def like(i, vp, vs, rho):
        pred = {"vp": vp, "vs": vs, "density": rho, "vp_vs": vp / vs}
        return np.exp(sum(models[i].log_likelihood_terms(pred).values()))

    ta = temps
    vpa, vsa, ra = gab(np.ones((n_t, 1)), ta, base[0])
    la = like(0, vpa, vsa, ra)                                   # (A,)
    tb = np.broadcast_to(temps[None, :], (n_t, n_t))
    pb = base[1] + g * ra[:, None] * h[0]
    vpb, vsb, rb = gab(np.ones((n_t, n_t, 1)), tb, pb)
    lb = like(1, vpb, vsb, rb)                                   # (A, B)
    tc = np.broadcast_to(temps[None, None, :], (n_t, n_t, n_t))
    pc = base[2] + g * (ra[:, None, None] * h[0] + rb[:, :, None] * h[1])
    vpc, vsc, rc = hz(np.ones((n_t, n_t, n_t, 1)), tc, pc)
    lc = like(2, vpc, vsc, rc)                                   # (A, B, C)
    ca, cb, cc = (cond[:, i, :] * w_t for i in range(3))          # (age, T) with weights
    m_c = np.einsum("aC,ABC->aAB", cc, lc)
    m_c_warm = np.einsum("aC,ABC->aAB", cc * (temps >= T_C), lc)
    m_b = np.einsum("aB,AB,aAB->aA", cb, lb, m_c)
    m_b_warmc = np.einsum("aB,AB,aAB->aA", cb, lb, m_c_warm)
    m_b_warmb = np.einsum("aB,AB,aAB->aA", cb * (temps >= T_B), lb, m_c)
    z_a = np.einsum("aA,A,aA->a", ca, la, m_b) * l_hf
    z = float(np.sum(w_age * z_a))
    post_a = w_age * z_a / z
    return {"log_z": math.log(z), "age_mean": float(post_a @ ages),
            "p_warm_C": float(np.sum(w_age * np.einsum("aA,A,aA->a", ca, la, m_b_warmc)
                                            * l_hf) / z),
            "p_warm_B": float(np.sum(w_age * np.einsum("aA,A,aA->a", ca, la, m_b_warmb)
                                            * l_hf) / z)}


@pytest.fixture(scope="module")
def reference():
    ref = _brute_force(_profile())
    # log Z and the age mean converge slowly in the temperature spacing (20 C here); a 10 C
    # grid gives their reference values and the change of log Z between the two grids bounds
    # its discretisation error. (The 20 C grid's age mean is 0.0018 Myr off, about 2 standard
    # errors of the exact path below; on the 10 C grid T_B and T_C fall on nodes, so the
    # probabilities keep the 20 C grid, where they lie midway between nodes.)
    fine = _brute_force(_profile(), n_t=161)
    return {**ref, "log_z": fine["log_z"], "age_mean": fine["age_mean"],
            "log_z_quadrature_error": abs(fine["log_z"] - ref["log_z"])}


def test_exact_path_agrees_with_brute_force(reference):
    prof = _profile()
    r = exact_profile(prof, n_layer=2**11, n_thermal=256, n_replicates=8, seed=3)
    bound = float(np.sum(r.pressure_bound["delta_log_likelihood"]))
    # 4 standard errors (replicate spread, 7 dof) plus the stated pressure-approximation bound
    assert abs(r.log_evidence - reference["log_z"]) < (4 * r.log_evidence_error + bound
                                                       + reference["log_z_quadrature_error"])
    row = r.thermal.set_index("parameter").loc["age_myr"]
    assert abs(row["mean"] - reference["age_mean"]) < 4 * row["mcse"]
    for layer, hyp, key in (("C", "warm", "p_warm_C"),
                            ("B", "warm", "p_warm_B")):
        t = r.hypotheses
        h = t[(t.layer == layer) & (t.hypothesis == hyp)].iloc[0]
        assert 0.05 < reference[key] < 0.95  # the check is not trivial
        assert abs(h["probability"] - reference[key]) < 4 * h["mcse"]


def test_joint_mcmc_agrees_with_brute_force(reference):
    # the default (collapsed) scheme: emcee over the age, layers drawn conditionally
    prof = _profile()
    r = invert_profile(prof, seed=5, min_ess=1500)
    assert r.diagnostics["scheme"] == "collapsed"
    _check_mcmc(r, reference)


@pytest.mark.slow
def test_full_joint_mcmc_agrees_with_brute_force(reference):
    # every layer sampled with the sampled densities in the overburden (about a minute)
    r = invert_profile(_profile(), seed=5, min_ess=1500, scheme="joint")
    assert r.diagnostics["scheme"] == "joint"
    _check_mcmc(r, reference)


def _check_mcmc(r, reference):
    row = r.thermal.set_index("parameter").loc["age_myr"]
    assert abs(row["mean"] - reference["age_mean"]) < 4 * row["mcse"]
    t = r.hypotheses
    for layer, hyp, key in (("C", "warm", "p_warm_C"),
                            ("B", "warm", "p_warm_B")):
        h = t[(t.layer == layer) & (t.hypothesis == hyp)].iloc[0]
        assert abs(h["probability"] - reference[key]) < 4 * h["mcse"]


if __name__ == "__main__":  # print the figures for the report
    ref = _brute_force(_profile())
    ex = exact_profile(_profile(), n_layer=2**11, n_thermal=256, n_replicates=8, seed=3)
    mc = invert_profile(_profile(), seed=5, min_ess=1500)
    print("brute force", ref)
    print("exact logZ", ex.log_evidence, "+-", ex.log_evidence_error,
          "bound", ex.pressure_bound["delta_log_likelihood"].sum())
    for r in (ex, mc):
        print(r.method, r.thermal.to_string(), r.hypotheses.to_string(), sep="\n")
    print(mc.diagnostics["ess"], mc.settings["wall_time_s"])
