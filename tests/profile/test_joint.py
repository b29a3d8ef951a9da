"""The joint profile scheme predicts each layer as the per-layer model does."""

import numpy as np

from bayescrust import Layer
from bayescrust.inference.priors import LogUniform
from bayescrust.profile import Profile, Uncoupled
from bayescrust.profile.joint import JointModel


def test_joint_layer_prediction_equals_layer_model_with_crack_closure():
    # Thin cracks (aspect ratio 1e-3 - 0.05) 0.5-1.5 km below the seafloor, where the hydrostatic
    # pore pressure (Walsh 1965 closure, docs/physics.md sec. 3a) shuts part of them. The joint
    # scheme used to call the forward model without the pore pressure (every crack open):
    # up to 0.16 km/s faster than LayerModel.predict on these points.
    layers = [Layer("2B", top_km=0.5, bottom_km=1.5, vp=(5.0, 0.15), vs=(2.6, 0.1)),
              Layer("3", top_km=1.5, bottom_km=4.0, vp=(6.8, 0.12))]
    prof = Profile(layers, Uncoupled(), water_depth_km=3.0, pressure="reference",
                   priors=[{"aspect_ratio": LogUniform(1e-3, 0.05)}, {}])
    jm = JointModel(prof)
    m = jm.models[0]
    assert m.pore_pressure_gpa < m.pressure_gpa  # closure is active in this layer
    th = m.sample_prior(np.random.default_rng(0), 400)
    x = np.zeros((400, jm.ndim))
    x[:, jm.offsets[0]:jm.offsets[0] + m.ndim] = th
    _, _, q = jm._layer(0, x, None, None)
    ref = m.predict(th)
    ok = np.isfinite(q["vp"])
    assert ok.sum() > 300
    for key in ("vp", "vs", "density"):
        # the joint scheme calls the forward model by keywords, predict() by its flat rows:
        # without numba the two numpy paths may round differently in the last bit (seen: 7 of
        # 356 Vs values, 2e-16 relative), far below the 0.16 km/s this test guards against
        np.testing.assert_allclose(q[key][ok], ref[key][ok], rtol=1e-12, atol=0)
