"""The one door to arviz (``inference/_arviz.py``): arviz's own functions, and under arviz 1.x
an inversion that does not import the plotting stack (its memory is part of issue 10's budget)."""

from __future__ import annotations

import os
import subprocess
import sys

import pytest

from bayescrust.inference import _arviz


def test_door_hands_out_arviz_own_functions():
    import arviz

    az = _arviz.module()
    for name in ("ess", "rhat", "hdi", "from_dict"):
        assert getattr(az, name) is getattr(arviz, name), name
    assert az.__version__ == arviz.__version__
    assert _arviz.major_version() == int(arviz.__version__.split(".")[0])


@pytest.mark.skipif(_arviz.major_version() < 1,
                    reason="arviz 0.2x imports matplotlib in its own __init__")
def test_inversion_under_arviz1_leaves_plotting_unimported():
    code = """
import sys, warnings
warnings.simplefilter("ignore")
import bayescrust as bc
layer = bc.Layer("lower crust", top_km=4.0, bottom_km=6.0, water_depth_km=3.0, vp=(7.1, 0.1))
r = bc.invert_layer(layer, seed=1, min_ess=200, priors={"porosity": 0.0})
assert r.summary.shape[0] > 0 and r.idata is not None
print(sorted(m for m in ("matplotlib", "arviz_plots", "arviz") if m in sys.modules))
"""
    # kernels off: no numba compilation in a fresh process; the question is arviz's imports
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=600, env={**os.environ, "BAYESCRUST_ACCEL": "0"})
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"

