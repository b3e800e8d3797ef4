"""Dry deposition: flux at the ground and source depletion of the plume.

Pure functions on numpy arrays, SI units. The flux to the surface is F = v_d C (ground-level
concentration times deposition velocity). Source depletion after Chamberlain removes what has
been deposited upwind from the plume's source strength, so deposited + airborne = emitted.

References
----------
.. [Chamberlain1953] A.C. Chamberlain, "Aspects of travel and deposition of aerosol and vapour
   clouds", AERE HP/R 1261 (1953).
.. [VanderHoven1968] I. Van der Hoven, "Deposition of particles and gases", in D.H. Slade (ed.),
   Meteorology and Atomic Energy, USAEC (1968), Sect. 5-3 (source-depletion equation; from
   memory).
"""

from __future__ import annotations

import numpy as np

from siting.physics.plume import vertical_term

_SQRT_2PI = np.sqrt(2.0 * np.pi)


def ground_vertical_density_per_m(sigma_z_m, release_height_m, mixing_height_m=None):
    """Share of the crosswind-integrated plume per metre of height at the ground [m-1].

    g = V(z = 0) / (sqrt(2 pi) sz). Without a lid this is sqrt(2/pi) exp(-H^2 / 2 sz^2) / sz, the
    integrand of the source-depletion equation [VanderHoven1968]. The crosswind-integrated
    ground-level concentration of a plume carrying Q [g s-1] is Q g / u.

    Parameters
    ----------
    sigma_z_m : float or ndarray
        Vertical spread [m], > 0.
    release_height_m : float
        Effective release height H [m], >= 0.
    mixing_height_m : float, optional
        Height of a reflecting lid [m]; None for no lid.

    Returns
    -------
    ndarray
        g [m-1], the shape of ``sigma_z_m``.
    """
    sz = np.asarray(sigma_z_m, dtype=float)
    return vertical_term(sz, release_height_m, 0.0, mixing_height_m) / (_SQRT_2PI * sz)


def cumulative_depletion_integral_m0(distance_m, density_per_m):
    """Running integral I(x) = int_0^x g(x') dx' on an increasing distance table [-].

    Trapezoid rule on the given table; the first node's share is g(x0) x0 (the integrand is
    negligible there for elevated or volume sources, and the table should start close to 0).

    Parameters
    ----------
    distance_m : ndarray
        Increasing downwind distances [m], > 0.
    density_per_m : ndarray
        g(x) at those distances from :func:`ground_vertical_density_per_m` [m-1].

    Returns
    -------
    ndarray
        I(x) at every node [-].
    """
    x = np.asarray(distance_m, dtype=float)
    g = np.asarray(density_per_m, dtype=float)
    steps = 0.5 * (g[1:] + g[:-1]) * np.diff(x)
    return np.concatenate(([g[0] * x[0]], g[0] * x[0] + np.cumsum(steps)))


def source_depletion_fraction(deposition_velocity_m_s, wind_speed_m_s, depletion_integral):
    """Q(x) / Q0 = exp(-(v_d / u) int_0^x g dx') [Chamberlain1953], [VanderHoven1968].

    Parameters
    ----------
    deposition_velocity_m_s : float
        Deposition velocity along the path [m s-1], >= 0.
    wind_speed_m_s : float or ndarray
        Wind speed transporting the plume [m s-1], > 0.
    depletion_integral : ndarray
        I(x) from :func:`cumulative_depletion_integral_m0` at the receptor distances [-].

    Returns
    -------
    fraction : ndarray
        Share of the emission still airborne at x, in (0, 1].

    Notes
    -----
    Full reflection of the undepleted shape is kept (the plume's vertical profile is not
    reshaped by the deposition at its foot): the classical source-depletion approximation.
    """
    return np.exp(-(deposition_velocity_m_s / wind_speed_m_s) * depletion_integral)


def dry_deposition_flux_g_m2_s(concentration_g_m3, deposition_velocity_m_s):
    """Dry deposition flux F = v_d C [g m-2 s-1] of ground-level concentration [g m-3].

    Parameters
    ----------
    concentration_g_m3 : float or ndarray
        Ground-level concentration [g m-3].
    deposition_velocity_m_s : float or ndarray
        Dry deposition velocity [m s-1].

    Returns
    -------
    ndarray
        Flux [g m-2 s-1].
    """
    return np.asarray(concentration_g_m3) * deposition_velocity_m_s
