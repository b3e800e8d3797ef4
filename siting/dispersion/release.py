"""An element's release in one weather class: wind at release height, effective height, spreads.

Pure numpy. Shared by the sector engine (``sector.py``) and the hourly engine (``hourly.py``):
the wind speed at the element's own height, stack-tip downwash and momentum rise
(:func:`release_wind_and_height`), and the virtual distances that give a volume element its
initial spread (:func:`virtual_distances_m`).
"""

from __future__ import annotations

from siting.dispersion.inputs import DispersionSettings, ReleaseElement
from siting.physics.plume import (
    SigmaScheme,
    momentum_plume_rise_m,
    stack_tip_downwash_height_m,
    virtual_distance_m,
    wind_speed_at_height_m_s,
)


def virtual_distances_m(
    element: ReleaseElement, scheme: SigmaScheme, s: int
) -> tuple[float, float]:
    """Lateral and vertical virtual distances [m] of an element for stability class s.

    Parameters
    ----------
    element : ReleaseElement
        The element (its initial spreads sigma_y0_m, sigma_z0_m).
    scheme : SigmaScheme
        The dispersion coefficients.
    s : int
        Pasquill class, 0..5 for A..F.

    Returns
    -------
    xy_m, xz_m : float
        Lateral and vertical virtual distances [m] (0 for a point element).
    """
    xy_m = virtual_distance_m(element.sigma_y0_m, lambda x: scheme.sigma_y_m(x, s))
    xz_m = virtual_distance_m(element.sigma_z0_m, lambda x: scheme.sigma_z_m(x, s))
    return xy_m, xz_m


def release_wind_and_height(
    element: ReleaseElement,
    speed_ref_m_s: float,
    anemometer_height_m: float,
    exponent: float,
    s: int,
    settings: DispersionSettings,
) -> tuple[float, float]:
    """Wind speed at release height [m s-1] and effective release height [m].

    The wind is taken at the outlet's own height (plume.wind_speed_at_height_m_s, with the
    settings' rule below the anemometer); stack-tip downwash then lowers the height where the
    element has it, and momentum rise is added where the element is allowed rise
    ([EPA1995] Sect. 1.1.2-1.1.4: rise from the downwash-corrected height).

    Parameters
    ----------
    element : ReleaseElement
        The element.
    speed_ref_m_s : float
        Wind speed at the anemometer [m s-1].
    anemometer_height_m : float
        Anemometer height [m].
    exponent : float
        Power-law exponent of the class [-].
    s : int
        Pasquill class, 0..5 for A..F.
    settings : DispersionSettings
        The wind rule below the anemometer and the minimum wind speed.

    Returns
    -------
    speed_m_s : float
        Wind speed at the release height [m s-1].
    height_m : float
        Effective release height [m].
    """
    u = float(
        wind_speed_at_height_m_s(
            speed_ref_m_s,
            anemometer_height_m,
            element.release_height_m,
            exponent,
            settings.wind_below_anemometer,
            settings.wind_profile_min_height_m,
            settings.min_wind_speed_m_s,
        )
    )
    height_m = element.release_height_m
    if element.diameter_m > 0 and element.stack_tip_downwash:
        height_m = float(
            stack_tip_downwash_height_m(height_m, element.diameter_m, element.exit_velocity_m_s, u)
        )
    if element.plume_rise and element.exit_velocity_m_s > 0 and element.diameter_m > 0:
        height_m += float(
            momentum_plume_rise_m(element.diameter_m, element.exit_velocity_m_s, u, s)
        )
    return u, height_m
