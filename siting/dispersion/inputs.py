"""What every dispersion engine is given: the weather classes, release elements and settings.

Pure data (frozen dataclasses) and one constructor: :class:`WeatherClasses` (a weather
frequency table as arrays), :class:`ReleaseElement` (one release point or small volume of a
source), :func:`rectangle_elements` (an area source as a lattice of elements) and
:class:`DispersionSettings` (the model settings a run's sources share). The sector engine
(``sector.py``), the hourly engine (``hourly.py``) and the kernels (``kernels.py``) take them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from siting.physics.plume import WIND_PROFILE_MIN_HEIGHT_M, SigmaScheme

#: Pasquill stability classes A..F (the last axis of the frequency table).
N_STABILITY = 6
#: Working memory of the engines per receptor in a chunk [bytes]: an upper estimate (40 float64
#: arrays alive at once; tracemalloc shows about half of that, tests/test_memory.py).
BYTES_PER_RECEPTOR = 40 * 8


@dataclass(frozen=True)
class WeatherClasses:
    """A weather frequency table as arrays.

    Attributes
    ----------
    sector_centres_deg : ndarray, (n_sectors,)
        Evenly spaced directions the wind blows FROM [deg clockwise from north], ascending.
    speeds_m_s : ndarray, (n_speeds,)
        Class wind speeds at the anemometer height [m s-1], > 0.
    frequency_fraction : ndarray, (n_sectors, n_speeds, 6)
        Share of the time in each (sector, speed, stability A..F) class, summing to 1.
    anemometer_height_m : float
        Height of the wind measurement [m].
    """

    sector_centres_deg: np.ndarray
    speeds_m_s: np.ndarray
    frequency_fraction: np.ndarray
    anemometer_height_m: float = 10.0

    @property
    def sector_width_deg(self) -> float:
        """Width of one direction sector [deg], 360 / n_sectors."""
        return 360.0 / len(self.sector_centres_deg)


@dataclass(frozen=True)
class ReleaseElement:
    """One release element of a source, in projected metres.

    ``share_fraction`` is the element's part of its source's emission; ``min_distance_m`` keeps
    receptors on top of the element from a singular 1/x (receptors closer are evaluated at it);
    for a volume element it is its effective radius 2.15 sigma_y0 ([EPA1995] Sect. 1.2.2).

    ``plume_rise``: momentum rise from ``diameter_m`` and ``exit_velocity_m_s`` is added (only
    for an outlet clear of the building wake; the caller decides, see
    plume.gep_stack_height_m). ``stack_tip_downwash``: the release height is lowered where the
    exit velocity is below 1.5 times the wind speed (plume.stack_tip_downwash_height_m). Both
    off by default: no rise is the cautious choice.

    Attributes
    ----------
    x_m, y_m : float
        Position [m] in the run's projected CRS.
    release_height_m : float
        Release height [m], >= 0.
    sigma_y0_m, sigma_z0_m : float
        Initial lateral and vertical spread [m] (volume elements), >= 0.
    diameter_m : float
        Outlet diameter [m] (point sources with rise or downwash).
    exit_velocity_m_s : float
        Outlet exit velocity [m s-1].
    share_fraction : float
        The element's part of its source's emission [-].
    min_distance_m : float
        Receptors closer than this are evaluated at it [m], > 0.
    plume_rise : bool
        Add momentum plume rise.
    stack_tip_downwash : bool
        Lower the release height by stack-tip downwash.
    """

    x_m: float
    y_m: float
    release_height_m: float
    sigma_y0_m: float = 0.0
    sigma_z0_m: float = 0.0
    diameter_m: float = 0.0
    exit_velocity_m_s: float = 0.0
    share_fraction: float = 1.0
    min_distance_m: float = 1.0
    plume_rise: bool = False
    stack_tip_downwash: bool = False


@dataclass(frozen=True)
class DispersionSettings:
    """Model settings shared by all sources of a run.

    ``wind_exponents`` holds the power-law exponent p per stability class A..F;
    ``depletion_velocity_m_s`` is the deposition velocity used to deplete the plume along its
    path (None, the default, switches depletion off); ``depletion_table_points`` the nodes of each
    depletion integral table; ``profile_log_step`` the spacing of the sector engine's centre-line
    profile nodes in ln(distance) (0.002: nodes 0.2 % apart); ``memory_budget_mb`` bounds the
    engines' working arrays (receptors are evaluated in chunks that fit it). ``wind_below_anemometer``,
    ``wind_profile_min_height_m`` and ``min_wind_speed_m_s`` say how the wind at a release
    height below the anemometer is found (plume.wind_speed_at_height_m_s).

    Attributes
    ----------
    scheme : SigmaScheme
        The dispersion coefficients.
    wind_exponents : ndarray, (6,)
        Power-law wind-profile exponent per class A..F [-].
    mixing_height_m : float, optional
        Height of a reflecting lid [m]; None for none.
    depletion_velocity_m_s : float, optional
        Deposition velocity depleting the plume [m s-1]; None for no depletion.
    depletion_table_points : int
        Nodes of each depletion integral table.
    profile_log_step : float
        Spacing of the centre-line profile nodes in ln(distance [m]) [-].
    memory_budget_mb : float
        Working memory of the engines [MB].
    wind_below_anemometer : {"power_law", "unchanged"}
        The rule for the wind below the anemometer height.
    wind_profile_min_height_m : float
        Lowest height the power law is taken down to [m].
    min_wind_speed_m_s : float
        Floor of the wind speed at release height [m s-1].
    extra : dict
        Not read by the engines (free for a caller's notes).
    """

    scheme: SigmaScheme
    wind_exponents: np.ndarray
    mixing_height_m: float | None = None
    depletion_velocity_m_s: float | None = None
    depletion_table_points: int = 256
    profile_log_step: float = 0.002
    memory_budget_mb: float = 256.0
    wind_below_anemometer: str = "power_law"
    wind_profile_min_height_m: float = WIND_PROFILE_MIN_HEIGHT_M
    min_wind_speed_m_s: float = 1.0
    extra: dict = field(default_factory=dict)

    @property
    def chunk_receptors(self) -> int:
        """Receptors evaluated at once so the engines' working arrays fit the memory budget."""
        return max(1_000, int(self.memory_budget_mb * 1e6 / BYTES_PER_RECEPTOR))


def rectangle_elements(
    x_m: float,
    y_m: float,
    width_m: float,
    length_m: float,
    angle_deg: float,
    release_height_m: float,
    element_size_m: float = 5.0,
    sigma_z0_m: float = 0.0,
) -> list[ReleaseElement]:
    """Split a rectangular area source into a lattice of small volume elements.

    The rectangle is centred on (x, y); its length axis points ``angle_deg`` clockwise from
    north. Elements of side <= element_size_m carry equal shares; each has the lateral initial
    spread of an adjacent-volume line element, side / 2.15 ([EPA1992] table of initial
    dimensions, line source of adjacent volumes; from memory), and its receptors are kept at
    least half a side away. This integrates the area numerically rather than lumping it at one
    point.

    Parameters
    ----------
    x_m, y_m : float
        Centre of the rectangle [m].
    width_m, length_m : float
        Its sides [m], > 0.
    angle_deg : float
        Direction of the length axis [deg clockwise from north].
    release_height_m : float
        Release height [m], >= 0.
    element_size_m : float
        Largest side of an element [m], > 0.
    sigma_z0_m : float
        Initial vertical spread of every element [m], >= 0.

    Returns
    -------
    list of ReleaseElement
        The elements, their shares summing to 1.
    """
    n_len = max(1, int(np.ceil(length_m / element_size_m)))
    n_wid = max(1, int(np.ceil(width_m / element_size_m)))
    d_len, d_wid = length_m / n_len, width_m / n_wid
    along = (np.arange(n_len) + 0.5) * d_len - length_m / 2
    across = (np.arange(n_wid) + 0.5) * d_wid - width_m / 2
    a = np.deg2rad(angle_deg)
    ux, uy = np.sin(a), np.cos(a)  # length axis (clockwise from north)
    vx, vy = np.cos(a), -np.sin(a)  # width axis, 90 deg clockwise
    side_m = np.sqrt(d_len * d_wid)
    share = 1.0 / (n_len * n_wid)
    return [
        ReleaseElement(
            x_m + s * ux + t * vx,
            y_m + s * uy + t * vy,
            release_height_m,
            sigma_y0_m=side_m / 2.15,
            sigma_z0_m=sigma_z0_m,
            share_fraction=share,
            min_distance_m=side_m / 2,
        )
        for s in along
        for t in across
    ]
