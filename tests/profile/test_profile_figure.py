"""The profile figure: a readable title, distinct interpretation colours, a legend off the bars."""

import re

import matplotlib
import pytest

matplotlib.use("Agg")

from bayescrust import Layer  # noqa: E402
from bayescrust.profile import HalfSpaceState, PlateState, Profile, exact_profile  # noqa: E402
from bayescrust.report.profile import interpretation_styles, profile_figure  # noqa: E402


@pytest.fixture(scope="module")
def figure():
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    layers = [Layer("2B", top_km=0.0, bottom_km=1.5, vp=(5.6, 0.2)),
              Layer("3", top_km=1.5, bottom_km=5.5, vp=(6.9, 0.15)),
              Layer("M", top_km=5.5, bottom_km=8.0, vp=(7.9, 0.15))]
    r = exact_profile(Profile(layers, HalfSpaceState(), water_depth_km=3.0), n_layer=2**9,
                      n_thermal=16, n_replicates=2, seed=0)
    fig = profile_figure(r)
    FigureCanvasAgg(fig)
    fig.canvas.draw()
    return r, fig


def _bars_panel(fig):
    return next(a for a in fig.axes if a.get_xlabel().startswith("probability"))


def test_title_is_readable_not_a_python_repr(figure):
    _, fig = figure
    title = fig._suptitle.get_text()
    # a repr would show the class name and key=value pairs (HalfSpaceState(age_myr=Uniform(...)
    assert "HalfSpaceState" not in title and "=" not in title
    assert not re.search(r"[A-Za-z]+\(", title)  # no Name(...) calls
    assert "half-space cooling" in title and "age 0.5-30 Myr" in title


def test_thermal_labels_are_readable():
    from bayescrust.inference.priors import Uniform

    lab = PlateState(plate_thickness_km=Uniform(90.0, 125.0)).label()
    assert lab.startswith("cooling plate:") and "age 0.5-30 Myr" in lab
    assert "plate thickness 90-125 km" in lab and "(" not in lab


def test_more_than_eight_interpretations_get_distinct_colours(figure):
    _, fig = figure
    handles, labels = _bars_panel(fig).get_legend_handles_labels()
    assert len(labels) > 8  # the case where the 8-colour palette used to repeat
    styles = {(tuple(h.patches[0].get_facecolor()), h.patches[0].get_hatch()) for h in handles}
    assert len(styles) == len(labels)


@pytest.mark.parametrize("n", [1, 8, 9, 20, 21, 60])
def test_interpretation_styles_distinct(n):
    s = interpretation_styles(n)
    assert len(s) == n and len(set(s)) == n


def test_interpretation_legend_outside_every_axes(figure):
    _, fig = figure
    assert _bars_panel(fig).get_legend() is None
    assert len(fig.legends) == 1
    box = fig.legends[0].get_window_extent()
    for ax in fig.axes:
        assert not box.overlaps(ax.get_window_extent()), ax.get_xlabel()
    # and inside the figure (not cut off)
    assert fig.bbox.contains(box.x0, box.y0) and fig.bbox.contains(box.x1, box.y1)


def test_serpentine_limit_is_the_forward_models_serpentine(figure):
    import numpy as np

    from bayescrust.cli.profile import profile_figure_curves
    from bayescrust.physics import thermal as th

    r, _ = figure
    assert r.settings["serpentine"] == "lizardite"  # the forward model's default
    z, t = profile_figure_curves(r)["serpentine"]
    p = th.lithostatic_pressure_gpa(z, water_depth_km=r.profile.water_depth_km)
    np.testing.assert_allclose(t, th.serpentine_stability_c(p, kind="lizardite"))
    assert t.max() < 400.0  # lizardite (~300 deg C), not antigorite (500-560 deg C)
    ra = exact_profile(r.profile, n_layer=2**8, n_thermal=8, n_replicates=2, seed=0,
                       forward={"serpentine": "antigorite"})
    assert ra.settings["serpentine"] == "antigorite"
    np.testing.assert_allclose(profile_figure_curves(ra)["serpentine"][1],
                               th.serpentine_stability_c(p, kind="antigorite"))
