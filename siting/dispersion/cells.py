"""Sources on the cells of a grid: the sparse raster, placement, and the near-field correction.

Pure numpy. :func:`place_on_cells` puts point sources on the cell centres of a north-up grid
(split over the four surrounding centres with bilinear weights, or moved to the nearest), as a
:class:`CellValues` sparse raster that the FFT convolution (``convolution.py``) takes. That
placement is the convolution's only error apart from FFT round-off; near the sources it is
removed by :func:`near_field_correction`, which gives what to add in a window round each source
so the field there is the direct per-source sum at its true position.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from siting.dispersion.inputs import DispersionSettings, ReleaseElement, WeatherClasses
from siting.dispersion.kernels import UnitKernel, offset_concentration_g_m3_per_g_s


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
    parts = []
    order = np.argsort(placed.source, kind="stable")  # the placed entries, source by source
    for start in range(0, x.size, sources_per_batch):
        batch = np.arange(start, min(start + sources_per_batch, x.size))
        batch = batch[q[batch] != 0]
        if batch.size == 0:
            continue
        rows, cols, src = _window_cells(
            x[batch], y[batch], batch, west_m, north_m, cell, window_cells, (n_rows, n_cols)
        )
        dx = west_m + (cols + 0.5) * cell - x[src]
        dy = north_m - (rows + 0.5) * cell - y[src]
        exact = q[src] * offset_concentration_g_m3_per_g_s(dx, dy, elements, weather, settings)
        through_kernel = _through_kernel(placed, order, kernel, rows, cols, src)
        parts.append((rows, cols, exact - through_kernel, src))
    if not parts:
        empty = np.zeros(0, dtype=np.intp)
        return CellValues(empty, empty, np.zeros(0), empty, n_rows, n_cols)
    rows, cols, values, src = (np.concatenate(p) for p in zip(*parts))
    return CellValues(rows, cols, values, src, n_rows, n_cols)


def _window_cells(
    x_m: np.ndarray,
    y_m: np.ndarray,
    index: np.ndarray,
    west_m: float,
    north_m: float,
    cell_m: float,
    window_cells: int,
    shape: tuple[int, int],
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(rows, cols, source index) of the 2 w x 2 w cells round each source, inside the grid.

    The window of a source starts w - 1 cells before the cell centre west and north of it, so
    it holds the four centres the source is placed on and w - 1 more each way.
    """
    n_rows, n_cols = shape
    offsets = np.arange(-window_cells + 1, window_cells + 1)
    r0 = np.floor((north_m - y_m) / cell_m - 0.5).astype(np.intp)
    c0 = np.floor((x_m - west_m) / cell_m - 0.5).astype(np.intp)
    rows = np.broadcast_to(
        r0[:, None, None] + offsets[None, :, None], (index.size, offsets.size, offsets.size)
    )
    cols = np.broadcast_to(c0[:, None, None] + offsets[None, None, :], rows.shape)
    inside = (rows >= 0) & (rows < n_rows) & (cols >= 0) & (cols < n_cols)
    src = np.broadcast_to(index[:, None, None], rows.shape)[inside]
    return rows[inside], cols[inside], src


def _through_kernel(
    placed: CellValues,
    order: np.ndarray,
    kernel: UnitKernel,
    rows: np.ndarray,
    cols: np.ndarray,
    src: np.ndarray,
) -> np.ndarray:
    """What the placed entries of source ``src[i]`` give on cell (rows[i], cols[i]) through the
    kernel [g m-3]; ``order`` sorts the placed entries by source (stable), so each source's
    entries are summed in the order they were placed."""
    entry_source = placed.source[order]
    lo = np.searchsorted(entry_source, src, side="left")
    hi = np.searchsorted(entry_source, src, side="right")
    through_kernel = np.zeros(src.size)
    for k in range(int((hi - lo).max())):
        has = lo + k < hi
        e = order[lo[has] + k]
        through_kernel[has] += placed.values[e] * _kernel_lookup(
            kernel, rows[has] - placed.rows[e], cols[has] - placed.cols[e]
        )
    return through_kernel
