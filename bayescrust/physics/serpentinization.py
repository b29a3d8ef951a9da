"""Partly serpentinised peridotite: the rock-level mixing of fresh peridotite and serpentinite.

Laboratory velocities of partly serpentinised peridotites fall almost linearly with serpentine
content: a 1 % drop in Vp per 2.4 % serpentine (Carlson & Miller 2003). Replacing minerals
volume-for-volume inside one Voigt-Reuss-Hill average (the earlier scheme, still available as
``"mineral_hill"``) drops Vp much faster at small serpentine contents, because the Reuss half
of the Hill average is dominated by the soft phase. Treating the rock as a two-phase composite of
the fresh rock (host, stiffer) and serpentinite (the soft phase), with the Hashin-Shtrikman upper
bound, reproduces the laboratory line within its scatter at 0-50 % serpentine (see
``docs/validation.md``).

Schemes share one signature,
``scheme(k_fresh, g_fresh, k_serp, g_serp, s) -> (k, g)``, with ``s`` the serpentinite volume
fraction of the rock; chosen by name from :data:`SERPENTINE_MIXING`.
"""

from __future__ import annotations

import numpy as np

from bayescrust.physics._jit import jitable

__all__ = ["SERPENTINE_MIXING", "hs_upper_two_phase"]


@jitable
def _zeta(k, g):
    """Berryman's zeta(K, G) = (G/6)(9K + 8G)/(K + 2G)."""
    return g * (9.0 * k + 8.0 * g) / (6.0 * (k + 2.0 * g))


def hs_upper_two_phase(k_fresh, g_fresh, k_serp, g_serp, s):
    """Hashin-Shtrikman bound of a fresh-rock host with a serpentinite fraction ``s``.

    Parameters
    ----------
    k_fresh, g_fresh, k_serp, g_serp : array_like
        Bulk and shear moduli (GPa) of the unserpentinised rock and of serpentinite; broadcast.
    s : array_like
        Volume fraction of serpentinite, in [0, 1].

    Returns
    -------
    k, g : numpy.ndarray
        Effective moduli, GPa. The reference medium is the stiffer phase, so this is the upper
        bound whenever the fresh rock is the stiffer phase (always so for peridotite and
        lizardite or antigorite serpentinite).

    Notes
    -----
    Berryman (1995) form of Hashin & Shtrikman (1963):
    K = <1/(K_i + 4 G_r/3)>^-1 - 4 G_r/3 and G = <1/(G_i + zeta_r)>^-1 - zeta_r,
    zeta_r = (G_r/6)(9 K_r + 8 G_r)/(K_r + 2 G_r), r = the fresh rock. At s = 0 and s = 1 the
    phases are returned exactly.

    References
    ----------
    Hashin, Z. & Shtrikman, S. (1963) A variational approach to the theory of the elastic
    behaviour of multiphase materials. J. Mech. Phys. Solids 11:127-140.
    Berryman, J. G. (1995) Mixture theories for rock properties. AGU Reference Shelf 3, 205-228.
    Carlson, R. L. & Miller, D. J. (2003) Mantle wedge water contents estimated from seismic
    velocities in partially serpentinized peridotites. Geophys. Res. Lett. 30(5), 1250.
    """
    return _hs_upper(*(np.asarray(x, float) for x in (k_fresh, g_fresh, k_serp, g_serp, s)))


@jitable
def _hs_upper(k_fresh, g_fresh, k_serp, g_serp, s):
    """:func:`hs_upper_two_phase` on arrays or scalars (the compiled forward model)."""
    zk = 4.0 / 3.0 * g_fresh
    zg = _zeta(k_fresh, g_fresh)
    k = 1.0 / ((1.0 - s) / (k_fresh + zk) + s / (k_serp + zk)) - zk
    g = 1.0 / ((1.0 - s) / (g_fresh + zg) + s / (g_serp + zg)) - zg
    return k, g


#: Serpentine mixing schemes: ``"hs_upper"`` (default; rock-level two-phase composite) and
#: ``"mineral_hill"`` (serpentine minerals replace the peridotite's minerals inside one
#: Voigt-Reuss-Hill average: the former default, kept for comparison). The second is handled by
#: the forward model itself, so it maps to ``None`` here.
SERPENTINE_MIXING = {"hs_upper": hs_upper_two_phase, "mineral_hill": None}
