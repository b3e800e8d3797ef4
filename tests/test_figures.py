"""Tests of siting.presentation.figures: the report figures render to PNG, hostile names included."""

from __future__ import annotations

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from matplotlib.collections import LineCollection
from matplotlib.figure import Figure
from numpy.testing import assert_allclose
from shapely.geometry import MultiPolygon, Point, Polygon, box
from synthetic import hostile_sites

from siting.dispersion.sector import WeatherClasses
from siting.errors import InputError
from siting.presentation import figures
from siting.presentation.figures import (
    MAX_LABELLED_SITES,
    _site_outlines,
    _table_rose_percent,
    deposition_figure,
    figure_png,
    pc_vs_distance_figure,
    wind_rose_from_table_png,
)
from siting.presentation.formats import most_affected_order

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"

#: Words of the note a figure carries when it names only some sites (figures._labels_note).
NOTE_WORDS = "Only the most affected sites are named"


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
    counts = WeatherClasses(
        table.sector_centres_deg, table.speeds_m_s, table.frequency_fraction * 8760.0
    )
    assert_allclose(_table_rose_percent(counts), _table_rose_percent(table), rtol=1e-12)


def test_table_wind_rose_rejects_a_misshapen_table():
    """A frequency array that does not match the sectors and speeds is refused by name."""
    table = _table()
    bad = WeatherClasses(table.sector_centres_deg, table.speeds_m_s[:2], table.frequency_fraction)
    with pytest.raises(InputError, match="frequency_fraction"):
        wind_rose_from_table_png(bad)


# --------------------------------------------------------------------------------------------
# many sites: every one drawn, at most MAX_LABELLED_SITES named, and the figure says so
# --------------------------------------------------------------------------------------------

N_MANY = 200


def _many_sites() -> gpd.GeoDataFrame:
    """N_MANY small squares on a lattice; the share of the threshold rises with the index, so
    "Site 199" is the most affected (synthetic: % of load = index / 10, threshold 1 %)."""
    i = np.arange(N_MANY)
    return gpd.GeoDataFrame(
        {
            "name": [f"Site {k}" for k in i],
            "pc_pct_level": i / 20.0,
            "pc_pct_load": i / 10.0,
            "threshold_percent": 1.0,
            "critical_load_used_kg_n_ha_yr": 10.0,
            "pc_dep_max_kg_n_ha_yr": 0.01 + i / 100.0,
            "distance_m": 2000.0 - 9.0 * i,
            "verdict": np.where(i / 10.0 > 1.0, "above threshold", "below threshold"),
        },
        geometry=[
            box(60.0 * (k % 15), -60.0 * (k // 15) - 40, 60.0 * (k % 15) + 40, -60.0 * (k // 15))
            for k in i
        ],
    )


@pytest.fixture
def drawn(monkeypatch):
    """The Figure objects the figure functions render, kept for inspection."""
    kept = []
    render = figures.figure_png

    def keep(fig, dpi=110):
        kept.append(fig)
        return render(fig, dpi)

    monkeypatch.setattr(figures, "figure_png", keep)
    return kept


def _texts(fig) -> list[str]:
    """Every text drawn in the figure's axes (names, notes, contour labels)."""
    return [t.get_text() for ax in fig.axes for t in ax.texts]


def _deposition_of(sites) -> bytes:
    rows, cols = np.mgrid[0:40, 0:40]
    grid = 20.0 * np.exp(-np.hypot(rows - 20, cols - 20) / 8.0)  # synthetic, spans ~0.01-20
    return deposition_figure(grid, west_m=-100.0, north_m=100.0, cell_m=25.0, sites=sites)


def test_deposition_figure_names_at_most_the_cap_of_many_sites(drawn):
    """200 sites: all 200 outlined in one LineCollection, at most 15 named, the most affected
    among them, and a note says only the most affected are named (cap: common practice, no
    source)."""
    _deposition_of(_many_sites())
    fig = drawn[-1]
    names = [t for t in _texts(fig) if t.startswith("Site ")]
    assert 1 <= len(names) <= MAX_LABELLED_SITES == 15
    assert "Site 199" in names  # analytic: the highest % of load over its threshold
    assert len(set(names)) == len(names)
    assert any(NOTE_WORDS in t and "200 sites drawn" in t for t in _texts(fig))
    collections = [c for c in fig.axes[0].collections if isinstance(c, LineCollection)]
    assert len(collections) == 1 and len(collections[0].get_segments()) == N_MANY  # one ring each


def test_pc_vs_distance_figure_names_at_most_the_cap_of_many_sites(drawn):
    """200 sites: every point drawn, at most 15 named (the most affected first), a note, and
    the legend beside the axes rather than placed 'best' among the points."""
    sites = pd.DataFrame(_many_sites().drop(columns="geometry"))
    assert pc_vs_distance_figure(sites).startswith(PNG_MAGIC)
    fig = drawn[-1]
    names = [t for t in _texts(fig) if t.startswith("Site ")]
    assert 1 <= len(names) <= MAX_LABELLED_SITES
    assert "Site 199" in names
    assert any(NOTE_WORDS in t for t in _texts(fig))
    points = fig.axes[0].collections[0]
    assert len(points.get_offsets()) == N_MANY  # every site with a positive deposition
    legend = fig.axes[0].get_legend()
    assert legend is not None and legend._loc != 0  # 0 is matplotlib's code for "best"


def test_few_sites_are_all_named_without_a_note(drawn):
    """The four synthetic sites are named as before, and no note is added."""
    pc_vs_distance_figure(hostile_sites())
    texts = _texts(drawn[-1])
    plotted = hostile_sites().dropna(subset=["pc_dep_max_kg_n_ha_yr"])["name"]
    assert sorted(t for t in texts if t in set(plotted)) == sorted(plotted)
    assert not any(NOTE_WORDS in t for t in texts)


def test_most_affected_order_ranks_by_share_of_threshold():
    """Order by max(% level, % load) / threshold %; a missing half ignored, no figure last,
    ties in layer order (analytic, from the values below)."""
    sites = pd.DataFrame(
        {
            "pc_pct_level": [2.0, np.nan, 30.0, np.nan, 5.0],
            "pc_pct_load": [4.0, 10.0, 10.0, np.nan, 5.0],
            "threshold_percent": [1.0, 1.0, 20.0, 1.0, 1.0],
        }
    )
    # shares: 4, 10, 1.5, none, 5
    assert most_affected_order(sites).tolist() == [1, 4, 0, 2, 3]


def test_site_outlines_give_every_ring():
    """A polygon with a hole gives two rings, a two-part multipolygon two, None nothing."""
    holed = Polygon([(0, 0), (10, 0), (10, 10), (0, 10)], [[(2, 2), (4, 2), (4, 4), (2, 4)]])
    parts = MultiPolygon([box(20, 0, 25, 5), box(30, 0, 35, 5)])
    rings = _site_outlines([holed, parts, None])
    assert len(rings) == 4
    assert all(ring.shape[1] == 2 and (ring[0] == ring[-1]).all() for ring in rings)  # closed
