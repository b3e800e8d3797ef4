"""Gaussian plume physics: dispersion coefficients, wind profile, plume rise, plume terms.

Pure functions on floats and numpy arrays, SI units, no files, no printing, no CRS. Stability
classes are indexed 0..5 for Pasquill classes A..F. The coefficient values themselves are a
lookup table (config/dispersion.toml) handed in by the caller as :class:`SigmaScheme`.

What is not here: the annual (long-term) summation over weather (``longterm.py``) and dry
deposition (``deposition.py``).

References
----------
.. [Briggs1973] G.A. Briggs, "Diffusion estimation for small emissions", ATDL Contribution
   No. 79, NOAA (1973); formulas as tabulated in [EPA1995] Vol. II.
.. [EPA1995] US EPA, "User's guide for the Industrial Source Complex (ISC3) dispersion models,
   Vol. II: description of model algorithms", EPA-454/B-95-003b (1995).
.. [Turner1970] D.B. Turner, "Workbook of atmospheric dispersion estimates", AP-26 (1970).
.. [Irwin1979] J.S. Irwin, Atmos. Environ. 13 (1979) 191-194 (wind-profile exponents).
.. [Briggs1969] G.A. Briggs, "Plume rise", USAEC Critical Review Series (1969); momentum-rise
   formulas as used in [EPA1995] Sect. 1.1.4 (from memory).
.. [Briggs1974] G.A. Briggs, "Diffusion estimation for small emissions", ATDL-106 (1974);
   stack-tip downwash as given in [EPA1995] Sect. 1.1.2, Eq. 1-7 (equation number from memory).
.. [EPA1985] US EPA, "Guideline for determination of good engineering practice stack height
   (technical support document for the stack height regulations), revised", EPA-450/4-80-023R
   (1985); Hg = H + 1.5 L, also 40 CFR 51.100(ii) (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

STABILITY_CLASSES = ("A", "B", "C", "D", "E", "F")
_SQRT_2PI = np.sqrt(2.0 * np.pi)
GRAVITY_M_S2 = 9.80665  # standard gravity, CGPM 1901

#: potential-temperature gradients for stable classes E, F [K m-1], [EPA1995] Sect. 1.1.4.3
#: (default values, from memory); None for the unstable and neutral classes.
_STABLE_DTHETA_DZ_K_M = (None, None, None, None, 0.020, 0.035)
_AMBIENT_TEMPERATURE_K = 293.15  # assumed for stable momentum rise (common practice, no source)


@dataclass(frozen=True)
class SigmaScheme:
    """Dispersion coefficients for the six stability classes A..F.

    ``kind == "briggs"``: sigma = a x (1 + b x)^c with arrays ``y`` and ``z`` of shape (6, 3)
    holding (a, b, c) per class [Briggs1973].
    ``kind == "pasquill_gifford"``: ``y`` holds (c, d) per class; ``z_bands`` per class a
    tuple of (upper_km, a, b) rows [EPA1995] Tables 1-1/1-2.

    Attributes
    ----------
    name : str
        Label of the scheme (land type and kind), for the run record.
    kind : {"briggs", "pasquill_gifford"}
        Which formula the coefficients belong to.
    y : ndarray
        Lateral coefficients per class, (6, 3) for Briggs (sigma_y [m] of x [m]) or (6, 2) for
        Pasquill-Gifford (degrees, of x [km]).
    z : ndarray, optional
        Vertical Briggs coefficients per class, (6, 3); None for Pasquill-Gifford.
    z_bands : tuple, optional
        Pasquill-Gifford sigma_z bands per class, rows of (upper end [km], a, b); None for
        Briggs.
    """

    name: str
    kind: str
    y: np.ndarray
    z: np.ndarray | None = None
    z_bands: tuple | None = None

    def sigma_y_m(self, distance_m, stability_index: int) -> np.ndarray:
        """Lateral spread sigma_y [m] at downwind distance [m] for one stability class.

        Parameters
        ----------
        distance_m : float or ndarray
            Downwind distance [m], >= 0.
        stability_index : int
            Pasquill class, 0..5 for A..F.

        Returns
        -------
        ndarray
            sigma_y [m], the shape of ``distance_m``.
        """
        x = np.asarray(distance_m, dtype=float)
        if self.kind == "briggs":
            a, b, c = self.y[stability_index]
            return a * x * (1.0 + b * x) ** c  # [Briggs1973]
        c, d = self.y[stability_index]
        x_km = np.maximum(x, 1e-6) / 1000.0
        theta_rad = 0.017453293 * (c - d * np.log(x_km))  # [EPA1995] Eq. 1-35 (from memory)
        return 465.11628 * x_km * np.tan(theta_rad)

    def sigma_z_m(self, distance_m, stability_index: int) -> np.ndarray:
        """Vertical spread sigma_z [m] at downwind distance [m] for one stability class.

        Parameters
        ----------
        distance_m : float or ndarray
            Downwind distance [m], >= 0.
        stability_index : int
            Pasquill class, 0..5 for A..F.

        Returns
        -------
        ndarray
            sigma_z [m], the shape of ``distance_m`` (Pasquill-Gifford: at most 5000 m).
        """
        x = np.asarray(distance_m, dtype=float)
        if self.kind == "briggs":
            a, b, c = self.z[stability_index]
            return a * x * (1.0 + b * x) ** c  # [Briggs1973]
        x_km = np.maximum(x, 1e-6) / 1000.0
        bands = np.asarray(self.z_bands[stability_index], dtype=float)
        band = np.searchsorted(bands[:, 0], x_km, side="left")
        band = np.minimum(band, len(bands) - 1)
        sz = bands[band, 1] * x_km ** bands[band, 2]  # [EPA1995] Eq. 1-34 (from memory)
        return np.minimum(sz, 5000.0)  # [EPA1995]: sigma_z capped at 5000 m


def virtual_distance_m(sigma0_m: float, sigma_of_distance, max_distance_m: float = 1.0e5) -> float:
    """Distance at which a sigma function reaches an initial spread sigma0 [m].

    The virtual-distance method of [EPA1995] Sect. 1.2.2 for volume sources: the plume of a
    volume source at distance x has the spread of a point source at x + x_virtual.

    Parameters
    ----------
    sigma0_m : float
        Initial spread [m], >= 0. Zero gives zero.
    sigma_of_distance : callable
        Monotone sigma(x) [m] of distance x [m].
    max_distance_m : float
        Upper end of the search [m].

    Returns
    -------
    float
        The virtual distance [m] (log-log interpolation on a table of 1 % steps).
    """
    if sigma0_m <= 0.0:
        return 0.0
    distance_m = np.geomspace(1e-3, max_distance_m, 800)  # 1 % steps; log-log interpolation
    sigma_m = np.maximum.accumulate(sigma_of_distance(distance_m))
    return float(np.exp(np.interp(np.log(sigma0_m), np.log(sigma_m), np.log(distance_m))))


WIND_BELOW_ANEMOMETER = ("power_law", "unchanged")
#: Lowest height the power law is taken down to [m]: below it (a ground-level store or yard)
#: the speed at this height is used. Common practice, no source; the minimum wind speed of the
#: run then applies on top.
WIND_PROFILE_MIN_HEIGHT_M = 1.0


def wind_speed_at_height_m_s(
    speed_ref_m_s,
    reference_height_m,
    height_m,
    exponent,
    below_reference: str = "power_law",
    min_height_m: float = WIND_PROFILE_MIN_HEIGHT_M,
    min_speed_m_s: float = 0.0,
):
    """Power-law wind speed u(z) = u_ref (z / z_ref)^p [Irwin1979], [EPA1995] Eq. 1-6.

    Parameters
    ----------
    speed_ref_m_s : float or ndarray
        Wind speed measured at the reference (anemometer) height [m s-1], > 0.
    reference_height_m : float
        Anemometer height z_ref [m], > 0.
    height_m : float or ndarray
        Release height z [m], >= 0.
    exponent : float
        Power-law exponent p of the stability class [-].
    below_reference : {"power_law", "unchanged"}
        "power_law" (the default, cautious): the law is applied below the anemometer too, down
        to ``min_height_m``, as [EPA1995] Eq. 1-6 does for any stack height; a 5 m outlet under a
        10 m anemometer gets a lower wind and so a higher concentration. "unchanged": below the
        anemometer the measured speed is used as it is (the speed is never lowered).
    min_height_m : float
        Lowest height the law is taken down to [m], > 0.
    min_speed_m_s : float
        Floor of the result [m s-1] (the run's minimum wind speed), >= 0.

    Returns
    -------
    speed_m_s : ndarray
        Wind speed at the release height [m s-1].
    """
    if below_reference not in WIND_BELOW_ANEMOMETER:
        raise ValueError(
            f"below_reference must be one of {WIND_BELOW_ANEMOMETER}, got {below_reference!r}"
        )
    floor_m = reference_height_m if below_reference == "unchanged" else min_height_m
    height_m = np.maximum(height_m, floor_m)
    speed = speed_ref_m_s * (height_m / reference_height_m) ** exponent
    return np.maximum(speed, min_speed_m_s)


def gep_stack_height_m(building_height_m: float, building_width_m: float | None = None) -> float:
    """Good-engineering-practice stack height Hg = Hb + 1.5 L [m] ([EPA1985]; 40 CFR 51.100(ii)).

    L is the lesser of the building height Hb and its greatest projected width W. With the
    height alone, the width is taken no smaller than the height (L = Hb, Hg = 2.5 Hb): the
    lowest width that can make L = Hb, so an outlet is never judged clear of the wake on a
    guessed narrow building. An outlet at or above Hg stands clear of the building's wake.

    Parameters
    ----------
    building_height_m : float
        Height of the building the outlet stands on or beside [m], > 0.
    building_width_m : float, optional
        Its greatest projected width (crosswind) [m], > 0; None when not known.

    Returns
    -------
    float
        Hg [m].

    Raises
    ------
    ValueError
        If ``building_height_m`` is not above 0.
    """
    if building_height_m <= 0:
        raise ValueError(f"building_height_m must be > 0, got {building_height_m}")
    width_m = building_height_m if building_width_m is None else max(building_width_m, 0.0)
    return building_height_m + 1.5 * min(building_height_m, width_m)  # [EPA1985]


def stack_tip_downwash_height_m(stack_height_m, diameter_m, exit_velocity_m_s, wind_speed_m_s):
    """Release height after stack-tip downwash [m] ([Briggs1974]; [EPA1995] Eq. 1-7).

    h' = hs + 2 D (vs / us - 1.5) where the exit velocity vs is below 1.5 times the wind speed
    us at the outlet, else hs: a slow jet is pulled down into the outlet's own wake. Never
    below 0 (the ground).

    Parameters
    ----------
    stack_height_m : float or ndarray
        Outlet height hs [m], >= 0.
    diameter_m : float or ndarray
        Outlet diameter D [m], >= 0.
    exit_velocity_m_s : float or ndarray
        Exit velocity vs [m s-1], >= 0.
    wind_speed_m_s : float or ndarray
        Wind speed at the outlet us [m s-1], > 0.

    Returns
    -------
    ndarray
        h' [m], in [0, hs].
    """
    lowered = stack_height_m + 2.0 * diameter_m * (exit_velocity_m_s / wind_speed_m_s - 1.5)
    return np.clip(lowered, 0.0, stack_height_m)


def momentum_plume_rise_m(diameter_m, exit_velocity_m_s, wind_speed_m_s, stability_index: int):
    """Momentum plume rise of an ambient-temperature jet [m] ([Briggs1969], [EPA1995] 1.1.4).

    Unstable and neutral (A-D): dh = 3 d w / u. Stable (E, F): the smaller of that and
    1.5 (F_m / (u sqrt(s)))^(1/3) with F_m = w^2 d^2 / 4 and s = g / T_a * dtheta/dz.
    Livestock house outlets exhaust air near ambient temperature, so buoyancy is neglected.
    Formulas from memory; a source without exit velocity has no rise (the caller passes 0).

    Parameters
    ----------
    diameter_m : float or ndarray
        Outlet diameter d [m], >= 0.
    exit_velocity_m_s : float or ndarray
        Exit velocity w [m s-1], >= 0.
    wind_speed_m_s : float or ndarray
        Wind speed at the outlet u [m s-1], > 0.
    stability_index : int
        Pasquill class, 0..5 for A..F.

    Returns
    -------
    float or ndarray
        Plume rise dh [m].
    """
    rise_neutral_m = 3.0 * diameter_m * exit_velocity_m_s / wind_speed_m_s
    dtheta_dz = _STABLE_DTHETA_DZ_K_M[stability_index]
    if dtheta_dz is None:
        return rise_neutral_m
    stability_s2 = GRAVITY_M_S2 / _AMBIENT_TEMPERATURE_K * dtheta_dz
    momentum_flux_m4_s2 = exit_velocity_m_s**2 * diameter_m**2 / 4.0
    rise_stable_m = 1.5 * (momentum_flux_m4_s2 / (wind_speed_m_s * np.sqrt(stability_s2))) ** (
        1 / 3
    )
    return np.minimum(rise_neutral_m, rise_stable_m)


def vertical_term(
    sigma_z_m, release_height_m, receptor_height_m=0.0, mixing_height_m=None, n_images: int = 4
):
    """Dimensionless vertical term V of the Gaussian plume with ground reflection.

    V = exp(-(z - H)^2 / 2 sz^2) + exp(-(z + H)^2 / 2 sz^2), plus image terms for reflection at a
    mixing lid L when given ([EPA1995] Eq. 1-50, summed over +-n_images reflections); where
    sz > 1.6 L the plume is taken as well mixed: V = sqrt(2 pi) sz / L ([EPA1995], from memory).
    The concentration is then Q V / (2 pi u sy sz) times the lateral term.

    Parameters
    ----------
    sigma_z_m : float or ndarray
        Vertical spread sz [m], > 0.
    release_height_m : float or ndarray
        Effective release height H [m], >= 0.
    receptor_height_m : float
        Receptor height z [m], >= 0.
    mixing_height_m : float, optional
        Height of a reflecting lid L [m]; None for no lid.
    n_images : int
        Reflections at the lid summed each way.

    Returns
    -------
    ndarray
        V [-], broadcast shape of the inputs.
    """
    sz = np.asarray(sigma_z_m, dtype=float)
    h = release_height_m
    z = receptor_height_m
    two_sz2 = 2.0 * sz * sz
    if mixing_height_m is None and np.ndim(z) == 0 and z == 0:  # at ground: image = plume
        return 2.0 * np.exp(-(h * h) / two_sz2)
    v = np.exp(-((z - h) ** 2) / two_sz2) + np.exp(-((z + h) ** 2) / two_sz2)
    if mixing_height_m is None:
        return v
    lid = float(mixing_height_m)
    for n in range(1, n_images + 1):
        for k in (-n, n):
            v = v + np.exp(-((z - h - 2 * k * lid) ** 2) / two_sz2)
            v = v + np.exp(-((z + h - 2 * k * lid) ** 2) / two_sz2)
    well_mixed = _SQRT_2PI * sz / lid
    return np.where(sz > 1.6 * lid, well_mixed, v)


def plume_concentration_g_m3(
    emission_g_s,
    wind_speed_m_s,
    crosswind_m,
    sigma_y_m,
    sigma_z_m,
    release_height_m,
    receptor_height_m=0.0,
    mixing_height_m=None,
):
    """Concentration downwind of a continuous point source, with ground reflection.

    Parameters
    ----------
    emission_g_s : float or ndarray
        Source strength [g s-1], >= 0.
    wind_speed_m_s : float or ndarray
        Wind speed at release height [m s-1], > 0.
    crosswind_m : float or ndarray
        Crosswind distance of the receptor from the plume axis [m].
    sigma_y_m, sigma_z_m : float or ndarray
        Lateral and vertical spreads at the receptor's downwind distance [m], > 0.
    release_height_m : float
        Effective release height H [m], >= 0.
    receptor_height_m : float
        Receptor height above ground z [m].
    mixing_height_m : float, optional
        Height of a reflecting lid [m]; None for no lid.

    Returns
    -------
    concentration_g_m3 : ndarray
        Broadcast shape of the inputs [g m-3].

    Raises
    ------
    ValueError
        If emission_g_s < 0 or wind_speed_m_s <= 0.

    Notes
    -----
    Steady state, flat terrain, full reflection at the ground: C = Q / (2 pi u sy sz)
    exp(-y^2 / 2 sy^2) V, [Turner1970] Eq. 3.1; [EPA1995] Eq. 1-1.
    """
    if np.any(np.asarray(emission_g_s) < 0):
        raise ValueError(f"emission_g_s must be >= 0, got {emission_g_s}")
    if np.any(np.asarray(wind_speed_m_s) <= 0):
        raise ValueError(f"wind_speed_m_s must be > 0, got {wind_speed_m_s}")
    sy = np.asarray(sigma_y_m, dtype=float)
    lateral = np.exp(-0.5 * (np.asarray(crosswind_m) / sy) ** 2)
    v = vertical_term(sigma_z_m, release_height_m, receptor_height_m, mixing_height_m)
    return emission_g_s / (2.0 * np.pi * wind_speed_m_s * sy * sigma_z_m) * lateral * v


def sector_average_concentration_g_m3(
    emission_g_s,
    frequency_fraction,
    wind_speed_m_s,
    arc_distance_m,
    sector_width_rad,
    sigma_z_m,
    vertical,
):
    """Long-term sector-averaged concentration of one weather class [g m-3].

    C = f Q V / (sqrt(2 pi) u sz dtheta x): the plume is spread evenly across a sector of width
    dtheta at distance x ([Turner1970] Ch. 10; [EPA1995] Eq. 1-? "sector-averaged", from
    memory). With n = 16 sectors and a ground-level receptor this is the familiar
    2.032 f Q exp(-H^2 / 2 sz^2) / (sz u x).

    Parameters
    ----------
    emission_g_s : float or ndarray
        Source strength [g s-1].
    frequency_fraction : float or ndarray
        Share of the time with this (sector, speed, stability) class [-].
    wind_speed_m_s : float or ndarray
        Wind speed at release height [m s-1], > 0.
    arc_distance_m : ndarray
        Downwind distance used for the sector arc [m], > 0.
    sector_width_rad : float
        Sector width [rad], 2 pi / n.
    sigma_z_m : ndarray
        Vertical spread [m].
    vertical : ndarray
        Vertical term V from :func:`vertical_term` [-].

    Returns
    -------
    ndarray
        Concentration [g m-3], broadcast shape of the inputs.
    """
    return (
        emission_g_s
        * frequency_fraction
        * vertical
        / (_SQRT_2PI * wind_speed_m_s * sigma_z_m * sector_width_rad * arc_distance_m)
    )
