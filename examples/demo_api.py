"""One layer of the demo study from Python, through the public API: the exact path, the
three thermal-state priors, optionally MCMC, and a forward calculation (`bayescrust demo` runs
the whole study from the shell).

INVENTED DATA: the Tallowmere Ridge, segment TM-3 and lines TL-07/TL-12 are fictional.

Run:  python examples/demo_api.py [OUTPUT_FOLDER] [--mcmc]
"""

import sys
from pathlib import Path

import matplotlib

matplotlib.use("Agg")

import bayescrust as bc  # noqa: E402
from bayescrust import (  # noqa: E402
    HalfSpaceCooling,
    HotAxial,
    Layer,
    UniformTemperature,
    exact_layer,
    invert_layer,
)
from bayescrust import priors as P  # noqa: E402
from bayescrust.report import figures, to_markdown  # noqa: E402
from bayescrust.report.caution import CAUTION  # noqa: E402

folders = [a for a in sys.argv[1:] if not a.startswith("--")]
out = Path(folders[0] if folders else "demo_api_output")
out.mkdir(parents=True, exist_ok=True)

# 1. One layer, as in the study file: the deep layer of line TL-07 (Vp only).
layer = Layer("deep layer (TL-07)", top_km=4.6, bottom_km=6.6, water_depth_km=3.4,
              vp=(7.2, 0.12))
interpretations = {
    "gabbroic crust": {"ultramafic_fraction": (0.0, 0.5)},
    "cool fresh mantle": {"ultramafic_fraction": (0.5, 1.0),
                          "serpentinization_effective": (0.0, 0.1),
                          "temperature_c": (None, 900.0)},
    "hot mantle": {"ultramafic_fraction": (0.5, 1.0), "serpentinization_effective": (0.0, 0.1),
                   "temperature_c": (900.0, None)},
    "serpentinised mantle": {"ultramafic_fraction": (0.5, 1.0),
                             "serpentinization_effective": (0.1, 1.0)},
}
young_plate = HalfSpaceCooling(age_myr=P.Uniform(0.5, 4.0),
                               mantle_temperature_c=P.Normal(1350.0, 50.0), scatter_c=75.0)

# 2. Invert it (exact reference: fast; use invert_layer for MCMC).
res = exact_layer(layer, rocks=("gabbro", "harzburgite"),
                  priors={"temperature_c": young_plate}, hypotheses=interpretations, seed=1)
print(to_markdown(res.hypotheses[["prior_probability", "posterior_probability",
                                  "posterior_mcse", "bayes_factor"]]))
print(res.summary.loc[["temperature_c", "ultramafic_fraction", "vp"],
                      ["mean", "hdi_low", "hdi_high"]])
res.idata.to_netcdf(str(out / "posterior.nc"), engine="h5netcdf")
figures.corner_figure(res.idata).savefig(out / "corner.png", dpi=150)

# 3. The same layer under three thermal-state priors.
for name, th in {"uniform": UniformTemperature(0.0, 1400.0), "young_plate": young_plate,
                 "hot_axial": HotAxial()}.items():
    r = exact_layer(layer, rocks=("gabbro", "harzburgite"), priors={"temperature_c": th},
                    hypotheses=interpretations, seed=1)
    p = r.hypotheses["posterior_probability"].round(3).to_dict()
    print(f"{name:12s} ln Z = {r.log_evidence:7.3f} +- {r.log_evidence_error:.3f}  {p}")

# 4. A short MCMC run of the same layer (slower; diagnostics in res_mc.diagnostics).
if "--mcmc" in sys.argv:
    res_mc = invert_layer(layer, rocks=("gabbro", "harzburgite"),
                          priors={"temperature_c": young_plate}, hypotheses=interpretations,
                          seed=1, min_ess=400, progress=True)
    figures.trace_figure(res_mc.idata).savefig(out / "trace.png", dpi=150)
    print(res_mc.hypotheses["posterior_probability"])

# 5. A one-off forward calculation.
props = bc.rock_properties("harzburgite", temperature_c=1100.0, pressure_gpa=0.2)
print(f"harzburgite at 1100 C, 0.2 GPa: Vp = {float(props.vp):.2f} km/s")
print(CAUTION)
