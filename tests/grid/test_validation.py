"""The map against per-node inversions on a random subset of nodes.

References: an independent sampler (bayescrust.invert_layer, emcee; checked against brute-force
quadrature in tests/inference/test_mcmc_vs_exact.py) and the single-layer exact path
(bayescrust.exact_layer: its own design per node, drawn from the node's prior, with an adaptive
second stage), each run per node.

How agreement is judged (issue 12 asks |dP| < 0.005 "within Monte Carlo error"): per-node MCMC
with an ESS of ~2000 has a standard error of ~0.011 at P = 0.5, so a raw |dP| < 0.005 against
it is untestable (it would fail by chance). The MCMC check is therefore statistical: every
|z| = |dP| / sqrt(mcse_map^2 + mcse_mcmc^2) < 4 and a chi-square of the z's; the |dP| < 0.005
bound is checked where both errors are small enough (combined error < 0.005 / 4). Against the
exact reference (errors ~1e-3) it is checked on every entry of a first-stage ("good") node: there
the map's nominal MCSE is the plain Monte Carlo formula, conservative for its scrambled-Sobol
design (chi2 / df ~ 0.06 measured on the default test's 48 entries). A refined node's second
stage is plain importance sampling, whose nominal MCSE is its true error (checked against the
spread over seeds below: ~0.0045 at P = 0.86 on the twenty-node test's refined node), so a raw
0.005 bound there would fail by chance; its entries get the same rule as the MCMC check.
"""

import numpy as np
import pytest

from bayescrust.grid import (
    GridMapping,
    Zone,
    grid_from_dataset,
    map_grid,
    validate_nodes,
    validation_summary,
)

ZONES = [Zone("lower", 1.5, 20.0, rocks=("gabbro", "harzburgite"))]


def _raw_bound_checked(df, bound=0.005, n_sigma=4.0):
    """Entries where ``|dP| < bound`` is testable against the exact reference (module text)."""
    se = np.hypot(df["mcse_map"].to_numpy(float), df["mcse_node"].to_numpy(float))
    return (df["quality"].to_numpy() == "good") | (se < bound / n_sigma)


def _map(section):
    g = grid_from_dataset(section, GridMapping(variables={"vp": "vp"}, sigmas={"vp": 0.1},
                                               depth="z", seafloor=3.0))
    return g, map_grid(g, ZONES, seed=4, n_points=2**15, level_km=0.5, min_ess=1000)


def test_summary_separates_testable_entries():
    import pandas as pd

    # two entries: one with errors far below 0.005/4 (testable), one with MCMC-sized errors
    df = pd.DataFrame({"node": [0, 1], "difference": [0.003, 0.012],
                       "mcse_map": [3e-4, 2e-3], "mcse_node": [5e-4, 1e-2]})
    s = validation_summary(df)
    assert s["n_testable"] == 1 and s["max_abs_dp_testable"] == pytest.approx(0.003)
    z2 = 0.012 / np.hypot(2e-3, 1e-2)
    assert s["max_abs_z"] == pytest.approx(0.003 / np.hypot(3e-4, 5e-4))
    assert s["chi2"] == pytest.approx((0.003 / np.hypot(3e-4, 5e-4)) ** 2 + z2**2)
    # scipy's chi-square tail with one degree of freedom per entry
    from scipy import stats

    assert s["chi2_p"] == pytest.approx(stats.chi2.sf(s["chi2"], 2))


def test_map_agrees_with_per_node_mcmc_on_one_node(section):
    g, m = _map(section.isel(x=[0], z=slice(40, 46)))
    df = validate_nodes(g, ZONES, m, n_nodes=1, seed=9, min_ess=300)
    s = validation_summary(df)
    assert s["n_nodes"] == 1
    assert s["max_abs_z"] < 4.0, df


def test_map_agrees_with_exact_reference_within_0005(section):
    """|dP| < 0.005 (issue 12's bound) on every entry against the exact reference (measured
    largest 0.0038, at the node of lowest importance ESS, 1142)."""
    g, m = _map(section.isel(x=[0, 3], z=slice(20, 70, 10)))
    df = validate_nodes(g, ZONES, m, n_nodes=6, seed=5, method="exact", n_points=2**16)
    s = validation_summary(df)
    assert s["n_nodes"] == 6
    checked = _raw_bound_checked(df)
    assert checked.all(), df[~checked]  # all first-stage nodes here
    assert s["max_abs_dp"] < 0.005, (s, df.sort_values("difference"))
    assert s["max_abs_z"] < 4.0, s
    assert s["chi2_p"] > 1e-3, s


@pytest.mark.slow
def test_map_agrees_with_per_node_mcmc_on_twenty_nodes(section):
    g, m = _map(section)
    df = validate_nodes(g, ZONES, m, n_nodes=20, seed=9, min_ess=2000)
    s = validation_summary(df)
    assert s["n_nodes"] == 20
    assert s["max_abs_z"] < 4.0, s
    assert s["chi2_p"] > 1e-3, s
    if s["n_testable"]:
        assert s["max_abs_dp_testable"] < 0.005, s


@pytest.mark.slow
def test_map_agrees_with_exact_reference_on_twenty_nodes(section):
    g, m = _map(section)
    df = validate_nodes(g, ZONES, m, n_nodes=20, seed=9, method="exact", n_points=2**16)
    s = validation_summary(df)
    checked = _raw_bound_checked(df)
    assert checked.sum() >= 0.9 * len(df), s  # the raw bound covers most entries
    assert np.abs(df["difference"].to_numpy()[checked]).max() < 0.005, df[checked]
    assert s["max_abs_z"] < 4.0 and s["chi2_p"] > 1e-3, s


@pytest.mark.slow
def test_refined_node_error_matches_the_spread_over_seeds(section):
    # the twenty-node test's refined node (Vp 8.2 km/s, 6.25 km below the seafloor), mapped
    # alone: its map probability over 24 map seeds must scatter as its reported MCSE says (the
    # sample sd of 24 normal draws lies within 0.71-1.29 of the true sd with 95 % probability:
    # chi-square with 23 degrees of freedom, scipy; an error off by 2x fails) and centre on the
    # exact reference (2^18 points; 8 seeds on the full section: mean 0.8617, sd 0.0053, MCSE
    # ~0.0045, exact 0.8609)
    from scipy import stats

    one = section.isel(x=[5], z=[62])
    assert float(one["vp"].values.ravel()[0]) == pytest.approx(8.2)
    g, _ = _map(one)
    p, se = [], []
    for seed in range(4, 28):
        m = map_grid(g, ZONES, seed=seed, n_points=2**15, level_km=0.5, min_ess=1000)
        assert int(m["quality"].values.ravel()[0]) == 1  # refined
        p.append(float(m["p_cold_mantle"].values.ravel()[0]))
        se.append(float(m["p_cold_mantle_mcse"].values.ravel()[0]))
    lo, hi = (np.sqrt(stats.chi2.ppf(q, 23) / 23) for q in (0.025, 0.975))
    ratio = np.std(p, ddof=1) / np.sqrt(np.mean(np.square(se)))
    assert lo < ratio < hi, (ratio, p, se)
    ref = validate_nodes(g, ZONES, m, n_nodes=1, seed=9, method="exact", n_points=2**18)
    exact = ref.set_index("hypothesis").loc["cold mantle", "p_node"]
    assert abs(np.mean(p) - exact) < 3 * np.std(p, ddof=1) / np.sqrt(len(p)), (p, exact)
