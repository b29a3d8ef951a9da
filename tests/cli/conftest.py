"""Fixtures of the command-line tests: small study files written into tmp folders.

The study files here are made-up test inputs; no value in them is a check value. The checks are
structural (files, columns, sums, exit codes and messages).
"""

import textwrap

import pytest

#: A small study for fast runs: exact reference with few points, hypotheses that partition the
#: space (ultramafic fraction below/above 0.5, the latter split by temperature).
SMALL_STUDY = textwrap.dedent("""\
    title = "test study (made-up numbers)"
    water_depth_km = 3.0
    seed = 7
    rocks = ["gabbro", "harzburgite"]
    thermal_prior = "flat"

    [thermal.flat]
    kind = "uniform"
    lo = 0.0
    hi = 1400.0

    [thermal.axis]
    kind = "hot_axial"

    [sampler]
    method = "exact"
    exact_points = 2048

    [priors]
    melt_fraction = 0.0
    serpentinization = 0.0

    [hypotheses.crust]
    ultramafic_fraction = [0.0, 0.5]

    [hypotheses."cold mantle"]
    ultramafic_fraction = [0.5, 1.0]
    temperature_c = [-inf, 700.0]

    [hypotheses."warm mantle"]
    ultramafic_fraction = [0.5, 1.0]
    temperature_c = [700.0, inf]

    [[layers]]
    name = "lower crust"
    top_km = 4.0
    bottom_km = 6.0
    vp = [7.1, 0.1]

    [[layers]]
    name = "lower crust with Vs"
    top_km = 4.0
    bottom_km = 6.0
    vp = [7.1, 0.1]
    vs = [3.9, 0.1]
    """)

PARTITION = ("crust", "cold mantle", "warm mantle")


@pytest.fixture
def small_study(tmp_path):
    p = tmp_path / "study.toml"
    p.write_text(SMALL_STUDY, encoding="utf-8")
    return p
