"""The receptor grid and GeoTIFF output.

An adapter: a regular grid with named edges (west, north, cell size; row 0 is the north edge,
values at cell centres) and one GeoTIFF profile shared by every output raster, with CRS, nodata
and each band's description and units. No physics.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

NODATA = -9999.0


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


def write_geotiff(
    path: Path, grid: GridSpec, values: np.ndarray, description: str, units: str
) -> None:
    """Write one float32 band with CRS, transform, nodata, description and units."""
    import rasterio

    data = np.where(np.isfinite(values), values, NODATA).astype("float32")
    profile = {
        "driver": "GTiff",
        "width": grid.n_cols,
        "height": grid.n_rows,
        "count": 1,
        "dtype": "float32",
        "crs": grid.crs,
        "transform": grid.transform(),
        "nodata": NODATA,
        "compress": "deflate",
        "tiled": grid.n_cols >= 256 and grid.n_rows >= 256,
    }
    if profile["tiled"]:
        profile.update(blockxsize=256, blockysize=256)
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(data, 1)
        dst.set_band_description(1, description)
        dst.update_tags(1, units=units, description=description)
        dst.update_tags(units=units, producer="siting (screening estimate)")
        dst.units = (units,)
