"""Simulation-based calibration (Talts et al. 2018) of MCMC on a shallow layer with the default
pore-shape spread: the sampling coordinates that layers above 1.5 km use by default (rock
fraction as a stick-breaking logit, aspect ratio as the logit of ln alpha, porosity through its
pore compliance, melt as a logit; ``inference/coordinates.py``).

Draw parameters from the default prior, simulate Vp and Vs from the likelihood, run
``invert_layer``, and rank each true value among 99 posterior draws; calibrated inference gives
uniform ranks. The decision rule and its power against injected errors are those of
``test_sbc.py`` (chi-square on 10 rank bins, Bonferroni at 1 %). Test quantities: every free
parameter, the predicted Vp/Vs (thin cracks raise it) and Vs. Measured: p = 0.64, every run
converged (~5 min); with half of the porosity coordinate's Jacobian left out on purpose,
p = 0.0018 and 4 of 120 runs not converged: the check fails.
"""

import warnings

import numpy as np
import pytest
from test_sbc import L_DRAWS, _rank, _suite_passes, suite_pvalue  # the layer SBC's rule

import bayescrust as bc
from bayescrust.inference.model import LayerModel

SIGMA = 0.1  # km/s, of Vp and Vs
ROCKS = ("basalt", "diabase")
RANKED = ("basalt", "temperature_c", "porosity", "aspect_ratio", "melt_fraction", "vp_vs",
          "vs")


def _layer(vp=5.0, vs=2.7):
    return bc.Layer("2B", top_km=0.5, bottom_km=1.5, water_depth_km=3.0, vp=(vp, SIGMA),
                    vs=(vs, SIGMA))


@pytest.mark.slow
def test_sbc_mcmc_shallow_layer_with_pore_shape_spread():
    m = 120
    rng = np.random.default_rng(7)
    sim = LayerModel.build(_layer(), rocks=ROCKS)
    assert sim.coordinates.paired == {"porosity": "aspect_ratio"}  # the default spread
    q_true = sim.quantities(sim.sample_prior(rng, m))
    y_all = sim.simulate_observations(q_true, rng)
    ranks = np.empty((m, len(RANKED)), int)
    not_converged = 0
    for i in range(m):
        layer = _layer(float(np.clip(y_all["vp"][i], 0.5, 12)),
                       float(np.clip(y_all["vs"][i], 0.1, 8)))
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", bc.ConvergenceWarning)
            warnings.simplefilter("ignore", bc.MisfitWarning)  # flagged at the check's rate
            res = bc.invert_layer(layer, rocks=ROCKS, seed=int(rng.integers(2**31)),
                                  min_ess=400, max_steps=6000, evidence=False, n_prior=100)
        not_converged += not res.diagnostics["converged"]
        post = res.idata.posterior
        size = post[RANKED[0]].values.size
        idx = rng.choice(size, size=L_DRAWS, replace=size < L_DRAWS)
        for j, k in enumerate(RANKED):
            ranks[i, j] = _rank(post[k].values.ravel()[idx], np.asarray(q_true[k][i]), rng)
    print(f"shallow MCMC SBC: {not_converged} of {m} not converged; "
          f"p = {suite_pvalue(ranks, {}):.3g}")
    assert _suite_passes(ranks, {}), suite_pvalue(ranks, {})
    assert not_converged <= 0.03 * m
