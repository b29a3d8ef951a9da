"""Results of a profile inversion: answers, tables, the arviz posterior with a layer dimension."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["ProfileResult", "build_result", "boundary_from_mantle"]

NO_BOUNDARY = "no boundary in the section"
#: Layer quantities kept in the draws (those present in every layer model).
_KEEP = ("temperature_c", "porosity", "melt_fraction_effective", "serpentinization_effective",
         "ultramafic_fraction", "gabbroic_fraction", "basaltic_fraction", "vp", "vs",
         "density", "vp_vs", "solidus_c")


#: Units of a profile variable by its name's ending (thermal parameters, depths).
_SUFFIX_UNITS = (("_myr", "Myr"), ("_w_mk", "W m-1 K-1"), ("_km", "km"), ("_c", "deg C"))


def _unit(name: str) -> str:
    """The ``units`` attribute of a profile posterior or observed variable."""
    from ..inference.results import VARIABLE_UNITS

    base = name.removeprefix("observed_")
    if base in VARIABLE_UNITS:
        return VARIABLE_UNITS[base]
    for suffix, unit in _SUFFIX_UNITS:
        if base.endswith(suffix):
            return unit
    return "volume fraction" if base.endswith("_fraction") else "1"


@dataclass(frozen=True, eq=False)
class ProfileResult:
    """Output of :func:`exact_profile` or :func:`invert_profile`.

    Attributes
    ----------
    method : str
        ``"exact"`` or ``"mcmc"``.
    profile : Profile
    log_evidence, log_evidence_error : float
        ``log p(d | thermal model)`` and its Monte Carlo standard error (NaN for MCMC).
    thermal : pandas.DataFrame
        Per thermal parameter: mean, sd, q05, q50, q95, mcse (of the mean).
    hypotheses : pandas.DataFrame
        Long table: layer, hypothesis, probability, mcse, data_fit (the layer's
        posterior-predictive check: ``"ok"`` or ``"MISFIT (vp, ...)"``).
    boundary : pandas.DataFrame
        Crust-mantle boundary outcomes: outcome (the first mantle layer or "no boundary in the
        section"), depth_km (its top), thickness_km (igneous crust above it), probability, mcse.
    thickness : dict
        ``p_no_boundary``, and the mean / sd / median of the igneous crustal thickness given a
        boundary in the section (km).
    draws : dict
        Equal-weight posterior draws: ``thermal`` {name: (n,)}, ``layers`` {quantity: (n, L)},
        ``boundary_km`` (n,) with NaN for "no boundary".
    pressure_gpa : numpy.ndarray
        Mid-layer pressures used (exact path) or their posterior mean (MCMC).
    pressure_bound : dict or None
        Exact path with overburden: ``pressure_sd_bound_gpa`` and ``delta_log_likelihood`` per
        layer (see :mod:`bayescrust.profile.exact`).
    diagnostics : dict
        Exact: importance ESS per layer and of the thermal design; MCMC: tau, ESS, acceptance,
        ``converged`` (the sampler's stopping rule). Both: ``predictive_check``, per layer the
        posterior-predictive check of its data
        (:func:`bayescrust.inference.trust.predictive_check` on the joint posterior draws).
    settings : dict
        ``method``, ``seed``, ``profile`` (its settings), ``wall_time_s`` and ``serpentine``:
        the serpentine kind of the layers' forward model (whose stability limit switches
        ``serpentinization`` off; ``None`` when not known).
    """

    method: str
    profile: object
    log_evidence: float
    log_evidence_error: float
    thermal: object
    hypotheses: object
    boundary: object
    thickness: dict
    draws: dict
    pressure_gpa: np.ndarray
    pressure_bound: dict | None
    diagnostics: dict
    settings: dict

    @property
    def predictive_check(self) -> dict:
        """``{layer: posterior-predictive check}`` (see ``diagnostics``)."""
        return self.diagnostics.get("predictive_check", {})

    @property
    def misfit_layers(self) -> list[str]:
        """Layers whose data the model cannot reproduce (posterior-predictive p < 0.01)."""
        return [n for n, c in self.predictive_check.items() if c.get("misfit")]

    @property
    def misfit(self) -> bool:
        """True when the model cannot reproduce the data of some layer."""
        return bool(self.misfit_layers)

    @property
    def data_fit(self) -> str:
        """Data fit of the whole-profile answers (boundary, thermal state; every layer enters
        them through the thermal state): ``"ok"`` or ``"MISFIT (in <layers>)"``."""
        bad = self.misfit_layers
        return f"MISFIT (in {', '.join(bad)})" if bad else ("ok" if self.predictive_check
                                                            else "")

    def probability(self, layer, hypothesis) -> float:
        """Posterior probability of ``hypothesis`` in ``layer`` (name)."""
        t = self.hypotheses
        row = t[(t["layer"] == layer) & (t["hypothesis"] == hypothesis)]
        if row.empty:
            raise KeyError(f"no hypothesis {hypothesis!r} in layer {layer!r}")
        return float(row["probability"].iloc[0])

    def to_idata(self):
        """arviz ``InferenceData`` (a DataTree under arviz 1.x): posterior with a ``layer``
        dimension (one chain of draws), the observed values per layer in ``observed_data``."""
        from ..inference._arviz import module
        from ..inference.results import _from_dict

        d = self.draws
        post = {k: v[None] for k, v in d["thermal"].items()}
        post.update({k: v[None] for k, v in d["layers"].items()})
        post["boundary_km"] = d["boundary_km"][None]
        post["crustal_thickness_km"] = (d["boundary_km"] - self.profile.basement_km)[None]
        dims = {k: ["layer"] for k in d["layers"]}
        obs = {}
        for k in ("vp", "vs", "vp_vs", "density"):
            vals = [x.observed.get(k, (math.nan, math.nan))[0] for x in self.profile.layers]
            obs[f"observed_{k}"] = np.array(vals)
            dims[f"observed_{k}"] = ["layer"]
        idata = _from_dict(module(), posterior=post, observed_data=obs, dims=dims,
                           coords={"layer": list(self.profile.names)},
                           attrs={"method": self.method,
                                  "thermal": self.profile.thermal.describe(),
                                  "log_evidence": self.log_evidence,
                                  "log_evidence_error": self.log_evidence_error,
                                  **self._fit_attrs()})
        for group in ("posterior", "observed_data"):
            ds = idata[group] if hasattr(idata, "children") else getattr(idata, group)
            for v in ds.data_vars:
                ds[v].attrs["units"] = _unit(str(v))
        return idata

    def _fit_attrs(self) -> dict:
        """NetCDF attributes of the data fit: ``data_fit`` ("ok" or "MISFIT in ..."),
        ``data_fit_by_layer`` ("<layer>: ok; <layer>: MISFIT (vp); ...") and the threshold
        ``ppc_alpha``."""
        from ..inference.trust import PPC_ALPHA, data_fit_label, misfit_details

        checks = self.predictive_check
        bad = self.misfit_layers
        out = {"data_fit": ("MISFIT in " + "; ".join(f"{n}: {misfit_details(checks[n])}"
                                                    for n in bad)) if bad else "ok",
               "ppc_alpha": PPC_ALPHA}
        out["data_fit_by_layer"] = "; ".join(f"{n}: {data_fit_label(c)}"
                                             for n, c in checks.items())
        return out


def boundary_from_mantle(profile, mantle):
    """Boundary depth (km) per draw from boolean mantle flags (n, L); NaN if none."""
    mantle = np.asarray(mantle, bool)
    anyb = mantle.any(axis=1)
    first = np.argmax(mantle, axis=1)
    return np.where(anyb, profile.tops_km[first], np.nan)


def _boundary_table(profile, probs, errs):
    import pandas as pd

    tops = list(profile.tops_km) + [math.nan]
    names = list(profile.names) + [NO_BOUNDARY]
    return pd.DataFrame({"outcome": names, "depth_km": tops,
                         "thickness_km": [t - profile.basement_km for t in tops],
                         "probability": probs, "mcse": errs})


def _thickness(profile, boundary_km):
    b = boundary_km[np.isfinite(boundary_km)] - profile.basement_km
    out = {"p_no_boundary": float(np.mean(~np.isfinite(boundary_km)))}
    if b.size:
        out.update(mean_km=float(b.mean()), sd_km=float(b.std()), median_km=float(np.median(b)))
    else:
        out.update(mean_km=math.nan, sd_km=math.nan, median_km=math.nan)
    return out


def _thermal_table(names, draws, means_reps=None, mcse=None):
    """Exact path: means are the replicate means of the weighted means (not of the resampled
    draws, whose resampling noise the replicate error would not cover); sd and quantiles come
    from the draws."""
    import pandas as pd

    rows = []
    for j, k in enumerate(names):
        x = draws[k]
        se = (float(np.std(means_reps[:, j], ddof=1) / math.sqrt(means_reps.shape[0]))
              if means_reps is not None else float(mcse[k]))
        mean = float(means_reps[:, j].mean()) if means_reps is not None else float(x.mean())
        sd = float(x.std())
        if np.ptp(x) == 0:  # fixed (e.g. a set conductivity): exactly, not rounding noise
            mean, sd, se = float(x[0]), 0.0, 0.0
        rows.append({"parameter": k, "mean": mean, "sd": sd,
                     "q05": float(np.quantile(x, 0.05)), "q50": float(np.quantile(x, 0.5)),
                     "q95": float(np.quantile(x, 0.95)), "mcse": se})
    return pd.DataFrame(rows, columns=["parameter", "mean", "sd", "q05", "q50", "q95", "mcse"])


def _exact_draws(profile, reps, rng, n_draws):
    """Joint equal-weight draws: a thermal point from W, then each layer from its weights."""
    th = profile.thermal
    r_idx = rng.integers(len(reps), size=n_draws)
    thermal = {k: np.empty(n_draws) for k in th.params}
    layers = {k: np.empty((n_draws, profile.n_layers)) for k in _KEEP}
    mantle = np.zeros((n_draws, profile.n_layers), bool)
    for r, rep in enumerate(reps):
        sel = np.flatnonzero(r_idx == r)
        if sel.size == 0:
            continue
        j = rng.choice(rep["W"].size, size=sel.size, p=rep["W"])
        vals = th.values(rep["phi"][j]) if th.coupled else {}
        for k in thermal:
            thermal[k][sel] = vals[k]
        for i in range(profile.n_layers):
            w = rep["layer_w"][i]
            q = rep["layer_q"][i]
            ks = np.empty(sel.size, int)
            for jj in np.unique(j):  # loop over distinct thermal points, not draws
                at = np.flatnonzero(j == jj)
                ks[at] = rng.choice(w.shape[1], size=at.size, p=w[jj] / w[jj].sum())
            for k in _KEEP:
                layers[k][sel, i] = q[k][ks]
            mantle[sel, i] = q["ultramafic_fraction"][ks] >= 0.5
    return {"thermal": thermal, "layers": layers,
            "boundary_km": boundary_from_mantle(profile, mantle)}


def _fit_label(check):
    from ..inference.trust import data_fit_label

    return data_fit_label(check) if check else ""


def _predictive_checks(profile, models, draws) -> dict:
    """Per layer, the posterior-predictive check of its data on the joint draws (the rule and
    threshold of a layer result); a :class:`MisfitWarning` per misfitting layer."""
    import warnings

    from ..inference.trust import MisfitWarning, misfit_message, predictive_check

    if not models:
        return {}
    lay = draws["layers"]
    out = {}
    for i, (name, model) in enumerate(zip(profile.names, models, strict=True)):
        out[name] = c = predictive_check(model, {k: lay[k][:, i] for k in
                                                 ("vp", "vs", "vp_vs", "density") if k in lay})
        if c["misfit"]:
            warnings.warn(f"profile {profile.name!r} ({profile.thermal.label()}), layer "
                          f"{name!r}: {misfit_message(c)}", MisfitWarning, stacklevel=4)
    return out


def build_result(profile, *, method, hyps, pressures, seed, wall_time_s, reps=None,
                 answers=None, models=None, pressure_bound=None, rng=None, n_draws=4000,
                 mcmc=None):
    """Assemble a :class:`ProfileResult` from exact replicates or MCMC draws."""
    import pandas as pd

    th = profile.thermal
    names = list(th.params)
    if method == "exact":
        r = len(reps)
        lz = np.array([x["log_z"] for x in reps])
        m = np.max(lz)
        z = np.exp(lz - m)
        log_z = float(np.log(z.mean()) + m)
        log_z_err = float(np.std(z, ddof=1) / (math.sqrt(r) * z.mean()))
        draws = _exact_draws(profile, reps, rng, n_draws)
        means = np.array([[rep["W"] @ th.values(rep["phi"])[k] if th.coupled else math.nan
                           for k in names] for rep in reps]).reshape(r, len(names))
        thermal = _thermal_table(names, draws["thermal"], means_reps=means)
        keys = list(answers[0]["hypotheses"])
        hp = np.array([[a["hypotheses"][k] for k in keys] for a in answers])
        hyp = pd.DataFrame({"layer": [k[0] for k in keys], "hypothesis": [k[1] for k in keys],
                            "probability": hp.mean(0),
                            "mcse": hp.std(0, ddof=1) / math.sqrt(r)})
        bp = np.array([a["boundary"] for a in answers])
        boundary = _boundary_table(profile, bp.mean(0), bp.std(0, ddof=1) / math.sqrt(r))
        diag = {"thermal_ess": [x["thermal_ess"] for x in reps],
                "layer_ess": [[float(1.0 / np.sum(o**2)) for o in a["omega"]] for a in answers],
                "n_replicates": r}
    else:
        draws, hyp, boundary, thermal, diag = mcmc
        log_z, log_z_err = math.nan, math.nan
    checks = _predictive_checks(profile, models, draws)
    diag["predictive_check"] = checks
    hyp = hyp.assign(data_fit=[_fit_label(checks.get(n)) for n in hyp["layer"]])
    thickness = _thickness(profile, draws["boundary_km"])
    thickness["p_no_boundary"] = float(boundary["probability"].iloc[-1])
    settings = {"method": method, "seed": -1 if seed is None else seed,
                "profile": profile.describe(), "wall_time_s": wall_time_s,
                "serpentine": (getattr(models[0].forward, "serpentine", "lizardite")
                               if models else None)}
    return ProfileResult(method=method, profile=profile, log_evidence=log_z,
                         log_evidence_error=log_z_err, thermal=thermal, hypotheses=hyp,
                         boundary=boundary, thickness=thickness, draws=draws,
                         pressure_gpa=np.asarray(pressures, float), pressure_bound=pressure_bound,
                         diagnostics=diag, settings=settings)
