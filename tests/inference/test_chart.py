"""The probability chart: one prior design weighed against many observed Vp values."""

import numpy as np
import pytest

import bayescrust as bc

LAYER = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
KW = dict(rocks=("gabbro", "harzburgite"), priors={"porosity": 0.0})


def test_chart_equals_exact_reference_at_each_vp():
    # identity: at every observed Vp the batched chart is exact_layer's first stage on the same
    # design (same seed), so probabilities agree to rounding where no second stage is needed
    tp = {"uniform": bc.UniformTemperature(0, 1400)}
    vps = [6.9, 7.1, 7.3]
    tab = bc.probability_chart(LAYER, vps, thermal_priors=tp, seed=3, **KW)
    for v in vps:
        layer = bc.Layer("lc", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(v, 0.1))
        # the chart's design: one scrambled Sobol sequence of 2^15 points
        ex = bc.exact_layer(layer, seed=3, priors={**KW["priors"], "temperature_c": tp["uniform"]},
                            rocks=KW["rocks"], n_points=2**15, n_scrambles=1)
        assert ex.diagnostics["stages"] == 1
        sub = tab[np.isclose(tab.vp, v)].set_index("hypothesis")
        for h, row in ex.hypotheses.iterrows():
            assert sub.loc[h, "probability"] == pytest.approx(row["posterior_probability"],
                                                              abs=1e-12)


def test_chart_moves_from_crust_to_mantle_with_vp():
    # common practice: at lower-crustal depth, faster rock is more likely mantle; under a
    # uniform temperature prior "cold mantle" rises and "cold gabbro" falls from 7.0 to 8.0 km/s
    tab = bc.probability_chart(LAYER, [7.0, 8.0], thermal_priors={"u": bc.UniformTemperature()},
                               seed=1, **KW).set_index(["hypothesis", "vp"])["probability"]
    assert tab["cold mantle", 8.0] > tab["cold mantle", 7.0] + 0.3
    assert tab["cold gabbro", 8.0] < tab["cold gabbro", 7.0] - 0.1


def test_chart_rejects_bad_input():
    with pytest.raises(ValueError, match="vp_values"):
        bc.probability_chart(LAYER, [7.0, np.nan], thermal_priors={"u": bc.UniformTemperature()})
    with pytest.raises(ValueError, match="unknown arguments"):
        bc.probability_chart(LAYER, [7.0], thermal_priors={"u": bc.UniformTemperature()},
                             n_walkers=3)
    no_vp = bc.Layer("x", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vs=(3.9, 0.1))
    with pytest.raises(ValueError, match="needs an observed vp"):
        bc.probability_chart(no_vp, [7.0], thermal_priors={"u": bc.UniformTemperature()})


def test_compare_priors_warnings_name_the_thermal_prior():
    # compare_priors runs one inversion per thermal prior; a warning (here the predictive
    # check's misfit under both) must say under which prior, or three identical-looking lines
    # reach the report.
    import warnings

    import bayescrust as bc

    layer = bc.Layer("deep", top_km=5.5, bottom_km=6.5, water_depth_km=3.4, vp=(7.15, 0.05),
                     vs=(4.6, 0.05))
    with warnings.catch_warnings(record=True) as rec:
        warnings.simplefilter("always")
        bc.compare_priors(layer, thermal_priors={"flat": bc.UniformTemperature(0, 1400),
                                                 "axis": bc.HotAxial()},
                          rocks=("gabbro", "harzburgite"), seed=1, n_points=2**12)
    msgs = [str(w.message) for w in rec if issubclass(w.category, bc.MisfitWarning)]
    assert any("under thermal prior 'flat'" in m for m in msgs)
    assert any("under thermal prior 'axis'" in m for m in msgs)
