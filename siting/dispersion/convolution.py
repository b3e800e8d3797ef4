"""Many sources with the same release parameters: the field as a convolution (FFT).

Pure numpy/scipy. On flat ground the long-term field of a source depends only on the offset
between source and receptor, so sources that share release parameters (a *release class*: kind,
release height, footprint size) share one field shape. Put their emissions on the receptor grid
as a raster E [g s-1 per cell] and the concentration on the grid is the 2-D convolution
C = E * K with the class's *unit-source kernel* K (``kernels.py``): the long-term concentration
per g s-1 of one source at the origin, evaluated at every cell-centre offset the grid can hold,
a (2 n_rows - 1) x (2 n_cols - 1) array [g m-3 per g s-1]. Weather classes, stability, speed,
plume depletion and the sector interpolation are all inside K (it is the full long-term field
of ``sector.py``), so the convolution is the direct per-source sum exactly, apart from where
the sources sit: a source between cell centres is spread onto the four surrounding centres with
bilinear weights (or moved to the nearest centre; ``cells.py``). That placement error, and FFT
round-off relative to the largest value of the field, are the only differences from the direct
sum. Placement near the sources can be made exact with ``cells.near_field_correction``.

Batching. A value of the sector engine depends on its own offset only (the engine's profile
nodes sit on a fixed lattice in distance), so kernels, tiles, chunks of site points and dask
tasks all see identical per-pair values however the receptors are batched.

Tiling. :func:`tile_concentration` gives the concentration on one tile of the grid by overlap-
add over blocks of sources: for each source block within the kernel's reach, a circular FFT
convolution of the block's emissions with the slice of the kernel covering the offsets between
block and tile (overlap-save: the FFT length is tile + block - 1 per axis, and only the
uncontaminated part is kept). A tile's working memory is bounded by the tile and block sizes
(:func:`tile_working_bytes`).

What is not here: release classes and kernels (``kernels.py``), placing sources on cells and
the near-field correction (``cells.py``), reading farms, choosing tiles against a memory budget,
dask (``siting/runs/regional.py``).
"""

from __future__ import annotations

import numpy as np
from scipy import fft as sp_fft

from siting.dispersion.cells import CellValues
from siting.dispersion.kernels import UnitKernel


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
