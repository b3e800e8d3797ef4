"""Release classes and their unit-source kernels on the cell-centre offsets of a grid.

Pure numpy. On flat ground the long-term field of a source depends only on the offset between
source and receptor, so sources that share release parameters (a *release class*: kind,
release height, footprint size; :func:`release_class`) share one field shape, the class's
*unit-source kernel* (:class:`UnitKernel`): the long-term concentration per g s-1 of one source
at the origin at every cell-centre offset the grid can hold, a (2 n_rows - 1) x (2 n_cols - 1)
array [g m-3 per g s-1]. Weather classes, stability, speed, plume depletion and the sector
interpolation are all inside it (it is the full long-term field of ``sector.py``).

:func:`unit_kernel` evaluates ``sector.source_concentration_g_m3_per_g_s`` at the offsets,
either directly (any element list) or, for a single element at the origin, through its radial
and angular parts: the sector-averaged field is C(r, theta) = w0(theta) A_k0(r) +
w1(theta) A_k1(r), so the engine's own centre-line profiles (``sector.radial_profiles``) are
read off once at the *distinct* distances of the offset lattice (:func:`offset_lattice`; 79,000
for the 998,001 offsets of a 500 x 500 grid) and the offsets are then assembled by
interpolation in angle, as the sector engine does. Both ways give the same numbers to rounding
(tests/test_convolution.py).

What is not here: placing sources on cells and the near-field correction (``cells.py``), the
FFT convolution and tiles (``convolution.py``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.sector import (
    radial_profiles,
    sector_position,
    source_concentration_g_m3_per_g_s,
)

#: Release heights of a class are rounded to this step [m] (common practice, no source: half a
#: metre is below what anyone knows of a house's effective release height).
HEIGHT_STEP_M = 0.5
#: Footprint sides of volume classes are rounded in the logarithm to a ladder of ratio sqrt(2)
#: through FOOTPRINT_LADDER_BASE_M (..., 7.1, 10, 14.1, 20, 28.3, 40, 56.6, 80, 113, ... m), so a
#: side is off by at most 19 % (common practice, no source).
FOOTPRINT_LADDER_BASE_M = 10.0
FOOTPRINT_LADDER_RATIO = math.sqrt(2.0)
#: Offsets assembled at once from the centre-line profiles (bounds the temporaries).
_ASSEMBLY_OFFSETS = 262_144


@dataclass(frozen=True)
class ReleaseClass:
    """Release parameters that sources share so they can share one kernel.

    Attributes
    ----------
    kind : str
        "point" (a release point at ``release_height_m``, no plume rise) or "volume" (a square
        volume source of side ``footprint_side_m``: one element with sigma_y0 = side / 4.3,
        sigma_z0 = height / 2.15 and receptors kept side / 2 away, the initial dimensions of
        the screening run's volume sources, [EPA1992] from memory).
    release_height_m : float
        Release height [m], >= 0 (already rounded to the class step).
    footprint_side_m : float
        Side of the equivalent square footprint [m]; 0 for a point class.
    """

    kind: str
    release_height_m: float
    footprint_side_m: float = 0.0

    def elements(self) -> list[ReleaseElement]:
        """The class's release element, at the origin, carrying the whole emission.

        Returns
        -------
        list of ReleaseElement
            One element: a point at the class's height, or a volume source with sigma_y0 = side / 4.3,
            sigma_z0 = height / 2.15 and receptors kept side / 2 away.
        """
        if self.kind == "point":
            return [ReleaseElement(0.0, 0.0, self.release_height_m)]
        side = self.footprint_side_m
        return [
            ReleaseElement(
                0.0,
                0.0,
                self.release_height_m,
                sigma_y0_m=side / 4.3,
                sigma_z0_m=self.release_height_m / 2.15,
                min_distance_m=side / 2,
            )
        ]

    @property
    def label(self) -> str:
        """The class in words, for farms.csv and run.json ("point, 6 m")."""
        if self.kind == "point":
            return f"point, {self.release_height_m:g} m"
        return f"volume {self.footprint_side_m:.3g} m square, {self.release_height_m:g} m"


def release_class(
    kind: str, release_height_m: float, footprint_area_m2: float = 0.0
) -> ReleaseClass:
    """The release class of a source: height to HEIGHT_STEP_M, footprint side to the ladder.

    Parameters
    ----------
    kind : str
        "point" or "volume".
    release_height_m : float
        Release height [m], >= 0.
    footprint_area_m2 : float
        Footprint area of a volume source [m2], > 0 (ignored for points).

    Returns
    -------
    ReleaseClass
        The rounded height [m] and, for a volume source, the ladder's side [m].

    Raises
    ------
    ValueError
        Unknown kind, negative height, or a volume source without a footprint.
    """
    if kind not in ("point", "volume"):
        raise ValueError(f"kind must be point or volume, got {kind!r}")
    if not release_height_m >= 0:
        raise ValueError(f"release_height_m must be >= 0, got {release_height_m}")
    height = round(release_height_m / HEIGHT_STEP_M) * HEIGHT_STEP_M
    if kind == "point":
        return ReleaseClass("point", float(height))
    if not footprint_area_m2 > 0:
        raise ValueError(f"a volume source needs a footprint area > 0, got {footprint_area_m2}")
    steps = round(
        math.log(math.sqrt(footprint_area_m2) / FOOTPRINT_LADDER_BASE_M)
        / math.log(FOOTPRINT_LADDER_RATIO)
    )
    side = FOOTPRINT_LADDER_BASE_M * FOOTPRINT_LADDER_RATIO**steps
    return ReleaseClass("volume", float(height), float(round(side, 6)))


@dataclass(frozen=True)
class UnitKernel:
    """Long-term concentration per g s-1 of one source at the origin, on cell-centre offsets.

    ``values[half_rows + d_row, half_cols + d_col]`` is the concentration [g m-3 per g s-1] at
    the receptor ``d_row`` rows south and ``d_col`` columns east of the source (grids are
    north-up, row 0 north), i.e. at dx = d_col cell_m, dy = -d_row cell_m. Zero beyond
    ``reach_m`` when one is set.

    Attributes
    ----------
    values : ndarray, (2 half_rows + 1, 2 half_cols + 1)
        Concentration per unit emission [g m-3 per g s-1].
    cell_m : float
        Grid spacing the offsets are on [m].
    reach_m : float, optional
        Distance beyond which the kernel is zero [m]; None when not truncated.
    """

    values: np.ndarray
    cell_m: float
    reach_m: float | None = None

    @property
    def half_rows(self) -> int:
        """Largest row offset held [cells]."""
        return (self.values.shape[0] - 1) // 2

    @property
    def half_cols(self) -> int:
        """Largest column offset held [cells]."""
        return (self.values.shape[1] - 1) // 2

    @property
    def nbytes(self) -> int:
        """Memory of the values [bytes]."""
        return int(self.values.nbytes)


def kernel_half_size(
    n_rows: int, n_cols: int, cell_m: float, reach_m: float | None = None
) -> tuple[int, int]:
    """Half sizes (rows, cols) of the kernel a grid needs: every offset it holds, or the reach.

    Parameters
    ----------
    n_rows, n_cols : int
        The grid's size [cells].
    cell_m : float
        Grid spacing [m], > 0.
    reach_m : float, optional
        Truncation distance of the kernel [m]; None keeps every offset of the grid.

    Returns
    -------
    tuple of int
        (half_rows, half_cols) [cells], >= 0.
    """
    half_rows, half_cols = n_rows - 1, n_cols - 1
    if reach_m is not None:
        cells = math.ceil(reach_m / cell_m)
        half_rows, half_cols = min(half_rows, cells), min(half_cols, cells)
    return max(half_rows, 0), max(half_cols, 0)


def offset_concentration_g_m3_per_g_s(
    dx_m,
    dy_m,
    elements: list[ReleaseElement],
    weather: WeatherClasses,
    settings: DispersionSettings,
) -> np.ndarray:
    """The long-term engine at receptor offsets from the elements [g m-3 per g s-1].

    Parameters
    ----------
    dx_m, dy_m : ndarray
        Receptor coordinates relative to the source's reference point [m] (east, north).
    elements : list of ReleaseElement
        The source's elements, positioned relative to the same reference point.
    weather : WeatherClasses
        The frequency table, as for :func:`siting.dispersion.sector.source_concentration_g_m3_per_g_s`.
    settings : DispersionSettings
        Dispersion settings, as there.

    Returns
    -------
    concentration : ndarray
        Shape of dx_m. A value depends on its own offset only, never on the other offsets of
        the call (the sector engine's profile nodes are fixed), so batches, tiles and tasks agree.
    """
    dx = np.asarray(dx_m, dtype=float)
    dy = np.asarray(dy_m, dtype=float)
    return source_concentration_g_m3_per_g_s(dx, dy, elements, weather, settings)


def _offset_lattice(half_rows: int, half_cols: int, cell_m: float):
    """dx, dy [m] of the kernel's offsets, shape (2 half_rows + 1, 2 half_cols + 1)."""
    d_row = np.arange(-half_rows, half_rows + 1)
    d_col = np.arange(-half_cols, half_cols + 1)
    return np.meshgrid(d_col * cell_m, -d_row * cell_m)


@dataclass(frozen=True)
class OffsetLattice:
    """The cell-centre offsets of a kernel as distance and angle, shared by every class.

    ``radius_m`` holds the distinct offset distances [m]; for offset n (row-major over the
    kernel) ``flat0[n]`` and ``flat1[n]`` index a (n_sectors, n_radii) profile table, flattened,
    at the two sectors bracketing the offset's bearing and at its distance; ``w1[n]`` is the
    weight of the second sector (:func:`siting.dispersion.sector.sector_position`).

    Attributes
    ----------
    half_rows, half_cols : int
        Largest row and column offsets [cells].
    cell_m : float
        Grid spacing [m].
    radius_m : ndarray
        The distinct offset distances [m], increasing.
    flat0, flat1 : ndarray of int
        Flat indices into the (n_sectors, n_radii) profile table, one per offset.
    w1 : ndarray
        Weight of the second sector per offset [-], in [0, 1).
    """

    half_rows: int
    half_cols: int
    cell_m: float
    radius_m: np.ndarray
    flat0: np.ndarray
    flat1: np.ndarray
    w1: np.ndarray

    @property
    def shape(self) -> tuple[int, int]:
        """(rows, cols) of the kernel the lattice is for [cells]."""
        return 2 * self.half_rows + 1, 2 * self.half_cols + 1

    @property
    def nbytes(self) -> int:
        """Memory of the lattice's arrays [bytes]."""
        return int(self.radius_m.nbytes + self.flat0.nbytes + self.flat1.nbytes + self.w1.nbytes)


def offset_lattice(
    half_rows: int,
    half_cols: int,
    cell_m: float,
    weather: WeatherClasses,
    strip_offsets: int = 262_144,
) -> OffsetLattice:
    """Distances and sector weights of a kernel's offsets (built once per grid and weather).

    Parameters
    ----------
    half_rows, half_cols : int
        Largest row and column offsets [cells], >= 0.
    cell_m : float
        Grid spacing [m], > 0.
    weather : WeatherClasses
        The frequency table (its sector centres set the bearings' weights).
    strip_offsets : int
        Bounds the offsets handled at once (temporaries of about 80 bytes each).

    Returns
    -------
    OffsetLattice
        The offsets' distinct distances and sector indices and weights.
    """
    a = np.arange(half_rows + 1, dtype=np.int64)
    b = np.arange(half_cols + 1, dtype=np.int64)
    squared = a[:, None] ** 2 + b[None, :] ** 2  # offsets in cells, squared: exact integers
    distinct, index = np.unique(squared, return_inverse=True)
    index = index.reshape(squared.shape)
    del squared
    n_radii = distinct.size
    n_sectors = len(weather.sector_centres_deg)
    dtype = np.int32 if n_radii * n_sectors < 2**31 else np.int64
    shape = (2 * half_rows + 1, 2 * half_cols + 1)
    flat0 = np.empty(shape, dtype=dtype)
    flat1 = np.empty(shape, dtype=dtype)
    w1 = np.empty(shape)
    d_col = np.arange(-half_cols, half_cols + 1)
    strip = max(1, strip_offsets // shape[1])
    for start in range(0, shape[0], strip):
        d_row = np.arange(start, min(start + strip, shape[0])) - half_rows
        dx = np.broadcast_to(d_col[None, :] * cell_m, (d_row.size, d_col.size))
        dy = np.broadcast_to(-d_row[:, None] * cell_m, dx.shape)
        k0, w = sector_position(dx, dy, weather)
        k1 = (k0 + 1) % n_sectors
        ridx = index[np.abs(d_row)[:, None], np.abs(d_col)[None, :]]
        flat0[start : start + d_row.size] = k0 * n_radii + ridx
        flat1[start : start + d_row.size] = k1 * n_radii + ridx
        w1[start : start + d_row.size] = w
    return OffsetLattice(
        half_rows,
        half_cols,
        float(cell_m),
        np.sqrt(distinct.astype(float)) * cell_m,
        flat0.ravel(),
        flat1.ravel(),
        w1.ravel(),
    )


def centre_line_profiles(
    element: ReleaseElement,
    weather: WeatherClasses,
    settings: DispersionSettings,
    radius_m: np.ndarray,
) -> np.ndarray:
    """A_k(r): each sector's centre-line field of one element at the given distances.

    A_k(r) = sum_js f[k, j, s] g_js(r), read off the engine's own radial profiles
    (:func:`siting.dispersion.sector.radial_profiles`) with the engine's interpolation, receptors
    closer than the element's min_distance_m taken at it.

    Parameters
    ----------
    element : ReleaseElement
        One release element (its position is ignored: distances are from it).
    weather : WeatherClasses
        The frequency table.
    settings : DispersionSettings
        Dispersion settings.
    radius_m : ndarray
        Distances from the element [m], >= 0.

    Returns
    -------
    ndarray, (n_sectors, n_radii)
        Concentration per unit emission on each sector's centre line [g m-3 per g s-1].
    """
    radius_m = np.maximum(np.asarray(radius_m, dtype=float), element.min_distance_m)
    if radius_m.size == 0:
        return np.zeros((len(weather.sector_centres_deg), 0))
    profiles = radial_profiles(
        element, weather, settings, float(radius_m.min()), float(radius_m.max())
    )
    return profiles.values_at(radius_m)


def _radial_kernel(
    element: ReleaseElement,
    weather: WeatherClasses,
    settings: DispersionSettings,
    lattice: OffsetLattice,
) -> np.ndarray:
    """Kernel of one element at the origin from its centre-line profiles (module docstring)."""
    profiles = centre_line_profiles(element, weather, settings, lattice.radius_m).ravel()
    out = np.empty(lattice.flat0.size)
    step = max(1, min(_ASSEMBLY_OFFSETS, settings.chunk_receptors))
    for start in range(0, out.size, step):
        sl = slice(start, start + step)
        w1 = lattice.w1[sl]
        out[sl] = (1.0 - w1) * profiles.take(lattice.flat0[sl]) + w1 * profiles.take(
            lattice.flat1[sl]
        )
    return out.reshape(lattice.shape)


def unit_kernel(
    elements: list[ReleaseElement],
    weather: WeatherClasses,
    settings: DispersionSettings,
    cell_m: float,
    half_rows: int,
    half_cols: int,
    *,
    reach_m: float | None = None,
    method: str = "auto",
    lattice: OffsetLattice | None = None,
) -> UnitKernel:
    """The unit-source kernel of a source on the cell-centre offsets of a grid.

    Parameters
    ----------
    elements : list of ReleaseElement
        The source, relative to its reference point (at the origin of the kernel).
    weather, settings :
        As for ``sector.source_concentration_g_m3_per_g_s``.
    cell_m : float
        Grid spacing [m], > 0.
    half_rows, half_cols : int
        Largest row and column offsets held (:func:`kernel_half_size`).
    reach_m : float, optional
        Offsets farther than this [m] are set to zero (the kernel is truncated); None keeps all.
    method : str
        "direct": the engine at every offset; "radial": centre-line profiles on the distinct
        distances, assembled in angle (one element at the origin only); "auto": radial where it
        applies, else direct.
    lattice : OffsetLattice, optional
        For the radial method: the offsets' distances and sector weights, when several kernels
        of the same grid and weather share them (:func:`offset_lattice`).

    Returns
    -------
    UnitKernel
        Values [g m-3 per g s-1], finite and >= 0 everywhere (the singular centre is held off
        by each element's min_distance_m).
    """
    if cell_m <= 0:
        raise ValueError(f"cell_m must be > 0, got {cell_m}")
    single_at_origin = (
        len(elements) == 1
        and elements[0].x_m == 0.0
        and elements[0].y_m == 0.0
        and elements[0].share_fraction == 1.0
    )
    if method == "auto":
        method = "radial" if single_at_origin else "direct"
    if method == "radial":
        if not single_at_origin:
            raise ValueError("the radial kernel needs one element at the origin with share 1")
        if lattice is None:
            lattice = offset_lattice(half_rows, half_cols, cell_m, weather)
        elif (lattice.half_rows, lattice.half_cols, lattice.cell_m) != (
            half_rows,
            half_cols,
            cell_m,
        ):
            raise ValueError("the lattice was made for another kernel size or cell size")
        values = _radial_kernel(elements[0], weather, settings, lattice)
    elif method == "direct":
        dx, dy = _offset_lattice(half_rows, half_cols, cell_m)
        values = offset_concentration_g_m3_per_g_s(dx, dy, elements, weather, settings)
    else:
        raise ValueError(f"method must be auto, radial or direct, got {method!r}")
    if reach_m is not None:
        dx, dy = _offset_lattice(half_rows, half_cols, cell_m)
        values = np.where(np.hypot(dx, dy) <= reach_m, values, 0.0)
    return UnitKernel(values, float(cell_m), reach_m)
