"""Report tables and figures on a small synthetic result (no physics, no sampling)."""

import io
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

from bayescrust.report import tables


@pytest.fixture
def idata():
    import arviz as az

    rng = np.random.default_rng(0)
    n_chain, n_draw = 4, 100
    g = rng.uniform(0, 1, (n_chain, n_draw))
    post = {"gabbro": g, "harzburgite": 1 - g,
            "temperature_c": rng.normal(500, 50, (n_chain, n_draw)),
            "porosity": rng.uniform(0, 0.03, (n_chain, n_draw)),
            "melt_fraction": np.zeros((n_chain, n_draw)),
            "vp": rng.normal(7.1, 0.1, (n_chain, n_draw))}
    prior = {k: rng.permutation(v.ravel()).reshape(1, -1) for k, v in post.items()}
    from bayescrust.inference.results import _from_dict  # arviz 0.2x and 1.x alike

    return _from_dict(az, posterior=post, prior=prior, observed_data={"vp": np.array([7.1])})


@pytest.fixture
def frame():
    return pd.DataFrame({"posterior_probability": [0.25, 0.75], "bayes_factor": [np.inf, 1e-7],
                         "note": ["a_b & c", "50 %"]},
                        index=pd.Index(["cold gabbro", "hot mantle"], name="hypothesis"))


def test_csv_round_trip(frame):
    back = pd.read_csv(io.StringIO(tables.to_csv(frame)), index_col=0)
    assert list(back.columns) == list(frame.columns)
    assert back.loc["hot mantle", "posterior_probability"] == 0.75
    assert np.isinf(back.loc["cold gabbro", "bayes_factor"])


def test_markdown_shape(frame):
    lines = tables.to_markdown(frame).strip().splitlines()
    assert len(lines) == 2 + len(frame)
    assert all(line.startswith("|") and line.endswith("|") for line in lines)
    assert lines[1].count("-:") == 2  # the two numeric columns are right-aligned


def test_latex_escapes(frame):
    tex = tables.to_latex(frame, caption="P & Q", label="tab:x")
    assert r"a\_b \& c" in tex and r"50 \%" in tex and r"$\infty$" in tex
    assert tex.count(r"\\") == 1 + len(frame)
    assert r"\caption{P \& Q}" in tex



def test_csv_writes_float32_at_its_own_precision():
    # a map's float32 depths were written as 1.4468600749969482 (float64 noise digits); the
    # CSV must hold the shortest decimal that reads back to the same float32 (numpy's repr)
    df = pd.DataFrame({"depth_km": np.array([1.44686, np.nan], dtype=np.float32)})
    text = tables.to_csv(df, index=False)
    assert text.splitlines()[1] == "1.44686"
    back = pd.read_csv(io.StringIO(text))["depth_km"].to_numpy(np.float32)
    np.testing.assert_array_equal(back, df["depth_km"].to_numpy())

def test_multi_level_index_is_one_column_per_level():
    # a profile's (layer, interpretation) table: read back by pandas (a general-purpose
    # reference reader), every level is its own named column, never a tuple in one cell
    idx = pd.MultiIndex.from_tuples([("2A", "porous basalt"), ("3", "hot gabbro")],
                                    names=["layer", "hypothesis"])
    df = pd.DataFrame({"probability": [0.25, 0.75]}, index=idx)
    back = pd.read_csv(io.StringIO(tables.to_csv(df)), index_col=[0, 1])
    pd.testing.assert_frame_equal(back, df)
    md = tables.to_markdown(df)
    assert md.splitlines()[0].split("|")[1:3] == [" layer ", " hypothesis    "]
    assert "(" not in md and "(" not in tables.to_latex(df)
    assert "layer & hypothesis & probability" in tables.to_latex(df)

@pytest.mark.parametrize("x,s", [(0.5, "0.5000"), (1234.5678, "1235"), (1e-7, "1.000e-07"),
                                 (float("nan"), ""), (3, "3"), (True, "yes")])
def test_format_value(x, s):
    assert tables.format_value(x) == s


def test_figures_return_figures_without_pyplot(idata):
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from matplotlib.figure import Figure

    from bayescrust.report import figures as F

    assert F.free_parameters(idata) == ["gabbro", "harzburgite", "temperature_c", "porosity"]
    figs = [F.corner_figure(idata), F.trace_figure(idata), F.marginals_figure(idata),
            F.predictive_figure(idata, sigma={"vp": 0.1})]
    chart = pd.DataFrame({"thermal_prior": ["a"] * 4 + ["b"] * 4,
                          "vp": [7.0, 7.0, 7.2, 7.2] * 2,
                          "hypothesis": ["x", "y"] * 4, "probability": [0.3, 0.7, 0.6, 0.4] * 2,
                          "mcse": [0.01] * 8})
    figs.append(F.probability_chart(chart, observed=(7.1, 0.1)))
    probs = pd.DataFrame({"a": [0.3, 0.7], "b": [0.6, 0.4]}, index=["x", "y"])
    ev = pd.DataFrame({"log_evidence": [-1.0, -2.0], "log_evidence_error": [0.1, 0.1]},
                      index=["a", "b"])
    figs.append(F.comparison_figure(probs, ev))
    figs.append(F.forward_figure(pd.DataFrame({"temperature_c": [0, 500], "vp": [7.0, 6.8],
                                               "vs": [3.8, 3.7], "density": [3.0, 2.95]})))
    assert all(isinstance(f, Figure) for f in figs)
    assert plt.get_fignums() == []  # nothing left open in pyplot's global state
    for f in figs:  # every figure renders
        f.savefig(io.BytesIO(), format="png")


def test_figure_into_given_figure(idata):
    from matplotlib.figure import Figure

    from bayescrust.report import figures as F

    fig = Figure()
    assert F.marginals_figure(idata, var_names=["porosity"], fig=fig) is fig


def test_corner_skips_redundant_fraction(idata):
    from bayescrust.report import figures as F

    fig = F.corner_figure(idata)
    assert len(fig.axes) == 3 * 3  # gabbro, temperature, porosity (harzburgite = 1 - gabbro)


def test_import_is_light():
    code = ("import sys, bayescrust.cli, bayescrust.config, bayescrust.report; "
            "bad = [m for m in ('matplotlib', 'corner', 'dask') if m in sys.modules]; "
            "print(','.join(bad))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == ""


def test_report_interpretation_table_shows_each_error_to_two_significant_figures():
    # report.md printed "0.701 ± 0.000" where hypotheses.md (the same run) printed
    # "0.70085 ± 0.00027": an error that is not zero must not read as zero (common practice:
    # a value is rounded at the place of its error's second significant figure).
    from bayescrust.report.layer_report import interpretation_table

    hyp = pd.DataFrame({"prior_probability": [0.667, 0.333], "posterior_probability":
                        [0.700852, 0.299148], "posterior_mcse": [0.000268, 0.000268],
                        "bayes_factor": [1.17, 0.854], "bayes_factor_bound": ["=", "="],
                        "evidence_category": ["x", "y"], "mixing_quantity": ["q", "q"],
                        "mixing_median": [1.0, 1.0], "mixing_q05": [1.0, 1.0],
                        "mixing_q95": [1.0, 1.0], "data_fit": ["ok", "ok"]},
                       index=pd.Index(["porous", "not porous"], name="hypothesis"))
    table = interpretation_table(hyp)
    assert list(table["posterior"]) == ["0.70085 ± 0.00027", "0.29915 ± 0.00027"]


def test_printable_with_errors_rounds_each_value_at_its_error():
    # two significant figures of the Monte Carlo error set the decimals of the value (common
    # practice in reporting estimates with their errors); the plan table printed 0.1250 beside
    # an error of 0.01674, and a sigma of 0.03 as 0.03000
    df = pd.DataFrame({"sigma": [0.03, 0.1], "P": [0.125, 1.666], "P MCSE": [0.01674, 0.581]})
    out = tables.printable_with_errors(df, {"P": "P MCSE"}, general=("sigma",))
    assert list(out["P"]) == ["0.125", "1.67"] and list(out["P MCSE"]) == ["0.017", "0.58"]
    assert list(out["sigma"]) == ["0.03", "0.1"]
    md = tables.to_markdown(out, index=False)
    assert md.splitlines()[1].split("|")[2].strip().endswith(":")  # numbers stay right-aligned
