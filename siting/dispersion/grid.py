"""The receptor grid: a north-up regular grid with named edges.

West and north edges, cell size, row 0 at the north edge, values at cell centres, in the
scenario's projected CRS (carried as a label; nothing here transforms coordinates). The engines
compute on its cell centres; siting.output.geotiff writes rasters on it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class GridSpec:
    """A north-up regular grid in a projected CRS [m].

    Attributes
    ----------
    west_m, north_m : float
        The grid's west and north edges [m] (row 0 is the northernmost).
    cell_m : float
        Cell size [m], > 0.
    n_cols, n_rows : int
        Size [cells].
    crs : str
        The projected CRS, as the scenario states it (e.g. "EPSG:32632").
    """

    west_m: float
    north_m: float
    cell_m: float
    n_cols: int
    n_rows: int
    crs: str

    @property
    def east_m(self) -> float:
        """The grid's east edge [m]."""
        return self.west_m + self.n_cols * self.cell_m

    @property
    def south_m(self) -> float:
        """The grid's south edge [m]."""
        return self.north_m - self.n_rows * self.cell_m

    @property
    def size(self) -> int:
        """Number of cells."""
        return self.n_cols * self.n_rows

    def centres(self) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre coordinates, each of shape (n_rows, n_cols) [m].

        Returns
        -------
        x_m, y_m : ndarray, (n_rows, n_cols)
            Easting and northing of every cell centre [m].
        """
        x = self.west_m + (np.arange(self.n_cols) + 0.5) * self.cell_m
        y = self.north_m - (np.arange(self.n_rows) + 0.5) * self.cell_m
        return np.meshgrid(x, y)

    def transform(self):
        """Affine transform of the grid (north-up: row 0 at north_m).

        Returns
        -------
        affine.Affine
            Pixel (col, row) -> (x, y) [m], as rasterio takes it.
        """
        from affine import Affine

        return Affine(self.cell_m, 0.0, self.west_m, 0.0, -self.cell_m, self.north_m)


def grid_around(x_m, y_m, margin_m: float, cell_m: float, crs: str) -> GridSpec:
    """Grid covering the points' bounding box plus a margin, edges snapped to the cell size.

    Parameters
    ----------
    x_m, y_m : ndarray
        The points (sources) to cover [m].
    margin_m : float
        Distance added on every side [m], >= 0.
    cell_m : float
        Cell size [m], > 0.
    crs : str
        The projected CRS of the coordinates.

    Returns
    -------
    GridSpec
        At least one cell each way; edges on multiples of ``cell_m``.
    """
    west = math.floor((np.min(x_m) - margin_m) / cell_m) * cell_m
    east = math.ceil((np.max(x_m) + margin_m) / cell_m) * cell_m
    south = math.floor((np.min(y_m) - margin_m) / cell_m) * cell_m
    north = math.ceil((np.max(y_m) + margin_m) / cell_m) * cell_m
    n_cols = max(1, int(round((east - west) / cell_m)))
    n_rows = max(1, int(round((north - south) / cell_m)))
    return GridSpec(west, north, cell_m, n_cols, n_rows, crs)
