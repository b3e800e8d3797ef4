"""Many sources with the same release parameters: the field as a convolution (FFT).

Pure numpy/scipy. On flat ground the long-term field of a source depends only on the offset
between source and receptor, so sources that share release parameters (a *release class*: kind,
release height, footprint size) share one field shape. Put their emissions on the receptor grid
as a raster E [g s-1 per cell] and the concentration on the grid is the 2-D convolution
C = E * K with the class's *unit-source kernel* K: the long-term concentration per g s-1 of one
source at the origin, evaluated at every cell-centre offset the grid can hold, a
(2 n_rows - 1) x (2 n_cols - 1) array [g m-3 per g s-1]. Weather classes, stability, speed,
plume depletion and the sector interpolation are all inside K (it is the full long-term field
of ``longterm.py``), so the convolution is the direct per-source sum exactly, apart from where
the sources sit: a source between cell centres is spread onto the four surrounding centres with
bilinear weights (or moved to the nearest centre). That placement error, and FFT round-off
relative to the largest value of the field, are the only differences from the direct sum.

Kernels. :func:`unit_kernel` evaluates ``longterm.source_concentration_g_m3_per_g_s`` at the
offsets, either directly (any element list) or, for a single element at the origin, through its
radial and angular parts: the sector-averaged field is C(r, theta) = w0(theta) A_k0(r) +
w1(theta) A_k1(r), so the engine's own centre-line profiles (``longterm.radial_profiles``) are
read off once at the *distinct* distances of the offset lattice (79,000 for the 998,001 offsets
of a 500 x 500 grid) and the offsets are then assembled by interpolation in angle, as
longterm.py does. Both ways give the same numbers to rounding (tests/test_convolution.py).
Placement near the sources can be made exact with :func:`near_field_correction`.

Batching. A value of longterm.py's engine depends on its own offset only (the engine's profile
nodes sit on a fixed lattice in distance), so kernels, tiles, chunks of site points and dask
tasks all see identical per-pair values however the receptors are batched.

Tiling. :func:`tile_concentration` gives the concentration on one tile of the grid by overlap-
add over blocks of sources: for each source block within the kernel's reach, a circular FFT
convolution of the block's emissions with the slice of the kernel covering the offsets between
block and tile (overlap-save: the FFT length is tile + block - 1 per axis, and only the
uncontaminated part is kept). A tile's working memory is bounded by the tile and block sizes.

What is not here: reading farms, choosing tiles against a memory budget, dask (``region.py``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import fft as sp_fft

from siting.dispersion.sector import (
    DispersionSettings,
    ReleaseElement,
    WeatherClasses,
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
        screen.py's volume sources, [EPA1992] from memory).
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
        As for ``longterm.source_concentration_g_m3_per_g_s``.
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


@dataclass(frozen=True)
class CellValues:
    """Values added to grid cells (row, col), as flat arrays: a sparse raster.

    Used for emissions placed on cells [g s-1] and for near-field corrections [g m-3 per the
    source's emission]. ``source`` is the index of the source each entry came from. Entries are
    in source order and :meth:`block` sums them in that order, so a cell gets the same
    floating-point value whichever block of the grid is built.

    Attributes
    ----------
    rows, cols : ndarray of int
        Cell of each entry (row 0 north).
    values : ndarray
        The value of each entry (g s-1 for emissions, g m-3 for corrections).
    source : ndarray of int
        Index of the source each entry came from.
    n_rows, n_cols : int
        Size of the grid [cells].
    """

    rows: np.ndarray
    cols: np.ndarray
    values: np.ndarray
    source: np.ndarray
    n_rows: int
    n_cols: int

    def block(self, row_range: tuple[int, int], col_range: tuple[int, int]) -> np.ndarray:
        """Dense raster of a block of the grid (rows r0:r1, cols c0:c1).

        Parameters
        ----------
        row_range : tuple of int
            (r0, r1), rows of the block (end excluded).
        col_range : tuple of int
            (c0, c1), columns of the block (end excluded).

        Returns
        -------
        ndarray, (r1 - r0, c1 - c0)
            The sum of the entries in each cell, in the unit of ``values``.
        """
        (r0, r1), (c0, c1) = row_range, col_range
        out = np.zeros((r1 - r0, c1 - c0))
        inside = (self.rows >= r0) & (self.rows < r1) & (self.cols >= c0) & (self.cols < c1)
        np.add.at(out, (self.rows[inside] - r0, self.cols[inside] - c0), self.values[inside])
        return out

    def raster(self) -> np.ndarray:
        """Dense raster of the whole grid.

        Returns
        -------
        ndarray, (n_rows, n_cols)
            The sum of the entries in each cell, in the unit of ``values``.
        """
        return self.block((0, self.n_rows), (0, self.n_cols))

    def occupied_blocks(self, block_rows: int, block_cols: int) -> set[tuple[int, int]]:
        """(row block, col block) indices that hold at least one non-zero entry.

        Parameters
        ----------
        block_rows, block_cols : int
            Size of a block [cells], >= 1.

        Returns
        -------
        set of tuple of int
            The occupied blocks' (row block, col block) indices.
        """
        keep = self.values != 0
        return set(
            zip((self.rows[keep] // block_rows).tolist(), (self.cols[keep] // block_cols).tolist())
        )

    @property
    def nbytes(self) -> int:
        """Memory of the entries' arrays [bytes]."""
        return int(self.rows.nbytes + self.cols.nbytes + self.values.nbytes + self.source.nbytes)


def place_on_cells(
    x_m,
    y_m,
    emission_g_s,
    west_m: float,
    north_m: float,
    cell_m: float,
    n_rows: int,
    n_cols: int,
    method: str = "bilinear",
) -> CellValues:
    """Put point sources on the cell centres of a north-up grid.

    Parameters
    ----------
    x_m, y_m : ndarray
        Source positions [m], inside the grid.
    emission_g_s : ndarray
        Source strengths [g s-1], >= 0.
    west_m, north_m, cell_m, n_rows, n_cols :
        The grid (row 0 at the north edge, values at cell centres).
    method : str
        "bilinear": each source is split over the four surrounding cell centres with bilinear
        (area) weights, so the placed emissions have the source's total and its centroid, and
        the placement error of the field is of second order in the offset (a source on a
        centre gets weight 1 there); "nearest": moved whole to the nearest centre (first order).

    Returns
    -------
    CellValues

    Raises
    ------
    ValueError
        A source outside the grid's cell centres (bilinear needs all four neighbours; keep a
        margin of at least one cell), or an unknown method.
    """
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    q = np.asarray(emission_g_s, dtype=float)
    col_f = (x - west_m) / cell_m - 0.5  # fractional column of the cell-centre lattice
    row_f = (north_m - y) / cell_m - 0.5
    index = np.arange(x.size)
    if method == "nearest":
        rows, cols = np.rint(row_f).astype(np.intp), np.rint(col_f).astype(np.intp)
        if ((rows < 0) | (rows >= n_rows) | (cols < 0) | (cols >= n_cols)).any():
            raise ValueError("a source lies outside the grid")
        return CellValues(rows, cols, q.copy(), index, n_rows, n_cols)
    if method != "bilinear":
        raise ValueError(f"method must be bilinear or nearest, got {method!r}")
    r0 = np.floor(row_f).astype(np.intp)
    c0 = np.floor(col_f).astype(np.intp)
    tr, tc = row_f - r0, col_f - c0
    rows, cols, weights, source = [], [], [], []
    for dr, wr in ((0, 1.0 - tr), (1, tr)):
        for dc, wc in ((0, 1.0 - tc), (1, tc)):
            w = wr * wc
            rows.append(r0 + dr)
            cols.append(c0 + dc)
            weights.append(w)
            source.append(index)
    rows, cols = np.stack(rows, axis=1).ravel(), np.stack(cols, axis=1).ravel()
    weights, source = np.stack(weights, axis=1).ravel(), np.stack(source, axis=1).ravel()
    keep = weights > 0
    rows, cols, weights, source = rows[keep], cols[keep], weights[keep], source[keep]
    if ((rows < 0) | (rows >= n_rows) | (cols < 0) | (cols >= n_cols)).any():
        raise ValueError(
            "a source lies outside the grid's cell centres; keep a margin of at "
            "least one cell around the sources"
        )
    return CellValues(rows, cols, q[source] * weights, source, n_rows, n_cols)


def _kernel_lookup(kernel: UnitKernel, d_row: np.ndarray, d_col: np.ndarray) -> np.ndarray:
    """Kernel values at integer offsets (any shape), zero beyond its half sizes."""
    hr, hc = kernel.half_rows, kernel.half_cols
    inside = (np.abs(d_row) <= hr) & (np.abs(d_col) <= hc)
    out = np.zeros(np.shape(d_row))
    out[inside] = kernel.values[d_row[inside] + hr, d_col[inside] + hc]
    return out


def near_field_correction(
    x_m,
    y_m,
    emission_g_s,
    placed: CellValues,
    kernel: UnitKernel,
    elements: list[ReleaseElement],
    weather: WeatherClasses,
    settings: DispersionSettings,
    west_m: float,
    north_m: float,
    window_cells: int,
    sources_per_batch: int = 512,
) -> CellValues:
    """What to add near each source so the field there is the direct sum at its true position.

    For every cell within ``window_cells`` of a source (the 2 w x 2 w cells around it), the
    correction is Q C(cell - source) from the engine minus what the placed emissions give
    there through the kernel. Added to the convolution, the field in those cells is the direct
    per-source sum exactly (to rounding); beyond them only the placement error is left.

    Parameters
    ----------
    x_m, y_m, emission_g_s : ndarray
        True source positions [m] and strengths [g s-1], as given to :func:`place_on_cells`.
    placed : CellValues
        The same sources as placed on the cells.
    kernel : UnitKernel
        The sources' kernel.
    elements : list of ReleaseElement
        The release element(s) the kernel was made from, at the origin.
    weather, settings :
        As for the kernel.
    west_m, north_m : float
        The grid's west and north edges [m]; the cell size is the kernel's.
    window_cells : int
        Half width w of the corrected window [cells], >= 1.
    sources_per_batch : int
        Sources whose windows are computed in one call of the engine (bounds the memory).

    Returns
    -------
    CellValues
        Corrections [g m-3] on the cells of each source's window inside the grid.
    """
    x = np.asarray(x_m, dtype=float)
    y = np.asarray(y_m, dtype=float)
    q = np.asarray(emission_g_s, dtype=float)
    cell = kernel.cell_m
    n_rows, n_cols = placed.n_rows, placed.n_cols
    offsets = np.arange(-window_cells + 1, window_cells + 1)
    parts = []
    order = np.argsort(placed.source, kind="stable")
    entry_source = placed.source[order]
    for start in range(0, x.size, sources_per_batch):
        batch = np.arange(start, min(start + sources_per_batch, x.size))
        batch = batch[q[batch] != 0]
        if batch.size == 0:
            continue
        r0 = np.floor((north_m - y[batch]) / cell - 0.5).astype(np.intp)
        c0 = np.floor((x[batch] - west_m) / cell - 0.5).astype(np.intp)
        rows = np.broadcast_to(
            r0[:, None, None] + offsets[None, :, None], (batch.size, offsets.size, offsets.size)
        )
        cols = np.broadcast_to(c0[:, None, None] + offsets[None, None, :], rows.shape)
        inside = (rows >= 0) & (rows < n_rows) & (cols >= 0) & (cols < n_cols)
        src = np.broadcast_to(batch[:, None, None], rows.shape)[inside]
        rows, cols = rows[inside], cols[inside]
        dx = west_m + (cols + 0.5) * cell - x[src]
        dy = north_m - (rows + 0.5) * cell - y[src]
        exact = q[src] * offset_concentration_g_m3_per_g_s(dx, dy, elements, weather, settings)
        # what the placed entries of the same source give on those cells through the kernel
        lo = np.searchsorted(entry_source, src, side="left")
        hi = np.searchsorted(entry_source, src, side="right")
        through_kernel = np.zeros(src.size)
        for k in range(int((hi - lo).max())):
            has = lo + k < hi
            e = order[lo[has] + k]
            through_kernel[has] += placed.values[e] * _kernel_lookup(
                kernel, rows[has] - placed.rows[e], cols[has] - placed.cols[e]
            )
        parts.append((rows, cols, exact - through_kernel, src))
    if not parts:
        empty = np.zeros(0, dtype=np.intp)
        return CellValues(empty, empty, np.zeros(0), empty, n_rows, n_cols)
    rows, cols, values, src = (np.concatenate(p) for p in zip(*parts))
    return CellValues(rows, cols, values, src, n_rows, n_cols)


def _kernel_slice(kernel: UnitKernel, rows: tuple[int, int], cols: tuple[int, int]) -> np.ndarray:
    """Kernel values for row offsets rows[0]..rows[1]-1 and col offsets likewise, zero outside."""
    hr, hc = kernel.half_rows, kernel.half_cols
    out = np.zeros((rows[1] - rows[0], cols[1] - cols[0]))
    r_lo, r_hi = max(rows[0], -hr), min(rows[1], hr + 1)
    c_lo, c_hi = max(cols[0], -hc), min(cols[1], hc + 1)
    if r_lo < r_hi and c_lo < c_hi:
        out[r_lo - rows[0] : r_hi - rows[0], c_lo - cols[0] : c_hi - cols[0]] = kernel.values[
            r_lo + hr : r_hi + hr, c_lo + hc : c_hi + hc
        ]
    return out


def _valid_convolution(
    emission: np.ndarray, kernel_part: np.ndarray, out_shape: tuple[int, int]
) -> np.ndarray:
    """out[t] = sum_m emission[m] kernel_part[t + len(emission) - 1 - m], per axis (overlap-save).

    kernel_part holds out + emission - 1 offsets per axis; a circular FFT convolution of that
    length (rounded up to a fast size) leaves the wanted outputs free of wrap-around.
    """
    shape = tuple(sp_fft.next_fast_len(n, real=True) for n in kernel_part.shape)
    spectrum = sp_fft.rfft2(emission, s=shape)
    spectrum *= sp_fft.rfft2(kernel_part, s=shape)
    full = sp_fft.irfft2(spectrum, s=shape)
    r, c = emission.shape[0] - 1, emission.shape[1] - 1
    return full[r : r + out_shape[0], c : c + out_shape[1]]


def tile_concentration(
    cells: CellValues,
    kernel: UnitKernel,
    row_range: tuple[int, int],
    col_range: tuple[int, int],
    block_rows: int | None = None,
    block_cols: int | None = None,
    correction: CellValues | None = None,
) -> np.ndarray:
    """Concentration [g m-3] on one tile of the grid from all placed sources (overlap-add).

    Parameters
    ----------
    cells : CellValues
        The sources of one release class on the grid.
    kernel : UnitKernel
        That class's kernel, on the same cell size.
    row_range, col_range : (int, int)
        The tile: rows r0:r1 and columns c0:c1 of the grid.
    block_rows, block_cols : int, optional
        Size of the source blocks (default: the whole grid, one FFT).
    correction : CellValues, optional
        Near-field corrections (:func:`near_field_correction`) added on the tile's cells.

    Returns
    -------
    concentration : ndarray, (r1 - r0, c1 - c0)
        Sum over sources of emission x kernel at the offset, >= 0 (FFT round-off below zero is
        clipped).

    Notes
    -----
    Sources are taken block by block in a fixed order (row blocks, then column blocks), and
    only blocks within the kernel's reach of the tile and holding a source are convolved.
    """
    (a0, a1), (e0, e1) = row_range, col_range
    out = np.zeros((a1 - a0, e1 - e0))
    block_rows = block_rows or cells.n_rows
    block_cols = block_cols or cells.n_cols
    hr, hc = kernel.half_rows, kernel.half_cols
    for bi, bj in sorted(cells.occupied_blocks(block_rows, block_cols)):
        b0, b1 = bi * block_rows, min((bi + 1) * block_rows, cells.n_rows)
        d0, d1 = bj * block_cols, min((bj + 1) * block_cols, cells.n_cols)
        # offsets receptor - source between this block and the tile
        rows = (a0 - (b1 - 1), a1 - b0)
        cols = (e0 - (d1 - 1), e1 - d0)
        if rows[0] > hr or rows[1] - 1 < -hr or cols[0] > hc or cols[1] - 1 < -hc:
            continue  # beyond the kernel's reach
        emission = cells.block((b0, b1), (d0, d1))
        out += _valid_convolution(emission, _kernel_slice(kernel, rows, cols), out.shape)
    if correction is not None:
        out += correction.block(row_range, col_range)
    return np.maximum(out, 0.0)


def convolve_emissions(emission_g_s: np.ndarray, kernel: UnitKernel) -> np.ndarray:
    """Concentration [g m-3] on a grid from an emission raster [g s-1 per cell], one FFT.

    C[i, j] = sum_pq E[p, q] K[i - p, j - q].

    Parameters
    ----------
    emission_g_s : ndarray, (n_rows, n_cols)
        Emission per cell [g s-1] on the grid the kernel was made for.
    kernel : UnitKernel
        The kernel, its half sizes at least n_rows - 1 and n_cols - 1, or its reach.

    Returns
    -------
    ndarray, (n_rows, n_cols)
        Concentration [g m-3], >= 0 (FFT rounding below zero is cut).
    """
    e = np.asarray(emission_g_s, dtype=float)
    rows = (-(e.shape[0] - 1), e.shape[0])
    cols = (-(e.shape[1] - 1), e.shape[1])
    out = _valid_convolution(e, _kernel_slice(kernel, rows, cols), e.shape)
    return np.maximum(out, 0.0)


def tile_working_bytes(tile_rows: int, tile_cols: int, block_rows: int, block_cols: int) -> int:
    """Peak working memory of one :func:`tile_concentration` call [bytes], an upper estimate.

    The output tile, the emission block, the kernel slice (tile + block - 1 per axis) and, on
    the FFT length, two half spectra (complex) and the inverse (real): about 6 float64 arrays
    of the FFT size, plus the tile and block.

    Parameters
    ----------
    tile_rows, tile_cols : int
        Size of the output tile [cells].
    block_rows, block_cols : int
        Size of the emission block [cells].

    Returns
    -------
    int
        Bytes.
    """
    fr = sp_fft.next_fast_len(tile_rows + block_rows - 1, real=True)
    fc = sp_fft.next_fast_len(tile_cols + block_cols - 1, real=True)
    return 8 * (6 * fr * fc + 2 * tile_rows * tile_cols + block_rows * block_cols)
