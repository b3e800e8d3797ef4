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
    """A north-up regular grid in a projected CRS [m]."""

    west_m: float
    north_m: float
    cell_m: float
    n_cols: int
    n_rows: int
    crs: str

    @property
    def east_m(self) -> float:
        return self.west_m + self.n_cols * self.cell_m

    @property
    def south_m(self) -> float:
        return self.north_m - self.n_rows * self.cell_m

    @property
    def size(self) -> int:
        return self.n_cols * self.n_rows

    def centres(self) -> tuple[np.ndarray, np.ndarray]:
        """Cell-centre coordinates, each of shape (n_rows, n_cols) [m]."""
        x = self.west_m + (np.arange(self.n_cols) + 0.5) * self.cell_m
        y = self.north_m - (np.arange(self.n_rows) + 0.5) * self.cell_m
        return np.meshgrid(x, y)

    def transform(self):
        """Affine transform of the grid (north-up: row 0 at north_m)."""
        from affine import Affine

        return Affine(self.cell_m, 0.0, self.west_m, 0.0, -self.cell_m, self.north_m)


def grid_around(x_m, y_m, margin_m: float, cell_m: float, crs: str) -> GridSpec:
    """Grid covering the points' bounding box plus a margin, edges snapped to the cell size."""
    west = math.floor((np.min(x_m) - margin_m) / cell_m) * cell_m
    east = math.ceil((np.max(x_m) + margin_m) / cell_m) * cell_m
    south = math.floor((np.min(y_m) - margin_m) / cell_m) * cell_m
    north = math.ceil((np.max(y_m) + margin_m) / cell_m) * cell_m
    n_cols = max(1, int(round((east - west) / cell_m)))
    n_rows = max(1, int(round((north - south) / cell_m)))
    return GridSpec(west, north, cell_m, n_cols, n_rows, crs)
