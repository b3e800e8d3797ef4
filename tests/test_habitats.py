"""Habitat sites: critical values and thresholds attached from the tables, sample receptors."""

import geopandas as gpd
import numpy as np
import pytest
import shapely

from siting.errors import InputError
from siting.habitats import read_habitats, site_sample_points
from siting.resources import demo_dir
from siting.scenario import HabitatsSection
from siting.tables import load_tables


@pytest.fixture(scope="module")
def tables():
    return load_tables()


def _section(path, **kw):
    return HabitatsSection(file=path, **kw)


def test_demo_sites_get_values_from_tables(tables):
    """Each demo site's critical load (2022 review, lower end) and threshold equal its table rows
    (read back); with nothing saying lichens and bryophytes are absent, every site gets 1 ug/m3
    (UNECE2007 as reported in Cape2009, confirmed)."""
    sites, warnings = read_habitats(_section(demo_dir() / "habitats.gpkg"), "EPSG:32632", tables)
    assert warnings == []
    for row in sites.itertuples():
        habitat = tables.critical_loads[row.habitat]
        assert row.critical_load_review == "2022"
        assert row.critical_load_used_kg_n_ha_yr == habitat["critical_load_2022_min_kg_n_ha_yr"]
        assert row.critical_level_ug_m3 == 1.0
        tier = {t["id"]: t for t in tables.thresholds}[row.tier]
        assert row.threshold_percent == tier["threshold_percent"]
        assert row.designation.lower() in [d.lower() for d in tier["designations"]]


def test_reprojection_and_overrides(tmp_path, tables):
    """A layer in another CRS is reprojected; per-site fields override the critical values."""
    poly = shapely.box(500000, 5800000, 500100, 5800100)
    gdf = gpd.GeoDataFrame({"name": ["A"], "habitat": ["Raised bog"], "designation": ["SSSI"],
                            "cle": [3.0], "clo": [7.5]}, geometry=[poly], crs="EPSG:32632")
    gdf.to_crs("EPSG:4326").to_file(tmp_path / "h.geojson")
    sites, _ = read_habitats(_section(tmp_path / "h.geojson", critical_level_field="cle",
                                      critical_load_field="clo"), "EPSG:32632", tables, "upper")
    row = sites.iloc[0]
    assert row.habitat == "raised_bog"  # matched by the table's name, case-insensitively
    assert row.critical_level_ug_m3 == 3.0 and row.critical_load_used_kg_n_ha_yr == 7.5
    assert abs(row.area_ha - 1.0) < 1e-3  # 100 m x 100 m back in metres
    assert row.tier == "national"


def test_unknown_designation_takes_strictest_tier_with_warning(tmp_path, tables):
    """An unknown designation falls back to the strictest tier and says so."""
    gdf = gpd.GeoDataFrame({"name": ["B"], "habitat": ["dry_heath"], "designation": ["parish green"]},
                           geometry=[shapely.box(0, 0, 10, 10)], crs="EPSG:32632")
    gdf.to_file(tmp_path / "h.gpkg")
    sites, warnings = read_habitats(_section(tmp_path / "h.gpkg"), "EPSG:32632", tables)
    assert sites.iloc[0].threshold_percent == min(t["threshold_percent"] for t in tables.thresholds)
    assert any("parish green" in w for w in warnings)


def test_bow_tie_polygon_is_repaired(tmp_path, tables):
    """A self-intersecting polygon is repaired with a warning, not silently dropped."""
    bow = shapely.Polygon([(0, 0), (10, 10), (10, 0), (0, 10)])
    gdf = gpd.GeoDataFrame({"name": ["C"], "habitat": ["dry_heath"], "designation": ["SSSI"]},
                           geometry=[bow], crs="EPSG:32632")
    gdf.to_file(tmp_path / "h.gpkg")
    sites, warnings = read_habitats(_section(tmp_path / "h.gpkg"), "EPSG:32632", tables)
    assert sites.iloc[0].geometry.is_valid and sites.iloc[0].area_ha > 0
    assert any("repaired" in w for w in warnings)


def test_unknown_habitat_is_named(tmp_path, tables):
    """A habitat value missing from the table names the site and suggests the closest id."""
    gdf = gpd.GeoDataFrame({"name": ["D"], "habitat": ["raised_bogs"], "designation": ["SSSI"]},
                           geometry=[shapely.box(0, 0, 10, 10)], crs="EPSG:32632")
    gdf.to_file(tmp_path / "h.gpkg")
    with pytest.raises(InputError, match=r'"D".*raised_bogs.*did you mean "raised_bog"'):
        read_habitats(_section(tmp_path / "h.gpkg"), "EPSG:32632", tables)


def test_sample_points_cover_boundary_nearest_source_and_interior():
    """Sample points: the boundary point nearest each source, plus interior points inside."""
    poly = shapely.box(100, 0, 120, 20)
    index, x, y, interior = site_sample_points([poly], [0.0], [10.0], 5.0)
    boundary = ~interior
    assert np.allclose([x[boundary][0], y[boundary][0]], [100.0, 10.0])  # nearest edge point
    assert shapely.contains_xy(poly, x[interior], y[interior]).all()
    assert interior.sum() >= 16  # 20 m square at 5 m spacing: 4 x 4 lattice (+ representative)


@pytest.mark.filterwarnings("ignore:.*(truncated|laundered)")  # shapefile's 10-char names
@pytest.mark.parametrize("suffix", [".shp", ".geojson", ".gpkg"])
def test_common_vector_formats_are_read(tmp_path, tables, suffix):
    """Shapefile, GeoJSON and GeoPackage layers all read the same (any format geopandas reads)."""
    sites, _ = read_habitats(_section(demo_dir() / "habitats.gpkg"), "EPSG:32632", tables)
    layer = gpd.read_file(demo_dir() / "habitats.gpkg")
    path = tmp_path / f"h{suffix}"
    layer.to_file(path)
    # a shapefile truncates field names to 10 characters; the error says which name to use
    fields = {"designation_field": "designatio"} if suffix == ".shp" else {}
    if fields:
        with pytest.raises(InputError, match='did you mean "designatio"'):
            read_habitats(_section(path), "EPSG:32632", tables)
    again, _ = read_habitats(_section(path, **fields), "EPSG:32632", tables)
    assert list(again["name"]) == list(sites["name"])
    assert np.allclose(again["area_ha"], sites["area_ha"], rtol=1e-6)
