"""The examples folder stays in step with the package's demo files."""

from importlib.resources import files
from pathlib import Path

import pytest

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"


@pytest.mark.parametrize("name", sorted(p.name for p in EXAMPLES.glob("*.toml")))
def test_example_study_equals_the_packaged_demo_copy(name):
    # examples/tallowmere_ridge.toml had fallen behind the demo's (one layer short)
    demo = files("bayescrust").joinpath("demo", name)
    assert demo.is_file(), f"examples/{name} has no copy in bayescrust/demo"
    assert (EXAMPLES / name).read_text("utf-8") == demo.read_text("utf-8")
