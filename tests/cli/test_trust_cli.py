"""Command line: warnings a reader must see, defaults shown, and the friction items of issue 9.

The study files are made-up inputs; the checks are structural (messages, files, exit codes) or
follow from physical facts named beside them.
"""

import os
import stat
import textwrap
import tomllib

import pytest

from bayescrust.cli import main

#: Vp/Vs 1.30 (Poisson's ratio -0.2): no crustal or mantle rock comes close (Christensen 1996,
#: JGR 101, 3139: Poisson's ratio 0.25-0.35 for basalt, gabbro and peridotite; from memory).
MISFIT_STUDY = textwrap.dedent("""\
    title = "misfit (made-up numbers)"
    water_depth_km = 3.4
    [sampler]
    method = "exact"
    exact_points = 4096
    [[layers]]
    name = "deep"
    top_km = 5.5
    bottom_km = 6.5
    vp = [7.0, 0.05]
    vs = [5.38, 0.05]
    """)


@pytest.fixture
def misfit_study(tmp_path):
    p = tmp_path / "misfit.toml"
    p.write_text(MISFIT_STUDY, encoding="utf-8")
    return p


def test_misfit_is_flagged_in_cli_output_report_and_tables(misfit_study, tmp_path, capsys):
    out = tmp_path / "out"
    assert main(["invert", str(misfit_study), "--out", str(out), "--no-figures"]) == 0
    err = capsys.readouterr().err
    assert "DATA MISFIT" in err
    report = (out / "report.md").read_text()
    assert "Warning: data misfit" in report and "MISFIT" in report
    assert "Definitions" in report and "mixed / transition" in report
    hyp = (out / "layers" / "deep" / "hypotheses.csv").read_text()
    assert "MISFIT" in hyp
    # -q silences progress, never the warnings (it silenced the misfit line too)
    assert main(["invert", str(misfit_study), "--out", str(tmp_path / "q"), "--no-figures",
                 "-q"]) == 0
    err = capsys.readouterr().err
    assert "DATA MISFIT" in err and "bayescrust: warning:" in err


def test_defaults_depend_on_depth_and_partition(misfit_study, tmp_path):
    # at 6 km below the seafloor (mid-depth) no basalt is offered (common practice: Layer 2
    # basalts lie in the upper ~1.5-2 km); the default classes sum to one
    out = tmp_path / "out"
    assert main(["invert", str(misfit_study), "--out", str(out), "--no-figures", "-q"]) == 0
    run = tomllib.loads((out / "run.toml").read_text())
    assert "basalt" not in run["layers"][0]["rocks"]
    assert "Posterior probabilities sum to 1.000" in (out / "report.md").read_text()


def test_check_and_run_toml_list_every_default(misfit_study, tmp_path, capsys):
    assert main(["check", str(misfit_study)]) == 0
    text = capsys.readouterr().out
    data = tomllib.loads(text)
    used = data["run"]["defaults_used"]["deep"]
    for key in ("priors", "hypotheses", "temperature_prior", "sampler", "forward",
                "model_error"):
        assert key in used, key
    assert used["forward"]["mixing"] and used["sampler"]["n_points"] == 4096
    out = tmp_path / "out"
    assert main(["invert", str(misfit_study), "--out", str(out), "--no-figures", "-q"]) == 0
    run = tomllib.loads((out / "run.toml").read_text())
    assert "hypotheses" in run["run"]["defaults_used"]["deep"]


def test_negative_seed_is_bad_input(misfit_study, tmp_path):
    assert main(["invert", str(misfit_study), "--out", str(tmp_path / "o"), "--seed", "-1"]) == 2
    assert not (tmp_path / "o").exists()


def test_output_folder_mode_follows_umask(misfit_study, tmp_path):
    out = tmp_path / "out"
    old = os.umask(0o022)
    try:
        assert main(["invert", str(misfit_study), "--out", str(out), "--no-figures", "-q"]) == 0
    finally:
        os.umask(old)
    assert stat.S_IMODE(out.stat().st_mode) == 0o755


def test_failed_overwrite_leaves_no_hidden_folders(misfit_study, tmp_path, monkeypatch):
    from pathlib import Path

    out = tmp_path / "out"
    assert main(["invert", str(misfit_study), "--out", str(out), "--no-figures", "-q"]) == 0
    real = Path.rename

    def fail_on_partial(self, target):
        if ".partial-" in self.name:
            raise OSError(13, "Permission denied")
        return real(self, target)

    monkeypatch.setattr(Path, "rename", fail_on_partial)
    rc = main(["invert", str(misfit_study), "--out", str(out), "--no-figures", "-q",
               "--overwrite"])
    assert rc == 2
    assert sorted(p.name for p in tmp_path.iterdir()) == ["misfit.toml", "out"]
    assert (out / "report.md").exists()  # previous results kept


def test_vs_too_close_to_vp_is_rejected_by_check(tmp_path, capsys):
    # Vp/Vs must be >= sqrt(4/3) for a non-negative bulk modulus (a consequence of
    # K = rho (Vp^2 - 4/3 Vs^2); Mavko, Mukerji & Dvorkin 2009, The Rock Physics Handbook)
    p = tmp_path / "bad.toml"
    p.write_text(MISFIT_STUDY.replace("vs = [5.38, 0.05]", "vs = [6.2, 0.05]"))
    assert main(["check", str(p)]) == 2
    err = capsys.readouterr().err
    assert "layers[0].vs" in err and "sqrt(4/3)" in err


def test_subcommand_help_has_description_and_required_options(capsys):
    assert main(["invert", "--help"]) == 0
    text = capsys.readouterr().out
    assert "Invert every layer" in text
    assert "required options:\n  --out DIR" in text


def test_interrupt_prints_one_clean_line(misfit_study, tmp_path, monkeypatch, capsys):
    import signal

    import bayescrust.inference.api as api

    def interrupted(*a, **k):
        # a library that prints on the way out, as emcee does for an exception in log_prob
        import time
        import traceback

        try:
            os.kill(os.getpid(), signal.SIGINT)
            time.sleep(1)
        except KeyboardInterrupt:
            print("emcee: Exception while calling your likelihood function:")
            traceback.print_exc()
            raise

    monkeypatch.setattr(api, "exact_layer", interrupted)
    rc = main(["invert", str(misfit_study), "--out", str(tmp_path / "o"), "--no-figures", "-q"])
    cap = capsys.readouterr()
    assert rc == 130
    assert cap.err.strip() == "bayescrust: interrupted; no output written"
    assert "Traceback" not in cap.out + cap.err
    assert not (tmp_path / "o").exists()


def test_assumptions_list_the_rocks_each_layer_used():
    # the report's "rocks:" line gave the study-wide list (gabbro, harzburgite in the demo)
    # although the upper layers were inverted with basalt and diabase
    from importlib import resources

    from bayescrust.cli.layers import assumptions
    from bayescrust.config import load_study

    path = resources.files("bayescrust") / "demo" / "tallowmere_ridge.toml"
    with resources.as_file(path) as p:
        rocks = assumptions(load_study(p))["rocks"]
    assert rocks.startswith("basalt (upper extrusives); diabase, gabbro (sheeted dikes)")
    assert "gabbro, harzburgite (gabbro layer" in rocks


def test_an_unconverged_run_says_so_in_report_tables_and_netcdf(tmp_path, capsys):
    # only the per-layer section and the screen said so; the top of report.md, the tables and
    # posterior.nc (each read on its own) did not
    import xarray as xr

    study = tmp_path / "short.toml"
    study.write_text(textwrap.dedent("""\
        water_depth_km = 3.0
        [sampler]
        method = "mcmc"
        max_steps = 100
        [[layers]]
        name = "lower crust"
        top_km = 4.0
        bottom_km = 6.0
        vp = [7.1, 0.1]
        """), encoding="utf-8")
    out = tmp_path / "out"
    assert main(["invert", str(study), "--out", str(out), "--no-figures", "-q"]) == 0
    assert "NOT CONVERGED" in capsys.readouterr().err
    report = (out / "report.md").read_text()
    assert "did not converge" in report.split("## Interpretations")[0]
    import pandas as pd

    hyp = pd.read_csv(out / "hypotheses.csv")
    assert "converged" in hyp.columns and not hyp["converged"].astype(str).str.lower().eq(
        "true").any()
    with xr.open_dataset(out / "layers" / "lower_crust" / "posterior.nc") as ds:  # root
        attrs = dict(ds.attrs)
    assert attrs.get("converged") == "NO"


@pytest.mark.parametrize("sig, code", [("SIGTERM", 143), ("SIGINT", 130)])
def test_a_terminated_run_leaves_no_partial_folder(misfit_study, tmp_path, monkeypatch, capsys,
                                                   sig, code):
    # SIGTERM (a batch system, `timeout`) left the hidden .NAME.partial-* folder behind; it now
    # ends the run as Ctrl-C does. Exit code 128 + signal number (shell convention).
    import signal

    import bayescrust.inference.api as api

    def ended(*a, **k):
        import time

        os.kill(os.getpid(), getattr(signal, sig))
        time.sleep(2)

    monkeypatch.setattr(api, "exact_layer", ended)
    rc = main(["invert", str(misfit_study), "--out", str(tmp_path / "o"), "--no-figures", "-q"])
    assert rc == code
    assert capsys.readouterr().err.strip() == "bayescrust: interrupted; no output written"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["misfit.toml"]


def test_python_dash_m_bayescrust_runs_the_command_line():
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-m", "bayescrust", "--help"], capture_output=True,
                         text=True, timeout=120)
    assert out.returncode == 0 and "invert" in out.stdout


def test_library_log_lines_become_collected_warnings(capsys):
    # corner ("WARNING:root:Too few points to create valid contours") and arviz ("arviz -
    # WARNING - Shape validation failed") printed stray lines outside the warning format
    import argparse
    import logging

    from bayescrust.cli.shell import Warnings

    w = Warnings(argparse.Namespace(quiet=True))
    before = logging.getLogger().handlers[:]
    with w.catch("figures of layer 'x'"):
        logging.warning("Too few points to create valid contours")
        logging.getLogger("arviz").warning("Shape validation failed")
    err = capsys.readouterr().err
    assert "WARNING:root" not in err and "arviz - WARNING" not in err
    assert err.count("bayescrust: warning: figures of layer 'x': ") == 2
    assert any("Too few points" in m for m in w.messages)
    assert logging.getLogger().handlers == before  # the loggers are given back as they were


def test_assumptions_of_a_chart_name_every_thermal_prior_it_uses():
    # the chart runs every thermal-state prior but its report named only the layer's own
    from importlib import resources

    from bayescrust.cli.layers import assumptions, thermal_set
    from bayescrust.config import load_study

    path = resources.files("bayescrust") / "demo" / "one_layer.toml"
    with resources.as_file(path) as p:
        study = load_study(p)
    a = assumptions(study, study.layers[0], thermal=thermal_set(study))
    assert all(t.name in a["thermal-state priors"] for t in thermal_set(study))


def test_compare_report_opens_with_the_misfit_of_every_prior(misfit_study, tmp_path):
    # Vp/Vs 1.30 fits under no thermal prior (Christensen 1996, above): the comparison report
    # must say so before its caution and tables, naming the layer and each prior
    out = tmp_path / "cmp"
    assert main(["compare", str(misfit_study), "--out", str(out), "--no-figures", "-q"]) == 0
    report = (out / "report.md").read_text()
    head = report.split("Caution:")[0]
    assert "Warning: some runs cannot be trusted" in head
    priors = tomllib.loads((out / "run.toml").read_text())["run"]["thermal_priors_compared"]
    assert len(priors) >= 2
    for name in priors:
        assert f"deep under {name}: DATA MISFIT" in head
    # the header's re-run line names the command that wrote the file (it said `invert`)
    assert "Re-run with: bayescrust compare run.toml" in (out / "run.toml").read_text()


def test_chart_rerun_line_of_run_toml_repeats_the_chart(misfit_study, tmp_path):
    import shlex

    out = tmp_path / "c1"
    assert main(["chart", str(misfit_study), "--out", str(out), "--no-figures", "-q",
                 "--vp-min", "6.9", "--vp-max", "7.1", "--points", "3"]) == 0
    header = next(x for x in (out / "run.toml").read_text().splitlines() if "Re-run" in x)
    words = shlex.split(header.split("Re-run with:")[1])
    assert words[:2] == ["bayescrust", "chart"] and "--vp-max" in words
    words = [str(out / "run.toml") if w == "run.toml" else
             str(tmp_path / "c2") if w == "NEW_FOLDER" else w for w in words[1:]]
    assert main(words + ["--no-figures", "-q"]) == 0
    for name in ("chart.csv",):
        assert (tmp_path / "c2" / name).read_text() == (out / name).read_text()


def test_check_quiet_prints_the_verdict_line_only(misfit_study, tmp_path, capsys):
    # -q was accepted and ignored: the whole resolved study (dozens of lines) was printed
    assert main(["check", "-q", str(misfit_study)]) == 0
    out = capsys.readouterr().out
    assert out == f"{misfit_study}: valid (1 layer(s))\n"
    bad = tmp_path / "bad.toml"
    bad.write_text(MISFIT_STUDY.replace("top_km = 5.5", "top_km = -5.5"), encoding="utf-8")
    assert main(["check", "-q", str(bad)]) == 2  # an invalid file still fails, and says why
    assert "top_km" in capsys.readouterr().err
