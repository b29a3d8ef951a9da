"""Property-based tests: malformed study files give only clean errors (StudyError / exit 2)."""

import string

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from bayescrust.cli import main
from bayescrust.config import StudyError, dumps_toml, parse_study

BASE = {
    "water_depth_km": 3.0,
    "seed": 1,
    "rocks": ["gabbro", "harzburgite"],
    "priors": {"porosity": {"dist": "uniform", "lo": 0.0, "hi": 0.03}},
    "thermal": {"cool": {"kind": "half_space", "age_myr": {"dist": "uniform", "lo": 1.0,
                                                           "hi": 5.0}}},
    "hypotheses": {"mantle": {"ultramafic_fraction": [0.5, 1.0]}},
    "sampler": {"method": "exact"},
    "layers": [{"name": "deep", "top_km": 4.0, "bottom_km": 6.0, "vp": [7.1, 0.1],
                "vs": [3.9, 0.1]}],
}

scalars = st.one_of(
    st.none(), st.booleans(), st.integers(-10**6, 10**6),
    st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=8),
    st.lists(st.floats(-10, 10), max_size=3),
    st.dictionaries(st.sampled_from(["dist", "lo", "hi", "value", "sigma", "mean"]),
                    st.one_of(st.floats(-5, 5), st.text(max_size=4)), max_size=3),
)


def _paths(d, prefix=()):
    if isinstance(d, dict):
        for k, v in d.items():
            yield prefix + (k,)
            yield from _paths(v, prefix + (k,))
    elif isinstance(d, list):
        for i, v in enumerate(d):
            yield prefix + (i,)
            yield from _paths(v, prefix + (i,))


ALL_PATHS = list(_paths(BASE))


def _mutate(data, path, value, action):
    import copy

    d = copy.deepcopy(data)
    node = d
    for p in path[:-1]:
        node = node[p]
    last = path[-1]
    if action == "delete" and isinstance(node, dict):
        del node[last]
    elif action == "rename" and isinstance(node, dict):
        node[str(last) + "x"] = node.pop(last)
    else:
        node[last] = value
    return d


def _clean(v):
    """TOML has no null: drop None values so that the writer can serialise the mutation."""
    if isinstance(v, dict):
        return {k: _clean(x) for k, x in v.items() if x is not None}
    if isinstance(v, list):
        return [_clean(x) for x in v if x is not None]
    return v


@settings(max_examples=150, deadline=None)
@given(path=st.sampled_from(ALL_PATHS), value=scalars,
       action=st.sampled_from(["set", "delete", "rename"]))
def test_mutated_study_parses_or_fails_cleanly(path, value, action):
    data = _clean(_mutate(BASE, path, value, action))
    try:
        text = dumps_toml(data)
    except (TypeError, ValueError):
        return  # not representable as TOML; nothing to test
    try:
        parse_study(text, source="fuzz.toml")
    except StudyError as exc:
        msg = str(exc)
        assert msg.startswith("fuzz.toml: ")
        assert "\n" not in msg


@settings(max_examples=150, deadline=None)
@given(st.text(alphabet=string.printable, max_size=200))
def test_random_text_fails_cleanly(text):
    try:
        parse_study(text, source="junk.toml")
    except StudyError as exc:
        assert str(exc).startswith("junk.toml: ")


@settings(max_examples=25, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(path=st.sampled_from(ALL_PATHS), value=scalars)
def test_check_command_exit_codes(tmp_path, capsys, path, value):
    data = _clean(_mutate(BASE, path, value, "set"))
    try:
        text = dumps_toml(data)
    except (TypeError, ValueError):
        return
    f = tmp_path / "fuzz.toml"
    f.write_text(text, encoding="utf-8")
    rc = main(["check", str(f)])
    err = capsys.readouterr().err
    assert rc in (0, 2), err
    assert "Traceback" not in err
    if rc == 2:
        assert len(err.strip().splitlines()) == 1 and "fuzz.toml" in err
