"""Bad input: one clear message on stderr naming file and key, exit code 2, no output folder."""

import textwrap

import pytest

from bayescrust.cli import main

GOOD = textwrap.dedent("""\
    water_depth_km = 3.0
    [sampler]
    method = "exact"
    exact_points = 1024
    [[layers]]
    name = "deep"
    top_km = 4.0
    bottom_km = 6.0
    vp = [7.1, 0.1]
    """)


def _run(tmp_path, capsys, text, *extra):
    p = tmp_path / "bad.toml"
    p.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    rc = main(["invert", str(p), "--out", str(out), "-q", "--no-figures", *extra])
    err = capsys.readouterr().err
    return rc, err, out


CASES = [
    # (description, text, words that must appear in the message)
    ("syntax error", GOOD.replace('name = "deep"', 'name = "deep'), ["line 6", "syntax"]),
    ("unknown key", GOOD.replace("bottom_km", "botom_km"), ["layers[0].botom_km", "bottom_km"]),
    ("unknown top key", "water_depht_km = 3\n" + GOOD, ["water_depht_km", "water_depth_km"]),
    ("wrong type", GOOD.replace("water_depth_km = 3.0", 'water_depth_km = "deep"'),
     ["water_depth_km", "got 'deep'", "expected a number"]),
    ("negative sigma", GOOD.replace("[7.1, 0.1]", "[7.1, -0.1]"),
     ["layers[0].vp[1]", "got -0.1", "> 0"]),
    ("porosity above 1", GOOD + "priors = { porosity = 1.5 }\n",
     ["layers[0].priors.porosity", "got 1.5"]),
    ("top below bottom", GOOD.replace("top_km = 4.0", "top_km = 7.0"),
     ["layers[0].bottom_km", "greater than top_km"]),
    ("unknown rock", 'rocks = ["gabro", "harzburgite"]\n' + GOOD,
     ["rocks[0]", "gabro", "did you mean 'gabbro'"]),
    ("inverted prior bounds", GOOD + 'priors = { temperature_c = { dist = "uniform", lo = 900, '
     'hi = 100 } }\n', ["layers[0].priors.temperature_c.hi", "got 100"]),
    # the mineral data stop at 1800 C (e.g. olivine to 1800 C: physics/data/minerals.toml)
    ("temperature beyond the mineral data", GOOD + 'priors = { temperature_c = { dist = '
     '"uniform", lo = 100, hi = 1900 } }\n', ["layers[0].priors.temperature_c.hi", "got 1900"]),
    ("unknown prior kind", GOOD + 'priors = { porosity = { dist = "unifrom", lo = 0, hi = 0.1 }'
     ' }\n', ["layers[0].priors.porosity.dist", "'uniform'"]),
    ("no layers", "water_depth_km = 3.0\n", ["layers", "missing"]),
    ("no observation", GOOD.replace("vp = [7.1, 0.1]", ""), ["layers[0]", "no observation"]),
    ("unknown thermal prior", 'thermal_prior = "hot"\n' + GOOD, ["thermal_prior", "'hot'"]),
    ("hypothesis on unknown quantity", GOOD + "[hypotheses.x]\ntemprature_c = [0, 1]\n",
     ["hypotheses.x.temprature_c", "temperature_c"]),
    ("layer names sharing a folder", GOOD + GOOD[GOOD.index("[[layers]]"):].replace(
        'name = "deep"', 'name = "Deep!"'), ["layers[1].name", "folder 'deep'"]),
    ("dilute scheme beyond its limit", GOOD.replace("[sampler]", '[forward]\ninclusion_scheme = '
     '"kuster_toksoz"\n[sampler]'), ["layer 'deep'", "dilute theory", "reach 1.3"]),
    ("water deeper than any ocean", GOOD.replace("water_depth_km = 3.0", "water_depth_km = 11.2"),
     ["water_depth_km", "got 11.2"]),
    # the gabbro solidus (Lambert & Wyllie 1972) is defined to 3 GPa: the message named an
    # internal pressure_gpa the user had not written
    # a study of another kind said "profile: unknown key; did you mean 'title'?"
    ("a profile study given to invert", "[profile]\ntitle = 'x'\n" + GOOD,
     ["profile", "bayescrust profile"]),
    ("a grid study given to invert", "[grid]\nsource = 'x.nc'\n" + GOOD,
     ["grid", "bayescrust map"]),
    ("layer below the solidus laws' range", GOOD.replace("top_km = 4.0", "top_km = 90.0")
     .replace("bottom_km = 6.0", "bottom_km = 100.0"),
     ["layer 'deep'", "top_km/bottom_km", "3.08 GPa", "shallower layer"]),
]


@pytest.mark.parametrize("desc,text,words", CASES, ids=[c[0] for c in CASES])
def test_bad_study_file(tmp_path, capsys, desc, text, words):
    rc, err, out = _run(tmp_path, capsys, text)
    assert rc == 2, err
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "bad.toml" in lines[0]
    for w in words:
        assert w in lines[0], (w, lines[0])
    assert not out.exists()
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".out")]


def test_missing_file(tmp_path, capsys):
    rc = main(["check", str(tmp_path / "nowhere.toml")])
    err = capsys.readouterr().err
    assert rc == 2 and "nowhere.toml" in err and "not found" in err


def test_existing_results_refused_then_overwritten(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    out = tmp_path / "out"
    assert main(["invert", str(p), "--out", str(out), "-q", "--no-figures"]) == 0
    (out / "keep.txt").write_text("earlier results")
    rc = main(["invert", str(p), "--out", str(out), "-q", "--no-figures"])
    err = capsys.readouterr().err
    assert rc == 2 and "already holds results" in err and "--overwrite" in err
    assert (out / "keep.txt").read_text() == "earlier results"
    rc = main(["invert", str(p), "--out", str(out), "-q", "--no-figures", "--overwrite"])
    assert rc == 0
    assert not (out / "keep.txt").exists() and (out / "hypotheses.csv").is_file()
    assert sorted(q.name for q in tmp_path.iterdir()) == ["out", "s.toml"]


def test_overwrite_spares_folders_bayescrust_did_not_write(tmp_path, capsys):
    # --overwrite replaced any folder: a user's thesis folder went, files and all
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    mine = tmp_path / "thesis"
    mine.mkdir()
    (mine / "thesis.tex").write_text("years of work")
    rc = main(["invert", str(p), "--out", str(mine), "-q", "--no-figures", "--overwrite"])
    err = capsys.readouterr().err
    assert rc == 2 and "replaces only a results folder written by bayescrust" in err
    assert (mine / "thesis.tex").read_text() == "years of work"


def test_overwrite_spares_the_study_file_inside_the_folder(tmp_path, capsys):
    # a results folder holding the study file that is being read: replacing it deleted the study
    out = tmp_path / "run"
    first = tmp_path / "s.toml"
    first.write_text(GOOD)
    assert main(["invert", str(first), "--out", str(out), "-q", "--no-figures"]) == 0
    study = out / "study.toml"
    study.write_text(GOOD)
    rc = main(["invert", str(study), "--out", str(out), "-q", "--no-figures", "--overwrite"])
    err = capsys.readouterr().err
    assert rc == 2 and "an input of this run" in err
    assert study.read_text() == GOOD


def test_unwritable_folder(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    blocker = tmp_path / "afile"
    blocker.write_text("not a folder")
    rc = main(["invert", str(p), "--out", str(blocker / "sub" / "out"), "-q", "--no-figures"])
    err = capsys.readouterr().err
    assert rc == 2 and "cannot write" in err and "--out" in err
    assert blocker.read_text() == "not a folder"


def test_out_is_a_file(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    f = tmp_path / "f"
    f.write_text("x")
    assert main(["invert", str(p), "--out", str(f), "-q"]) == 2
    assert "not a folder" in capsys.readouterr().err


def test_unknown_layer_suggests(tmp_path, capsys):
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    assert main(["invert", str(p), "--out", str(tmp_path / "o"), "--layer", "dep", "-q"]) == 2
    err = capsys.readouterr().err
    assert "--layer" in err and "'deep'" in err


@pytest.mark.parametrize("argv,words", [
    (["forward", "--rock", "granite", "--temperature", "20", "--pressure", "0.1"],
     ["--rock", "granite"]),
    (["forward", "--rock", "gabbro", "--temperature", "abc", "--pressure", "0.1"],
     ["--temperature", "abc"]),
    (["forward", "--rock", "gabbro", "--temperature", "0:100:3", "--pressure", "0:1:3"],
     ["only one option may be a range"]),
    (["forward", "--rock", "gabbro", "--temperature", "20", "--pressure", "0.1",
      "--porosity", "1.5"], ["porosity"]),
    (["invert"], ["STUDY.toml"]),
    (["frobnicate"], ["invalid choice"]),
])
def test_bad_options(capsys, argv, words):
    rc = main(argv)
    err = capsys.readouterr().err
    assert rc == 2 and "Traceback" not in err
    for w in words:
        assert w in err


def test_profile_given_a_layer_study_names_the_command(tmp_path, capsys):
    # it said "water_depth_km: unknown key"
    p = tmp_path / "layer.toml"
    p.write_text(GOOD)
    assert main(["profile", str(p), "--out", str(tmp_path / "o"), "-q"]) == 2
    err = capsys.readouterr().err
    assert "layer study" in err and "bayescrust invert" in err


def test_study_file_doc_gives_the_observable_ranges_the_reader_enforces():
    # docs/study-file.md is the reference a user checks an input against: its value ranges
    # must be those of bayescrust.inference.layer.OBSERVABLES (it said 1.3-4 for vp_vs while
    # 1.2 was accepted and the error message said [1.2, 4]).
    import re
    from pathlib import Path

    from bayescrust.inference.layer import OBSERVABLES

    doc = (Path(__file__).parents[2] / "docs" / "study-file.md").read_text(encoding="utf-8")
    rows = {"vp": r"value ([\d.]+)–([\d.]+) \(Vp\)", "vs": r"([\d.]+)–([\d.]+) \(Vs\)",
            "vp_vs": r"\| `vp_vs` \|[^|]*\|[^|]*\| value ([\d.]+)–([\d.]+);",
            "density": r"\| `density` \|[^|]*\|[^|]*\| value ([\d.]+)–([\d.]+);"}
    for name, pattern in rows.items():
        m = re.search(pattern, doc)
        assert m, name
        assert (float(m.group(1)), float(m.group(2))) == OBSERVABLES[name][0], name


def test_a_users_own_folder_is_not_called_results_nor_offered_to_overwrite(tmp_path, capsys):
    # --out pointing at a folder of the user's own files: it does not "hold results", and
    # --overwrite would be refused there, so the message must not suggest it.
    p = tmp_path / "s.toml"
    p.write_text(GOOD)
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("field notes")
    rc = main(["invert", str(p), "--out", str(mine), "-q", "--no-figures"])
    err = capsys.readouterr().err
    assert rc == 2 and "mine: --out:" in err
    assert "already holds results" not in err and "--overwrite" not in err
    assert (mine / "notes.txt").read_text() == "field notes"
