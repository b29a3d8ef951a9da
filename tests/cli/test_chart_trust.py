"""``bayescrust chart`` flags the Vp values whose data the model cannot reproduce: a per-Vp
``data_fit`` column, hatched ranges in the figure, a warning in the report and on screen.

The study file is a made-up test input. The misfit case rests on a physical fact: Vp 9.0-9.5
km/s is beyond every rock the package models at crustal depth (olivine, the fastest common
mineral of these rocks, averages ~8.3-8.4 km/s near room pressure; Abramson et al. 1997, JGR
102, 12253, from memory), while 7.0 km/s (lower oceanic crust; White et al. 1992, JGR 97,
19683, common practice) is within reach.
"""

import textwrap

import matplotlib
import pandas as pd

matplotlib.use("Agg")

from bayescrust.cli import main  # noqa: E402
from bayescrust.cli.chart import misfit_ranges  # noqa: E402
from bayescrust.report.figures import probability_chart  # noqa: E402

STUDY = textwrap.dedent("""\
    title = "chart trust (made-up numbers)"
    water_depth_km = 3.0
    seed = 4
    rocks = ["gabbro", "harzburgite"]

    [sampler]
    method = "exact"
    exact_points = 4096

    [[layers]]
    name = "lower crust"
    top_km = 4.0
    bottom_km = 6.0
    vp = [VP, 0.1]
    """)


def _chart(tmp_path, vp, lo, hi, n):
    p = tmp_path / "s.toml"
    p.write_text(STUDY.replace("VP", str(vp)), encoding="utf-8")
    out = tmp_path / "chart"
    assert main(["chart", str(p), "--out", str(out), "--vp-min", str(lo), "--vp-max", str(hi),
                 "--points", str(n)]) == 0
    return out, pd.read_csv(out / "chart.csv")


def test_chart_flags_the_vp_range_the_model_cannot_produce(tmp_path, capsys):
    out, t = _chart(tmp_path, 9.5, 7.0, 9.5, 6)  # 7.0, 7.5, ..., 9.5
    fit = t[t["thermal_prior"] == "uniform"].drop_duplicates("vp").set_index("vp")["data_fit"]
    assert fit[7.0] == "ok" and fit[9.0] == "MISFIT (vp)" and fit[9.5] == "MISFIT (vp)"
    # one flag per (thermal prior, Vp): every interpretation's row carries it
    assert (t.groupby(["thermal_prior", "vp"])["data_fit"].nunique() == 1).all()
    assert (t["ppc_p_value"][t["data_fit"] != "ok"] < 0.01).all()
    assert (t["ppc_p_value"][t["data_fit"] == "ok"] >= 0.01).all()
    assert "DATA MISFIT for observed Vp" in capsys.readouterr().err
    report = (out / "report.md").read_text(encoding="utf-8")
    assert report.index("Warning: data misfit for observed Vp") < report.index("Caution")
    assert "The layer's own Vp (9.5 km/s) is among them" in report
    assert (out / "chart.png").is_file()


def test_chart_of_vp_the_model_produces_has_no_misfit(tmp_path, capsys):
    out, t = _chart(tmp_path, 7.1, 6.9, 7.3, 3)
    assert (t["data_fit"] == "ok").all()
    assert "MISFIT" not in capsys.readouterr().err
    assert "misfit" not in (out / "report.md").read_text(encoding="utf-8").lower().replace(
        "`data_fit`", "")


def test_misfit_ranges_are_runs_of_consecutive_vp_and_are_hatched():
    rows = [("u", v, "h", 0.5, 0.01, 1.0, f) for v, f in
            ((6.0, "MISFIT (vp)"), (6.5, "ok"), (7.0, "ok"), (7.5, "MISFIT (vp)"),
             (8.0, "MISFIT (vp)"))]
    t = pd.DataFrame(rows, columns=["thermal_prior", "vp", "hypothesis", "probability",
                                    "mcse", "ppc_p_value", "data_fit"])
    ranges = misfit_ranges(t)
    assert ranges == {"u": [(6.0, 6.0), (7.5, 8.0)]}
    fig = probability_chart(t, misfit=ranges)
    hatched = [p for p in fig.axes[0].patches if p.get_hatch() == "xx"]
    assert len(hatched) == 2
    # each run is widened by half a grid step (0.25 km/s) on both sides
    xs = sorted((p.get_x(), p.get_x() + p.get_width()) for p in hatched)
    assert abs(xs[1][0] - 7.25) < 1e-9 and abs(xs[1][1] - 8.25) < 1e-9
