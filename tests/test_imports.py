"""Layering: importing the package stays light and physics imports nothing above it."""

import subprocess
import sys
from pathlib import Path

import bayescrust.physics as physics


def test_import_loads_no_heavy_dependency():
    # conventions: matplotlib, corner, dask and emcee are imported inside the functions using
    # them; numba (optional) only when a compiled kernel first runs (physics/_jit.py)
    code = (
        "import sys, bayescrust; "
        "print(','.join(m for m in ('matplotlib', 'corner', 'dask', 'emcee', 'numba') "
        "if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "", f"import bayescrust pulled in: {out.stdout.strip()}"


def test_physics_imports_nothing_above_it():
    # design: physics never imports inference, report, config or cli (data flows one way)
    for path in Path(physics.__file__).parent.glob("*.py"):
        text = path.read_text(encoding="utf-8")
        for upward in ("inference", "report", "cli", "config", "from .. ", "import bayescrust"):
            assert f"from ..{upward}" not in text and f"bayescrust.{upward}" not in text, (
                f"{path.name} imports upward ({upward})"
            )
