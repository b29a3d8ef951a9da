"""Every number a run uses can be traced to a cited source."""

import tomllib
from importlib import resources

import bayescrust
from bayescrust.physics.minerals import MINERALS


def test_citations_follow_the_rocks_used():
    gabbro = bayescrust.citations(["gabbro"])
    assert any("Abramson" in c for c in gabbro)  # olivine of the gabbro recipe
    assert any("Brown, Angel & Ross (2016)" in c for c in gabbro)  # its plagioclase
    # a clean reference list: no internal notes (tags, derivations) in it
    assert not any("from memory" in c or "verified" in c for c in gabbro)
    assert any("Batzle" in c for c in gabbro) and any("Karato" in c for c in gabbro)
    assert len(gabbro) == len(set(gabbro))
    everything = bayescrust.citations()
    assert set(gabbro) <= set(everything)


def test_every_mineral_has_sourced_and_tagged_numbers():
    allowed = {"verified", "from memory", "common practice", "computed"}
    table = tomllib.loads(
        resources.files("bayescrust.physics").joinpath("data/minerals.toml").read_text("utf-8")
    )["minerals"]
    for name, row in table.items():
        tags = [v for k, v in row.items() if k.startswith("tag")]
        sources = [v for k, v in row.items() if k.startswith("source")]
        assert len(tags) >= 4 and len(sources) >= 4, name
        assert all(t in allowed for t in tags), (name, tags)
    assert set(table) == set(MINERALS)


def test_citations_of_a_result_follow_its_rocks_and_settings():
    # a result's settings name its rocks and its forward model: it cites those rocks' data and
    # the one attenuation law it used (Jackson et al. 2002 by default), not the other
    class _Result:
        settings = {"rocks": ["basalt"]}

    class _YT16:
        settings = {"rocks": ["harzburgite"], "forward": {"attenuation_law": "yamauchi_takei2016"}}

    basalt = bayescrust.citations(_Result())
    assert set(basalt) <= set(bayescrust.citations(["basalt"]))
    assert any("Jackson, I., Fitz Gerald" in c for c in basalt)
    assert not any("Yamauchi" in c for c in basalt)
    # no peridotite: no serpentinisation data, no peridotite solidus
    assert not any("Carlson, R. L. & Miller" in c or "Hirschmann" in c for c in basalt)
    yt = bayescrust.citations(_YT16())
    assert any("Yamauchi" in c for c in yt) and not any("Jackson, I., Fitz Gerald" in c for c in yt)
    assert any("Carlson, R. L. & Miller" in c and "serpentinized" in c for c in yt)
    assert any("Hirschmann" in c for c in yt)
