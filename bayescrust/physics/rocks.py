"""The forward model: rock, P, T, pores, melt, serpentine -> Vp, Vs, density (the rock
recipes are in :mod:`~.recipes`).

The forward model chains the physics modules in a fixed order:

1. mineral state at (P, T) (``minerals``: thermal expansion, Anderson–Grüneisen moduli,
   third-order Birch–Murnaghan compression);
2. modal mixing of the minerals (``mixing``; Voigt–Reuss–Hill by default);
3. seawater-filled pores/cracks and basaltic-melt inclusions in the solid (``inclusions``;
   differential effective medium by default, valid to Layer 2 porosities);
4. anelastic dispersion of the velocities (``anelastic``; absorption-band Q and Karato's
   first-order correction).

Serpentinisation replaces, by volume, a fraction of each ultramafic rock by serpentinite.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from . import (
    _jit,
    anelastic,
    dem_flow,
    fluids,
    inclusions,
    minerals,
    mixing,
    pores,
    serpentinization,
)
from ._checks import as_float_array, check_range
from ._data import CELSIUS_TO_KELVIN
from .recipes import ROCKS, Rock, _custom_rock, _resolve_rock, list_rocks

__all__ = [
    "ROCKS",
    "ForwardModel",
    "apply_stability",
    "Rock",
    "RockProperties",
    "list_rocks",
    "rock_properties",
]

_SERPENTINITE_OF = {"lizardite": "serpentinite", "antigorite": "antigorite_serpentinite"}
_CHUNK = 4096  # elements per block: cache-sized temporaries; at batch 1e5 this ran 1.5-1.7x
# faster than one whole-batch pass (solid rock 1.1e6 vs 0.66e6 evals/s, with pores 3.1e5 vs 2.3e5)


@dataclass(frozen=True)
class RockProperties:
    """Seismic properties of a rock, arrays of the broadcast input shape.

    Attributes
    ----------
    vp, vs : numpy.ndarray
        P- and S-wave speed, km/s (anelastic at the chosen frequency when enabled).
    density : numpy.ndarray
        Bulk density including pore fluid and melt, g/cm^3.
    """

    vp: np.ndarray
    vs: np.ndarray
    density: np.ndarray

    @property
    def vp_vs(self) -> np.ndarray:
        """Vp/Vs ratio (dimensionless)."""
        return self.vp / self.vs


@dataclass(frozen=True)
class ForwardModel:
    """Vectorised forward model for mixtures of end-member rocks.

    Construction validates the settings and precomputes the mineral table; calling the model
    is the unchecked kernel used inside the log-probability (it never raises for inputs
    inside the physical ranges and does no Python loop over samples).

    Parameters
    ----------
    rocks : sequence of str or Rock
        End-member rocks whose volume fractions are the first argument of a call.
    mixing : {"hill", "voigt", "reuss", "hashin_shtrikman"}
        Rule for averaging the minerals of the solid.
    inclusion_scheme : {"dem", "self_consistent", "kuster_toksoz"}
        Effective-medium theory for pores and melt.
    serpentine : {"lizardite", "antigorite"}
        Kind of serpentinite that ``serpentinization`` produces.
    frequency_hz : float
        Seismic frequency for the anelastic correction (refraction: a few Hz).
    grain_size_mm : float
        Grain size for the attenuation law.
    anelastic : bool
        Apply the anelastic dispersion correction.
    salinity : float
        Pore-water salinity as a mass fraction (seawater 0.035).
    attenuation_law : str
        Name from :data:`bayescrust.physics.anelastic.ATTENUATION_LAWS`.
    serpentine_mixing : {"hs_upper", "mineral_hill"}
        How serpentinite joins the fresh rock (:mod:`bayescrust.physics.serpentinization`):
        a two-phase Hashin-Shtrikman composite following the laboratory trend (default), or
        serpentine minerals inside the Hill average of the rock (the former scheme).
    pore_fluid : {"connected", "isolated"}
        Pore water equalising its pressure between connected pores (relaxed: dry frame +
        Gassmann 1951; default, the seismic-frequency limit, docs/physics.md) or trapped in
        isolated inclusions (unrelaxed, the ultrasonic limit); :mod:`~.pores`.
    crack_closure : bool
        Thin cracks close with effective pressure (confining minus pore pressure; Walsh 1965).
        With the default pore pressure (= confining) nothing closes.
    """

    rocks: tuple
    mixing: str = "hill"
    inclusion_scheme: str = "dem"
    serpentine: str = "lizardite"
    frequency_hz: float = 5.0
    grain_size_mm: float = 5.0
    anelastic: bool = True
    salinity: float = 0.035
    attenuation_law: str = "jackson2002"
    serpentine_mixing: str = "hs_upper"
    pore_fluid: str = "connected"
    crack_closure: bool = True
    _modes: np.ndarray = field(init=False, repr=False)
    _serp_modes: np.ndarray = field(init=False, repr=False)
    _ultramafic: np.ndarray = field(init=False, repr=False)
    _table: object = field(init=False, repr=False)
    _fused: np.ndarray | None = field(init=False, repr=False)

    def __post_init__(self):
        if isinstance(self.rocks, str | Rock):
            raise ValueError("rocks must be a sequence of rock names, e.g. ('gabbro', 'dunite')")
        rocks = tuple(_resolve_rock(r) for r in self.rocks)
        if not rocks:
            raise ValueError("rocks must name at least one rock")
        names = [r.name for r in rocks]
        if len(set(names)) != len(names):
            raise ValueError(f"rocks must not repeat; got {names}")
        _choose("mixing", self.mixing, mixing.MIXING_RULES)
        _choose("inclusion_scheme", self.inclusion_scheme, inclusions.INCLUSION_SCHEMES)
        _choose("attenuation_law", self.attenuation_law, anelastic.ATTENUATION_LAWS)
        _choose("serpentine_mixing", self.serpentine_mixing, serpentinization.SERPENTINE_MIXING)
        _choose("pore_fluid", self.pore_fluid, dict.fromkeys(pores.POROUS_FLUID_MODES))
        if self.serpentine not in _SERPENTINITE_OF:
            raise ValueError(
                f"serpentine must be one of {sorted(_SERPENTINITE_OF)}; got {self.serpentine!r}"
            )
        check_range("frequency_hz", self.frequency_hz, 1e-4, 1e3, unit="Hz")
        check_range("grain_size_mm", self.grain_size_mm, 1e-3, 100.0, unit="mm")
        check_range("salinity", self.salinity, 0.0, 0.3)
        serp = ROCKS[_SERPENTINITE_OF[self.serpentine]]
        mineral_names = sorted({m for r in (*rocks, serp) for m in r.modes})
        idx = {m: i for i, m in enumerate(mineral_names)}
        modes = np.zeros((len(rocks), len(mineral_names)))
        for i, r in enumerate(rocks):
            for m, f in r.modes.items():
                modes[i, idx[m]] = f
        serp_modes = np.zeros(len(mineral_names))
        for m, f in serp.modes.items():
            serp_modes[idx[m]] = f
        object.__setattr__(self, "rocks", rocks)
        object.__setattr__(self, "_modes", modes)
        object.__setattr__(self, "_serp_modes", serp_modes)
        object.__setattr__(self, "_ultramafic", np.array([r.ultramafic for r in rocks], float))
        object.__setattr__(self, "_table", minerals.mineral_table(mineral_names))
        object.__setattr__(self, "_fused", self._fused_settings())

    def _fused_settings(self) -> np.ndarray | None:
        """Settings vector of the compiled whole-model kernel (``physics._accel.forward``), or
        None where the settings need the numpy path (any mixing but Hill, another inclusion
        scheme, isolated pores, the mineral-Hill serpentinite, an attenuation law other than
        Jackson et al. 2002). The kernel runs only when the compiled kernels are on."""
        if (self.mixing, self.inclusion_scheme, self.pore_fluid, self.serpentine_mixing) != (
                "hill", "dem", "connected", "hs_upper") or (
                self.anelastic and self.attenuation_law != "jackson2002"):
            return None
        return np.array([  # in the order of physics/_accel.py's _FP_* indices
            self.salinity, float(self.crack_closure), float(self.anelastic), self.frequency_hz,
            self.grain_size_mm, float(anelastic._half_cot(anelastic._J02_ALPHA)),
            anelastic._Q_INV_MAX, -1.0, inclusions.DEM_LOG_CHANGE_PER_STEP,
            inclusions.DEM_MAX_STEPS, inclusions.DEM_SOLID_INCLUSION_FACTOR, inclusions._TINY])

    @property
    def rock_names(self) -> tuple[str, ...]:
        """Names of the end-member rocks, in the order of the fraction axis."""
        return tuple(r.name for r in self.rocks)

    @property
    def ultramafic(self) -> np.ndarray:
        """Boolean mask of the ultramafic end members, shape (n_rocks,)."""
        return self._ultramafic.astype(bool)

    def mineral_fractions(self, fractions, serpentinization=0.0) -> np.ndarray:
        """Volume fractions of the minerals for given rock fractions, shape B + (n_minerals,).

        Serpentinisation replaces the fraction ``serpentinization`` of every ultramafic rock's
        volume by serpentinite (volume-for-volume; the ~40 % volume increase of natural
        serpentinisation is not modelled).
        """
        f = np.asarray(fractions, float)
        s = np.asarray(serpentinization, float)[..., None]
        um = f * self._ultramafic
        return (f - s * um) @ self._modes + (s * um.sum(-1, keepdims=True)) * self._serp_modes

    def __call__(
        self,
        fractions,
        temperature_c,
        pressure_gpa,
        porosity=0.0,
        aspect_ratio=0.1,
        melt_fraction=0.0,
        melt_aspect_ratio=0.05,
        serpentinization=0.0,
        pore_pressure_gpa=None,
    ):
        """Evaluate Vp, Vs (km/s) and density (g/cm^3).

        Parameters
        ----------
        fractions : array_like, shape B + (n_rocks,)
            Volume fractions of the end-member rocks (rows sum to 1).
        temperature_c, pressure_gpa : array_like, broadcastable to B
            Temperature (deg C) and confining pressure (GPa).
        porosity : array_like
            Seawater-filled pore and crack volume fraction of the whole rock.
        aspect_ratio : array_like
            Aspect ratio of the pores (crack ~1e-3 to sphere 1).
        melt_fraction, melt_aspect_ratio : array_like
            Basaltic-melt volume fraction and its inclusion aspect ratio.
        serpentinization : array_like
            Serpentinised fraction of the ultramafic rocks, 0-1.
        pore_pressure_gpa : array_like, optional
            Pressure of the pore water (default: the confining pressure).

        Returns
        -------
        vp, vs, density : numpy.ndarray, shape B
        """
        f = np.asarray(fractions, float)
        scalars = (temperature_c, pressure_gpa, porosity, aspect_ratio, melt_fraction,
                   melt_aspect_ratio, serpentinization,
                   pressure_gpa if pore_pressure_gpa is None else pore_pressure_gpa)
        if f.ndim == 1 and all(np.ndim(a) == 0 for a in scalars):
            # batch of one (CLI, users' scripts): one array instead of eight broadcasts
            vp, vs, rho = self.rows(np.array(f[None, :], dtype=float),
                                    np.array(scalars, dtype=float).reshape(-1, 1))
            return vp.reshape(()), vs.reshape(()), rho.reshape(())
        shape = np.broadcast_shapes(f.shape[:-1], *(np.shape(a) for a in scalars))
        sc = np.empty((len(scalars),) + shape)
        for k, a in enumerate(scalars):  # eight broadcasting copies, no temporaries
            sc[k] = a
        n = sc[0].size
        f = np.ascontiguousarray(np.broadcast_to(f, shape + f.shape[-1:]).reshape(n, -1))
        vp, vs, rho = self.rows(f, sc.reshape(len(scalars), n))
        return vp.reshape(shape), vs.reshape(shape), rho.reshape(shape)

    def rows(self, f, sc):
        """Vp, Vs (km/s) and density (g/cm^3), each shape (n,), of flat rows: the kernel behind
        :meth:`__call__`, without broadcasting or checks.

        ``f`` (n, n_rocks) holds C-contiguous rock fractions, ``sc`` (8, n) the scalars in the
        order temperature_c, pressure_gpa, porosity, aspect_ratio, melt_fraction,
        melt_aspect_ratio, serpentinization, pore_pressure_gpa. Evaluated by the compiled
        whole-model kernel when it is on, else by the numpy reference in cache-sized blocks.
        """
        if self._fused is not None and _jit.enabled():  # the compiled whole model
            from bayescrust.physics import _accel

            out = _accel.forward(self, f, sc)
            return out[0], out[1], out[2]
        t_c, p, phi, ar, melt, mar, serp, p_pore = sc
        n = f.shape[0]
        solid = np.empty((3, n))
        for start in range(0, n, _CHUNK):  # loop over cache-sized blocks, not over samples
            sl = slice(start, start + _CHUNK)
            solid[:, sl] = self._solid(f[sl], t_c[sl], p[sl], serp[sl])
        # the inclusion schemes block their own work internally: one call on every row
        vp, vs, rho = self._finish(*solid, t_c, p, phi, ar, melt, mar, p_pore)
        if self.inclusion_scheme == "kuster_toksoz":
            # a dilute theory: rows beyond its limit are not a model result (NaN, which the
            # inference treats as outside the model); rock_properties refuses them
            beyond = (inclusions.kt_crack_sum(phi, ar, melt, mar)
                      > inclusions.KT_MAX_POROSITY_OVER_ASPECT)
            vp[beyond] = vs[beyond] = rho[beyond] = np.nan
        return vp, vs, rho

    def _solid(self, f, t_c, p, serp):
        """Moduli (GPa) and density of the pore- and melt-free aggregate of flat rows."""
        t_k = t_c + CELSIUS_TO_KELVIN
        x = self.mineral_fractions(f, serp)
        rho_m, k_m, g_m = minerals._mineral_state(self._table, t_k, p)
        rho_s = np.einsum("ij,ij->i", x, rho_m)
        mix = mixing._MIXING_KERNELS[self.mixing]
        s_rock = serp * (f @ self._ultramafic)  # serpentinite volume fraction of the rock
        if self.serpentine_mixing == "mineral_hill" or not np.any(s_rock > 0):
            k_s, g_s = mix(x, k_m, g_m)
        else:
            # fresh part and serpentinite mixed separately, then joined as two phases
            fresh = 1.0 - s_rock
            x_f = x - s_rock[:, None] * self._serp_modes
            # a fully serpentinised rock has no fresh part: any valid mix stands in (weight 0)
            x_f = np.where((fresh > 1e-9)[:, None], x_f / np.maximum(fresh, 1e-9)[:, None], x)
            k_f, g_f = mix(x_f, k_m, g_m)
            k_sp, g_sp = mix(np.broadcast_to(self._serp_modes, x.shape), k_m, g_m)
            k_s, g_s = serpentinization.SERPENTINE_MIXING[self.serpentine_mixing](
                k_f, g_f, k_sp, g_sp, s_rock)
        return k_s, g_s, rho_s

    def _finish(self, k_s, g_s, rho_s, t_c, p, phi, ar, melt, mar, p_pore):
        """Pores, melt and anelasticity on the solid aggregate: Vp, Vs (km/s), density."""
        t_k = t_c + CELSIUS_TO_KELVIN
        rho = rho_s
        has = (phi > 0) | (melt > 0)
        if has.any():
            # the inclusion scheme runs on the rows that have pores or melt only
            i = slice(None) if has.all() else np.flatnonzero(has)
            if np.any(phi[i] > 0):
                rho_w, k_w = fluids._seawater(t_c[i], p_pore[i], self.salinity)
            else:  # melt only: the water phase has zero volume, its properties are unused
                rho_w = k_w = np.ones_like(t_c[i])
            if np.any(melt[i] > 0):
                rho_l, k_l = fluids._basaltic_melt(t_c[i], p[i])
            else:
                rho_l = k_l = np.ones_like(t_c[i])
            k_s, g_s, rho = k_s.copy(), g_s.copy(), rho_s.copy()
            phi_i, ar_i = phi[i], ar[i]
            if self.crack_closure:
                phi_i, ar_i = pores.close_cracks(phi_i, ar_i, p[i] - p_pore[i], k_s[i], g_s[i])
            scheme = inclusions._INCLUSION_KERNELS[self.inclusion_scheme]
            if self.pore_fluid == "isolated":
                k_i = np.stack([k_w, k_l], axis=-1)
                frac = np.stack([phi_i, melt[i]], axis=-1)
                aspect = np.stack([ar_i, mar[i]], axis=-1)
                k_s[i], g_s[i] = scheme(k_s[i], g_s[i], k_i, np.zeros_like(k_i), aspect, frac)
            else:  # connected: melt-bearing solid, dry pores in it, Gassmann saturation
                k_h, g_h = k_s[i].copy(), g_s[i].copy()
                m = melt[i]
                j = np.flatnonzero(m > 0)  # each scheme runs only on the rows it changes
                if j.size:
                    fm = (m[j] / np.maximum(1.0 - phi_i[j], 1e-12))[:, None]
                    k_h[j], g_h[j] = scheme(k_h[j], g_h[j], k_l[j, None], np.zeros_like(fm),
                                            mar[i][j, None], fm)
                k_c, g_c = k_h.copy(), g_h.copy()
                j = np.flatnonzero(phi_i > 0)
                if j.size:
                    k_d, g_d = _dry_frame(self, scheme, k_h[j], g_h[j], ar_i[j], phi_i[j])
                    k_c[j], g_c[j] = pores.gassmann(k_d, g_d, k_h[j], k_w[j], phi_i[j])
                k_s[i], g_s[i] = k_c, g_c
            rho[i] = (1.0 - phi_i - melt[i]) * rho_s[i] + phi_i * rho_w + melt[i] * rho_l
        vp = np.sqrt((k_s + 4.0 / 3.0 * g_s) / rho)
        vs = np.sqrt(g_s / rho)
        if self.anelastic:
            fp, fs, _ = anelastic.ATTENUATION_LAWS[self.attenuation_law](
                t_k, p, self.frequency_hz, self.grain_size_mm, vp, vs
            )
            vp = vp * fp
            vs = vs * fs
        return vp, vs, rho


def _dry_frame(model, scheme, k_h, g_h, aspect, phi):
    """Moduli of the host with empty pores (the dry frame): the DEM read from the tables of
    :mod:`.dem_flow` where they apply (the theory to 4e-6, ~10-200x faster than integrating),
    the scheme elsewhere (other schemes, or tables off: :func:`dem_flow.use_tables`)."""
    todo = np.ones(phi.size, dtype=bool)
    k_d = np.empty(phi.size)
    g_d = np.empty(phi.size)
    if model.inclusion_scheme == "dem" and dem_flow.tables_on():
        ok, k_d, g_d = dem_flow.dry_dem_arrays(k_h, g_h, aspect, -np.log1p(-phi))
        todo = ~ok
    if np.any(todo):
        zero = np.zeros((int(todo.sum()), 1))
        k_d[todo], g_d[todo] = scheme(k_h[todo], g_h[todo], zero, zero, aspect[todo, None],
                                      phi[todo, None])
    return k_d, g_d


def _choose(what: str, name: str, table: Mapping):
    if name not in table:
        raise ValueError(f"{what} must be one of {sorted(table)}; got {name!r}")
    return table[name]


def _rock_fractions(rock) -> tuple[tuple, np.ndarray | None]:
    """Split the ``rock`` argument into end-member rocks and a fraction array."""
    if isinstance(rock, str | Rock):
        return (rock,), None
    if isinstance(rock, Mapping):
        keys = list(rock)
        if not keys:
            raise ValueError("rock mapping is empty; name rocks or minerals with fractions")
        if not all(k in ROCKS for k in keys):
            if any(k in minerals.MINERALS for k in keys):
                return (_custom_rock(rock),), None  # a mineral mix; names unknown minerals
            for k in keys:
                _resolve_rock(k)  # names the unknown rock
        arrays = [check_range(f"fraction of {k}", v, 0.0, 1.0) for k, v in rock.items()]
        fr = np.stack(np.broadcast_arrays(*arrays), axis=-1)
        total = fr.sum(-1)
        if np.any(np.abs(total - 1.0) > 1e-6):
            bad = total[np.abs(total - 1.0) > 1e-6].ravel()[0]
            raise ValueError(f"rock fractions must sum to 1; got {bad:.6g}")
        return tuple(keys), fr
    if isinstance(rock, Sequence):
        raise ValueError(
            "rock must be a rock name, a mapping rock -> fraction or mineral -> fraction; "
            f"got a sequence {rock!r}"
        )
    raise ValueError(f"rock must be a rock name or a mapping; got {rock!r}")


def rock_properties(
    rock,
    *,
    temperature_c,
    pressure_gpa,
    porosity=0.0,
    aspect_ratio=0.1,
    melt_fraction=0.0,
    melt_aspect_ratio=0.05,
    serpentinization=0.0,
    serpentine: str = "lizardite",
    frequency_hz: float = 5.0,
    grain_size_mm: float = 5.0,
    mixing: str = "hill",
    inclusion_scheme: str = "dem",
    anelastic: bool = True,
    pore_pressure_gpa=None,
    pore_fluid: str = "connected",
    crack_closure: bool = True,
    attenuation_law: str = "jackson2002",
) -> RockProperties:
    """Vp, Vs and density of a rock at pressure and temperature, with pores, melt and serpentine.

    Every numeric argument broadcasts against the others (a leading batch axis is the usual
    case). Inputs are validated here, once; :class:`ForwardModel` is the unchecked kernel.

    Parameters
    ----------
    rock : str, Rock or mapping
        A built-in rock name (see :func:`list_rocks`); a mapping of rock names to volume
        fractions (scalars or arrays, summing to 1 along the batch) to mix end-member rocks; or
        a mapping of mineral names to constant volume fractions for a custom rock.
    temperature_c : array_like
        Temperature, deg C, in [-5, 1800].
    pressure_gpa : array_like
        Confining pressure, GPa, in [0, 10].
    porosity : array_like, optional
        Seawater-filled pore and crack volume fraction, in [0, 0.5].
    aspect_ratio : array_like, optional
        Pore aspect ratio, in [1e-4, 1] (crack ~1e-3, sphere 1).
    melt_fraction : array_like, optional
        Basaltic melt volume fraction, in [0, 0.3]; ``porosity + melt_fraction <= 0.5``.
    melt_aspect_ratio : array_like, optional
        Aspect ratio of melt inclusions, in [1e-4, 1] (films ~0.01-0.1).
    serpentinization : array_like, optional
        Serpentinised fraction of the ultramafic part, in [0, 1].
    serpentine : {"lizardite", "antigorite"}
        Kind of serpentinite produced.
    frequency_hz, grain_size_mm : float, optional
        Seismic frequency and grain size for the anelastic correction.
    mixing, inclusion_scheme : str, optional
        Names of the mineral mixing rule and the pore/melt effective-medium theory.
    anelastic : bool, optional
        Apply the anelastic dispersion correction.
    pore_pressure_gpa : array_like, optional
        Pore-water pressure, GPa (default: the confining pressure, i.e. no crack closure).
    pore_fluid : {"isolated", "connected"}, optional
        Unrelaxed fluid in isolated pores, or relaxed (dry frame + Gassmann) connected pores.
    crack_closure : bool, optional
        Close thin cracks with effective pressure (Walsh 1965).
    attenuation_law : str, optional
        Name from :data:`bayescrust.physics.anelastic.ATTENUATION_LAWS`: ``"jackson2002"``
        (default) or ``"yamauchi_takei2016"`` (near-solidus pre-melting, docs/physics.md).

    Returns
    -------
    RockProperties
        ``.vp``, ``.vs`` (km/s), ``.density`` (g/cm^3) and ``.vp_vs``.

    Raises
    ------
    ValueError
        Unknown rock or mineral, fractions not summing to 1, or a value outside its range;
        the message names the argument and the allowed range.

    Examples
    --------
    >>> r = rock_properties("harzburgite", temperature_c=20.0, pressure_gpa=0.2)
    >>> 8.0 < float(r.vp) < 8.6
    True
    """
    rocks, fr = _rock_fractions(rock)
    t = check_range("temperature_c", temperature_c, -5.0, 1800.0, unit="deg C")
    p = check_range("pressure_gpa", pressure_gpa, 0.0, 10.0, unit="GPa")
    phi = check_range("porosity", porosity, 0.0, 0.5)
    ar = check_range("aspect_ratio", aspect_ratio, 1e-4, 1.0)
    melt = check_range("melt_fraction", melt_fraction, 0.0, 0.3)
    mar = check_range("melt_aspect_ratio", melt_aspect_ratio, 1e-4, 1.0)
    serp = check_range("serpentinization", serpentinization, 0.0, 1.0)
    pp = p if pore_pressure_gpa is None else check_range(
        "pore_pressure_gpa", pore_pressure_gpa, 0.0, 10.0, unit="GPa"
    )
    if np.any(phi + melt > 0.5):
        raise ValueError(
            f"porosity + melt_fraction must be <= 0.5; got {float(np.max(phi + melt)):g}"
        )
    dilute = inclusions.KT_MAX_POROSITY_OVER_ASPECT
    crack = inclusions.kt_crack_sum(phi, ar, melt, mar)
    if inclusion_scheme == "kuster_toksoz" and np.any(crack > dilute):
        raise ValueError(
            "inclusion_scheme='kuster_toksoz' is a dilute theory: porosity / aspect_ratio + "
            f"melt_fraction / melt_aspect_ratio must be <= {dilute:g}; got "
            f"{float(np.max(crack)):g} (use 'dem' or 'self_consistent')"
        )
    fm = ForwardModel(
        rocks=rocks,
        mixing=mixing,
        inclusion_scheme=inclusion_scheme,
        serpentine=serpentine,
        frequency_hz=float(as_float_array("frequency_hz", frequency_hz)),
        grain_size_mm=float(as_float_array("grain_size_mm", grain_size_mm)),
        anelastic=bool(anelastic),
        pore_fluid=pore_fluid,
        crack_closure=bool(crack_closure),
        attenuation_law=attenuation_law,
    )
    if fr is None:
        fr = np.ones(np.broadcast(t, p, phi, ar, melt, mar, serp, pp).shape + (1,))
    vp, vs, rho = fm(fr, t, p, phi, ar, melt, mar, serp, pp)
    return RockProperties(vp=vp, vs=vs, density=rho)


_SERPENTINITE_ROCKS = {"serpentinite": "lizardite", "antigorite_serpentinite": "antigorite"}


def apply_stability(rock, *, temperature_c, pressure_gpa, melt_fraction=0.0,
                    serpentinization=0.0, serpentine: str = "lizardite", **others):
    """Switch off melt below the solidus and serpentine above its stability, and say so.

    The same rule as the layer inversion (melt is effective only above the solidus, serpentine
    only below its stability limit), for a direct forward-model call. A rock counts as mantle-like
    (peridotite solidus) if it is ultramafic or a serpentinite; otherwise the gabbro solidus
    applies.

    Parameters
    ----------
    rock : str, Rock or mapping
        As for :func:`rock_properties` (a mapping counts as mantle-like if any of its rocks is).
    temperature_c, pressure_gpa, melt_fraction, serpentinization : array_like
        As for :func:`rock_properties`; broadcast together.
    serpentine : {"lizardite", "antigorite"}
        Kind of serpentine whose stability limit applies.
    **others
        Passed through unchanged.

    Returns
    -------
    kwargs : dict
        The keyword arguments for :func:`rock_properties`, with ``melt_fraction`` and
        ``serpentinization`` set to 0 where they are not physical.
    messages : list of str
        One message per rule that changed something (empty if nothing changed).

    Notes
    -----
    Solidi and stability limits are those of :mod:`bayescrust.physics.thermal` (Hirschmann
    2000 peridotite solidus; serpentine limits of Evans 2010 / Ulmer & Trommsdorff 1995).
    """
    from . import thermal

    t = np.asarray(temperature_c, float)
    p = np.asarray(pressure_gpa, float)
    if isinstance(rock, Mapping) and any(k in minerals.MINERALS for k in rock):
        mantle = peridotite = _custom_rock(rock).ultramafic  # a mineral mix
    else:
        names = list(rock) if isinstance(rock, Mapping) else [rock]
        resolved = [_resolve_rock(r) for r in names]
        mantle = any(r.ultramafic or r.name in _SERPENTINITE_ROCKS for r in resolved)
        peridotite = any(r.ultramafic for r in resolved)
    solidus = thermal.peridotite_solidus_c(p) if mantle else thermal.gabbro_solidus_c(p)
    messages = []
    melt = np.asarray(melt_fraction, float)
    below = (t <= solidus) & (melt > 0)
    if np.any(below):
        kind = "peridotite" if mantle else "gabbro"
        messages.append(
            f"melt_fraction set to 0 where the temperature is at or below the {kind} solidus "
            f"({float(np.min(solidus)):.0f} deg C at {float(np.min(p)):g} GPa); melt is "
            "effective only above the solidus, as in the inversion")
        melt = np.where(below, 0.0, melt)
    serp = np.asarray(serpentinization, float)
    limit = thermal.serpentine_stability_c(p, kind=serpentine)
    above = (t >= limit) & (serp > 0)
    if np.any(above):
        messages.append(
            f"serpentinization set to 0 where the temperature is at or above the {serpentine} "
            f"stability limit ({float(np.min(limit)):.0f} deg C); serpentine is effective only "
            "below it, as in the inversion")
        serp = np.where(above, 0.0, serp)
    if not peridotite and np.any(serp > 0):
        messages.append(
            "serpentinization has no effect: it is the serpentinised fraction of the ultramafic "
            "(peridotite) rocks, and the mix has none")
    serp_rocks = [] if isinstance(rock, Mapping) and any(k in minerals.MINERALS for k in rock) \
        else [r for r in (list(rock) if isinstance(rock, Mapping) else [rock])
              if _resolve_rock(r).name in _SERPENTINITE_ROCKS]
    for r in serp_rocks:  # a serpentinite end member cannot be switched off: warn only
        name = _resolve_rock(r).name
        kind = _SERPENTINITE_ROCKS[name]
        lim = thermal.serpentine_stability_c(p, kind=kind)
        if np.any(t >= lim):
            messages.append(
                f"{name} ({kind}) is not stable at or above {float(np.min(lim)):.0f} deg C; the "
                "values there describe a rock that would have dehydrated (the inversion refuses "
                "such a temperature prior)")
    kw = dict(others, temperature_c=temperature_c, pressure_gpa=pressure_gpa,
              melt_fraction=melt if melt.ndim else float(melt),
              serpentinization=serp if serp.ndim else float(serp))
    if serpentine != "lizardite":
        kw["serpentine"] = serpentine
    return kw, messages
