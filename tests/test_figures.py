"""Tests of siting.figures: the report figures render to PNG, hostile names included."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pytest
from matplotlib.figure import Figure
from numpy.testing import assert_allclose
from shapely.geometry import Point, box

from siting.errors import InputError
from siting.figures import (
    _table_rose_percent,
    deposition_figure,
    figure_png,
    pc_vs_distance_figure,
    wind_rose_from_table_png,
)
from siting.longterm import WeatherClasses
from synthetic import hostile_sites

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"





def test_figure_png_returns_png_bytes():
    """figure_png renders a plain Figure with the Agg canvas to PNG bytes."""
    fig = Figure(figsize=(2, 2))
    fig.add_subplot().plot([0, 1], [0, 1])
    assert figure_png(fig).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_with_hostile_names():
    """Names with $ and backslashes are drawn as plain text (no mathtext error)."""
    assert pc_vs_distance_figure(hostile_sites()).startswith(PNG_MAGIC)


def test_pc_vs_distance_figure_without_positive_values():
    """A table without positive deposition still gives a PNG (a note instead of points)."""
    sites = hostile_sites().assign(pc_dep_max_kg_n_ha_yr=0.0)
    assert pc_vs_distance_figure(sites).startswith(PNG_MAGIC)


def test_deposition_figure_returns_png():
    """The deposition figure draws grid, site outlines, sources and a contour."""
    rows, cols = np.mgrid[0:30, 0:40]
    grid = 20.0 * np.exp(-np.hypot(rows - 15, cols - 20) / 6.0)  # synthetic, spans ~0.01-20
    grid[0, 0] = np.nan
    sites = gpd.GeoDataFrame({"name": ["a$b$\\c"]}, geometry=[box(100, -300, 300, -100)])
    sources = gpd.GeoDataFrame({"source_id": ["H1"]}, geometry=[Point(500, -375)])
    png = deposition_figure(
        grid,
        west_m=0.0,
        north_m=0.0,
        cell_m=25.0,
        sites=sites,
        sources=sources,
        contours=[(1.0, "1 $kg$")],
        crs_label="EPSG:32632",
    )
    assert png.startswith(PNG_MAGIC)


def _table(n_sectors: int = 12, first_deg: float = 0.0) -> WeatherClasses:
    """A synthetic frequency table: 3 speeds, 6 stability classes, all wind from one sector."""
    frequency = np.zeros((n_sectors, 3, 6))
    frequency[n_sectors // 2, :, 3] = [0.2, 0.3, 0.1]  # from the south, class D
    frequency[0, 0, 5] = 0.4  # from the first sector, class F, lowest speed
    centres = first_deg + np.arange(n_sectors) * 360.0 / n_sectors
    return WeatherClasses(centres, np.array([1.0, 3.0, 6.5]), frequency)


def test_table_wind_rose_returns_png():
    """A frequency table gives a wind rose PNG, also with sectors not centred on north."""
    assert wind_rose_from_table_png(_table()).startswith(PNG_MAGIC)
    assert wind_rose_from_table_png(_table(16, first_deg=11.25)).startswith(PNG_MAGIC)


def test_table_wind_rose_shares_add_up_to_the_time():
    """Bars are the frequencies summed over stability, in %, by speed then sector."""
    percent = _table_rose_percent(_table())
    assert percent.shape == (3, 12)  # (speeds, sectors)
    assert_allclose(percent.sum(), 100.0, rtol=1e-12)  # conservation: the whole year
    assert_allclose(percent[:, 6], [20.0, 30.0, 10.0], rtol=1e-12)  # analytic: 0.2, 0.3, 0.1
    assert_allclose(percent[0, 0], 40.0, rtol=1e-12)


def test_table_wind_rose_normalises_counts():
    """Counts instead of fractions give the same shares (scaled to 100 %)."""
    table = _table()
    counts = WeatherClasses(table.sector_centres_deg, table.speeds_m_s,
                            table.frequency_fraction * 8760.0)
    assert_allclose(_table_rose_percent(counts), _table_rose_percent(table), rtol=1e-12)


def test_table_wind_rose_rejects_a_misshapen_table():
    """A frequency array that does not match the sectors and speeds is refused by name."""
    table = _table()
    bad = WeatherClasses(table.sector_centres_deg, table.speeds_m_s[:2],
                         table.frequency_fraction)
    with pytest.raises(InputError, match="frequency_fraction"):
        wind_rose_from_table_png(bad)
