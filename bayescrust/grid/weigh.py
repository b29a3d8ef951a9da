"""The fast path: one prior design per depth level, weighed against every node of the level.

Two ways to weigh a level's design (points ``theta_j`` with predictions ``q_j``, ``j < n``):

- **batched** (per-node sigma, several observables, or an ensemble): the likelihood matrix
  ``L[i, j]`` of node ``i`` and design point ``j`` is formed in blocks of nodes, and each node's
  posterior expectations are self-normalised importance sums ``sum_j w_ij f(q_j) / sum_j w_ij``
  (the first stage of :func:`bayescrust.exact_layer`); with an ensemble of ``K`` models the
  likelihood is the mean over members (marginalising over the realisations, Sambridge 1999).
- **tabulated** (one observable with a sigma shared by the level): the same sums on a table of
  observed values spanning the level's data, interpolated linearly per node; the table error
  (interpolated against direct weighing at the table's midpoints) is stored per node.

Per node the Kish effective sample size ``(sum w)^2 / sum w^2`` (Kish 1965) is the quality
flag; nodes below ``min_ess`` are refined by a second, adaptive stage from their own random
stream (:func:`bayescrust.inference.evidence.adaptive_design`), or flagged if still poor.

Credible intervals are highest-density intervals of probability :data:`HDI_PROB` (arviz's
default, ``common practice``) from each node's weighted histogram on :data:`N_BINS` bins over
the level design's range of the quantity, so their resolution is that range / ``N_BINS``.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["STAT_QUANTITIES", "HDI_PROB", "N_BINS", "DesignTables", "node_loglik",
           "weigh_batched", "weigh_tabulated", "refine_node"]

#: Quantities summarised at every node (mean, sd, HDI); present in every layer model.
STAT_QUANTITIES = ("temperature_c", "porosity", "melt_fraction_effective",
                   "serpentinization_effective", "ultramafic_fraction", "gabbroic_fraction",
                   "basaltic_fraction", "vp", "vs", "vp_vs", "density")
HDI_PROB = 0.94
N_BINS = 32
#: working precision of the weight matrices (see the module docstring for its error)
WORK_DTYPE = np.float32
_N_LOWER = 13  # candidate lower tails of the HDI search, 0 .. 1 - HDI_PROB


class DesignTables:
    """Matrices of one design reused for every node: indicators, values, histogram one-hots."""

    def __init__(self, q, hyps, edges=None):
        from ..inference.hypotheses import indicators

        self.hyps = dict(hyps)
        self.hyp_names = list(hyps)
        ind = indicators(hyps, q)
        self.ind = np.stack([np.asarray(ind[h], float) for h in self.hyp_names], axis=1)
        n = self.ind.shape[0]
        v = np.stack([np.broadcast_to(np.asarray(q[k], float), (n,)) for k in STAT_QUANTITIES],
                     axis=1)
        v = np.where(np.isfinite(v), v, 0.0)
        # indicators, centred values and their squares side by side, in the working precision:
        # one matrix product per weight block. Centring keeps the float32 second moments well
        # conditioned (sd^2 = E[(v - c)^2] - (E[v] - c)^2); the centre is the design's median,
        # not its mean: a prior design with thin cracks holds nearly disintegrated rocks (Vp/Vs
        # up to ~900, mean 7.3 against a median of 1.80 in a Layer-2 design), and a centre that
        # far from every posterior cost Vp/Vs sd 1 % of float32 rounding
        self.centre = np.median(v, axis=0)
        vc = v - self.centre
        self.moments = np.ascontiguousarray(
            np.concatenate([self.ind, vc, vc * vc], axis=1).astype(WORK_DTYPE))
        # indicators and their complements: the MCSE from two sums of squared weights, with no
        # cancellation when p is near 0 or 1
        self.ind_w = np.ascontiguousarray(
            np.concatenate([self.ind, 1.0 - self.ind], axis=1).astype(WORK_DTYPE))
        if edges is None:
            # bins of equal design mass (the design's own quantiles), not equal width: a prior
            # design with thin cracks holds nearly disintegrated rocks (Vp/Vs up to ~500, 1 %
            # above 90), so 32 equal bins were ~16 wide in Vp/Vs, a posterior near 1.8 sat in
            # the first bin and its HDI ([1.86, 17] for sd 0.07) was an interpolation inside it,
            # flipping between processes with rounding-level differences. Quantile bins resolve
            # a quantity where the design has points, and no finer than it can.
            edges = np.quantile(v, np.linspace(0.0, 1.0, N_BINS + 1), axis=0).T
            span = np.maximum(edges[:, -1] - edges[:, 0], 1e-9)
            # strictly increasing (a quantity constant over part of the design repeats edges)
            edges = edges + np.arange(N_BINS + 1)[None, :] * (1e-9 * span[:, None])
        self.edges = edges
        nq = len(STAT_QUANTITIES)
        b = np.stack([np.clip(np.searchsorted(edges[k], v[:, k], side="right") - 1, 0,
                              N_BINS - 1) for k in range(nq)], axis=1)
        from scipy import sparse

        cols = (np.arange(nq)[None, :] * N_BINS + b).ravel()
        # transposed one-hot (bins x design points), sparse CSC: one column of nq non-zeros
        # per design point, built directly
        self.onehot_t = sparse.csc_matrix(
            (np.ones(cols.size, WORK_DTYPE), cols, np.arange(0, cols.size + 1, nq)),
            shape=(nq * N_BINS, n))


def node_loglik(model, q, values, sigmas, dtype=np.float64):
    """Log-likelihood ``(m, n)`` of ``m`` nodes against ``n`` design predictions.

    ``dtype`` is the working precision (the weighing uses float32, see :data:`WORK_DTYPE`).

    ``values[k]`` is (m,) or (m, K) for an ensemble of K models (the likelihood is then the
    mean over members); ``sigmas[k]`` is (m,). The total sigma adds the model error in
    quadrature, as :meth:`bayescrust.inference.model.LayerModel.total_sigma`.
    """
    from scipy import special

    rho = model.error_correlation
    total = None
    ens = False
    # Vp and Vs model errors are correlated as in LayerModel.log_likelihood_terms: the Vs term
    # is then the conditional density given Vp (Gaussian likelihood, no Vp/Vs datum)
    corr = (model.likelihood == "gaussian" and "vp" in values and "vs" in values
            and "vp_vs" not in values and rho > 0.0)
    order = sorted(values, key=lambda k: k != "vp")  # Vp first: the Vs term may need it
    sig_vp = None
    for k in order:
        y = np.asarray(values[k], dtype)
        p = np.asarray(q[k], dtype)[None, :]
        s = np.asarray(sigmas[k], dtype)
        if s.size and np.all(s == s[0]):  # one sigma for every row: the total sigma is a row
            s = s[:1]
        s = s[:, None]
        sig = np.sqrt(s * s + (model.model_error[k] * p) ** 2)           # (m or 1, n)
        shift = None
        if k == "vp":
            sig_vp = sig
        elif k == "vs" and corr:
            p_vp = np.asarray(q["vp"], dtype)[None, :]
            c = (rho * model.model_error["vp"] * model.model_error["vs"]
                 * p_vp * p)
            gain = c / sig_vp**2
            sig = np.sqrt(np.maximum(sig * sig - c * gain, np.finfo(dtype).tiny))
            y_vp = np.asarray(values["vp"], dtype)
            shift = ((y_vp[:, :, None] - p_vp[:, None, :]) * gain[:, None, :] if y_vp.ndim == 2
                     else (y_vp[:, None] - p_vp) * gain)
        inv = 1.0 / sig
        lsig = np.log(sig)
        if y.ndim == 2:
            ens = True
            z = (y[:, :, None] - p[:, None, :])                            # (m, K, n)
            if shift is not None:
                z = z - shift
            z = z * inv[:, None, :]
            lsig = lsig[:, None, :]
        else:
            z = (y[:, None] - p) if shift is None else (y[:, None] - p - shift)
            z = z * inv
        if model.likelihood == "gaussian":
            z *= z
            z *= -0.5
            z -= lsig + dtype(0.5 * math.log(2 * math.pi))
            ll = z
        else:
            nu = model.nu
            c = (special.gammaln(0.5 * (nu + 1)) - special.gammaln(0.5 * nu)
                 - 0.5 * math.log(nu * math.pi))
            ll = (dtype(c) - lsig) - dtype(0.5 * (nu + 1)) * np.log1p(z * z / dtype(nu))
        if total is None:
            total = ll
        else:
            total += ll
    total[~np.isfinite(total)] = -np.inf
    if ens:
        k = total.shape[1]
        total = special.logsumexp(total, axis=1) - math.log(k)
    return total


def _hdi(hist, edges):
    """Shortest interval holding HDI_PROB of each row's binned density; (m,), (m,)."""
    m = hist.shape[0]
    c = np.concatenate([np.zeros((m, 1)), np.cumsum(hist, axis=1)], axis=1)
    c /= np.where(c[:, -1:] > 0, c[:, -1:], 1.0)
    tails = np.linspace(0.0, 1.0 - HDI_PROB, _N_LOWER)
    a = np.concatenate([tails, tails + HDI_PROB])                        # (2L,)
    j = np.clip(np.sum(c[:, None, 1:] < a[None, :, None], axis=2), 0, N_BINS - 1)  # (m, 2L)
    lo_c = np.take_along_axis(c, j, axis=1)
    hi_c = np.take_along_axis(c, j + 1, axis=1)
    gap = hi_c - lo_c
    frac = np.where(gap > 0, (a[None, :] - lo_c) / np.where(gap > 0, gap, 1.0), 0.5)
    x = edges[j] + np.clip(frac, 0.0, 1.0) * (edges[j + 1] - edges[j])
    lo, hi = x[:, :_N_LOWER], x[:, _N_LOWER:]
    k = np.argmin(hi - lo, axis=1)
    rows = np.arange(m)
    return lo[rows, k], hi[rows, k]


def _summarise(w, tables, *, hdi=True):
    """Statistics of ``m`` weight rows ``w`` (m, n) over a design; dict of (m,) arrays.

    The weights are normalised after the matrix products (one (m,) scale instead of an (m, n)
    division), and ``w * w`` is formed once.
    """
    sw = w.sum(axis=1, dtype=np.float64)
    ok = sw > 0
    inv = 1.0 / np.where(ok, sw, 1.0)
    w2 = w * w
    s2 = w2.sum(axis=1, dtype=np.float64) * inv * inv                   # sum of wn^2
    out = {"importance_ess": np.where(ok, 1.0 / np.maximum(s2, 1e-300), 0.0)}
    nh = tables.ind.shape[1]
    nq = len(STAT_QUANTITIES)
    a = (w @ tables.moments).astype(np.float64) * inv[:, None]          # (m, nh + 2 nq)
    p = a[:, :nh]
    dev = a[:, nh:nh + nq]                                              # E[v] - centre
    mean = dev + tables.centre
    ex2 = a[:, nh + nq:]
    # Var of the self-normalised estimate: sum_j wn_j^2 (I_j - p)^2
    #   = (1 - p)^2 sum_{I=1} wn^2 + p^2 sum_{I=0} wn^2   (delta method; Owen 2013, eq. 9.9)
    b = (w2 @ tables.ind_w).astype(np.float64) * (inv * inv)[:, None]
    mcse = np.sqrt((1 - p) ** 2 * b[:, :nh] + p * p * b[:, nh:])
    for j, h in enumerate(tables.hyp_names):
        out[f"p:{h}"] = np.where(ok, p[:, j], np.nan)
        out[f"mcse:{h}"] = np.where(ok, mcse[:, j], np.nan)
    sd = np.sqrt(np.maximum(ex2 - dev * dev, 0.0))
    if hdi:
        # sparse one-hot times the weights, design-major (contiguous): no dense (n, bins)
        hist = np.asarray(tables.onehot_t @ np.ascontiguousarray(w.T)).T
    for k, name in enumerate(STAT_QUANTITIES):
        out[f"{name}:mean"] = np.where(ok, mean[:, k], np.nan)
        out[f"{name}:sd"] = np.where(ok, sd[:, k], np.nan)
        if hdi:
            lo, hi = _hdi(hist[:, k * N_BINS:(k + 1) * N_BINS], tables.edges[k])
            out[f"{name}:hdi_low"] = np.where(ok, lo, np.nan)
            out[f"{name}:hdi_high"] = np.where(ok, hi, np.nan)
    return out


def _weights(loglik):
    """``exp(loglik - row max)``, in place (the log-likelihood matrix is not needed again)."""
    m = np.max(loglik, axis=1, keepdims=True)
    m = np.where(np.isfinite(m), m, 0.0).astype(loglik.dtype)
    loglik -= m
    return np.exp(loglik, out=loglik)


def _block(n_design, k=1, budget=1_000_000):
    return max(1, budget // max(1, n_design * k))


def weigh_batched(model, q, tables, values, sigmas, *, hdi=True, ages=None, ratio=None):
    """Statistics of every node (dict of (m,) arrays) by direct importance weighing.

    With ``ages`` (m,) and ``ratio`` (a :class:`bayescrust.grid.ages.AgeRatio`) every node
    also weighs the design by its own temperature prior over the design's (the proposal's).
    """
    m = next(iter(sigmas.values())).shape[0]
    n = tables.ind.shape[0]
    k = max(np.asarray(v).shape[1] if np.ndim(v) == 2 else 1 for v in values.values())
    step = _block(n, k)
    parts = []
    for s in range(0, m, step):  # blocks of nodes bound the memory of the m x n matrix
        sl = slice(s, s + step)
        ll = node_loglik(model, q, {kk: np.asarray(v)[sl] for kk, v in values.items()},
                         {kk: np.asarray(v)[sl] for kk, v in sigmas.items()}, WORK_DTYPE)
        if ratio is not None:
            ll += ratio(ages[sl], q["temperature_c"]).astype(WORK_DTYPE)
        parts.append(_summarise(_weights(ll), tables, hdi=hdi))
    return {key: np.concatenate([p[key] for p in parts]) for key in parts[0]}


def table_values(lo, hi, n_table):
    """Observed values of a level's table: ``n_table`` points spanning ``[lo, hi]``."""
    pad = 1e-6 + 1e-3 * (hi - lo)
    return np.linspace(lo - pad, hi + pad, n_table)


def level_table(model, q, tables, name, sigma, y_table):
    """The table of one level: ``(y_fine, keys, mat, err)``.

    Every statistic is weighed directly at the ``t`` table values and at the ``t - 1``
    midpoints; the ``2t - 1`` results together (``y_fine``, ``mat`` (2t - 1, n_keys)) are the
    table the nodes are interpolated on. ``err`` (t - 1,) is the measured error of linear
    interpolation on the coarse table at each midpoint (largest over interpretations): a
    conservative bound of the fine table's error, which by the h^2 law of linear
    interpolation (Press et al., Numerical Recipes, 3rd ed., sec. 3.1) is about a quarter of it
    for a smooth posterior.
    """
    t = len(y_table)
    mids = 0.5 * (y_table[1:] + y_table[:-1])
    y_fine = np.empty(2 * t - 1)
    y_fine[0::2], y_fine[1::2] = y_table, mids
    coarse = weigh_batched(model, q, tables, {name: y_table}, {name: np.full(t, float(sigma))})
    fine = weigh_batched(model, q, tables, {name: mids}, {name: np.full(t - 1, float(sigma))},
                         hdi=False)
    stats = {}
    for k, v in coarse.items():
        a = np.empty(2 * t - 1)
        a[0::2] = v
        # HDI ends at the midpoints: the mean of their neighbours' (the HDI's own resolution,
        # a histogram bin holding 1/N_BINS of the design, is coarser than that step)
        a[1::2] = fine[k] if k in fine else 0.5 * (v[1:] + v[:-1])
        stats[k] = a
    err = np.zeros(t - 1)
    for h in tables.hyp_names:
        ph = stats[f"p:{h}"]
        interp = 0.5 * (ph[0:-1:2] + ph[2::2])
        err = np.maximum(err, np.abs(np.nan_to_num(interp - ph[1::2])))
    keys = list(stats)
    mat = np.stack([stats[k] for k in keys], axis=1)
    return y_fine, keys, mat, err


def interpolate_table(y_fine, mat, y_nodes, out, *, start=0, block=16384):
    """Linear interpolation of every column of ``mat`` at ``y_nodes`` into rows of ``out``.

    ``out`` is node-major (M, n_keys), its columns those of ``mat``; node ``i`` goes to row
    ``start + i``. Nodes are done in blocks of ``block`` (contiguous row writes), so the
    temporaries stay at ``block * n_keys`` values. Returns each node's fine interval.
    """
    t = y_fine.size
    mat = np.asarray(mat, np.float64)
    slope = np.diff(mat, axis=0).astype(np.float32)                       # (t - 1, n_keys)
    mat = mat.astype(np.float32)  # the results are float32: interpolate in float32
    h = (y_fine[-1] - y_fine[0]) / (t - 1)                                # a uniform table
    x = (np.asarray(y_nodes, float) - y_fine[0]) / h
    x = np.clip(x, 0.0, t - 1)
    j = np.minimum(x.astype(np.int64), t - 2)
    f = (x - j).astype(np.float32)
    for s in range(0, x.size, block):
        jj = j[s:s + block]
        vals = mat[jj]
        vals += slope[jj] * f[s:s + block, None]
        out[start + s:start + s + vals.shape[0]] = vals
    return j


def weigh_tabulated(model, q, tables, name, y_nodes, sigma, y_table, cache=None):
    """Node statistics interpolated from a level's table (see :func:`level_table`).

    Returns ``(stats, table_error)``: the statistics of every node (dict of (m,) arrays) and
    each node's table error (the coarse-table bound of its interval).
    """
    if cache is not None and "tab" in cache:
        y_fine, keys, mat, err = cache["tab"]
    else:
        y_fine, keys, mat, err = level_table(model, q, tables, name, sigma, y_table)
        if cache is not None:
            cache["tab"] = (y_fine, keys, mat, err)
    out = np.empty((np.size(y_nodes), len(keys)))
    j = interpolate_table(y_fine, mat, y_nodes, out)
    return {k: out[:, i] for i, k in enumerate(keys)}, err[j // 2]


def refine_node(model, tables, u_design, w_row, values, sigmas, rng, n_points, *, age=None,
                ratio=None):
    """Second, adaptive stage for one node; its statistics (dict of (1,) arrays).

    ``w_row`` are the node's first-stage weights (its prior ratio included); with ``age`` and
    ``ratio`` the second stage's weights include the node's prior ratio too.
    """
    from ..inference.evidence import adaptive_design

    n = w_row.shape[0]
    sw = w_row.sum()
    if not sw > 0:
        p = np.full(n, 1.0 / n)
    else:
        p = w_row / sw
    centres = u_design[rng.choice(n, size=min(256, n), p=p)]
    if centres.shape[1] == 0:
        return None
    _, q2, log_q, inside = adaptive_design(model, rng, centres, n_points)
    ll = node_loglik(model, q2, values, sigmas)[0]
    if ratio is not None:
        ll = ll + ratio(np.array([age]), q2["temperature_c"])[0]
    logw = ll - log_q[inside]
    w = _weights(logw[None, :].astype(WORK_DTYPE))
    return _summarise(w, DesignTables(q2, tables.hyps, edges=tables.edges))
