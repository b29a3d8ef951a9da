"""The shipped laboratory table, the misfit report and the calibrated model error."""

import numpy as np
import pytest

from bayescrust.physics import labdata
from bayescrust.physics.rocks import ROCKS, apply_stability


def test_every_row_has_source_tag_and_known_rock():
    assert len(labdata.LAB_ROWS) >= 10
    for r in labdata.LAB_ROWS:
        assert r.source and r.tag in ("verified", "from memory", "common practice", "computed")
        assert r.rock in ROCKS
        for lo, hi in r.ranges.values():
            assert 0 < lo <= hi


def test_rows_built_into_the_model_are_not_calibration_rows():
    # the lizardite row of minerals.toml was back-calculated from lizardite-serpentinite rock
    # velocities: comparing with them would be circular
    ids = {r.id: r for r in labdata.LAB_ROWS}
    assert not ids["lizardite_serpentinite_200MPa"].calibrate


def test_stored_model_error_equals_the_measured_misfit():
    # model_error.toml must be what calibrated_model_error() measures now (rounded to 1e-4):
    # a change of minerals, rocks or rows that is not followed by a regeneration fails here
    me = labdata.calibrated_model_error()
    for k, v in me.items():
        assert labdata.MODEL_ERROR[k] == pytest.approx(v, abs=2e-4), k


def test_model_error_is_used_by_the_inference():
    from bayescrust.inference.model import DEFAULT_MODEL_ERROR

    assert DEFAULT_MODEL_ERROR == labdata.MODEL_ERROR


def test_misfit_is_model_minus_published_centre():
    # the reported model value equals a direct forward-model call at the row's condition
    from bayescrust import rock_properties

    entry = next(e for e in labdata.lab_misfit() if e["id"] == "gabbro_600MPa"
                 and e["observable"] == "vp")
    direct = float(rock_properties("gabbro", temperature_c=20.0, pressure_gpa=0.6).vp)
    assert entry["model"] == pytest.approx(direct, rel=1e-12)
    assert entry["misfit"] == pytest.approx(direct - 7.1, abs=1e-12)


def test_a_worse_model_gets_a_larger_error():
    # Voigt mixing of the minerals is stiffer than Hill: the measured Vp error must grow
    worse = labdata.calibrated_model_error(labdata.lab_misfit(mixing="voigt"))
    assert worse["vp"] > labdata.MODEL_ERROR["vp"]


def test_report_lists_every_entry():
    text = labdata.validation_report()
    n = sum(len(r.ranges) for r in labdata.LAB_ROWS)
    assert len([ln for ln in text.splitlines() if not ln.startswith(("#", "row"))]) == n
    assert "calibrated forward-model error" in text


def test_forward_validate_cli(capsys):
    from bayescrust.cli import main

    assert main(["forward", "--validate"]) == 0
    assert "gabbro_600MPa" in capsys.readouterr().out


def test_melt_below_solidus_and_serpentine_above_stability_are_switched_off():
    # same rule as the inversion: melt only above the solidus (Hirschmann 2000), serpentine only
    # below its stability (lizardite ~300 C, Evans 2010)
    kw, notes = apply_stability("harzburgite", temperature_c=0.0, pressure_gpa=0.2,
                                melt_fraction=0.02)
    assert kw["melt_fraction"] == 0.0 and "solidus" in notes[0]
    kw, notes = apply_stability("harzburgite", temperature_c=800.0, pressure_gpa=0.2,
                                serpentinization=0.3)
    assert kw["serpentinization"] == 0.0 and "stability" in notes[0]
    kw, notes = apply_stability("gabbro", temperature_c=np.array([500.0, 1300.0]),
                                pressure_gpa=0.2, melt_fraction=0.02)
    np.testing.assert_array_equal(kw["melt_fraction"], [0.0, 0.02])
    kw, notes = apply_stability("harzburgite", temperature_c=1300.0, pressure_gpa=0.2,
                                melt_fraction=0.02)
    assert notes == [] and kw["melt_fraction"] == 0.02
    # serpentinization is a fraction of the ultramafic rocks: on gabbro it does nothing, and
    # the forward command says so instead of printing unchanged velocities without a word
    _, notes = apply_stability("gabbro", temperature_c=100.0, pressure_gpa=0.2,
                               serpentinization=0.3)
    assert len(notes) == 1 and "no effect" in notes[0]
    _, notes = apply_stability("harzburgite", temperature_c=100.0, pressure_gpa=0.2,
                               serpentinization=0.3)
    assert notes == []


def test_forward_cli_warns(capsys):
    from bayescrust.cli import main

    assert main(["forward", "--rock", "harzburgite", "--temperature", "800", "--pressure",
                 "0.2", "--serpentinization", "0.3"]) == 0
    assert "serpentinization set to 0" in capsys.readouterr().err


def test_validate_plot_writes_the_figure(tmp_path, capsys):
    from bayescrust.cli import main

    out = tmp_path / "lab.png"
    assert main(["forward", "--validate", "--plot", str(out)]) == 0
    assert out.stat().st_size > 1000


def test_lab_misfit_figure_draws_every_entry():
    from bayescrust.report.validation import lab_misfit_figure

    misfit = labdata.lab_misfit()
    fig = lab_misfit_figure(misfit)
    dots = sum(len([ln for ln in ax.lines if ln.get_marker() == "o"]) for ax in fig.axes)
    assert dots == len(misfit)


def test_serpentinite_above_its_stability_warns():
    # lizardite stable below ~300 C (Evans 2010, as in the inversion's rule)
    _, notes = apply_stability("serpentinite", temperature_c=500.0, pressure_gpa=0.2)
    assert notes and "not stable" in notes[0]
    _, notes = apply_stability("serpentinite", temperature_c=100.0, pressure_gpa=0.2)
    assert notes == []


#: Every published laboratory band the model misses, with the size of the miss (model minus the
#: nearer edge of the band; units of the observable). Each is a strict xfail below, so a new miss
#: fails and a mended one is noticed; the README's caution gives the same sizes.
KNOWN_MISSES = {
    ("gabbro_200MPa", "vp"): "+0.037 km/s",
    ("gabbro_200MPa", "vp_vs"): "-0.017",
    ("gabbro_600MPa", "vp_vs"): "-0.011",
    ("gabbro_600MPa", "density"): "+0.004 g/cm^3",
    ("altered_gabbro_200MPa", "vp"): "+0.111 km/s",
    ("altered_gabbro_200MPa", "vp_vs"): "-0.031",
    ("altered_gabbro_200MPa", "density"): "+0.015 g/cm^3",
    ("diabase_200MPa", "vp"): "+0.175 km/s",
    ("diabase_200MPa", "density"): "+0.038 g/cm^3",
    ("dunite_1GPa", "density"): "+0.026 g/cm^3",
    ("antigorite_serpentinite_200MPa", "density"): "+0.011 g/cm^3",
}


def _lab_cases():
    out = []
    for r in labdata.lab_misfit():
        key = (r["id"], r["observable"])
        marks = ([pytest.mark.xfail(strict=True, reason=f"{key[0]} {key[1]}: the model misses "
                                    f"the published band by {KNOWN_MISSES[key]}")]
                 if key in KNOWN_MISSES else [])
        out.append(pytest.param(r, id=f"{key[0]}-{key[1]}", marks=marks))
    return out


@pytest.mark.parametrize("row", _lab_cases())
def test_model_inside_every_published_laboratory_band(row):
    # each row's band and its source are in physics/data/labdata.toml (Christensen 1996,
    # Christensen & Mooney 1995, Carlson & Miller 2003/2004, ...; tags per row); only the
    # model's value is computed here
    assert row["low"] <= row["model"] <= row["high"], (row["id"], row["observable"],
                                                       row["model"], row["source"])


def test_forward_table_gives_the_serpentinisation_and_melt_it_computed():
    # Lizardite is not stable at 800 deg C (Evans 2010) and a peridotite at 800 deg C and
    # 0.2 GPa is below its solidus (Hirschmann 2000): the velocities are of fresh, melt-free
    # rock, so the row (JSON too) must not list the requested 0.3 and 0.02 beside them.
    import json

    from bayescrust.cli import main

    out = _stdout_of(main, ["forward", "--rock", "harzburgite", "--temperature", "700:800:2",
                            "--pressure", "0.2", "--serpentinization", "0.3",
                            "--melt-fraction", "0.02", "--json"])
    for row in json.loads(out)["rows"]:
        assert row["serpentinization"] == 0.0 and row["melt_fraction"] == 0.0


def _stdout_of(main, argv):
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(io.StringIO()):
        assert main(argv) == 0
    return buf.getvalue()
