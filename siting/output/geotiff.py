"""GeoTIFF output: one profile shared by every output raster.

CRS, transform, nodata and each band's description and units; float32, deflate, tiled when
large. No physics.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from siting.dispersion.grid import GridSpec

NODATA = -9999.0
BLOCK = 256  # tile side of a tiled raster [cells]
OVERVIEW_FACTORS = (2, 4, 8, 16)  # reduced-resolution copies of a regional raster


def _profile(grid: GridSpec, *, tiled: bool, big: bool = False) -> dict:
    """The one GeoTIFF profile: float32 band, CRS, transform, nodata, deflate."""
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
        "tiled": tiled,
    }
    if tiled:
        profile.update(blockxsize=BLOCK, blockysize=BLOCK)
    if big:
        profile["BIGTIFF"] = "IF_SAFER"
    return profile


def _label(dst, description: str, units: str, producer: str) -> None:
    """Band description and units, where GIS programs look for them."""
    dst.set_band_description(1, description)
    dst.update_tags(1, units=units, description=description)
    dst.update_tags(units=units, producer=producer)
    dst.units = (units,)


def _finite(values: np.ndarray) -> np.ndarray:
    return np.where(np.isfinite(values), values, NODATA).astype("float32")


def write_geotiff(
    path: Path, grid: GridSpec, values: np.ndarray, description: str, units: str
) -> None:
    """Write one float32 band with CRS, transform, nodata, description and units.

    Parameters
    ----------
    path : Path
        The file to write.
    grid : GridSpec
        The grid (its CRS and transform).
    values : ndarray, (n_rows, n_cols)
        The band, row 0 north; non-finite values become nodata.
    description : str
        What the band is, in words.
    units : str
        Its unit ("ug/m3", "kg N/ha/yr", ...).
    """
    import rasterio

    tiled = grid.n_cols >= BLOCK and grid.n_rows >= BLOCK
    with rasterio.open(path, "w", **_profile(grid, tiled=tiled)) as dst:
        dst.write(_finite(values), 1)
        _label(dst, description, units, "siting (screening estimate)")


def write_large_geotiff(
    path: Path, grid: GridSpec, values: np.ndarray, description: str, units: str, scale: float = 1.0
) -> None:
    """Float32 GeoTIFF of ``values x scale``: tiled, deflate, overviews 2-16 (average).

    Written in strips of block rows, so no full-size copy of the grid is made (regional runs).

    Parameters
    ----------
    path : Path
        The file to write.
    grid : GridSpec
        The grid (its CRS and transform).
    values : ndarray, (n_rows, n_cols)
        The band before scaling, row 0 north; non-finite values become nodata.
    description : str
        What the band is, in words.
    units : str
        The unit of ``values x scale``.
    scale : float
        Factor applied strip by strip (e.g. concentration -> deposition).
    """
    import rasterio
    from rasterio.enums import Resampling
    from rasterio.windows import Window

    with rasterio.open(path, "w", **_profile(grid, tiled=True, big=True)) as dst:
        for r0 in range(0, grid.n_rows, BLOCK):
            strip = _finite(values[r0 : r0 + BLOCK] * scale)
            dst.write(strip, 1, window=Window(0, r0, grid.n_cols, strip.shape[0]))
        factors = [f for f in OVERVIEW_FACTORS if min(grid.n_rows, grid.n_cols) // f >= 1]
        if factors:
            dst.build_overviews(factors, Resampling.average)
            dst.update_tags(ns="rio_overview", resampling="average")
        _label(dst, description, units, "siting region (screening estimate)")
