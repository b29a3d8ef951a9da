"""The compiled (numba) kernels against the numpy reference they must equal to rounding.

The numpy code is the definition; the compiled kernels run the same equations element by
element (bayescrust/physics/_accel.py). Any difference beyond rounding (1e-12 relative) is a
defect of the compiled kernel. Accuracy against the converged DEM reference is checked in
test_inclusions.py (it runs whichever kernel is switched on; here both are compared directly).
The compiled whole model also reads two kinds of table (the solid's mineral sums, and the
dry-pore DEM of physics/dem_flow.py); with them it is compared to the numpy model with the
dry-pore DEM integrated to convergence, to the tables' own accuracy.
"""

import contextlib
import functools

import numpy as np
import pytest

from bayescrust.physics import _jit, dem_flow, inclusions, minerals, spheroids

pytest.importorskip("numba")

RTOL = 1e-11  # measured: 1.6e-12 at most on the grids below


@contextlib.contextmanager
def _converged_dry_dem():
    """The numpy path with the DEM of empty pores integrated to convergence without the floor
    along the path, floored at the end (the theory the tables of physics/dem_flow.py hold)."""
    rk4 = inclusions._INCLUSION_KERNELS["dem"]

    def dem(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_steps=None):
        if np.any(k_i) or np.any(g_i):
            return rk4(k_m, g_m, k_i, g_i, aspect_i, frac_i, n_steps)
        k, g = inclusions._dem_reference(k_m, g_m, k_i, g_i, aspect_i, frac_i, floor=0.0)
        return np.maximum(k, inclusions._TINY * k_m), np.maximum(g, inclusions._TINY * g_m)

    with pytest.MonkeyPatch.context() as mp, _jit.use_accel(False), dem_flow.use_tables(False):
        mp.setitem(inclusions._INCLUSION_KERNELS, "dem", dem)
        yield


#: Compiled whole model with its tables against the numpy model with the converged dry-pore DEM
#: (_converged_dry_dem): the mineral-sum table (2.4e-7) and the DEM tables (5e-6 in the moduli
#: against the converged theory, tests/physics/test_dem_flow.py) together.
TABLE_RTOL = 1e-5


def _both(fn, *args, **kw):
    with _jit.use_accel(False):
        ref = fn(*args, **kw)
    with _jit.use_accel(True):
        fast = fn(*args, **kw)
    return ref, fast


def _close(ref, fast, host=None, rtol=RTOL):
    """Equal to ``rtol``; with ``host`` (the matrix moduli), elements whose reference modulus
    is within 1e-8 of the 1e-12 floor (relative to the matrix) are compared to 1e-6 only: the
    floored equations have a kink there that amplifies rounding (tests/physics/
    test_inclusions.py::test_dem_single_element_path_equals_vectorised states the same)."""
    tol = rtol
    if host is not None:
        lowest = np.minimum(ref[0] / host[0], ref[1] / host[1])
        tol = np.where(lowest < 1e-8, 1e-6, rtol)
    for r, f in zip(ref, fast, strict=True):
        r, f = np.asarray(r), np.asarray(f)
        assert r.shape == f.shape
        err = np.abs(f - r) / np.abs(r)
        assert np.all(err <= tol), f"max relative difference {np.max(err / tol * rtol):.2e}"


def _grid():
    # matrix Poisson's ratio 0.05-0.4, K_i/K_m 0 (dry) ... 0.9, aspect 1e-4 (below the thinnest
    # documented crack) ... 1 ... 10 (prolate), porosity 1e-4 ... 0.5 (the highest accepted)
    nu, kr, a, phi = (x.ravel() for x in np.meshgrid(
        [0.05, 0.15, 0.25, 0.35, 0.4], [0.0, 0.01, 0.05, 0.3, 0.9],
        np.r_[np.logspace(-4, 0, 17), 1.05, 3.0, 10.0], [1e-4, 0.01, 0.05, 0.1, 0.3, 0.45, 0.5],
        indexing="ij"))
    km = np.full(nu.size, 80.0)
    gm = km * 1.5 * (1.0 - 2.0 * nu) / (1.0 + nu)
    return km, gm, (kr * km)[:, None], np.zeros((nu.size, 1)), a[:, None], phi[:, None]


def test_dem_compiled_equals_numpy_on_dense_grid():
    # 3325 single-phase cases, thinnest cracks and highest porosities included
    args = _grid()
    ref, fast = _both(inclusions._dem, *args)
    _close(ref, fast, host=args[:2])
    # and the comparison is not vacuous: the moduli changed by up to ~100 %
    assert np.min(ref[1] / args[1]) < 1e-3


@pytest.mark.parametrize("n_steps", [None, 1, 7])
def test_dem_compiled_equals_numpy_several_phases(n_steps):
    # fluid cracks, round pores, melt films and solid inclusions together, default and fixed
    # step counts (a fixed small count only on round inclusions and moderate fractions, where
    # it does not diverge); empty rows (no inclusion) included
    rng = np.random.default_rng(5)
    n = 2000
    km = rng.uniform(30, 130, n)
    gm = km * rng.uniform(0.35, 0.85, n)
    ki = np.stack([rng.uniform(0, 3.0, n), rng.uniform(1.5, 3.0, n), rng.uniform(5, 150, n)], -1)
    gi = np.stack([np.zeros(n), np.zeros(n),
                   np.where(rng.uniform(size=n) < 0.5, 0.0, rng.uniform(1, 80, n))], -1)
    ai = 10 ** rng.uniform(-3 if n_steps is None else -1, 0, (n, 3))
    fi = rng.uniform(0, 0.5 if n_steps is None else 0.3, n)[:, None] * rng.dirichlet(np.ones(3), n)
    fi[rng.uniform(size=(n, 3)) < 0.2] = 0.0
    ref, fast = _both(inclusions._dem, km, gm, ki, gi, ai, fi, n_steps=n_steps)
    _close(ref, fast, host=(km, gm))


def test_dem_batch_of_one_equals_vectorised_both_kernels():
    # the numpy single-element path (Python floats), the numpy vectorised path and the compiled
    # kernel at batch 1 and batch n: all the same to rounding
    rng = np.random.default_rng(2)
    n = 200
    km, gm = rng.uniform(40, 120, n), rng.uniform(20, 60, n)
    ki = np.stack([rng.uniform(1.5, 3.0, n), rng.uniform(10, 25, n)], -1)
    gi = np.zeros_like(ki)
    ai = 10 ** rng.uniform(-3, 0, (n, 2))
    fi = rng.uniform(0, 0.2, (n, 2))
    ref, fast = _both(inclusions._dem, km, gm, ki, gi, ai, fi)
    for i in range(0, n, 9):
        one_ref, one_fast = _both(inclusions._dem, km[i], gm[i], ki[i], gi[i], ai[i], fi[i])
        assert np.shape(one_fast[0]) == ()
        _close(one_ref, (ref[0][i], ref[1][i]), rtol=1e-13)
        _close(one_fast, (ref[0][i], ref[1][i]))


def test_dem_compiled_empty_batch():
    z = np.zeros((0, 1))
    k, g = _both(inclusions._dem, np.zeros(0), np.zeros(0), z, z, z + 0.1, z)[1]
    assert k.shape == g.shape == (0,)


def test_use_accel_switches():
    with _jit.use_accel(False):
        assert not _jit.enabled()
        with _jit.use_accel(True):
            assert _jit.enabled()
        assert not _jit.enabled()


def test_mineral_state_compiled_equals_numpy():
    # every mineral of the table, -5 ... 1800 deg C, 0 ... 10 GPa (the accepted ranges), and the
    # broadcast shapes of the reference (scalar, 1-D, 2-D)
    table = minerals.mineral_table(tuple(minerals.MINERALS))
    t = np.linspace(268.15, 2073.15, 60)[:, None]
    p = np.linspace(0.0, 10.0, 25)[None, :]
    ref, fast = _both(minerals._mineral_state, table, t, p)
    assert fast[0].shape == (60, 25, len(minerals.MINERALS))
    _close(ref, fast)
    ref, fast = _both(minerals._mineral_state, table, 1000.0, 0.3)
    assert fast[0].shape == (len(minerals.MINERALS),)
    _close(ref, fast)


@pytest.mark.parametrize("pore_fluid", ["connected", "isolated"])
def test_forward_model_compiled_equals_numpy(pore_fluid):
    # the whole forward model: gabbro/harzburgite with serpentine, seawater pores of aspect
    # 1e-3..1, melt, anelasticity; batch and batch 1
    from bayescrust import ForwardModel

    rng = np.random.default_rng(4)
    n = 3000
    t = rng.uniform(0, 1300, n)
    kw = dict(fractions=rng.dirichlet(np.ones(2), n), temperature_c=t,
              pressure_gpa=rng.uniform(0.05, 0.5, n), serpentinization=rng.uniform(0, 1, n),
              porosity=rng.uniform(0, 0.15, n), aspect_ratio=10 ** rng.uniform(-3, 0, n),
              melt_fraction=np.where(t > 1100, rng.uniform(0, 0.05, n), 0.0),
              melt_aspect_ratio=10 ** rng.uniform(-2, 0, n))
    fm = ForwardModel(rocks=("gabbro", "harzburgite"), pore_fluid=pore_fluid)
    # "connected" takes the compiled whole model, which reads tables: equal to their accuracy
    # (no crack is near closing here: the pore pressure is the confining pressure)
    rtol = TABLE_RTOL if fm._fused is not None else RTOL
    ref, fast = _both(fm, **kw)
    theory = ref
    if fm._fused is not None:
        with _converged_dry_dem():
            theory = fm(**kw)
    _close(theory, fast, rtol=rtol)
    assert np.ptp(ref[1]) > 1.0  # not vacuous: Vs spans km/s
    for i in (0, 17, 1234):  # batch of one: each kernel equals its own batch (rounding)
        one = _both(fm, **{k: v[i] for k, v in kw.items()})
        _close(one[0], tuple(x[i] for x in ref))
        _close(one[1], tuple(x[i] for x in fast))


def test_use_accel_without_numba_refuses(monkeypatch):
    monkeypatch.setattr(_jit, "AVAILABLE", False)
    with pytest.raises(RuntimeError, match="numba"):
        with _jit.use_accel(True):
            pass


def _rock_inputs(n, seed, pores=True, melt=True, serp=True):
    """Inputs of every branch of the forward model: pores of aspect 1e-3..1 (some cracks closed
    by an effective pressure), melt films, serpentinisation, cold and hot rock."""
    rng = np.random.default_rng(seed)
    t = rng.uniform(-10, 1500, n)
    p = rng.uniform(0.0, 1.5, n)
    kw = dict(fractions=rng.dirichlet(np.ones(3), size=n), temperature_c=t, pressure_gpa=p)
    if pores:
        kw.update(porosity=np.where(rng.uniform(size=n) < 0.7, rng.uniform(0, 0.3, n), 0.0),
                  aspect_ratio=10 ** rng.uniform(-3, 0, n),
                  pore_pressure_gpa=p * rng.uniform(0.0, 1.0, n))
    if melt:
        kw.update(melt_fraction=np.where(rng.uniform(size=n) < 0.5, rng.uniform(0, 0.1, n), 0.0),
                  melt_aspect_ratio=10 ** rng.uniform(-2, 0, n))
    if serp:
        kw.update(serpentinization=np.where(rng.uniform(size=n) < 0.5, rng.uniform(0, 1, n), 0.0))
    return kw


@pytest.mark.parametrize("settings", [
    {}, {"crack_closure": False}, {"anelastic": False}, {"salinity": 0.0, "frequency_hz": 0.02},
])
@pytest.mark.parametrize("branches", [
    dict(), dict(pores=False), dict(melt=False), dict(serp=False),
    dict(pores=False, melt=False, serp=False),
])
def test_whole_forward_model_compiled_equals_numpy(settings, branches):
    # the compiled whole-model kernel (physics/_accel.py::_forward_loop) against the numpy
    # reference path of ForwardModel, on every branch (pores, closure, melt, serpentinite)
    from bayescrust import ForwardModel
    from bayescrust.physics import _accel

    fm = ForwardModel(rocks=("gabbro", "harzburgite", "dunite"), **settings)
    assert fm._fused is not None  # these settings take the compiled kernel
    kw = _rock_inputs(3000, 11, **branches)
    n = len(kw["temperature_c"])
    ref, fast = _both(fm, **kw)
    with _converged_dry_dem():
        theory = fm(**kw)
    # the compiled model reads the solid's mineral sums and the dry-pore DEM from tables: the
    # same as the theory to the tables' accuracy, except for cracks within 1 % of their
    # closing pressure, where the open fraction 1 - P_e/P_c is a difference of near-equal
    # numbers that amplifies any difference in the solid's moduli without bound
    from bayescrust.physics import pores

    with _jit.use_accel(False):
        k_s, g_s, _ = fm._solid(kw["fractions"], kw["temperature_c"], kw["pressure_gpa"],
                                np.broadcast_to(kw.get("serpentinization", 0.0), n))
    pe = kw["pressure_gpa"] - kw.get("pore_pressure_gpa", kw["pressure_gpa"])
    pc = pores.walsh_closing_pressure_gpa(kw.get("aspect_ratio", 0.1), k_s, g_s)
    far = ~((pe > 0) & (np.abs(1.0 - pe / pc) < 0.01) & (kw.get("porosity", 0.0) > 0))
    _close(tuple(x[far] for x in theory), tuple(x[far] for x in fast), rtol=TABLE_RTOL)
    # the numpy model reads the same dry-pore tables (the same interpolation, 1.7e-14): the
    # two differ by the mineral-sum table alone (2.4e-7)
    _close(tuple(x[far] for x in ref), tuple(x[far] for x in fast), rtol=5e-7)
    # with the mineral formulas evaluated and the DEM integrated for every element, the same
    # to rounding
    exact_fwd = functools.partial(_accel.forward, tabulate=False)
    with pytest.MonkeyPatch.context() as mp, _jit.use_accel(True):
        mp.setattr(_accel, "forward", exact_fwd)
        exact = fm(**kw)
    with _jit.use_accel(False), dem_flow.use_tables(False):
        integrated = fm(**kw)
    _close(integrated, exact, rtol=1e-9)  # measured 2.4e-11 (Vs through the dry-crack DEM)
    # batch of one (its own short path) equals the batch
    for i in (0, 7, 123):  # (rounding: the same table)
        one = {k: (v[i] if np.ndim(v) else v) for k, v in kw.items()}
        with _jit.use_accel(True):
            vp, vs, rho = fm(**one)
        assert vp.shape == () and float(vp) == pytest.approx(fast[0][i], rel=1e-12)
        assert float(vs) == pytest.approx(fast[1][i], rel=1e-12)
        assert float(rho) == pytest.approx(fast[2][i], rel=1e-12)


@pytest.mark.parametrize("settings", [
    {"mixing": "hashin_shtrikman"}, {"pore_fluid": "isolated"},
    {"serpentine_mixing": "mineral_hill"}, {"inclusion_scheme": "self_consistent"},
    {"attenuation_law": "yamauchi_takei2016"},
])
def test_other_settings_take_the_numpy_path(settings):
    from bayescrust import ForwardModel

    fm = ForwardModel(rocks=("gabbro", "harzburgite"), **settings)
    assert fm._fused is None
    kw = _rock_inputs(200, 3)
    kw["fractions"] = kw["fractions"][:, :2] / kw["fractions"][:, :2].sum(1, keepdims=True)
    ref, fast = _both(fm, **kw)
    _close(ref, fast, rtol=1e-9)


def test_scalar_spheroid_geometry_equals_the_array_form():
    # spheroids._theta_f1 (one aspect ratio, branches) against _theta_f (masks): oblate,
    # the series about the sphere, and prolate
    from numba import njit

    alpha = np.r_[np.logspace(-4, 4, 161), 0.95, 0.999, 1.0, 1.001, 1.05]
    theta1 = njit(lambda a: spheroids._theta_f1(a))
    got = np.array([theta1(a) for a in alpha])
    ref = np.stack(spheroids._theta_f(alpha), axis=-1)
    np.testing.assert_allclose(got, ref, rtol=1e-13, atol=1e-15)


def test_recipe_table_interpolation_error():
    # the (T, P) table of recipe sums (linear in T over 1024 nodes, 4-point Lagrange in P over
    # 33) against the mineral formulas at 20000 random points of the grid: the error bound of
    # the compiled model's solid (measured 2.4e-7; 256 x 32 bilinear nodes gave 7.7e-5)
    from bayescrust import ForwardModel
    from bayescrust.physics import _accel

    fm = ForwardModel(rocks=("gabbro", "harzburgite", "basalt"))
    recipes, cols, tab, grid = _accel._recipes(fm)
    rng = np.random.default_rng(5)
    m = cols.shape[1]
    work = [np.empty(m) for _ in range(3)]
    q_tab = np.empty((5, recipes.shape[0]))
    q_ex = np.empty_like(q_tab)
    worst = 0.0
    t_lo, t_hi = grid[0], grid[0] + grid[1] * (grid[2] - 1)
    p_hi = grid[3] + grid[4] * (grid[5] - 1)
    points = np.c_[rng.uniform(t_lo, t_hi, 20000), rng.uniform(0.0, p_hi, 20000)]
    points = np.r_[points, [[t_lo, 0.0], [t_hi, p_hi], [t_lo, p_hi], [t_hi, 0.0]]]
    for t_k, p in points:
        assert _accel._recipe_lookup(t_k, p, tab, grid, q_tab)
        _accel._recipe_sums(t_k, p, recipes, cols, q_ex, *work)
        worst = max(worst, float(np.max(np.abs(q_tab / q_ex - 1.0))))
    assert worst < 5e-7, worst
    assert worst > 1e-9  # it is an interpolation (not the formulas again)
    # outside the grid the lookup declines (the kernel then uses the formulas)
    for t_k, p in ((t_lo - 1.0, 0.5), (t_hi + 1.0, 0.5), (500.0, p_hi + 0.01), (500.0, -0.01)):
        assert not _accel._recipe_lookup(t_k, p, tab, grid, q_tab)
