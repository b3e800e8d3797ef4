"""Habitat sites: critical values and thresholds attached from the tables, sample receptors."""

import geopandas as gpd
import numpy as np
import pytest
import shapely

from siting.errors import InputError, collect_warnings
from siting.readers.habitats import read_habitats
from siting.readers.resources import demo_dir
from siting.readers.scenario_sections import HabitatsSection
from siting.readers.site_points import site_sample_points
from siting.readers.tables import load_tables


@pytest.fixture(scope="module")
def tables():
    return load_tables()


def _section(path, **kw):
    return HabitatsSection(file=path, **kw)


def test_demo_sites_get_values_from_tables(tables):
    """Each demo site's critical load (2022 review, lower end) and threshold equal its table rows
    (read back); with nothing saying lichens and bryophytes are absent, every site gets 1 ug/m3
    (UNECE2007 as reported in Cape2009, confirmed)."""
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(_section(demo_dir() / "habitats.gpkg"), "EPSG:32632", tables)
    warnings = found.messages
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
    gdf = gpd.GeoDataFrame(
        {
            "name": ["A"],
            "habitat": ["Raised bog"],
            "designation": ["SSSI"],
            "cle": [3.0],
            "clo": [7.5],
        },
        geometry=[poly],
        crs="EPSG:32632",
    )
    gdf.to_crs("EPSG:4326").to_file(tmp_path / "h.geojson")
    sites = read_habitats(
        _section(tmp_path / "h.geojson", critical_level_field="cle", critical_load_field="clo"),
        "EPSG:32632",
        tables,
        "upper",
    )
    row = sites.iloc[0]
    assert row.habitat == "raised_bog"  # matched by the table's name, case-insensitively
    assert row.critical_level_ug_m3 == 3.0 and row.critical_load_used_kg_n_ha_yr == 7.5
    assert abs(row.area_ha - 1.0) < 1e-3  # 100 m x 100 m back in metres
    assert row.tier == "national"


def test_unknown_designation_takes_strictest_tier_with_warning(tmp_path, tables):
    """An unknown designation falls back to the strictest tier and says so."""
    gdf = gpd.GeoDataFrame(
        {"name": ["B"], "habitat": ["dry_heath"], "designation": ["parish green"]},
        geometry=[shapely.box(0, 0, 10, 10)],
        crs="EPSG:32632",
    )
    gdf.to_file(tmp_path / "h.gpkg")
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(_section(tmp_path / "h.gpkg"), "EPSG:32632", tables)
    warnings = found.messages
    assert sites.iloc[0].threshold_percent == min(t["threshold_percent"] for t in tables.thresholds)
    assert any("parish green" in w for w in warnings)


def test_bow_tie_polygon_is_repaired(tmp_path, tables):
    """A self-intersecting polygon is repaired with a warning, not silently dropped."""
    bow = shapely.Polygon([(0, 0), (10, 10), (10, 0), (0, 10)])
    gdf = gpd.GeoDataFrame(
        {"name": ["C"], "habitat": ["dry_heath"], "designation": ["SSSI"]},
        geometry=[bow],
        crs="EPSG:32632",
    )
    gdf.to_file(tmp_path / "h.gpkg")
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(_section(tmp_path / "h.gpkg"), "EPSG:32632", tables)
    warnings = found.messages
    assert sites.iloc[0].geometry.is_valid and sites.iloc[0].area_ha > 0
    assert any("repaired" in w for w in warnings)


def test_unknown_habitat_is_named(tmp_path, tables):
    """A habitat value missing from the table names the site and suggests the closest id."""
    gdf = gpd.GeoDataFrame(
        {"name": ["D"], "habitat": ["raised_bogs"], "designation": ["SSSI"]},
        geometry=[shapely.box(0, 0, 10, 10)],
        crs="EPSG:32632",
    )
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
    sites = read_habitats(_section(demo_dir() / "habitats.gpkg"), "EPSG:32632", tables)
    layer = gpd.read_file(demo_dir() / "habitats.gpkg")
    path = tmp_path / f"h{suffix}"
    layer.to_file(path)
    # a shapefile truncates field names to 10 characters; the error says which name to use
    fields = {"designation_field": "designatio"} if suffix == ".shp" else {}
    if fields:
        with pytest.raises(InputError, match='did you mean "designatio"'):
            read_habitats(_section(path), "EPSG:32632", tables)
    again = read_habitats(_section(path, **fields), "EPSG:32632", tables)
    assert list(again["name"]) == list(sites["name"])
    assert np.allclose(again["area_ha"], sites["area_ha"], rtol=1e-6)


def _layer(tmp_path, names, habitats, **fields):
    polys = [
        shapely.box(500000 + 200 * i, 5800000, 500100 + 200 * i, 5800100) for i in range(len(names))
    ]
    gpd.GeoDataFrame(
        {"name": names, "habitat": habitats, "designation": ["SSSI"] * len(names), **fields},
        geometry=polys,
        crs="EPSG:32632",
    ).to_file(tmp_path / "h.gpkg")
    return tmp_path / "h.gpkg"


def test_woodland_gets_1_ug_m3_unless_lichens_are_shown_absent(tmp_path, tables):
    """A broadleaved wood (habitat type not flagged for lichens) gets 1 ug/m3 by default; 3 ug/m3
    only where the layer's field or the scenario says lichens and bryophytes are absent
    (UNECE2007 critical levels 1 and 3 ug/m3, Cape2009, confirmed)."""
    path = _layer(
        tmp_path,
        ["Wood A", "Wood B", "Wood C", "Wood D"],
        ["broadleaved_woodland"] * 4,
        lichens=["absent", "present", None, None],
    )
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(
            _section(
                path,
                lichens_bryophytes_field="lichens",
                lichens_bryophytes_absent=["wood d", "Nowhere Fen"],
            ),
            "EPSG:32632",
            tables,
        )
    warnings = found.messages
    by_name = sites.set_index("name")
    assert list(by_name["critical_level_ug_m3"]) == [3.0, 1.0, 1.0, 3.0]
    assert "absent" in by_name.loc["Wood A", "critical_level_basis"]
    assert "not shown absent" in by_name.loc["Wood C", "critical_level_basis"]
    assert "scenario" in by_name.loc["Wood D", "critical_level_basis"]
    assert any("nowhere fen" in w for w in warnings)  # a name matching no site is said
    default = read_habitats(_section(path), "EPSG:32632", tables)
    assert (default["critical_level_ug_m3"] == 1.0).all()


def test_bad_lichens_value_is_an_input_error(tmp_path, tables):
    """A value that says neither present nor absent is refused, naming the field."""
    path = _layer(tmp_path, ["Wood A"], ["beech_woodland"], lichens=["maybe"])
    with pytest.raises(InputError, match="lichens.*present"):
        read_habitats(_section(path, lichens_bryophytes_field="lichens"), "EPSG:32632", tables)


def test_critical_load_review_2022_by_default_and_2011_on_request(tmp_path, tables):
    """Dry heath: 2022 review 5-15 (Bobbink2022, from memory) by default, 2011 review 10-20
    (BobbinkHettelingh2011, confirmed range) when asked; lower end used."""
    path = _layer(tmp_path, ["Heath"], ["dry_heath"])
    now = read_habitats(_section(path), "EPSG:32632", tables)
    old = read_habitats(_section(path), "EPSG:32632", tables, "lower", "2011")
    assert now.iloc[0]["critical_load_used_kg_n_ha_yr"] == 5.0  # Bobbink2022, from memory
    assert now.iloc[0]["critical_load_review"] == "2022"
    assert old.iloc[0]["critical_load_used_kg_n_ha_yr"] == 10.0  # BobbinkHettelingh2011
    assert old.iloc[0]["critical_load_review"] == "2011"
    assert "Bobbink2022" in now.iloc[0]["critical_load_source"]


def test_older_table_without_2022_values_falls_back_with_a_warning(tmp_path):
    """A user table without the 2022 keys is read; the 2011 range is used and said so."""
    import shutil

    from siting.readers.resources import config_dir

    folder = tmp_path / "cfg"
    shutil.copytree(config_dir(), folder)
    path = folder / "critical_loads.toml"
    text = "\n".join(
        line
        for line in path.read_text().splitlines()
        if not line.startswith(("critical_load_2022", "source_2022", "eunis_2022"))
    )
    path.write_text(text)
    old_tables = load_tables(folder)
    layer = _layer(tmp_path, ["Heath"], ["dry_heath"])
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(_section(layer), "EPSG:32632", old_tables)
    warnings = found.messages
    assert sites.iloc[0]["critical_load_used_kg_n_ha_yr"] == 10.0
    assert sites.iloc[0]["critical_load_review"] == "2011"
    assert any("no 2022 range" in w for w in warnings)
    # half a 2022 range is refused, naming the row
    text2 = path.read_text().replace(
        'lichens_bryophytes = true\nsource = "BobbinkHettelingh2011 '
        "table of empirical critical loads, F4.2",
        "lichens_bryophytes = true\ncritical_load_2022_min_kg_n_ha_yr"
        ' = 5.0\nsource = "BobbinkHettelingh2011 table of empirical '
        "critical loads, F4.2",
        1,
    )
    assert text2 != path.read_text()
    path.write_text(text2)
    with pytest.raises(InputError, match="dry_heath.*missing key"):
        load_tables(folder)


@pytest.mark.parametrize(
    "field, value, match",
    [
        ("clo", float("inf"), "clo must be a finite number"),
        ("clo", "lots", "clo must be a number"),
        ("bg", -2.0, "bg must be >= 0"),
        ("bg", float("inf"), "bg must be a finite number"),
    ],
    ids=[
        "infinite critical load",
        "text in a number field",
        "negative background",
        "infinite background",
    ],
)
def test_bad_numbers_in_the_layer_are_named(tmp_path, tables, field, value, match):
    """A per-site number that would give 0 %, a crash or a negative total is refused, naming the
    field and the feature (nothing silently wrong)."""
    path = _layer(tmp_path, ["Bog"], ["raised_bog"], clo=[7.5], bg=[3.0])
    gdf = gpd.read_file(path)
    gdf[field] = gdf[field].astype(object)
    gdf.loc[0, field] = value
    gdf.to_file(path)
    section = _section(path, critical_load_field="clo", background_deposition_field="bg")
    with pytest.raises(InputError, match=rf'feature 1 \("Bog"\).*{match}'):
        read_habitats(section, "EPSG:32632", tables)


def test_two_sites_with_one_name_are_refused(tmp_path, tables):
    """Sites are reported and verified by name: a repeated name stops the run naming the
    features (it used to pass screen and crash verify)."""
    path = _layer(tmp_path, ["Moss", "Heath", "Moss"], ["raised_bog", "dry_heath", "raised_bog"])
    with pytest.raises(InputError, match=r'features 1, 3 share the site name "Moss"'):
        read_habitats(_section(path), "EPSG:32632", tables)


def test_field_names_need_not_be_python_identifiers(tmp_path, tables):
    """Fields named "site name", "class" or "2022 load" (legal in GeoPackage, shapefile and
    GeoJSON) are read like any other; the per-feature loop once used attribute access and
    crashed on them (invented values, read back)."""
    gdf = gpd.GeoDataFrame(
        {
            "site name": ["Moss"],
            "class": ["raised_bog"],
            "designation": ["SSSI"],
            "2022 load": [7.5],
            "bg dep": [3.0],
        },
        geometry=[shapely.box(0, 0, 100, 100)],
        crs="EPSG:32632",
    )
    gdf.to_file(tmp_path / "h.gpkg")
    section = _section(
        tmp_path / "h.gpkg",
        name_field="site name",
        habitat_field="class",
        critical_load_field="2022 load",
        background_deposition_field="bg dep",
    )
    with collect_warnings(reissue=False) as found:
        sites = read_habitats(section, "EPSG:32632", tables)
    warnings = found.messages
    row = sites.iloc[0]
    assert warnings == []
    assert (row["name"], row["habitat"]) == ("Moss", "raised_bog")
    assert row["critical_load_used_kg_n_ha_yr"] == 7.5  # the layer's value, read back
    assert row["background_dep_kg_n_ha_yr"] == 3.0  # the layer's value, read back


def _mixed_sites():
    """Squares, a polygon with a hole, a two-part site and a thin diagonal strip (invented)."""
    ring = shapely.Polygon(
        [(0, 0), (200, 0), (200, 200), (0, 200)],
        holes=[[(50, 50), (150, 50), (150, 150), (50, 150)]],
    )
    return [
        shapely.box(300, 20, 360, 70),
        ring,
        shapely.MultiPolygon(
            [shapely.box(-400, -400, -340, -330), shapely.box(-300, -400, -260, -380)]
        ),
        shapely.Polygon([(500, 0), (900, 400), (905, 395), (505, -5)]),
        shapely.box(-100, 500, -97, 503),
    ]


def test_sample_points_equal_a_per_site_reference():
    """The vectorised sampler gives, site by site, what shapely's per-geometry functions give
    (independent reference: nearest_points, representative_point and a lattice tested with
    Polygon.contains on each point, one site at a time)."""
    from shapely.ops import nearest_points

    from siting.readers.site_points import lattice_step_m

    sites = _mixed_sites()
    sources = [(250.0, 100.0), (-500.0, 600.0)]
    index, x, y, interior = site_sample_points(
        sites, [s[0] for s in sources], [s[1] for s in sources], 10.0
    )
    steps = lattice_step_m(np.asarray(sites, dtype=object), 10.0)
    for i, geom in enumerate(sites):
        mine = index == i
        expected = [nearest_points(geom.boundary, shapely.Point(sx, sy))[0] for sx, sy in sources]
        rep = geom.representative_point()
        minx, miny, maxx, maxy = geom.bounds
        step = steps[i]
        lattice = [
            (gx, gy)
            for gy in np.arange(miny + step / 2, maxy, step)
            for gx in np.arange(minx + step / 2, maxx, step)
            if geom.contains(shapely.Point(gx, gy))
        ]
        got = np.column_stack([x[mine], y[mine]])
        assert np.allclose(got[:2], [(p.x, p.y) for p in expected])
        assert not interior[mine][:2].any()
        assert np.allclose(got[2], (rep.x, rep.y)) and interior[mine][2]
        assert np.allclose(got[3:], np.reshape(lattice, (-1, 2)))


def test_boundary_points_equal_a_per_ring_reference():
    """Boundary samples: every ring split into max(8, ceil(length / spacing)) equal steps, as
    shapely's line_interpolate_point gives ring by ring (independent reference)."""
    from siting.readers.site_points import site_boundary_points

    sites = _mixed_sites()
    index, x, y = site_boundary_points(sites, 10.0)
    for i, geom in enumerate(sites):
        expected = []
        for part in shapely.get_parts(geom):
            for ring in [part.exterior, *part.interiors]:
                n = max(8, int(np.ceil(ring.length / 10.0)))
                expected += [
                    (p.x, p.y)
                    for p in (
                        ring.interpolate(d) for d in np.linspace(0, ring.length, n, endpoint=False)
                    )
                ]
        assert np.allclose(np.column_stack([x[index == i], y[index == i]]), expected)


def test_grid_nodes_in_sites_equal_contains_on_every_node():
    """Nodes inside each site (bounding-box candidates) equal shapely.contains_xy over the
    whole grid for that site (independent reference, brute force)."""
    from siting.dispersion.grid import GridSpec
    from siting.readers.site_points import grid_nodes_in_sites

    grid = GridSpec(-520.0, 620.0, 10.0, 150, 110, "EPSG:32632")
    sites = _mixed_sites()
    nodes, site_of = grid_nodes_in_sites(sites, grid)
    gx, gy = grid.centres()
    for i, geom in enumerate(sites):
        brute = np.flatnonzero(shapely.contains_xy(geom, gx.ravel(), gy.ravel()))
        assert sorted(nodes[site_of == i]) == list(brute)


def test_very_long_polygon_gets_bounded_points_and_a_warning():
    """A 2,000 km strip 1 m wide (absurd, issue 12 item 9) gets a bounded number of sample
    points, quickly, and a warning naming it; a small site gets none (bounds: the module's
    constants, common practice, no source)."""
    from siting.readers.site_points import (
        MAX_BOUNDARY_POINTS_PER_SITE,
        MAX_POINTS_PER_SITE,
        coarsened_sites,
        site_boundary_points,
    )

    strip = shapely.box(0, 0, 2_000_000, 1)
    small = shapely.box(0, 10, 30, 40)
    index, *_ = site_sample_points([strip, small], [0.0], [-50.0], 25.0)
    assert (index == 0).sum() <= MAX_POINTS_PER_SITE + 2
    b_index, *_ = site_boundary_points([strip, small], 10.0)
    assert (b_index == 0).sum() <= MAX_BOUNDARY_POINTS_PER_SITE + 8
    with collect_warnings(reissue=False) as found:
        names = coarsened_sites([strip, small], ["Long Strip", "Small"], 25.0, 10.0)
    warnings = found.messages
    assert names == ["Long Strip"]  # the only site too long for the bounded points, by design
    assert len(warnings) == 1 and '"Long Strip"' in warnings[0] and "Small" not in warnings[0]
