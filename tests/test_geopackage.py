"""Checks of siting.output.geopackage (results.gpkg) with siting.presentation.gis_layers.

The demo is screened once (the ``demo_output`` fixture of conftest.py); its results.gpkg is read
back with libraries independent of the writer's own code: pyogrio and geopandas for the layers,
sqlite3 for the styles table and the GeoPackage registry, xml.etree for the style text and
rasterio for deposition.tif. Expected values come from the run's CSV tables (the same run), the
demo scenario file, or analytic properties (a rectangle's area, linear interpolation along a
grid edge).
"""

from __future__ import annotations

import sqlite3
import tomllib
import xml.etree.ElementTree as ET
from contextlib import closing

import geopandas as gpd
import numpy as np
import pandas as pd
import pyogrio
import pytest
from numpy.testing import assert_allclose

from siting.output.geopackage import write_layer_styles
from siting.presentation.gis_layers import LayerStyle, contours_style, sites_style
from siting.readers.resources import demo_dir

#: sites.csv keeps 6 significant figures (siting/output/tables.py): read back within 5e-6.
CSV_RTOL = 5e-6
SLD = "{http://www.opengis.net/sld}"
SE = "{http://www.opengis.net/se}"
OGC = "{http://www.opengis.net/ogc}"

#: Layers of the demo's results.gpkg and their geometry types: the demo has receptors, a
#: holding, volume sources and contour levels the grid crosses (data_demo/scenario.toml).
DEMO_LAYERS = {
    "sites": "Polygon",
    "sources": "Point",
    "source_footprints": "Polygon",
    "receptors": "Point",
    "contours": "LineString",
    "holding": "Polygon",
}


@pytest.fixture(scope="module")
def gpkg(demo_output):
    return demo_output / "results.gpkg"


@pytest.fixture(scope="module")
def styles(gpkg) -> pd.DataFrame:
    with closing(sqlite3.connect(gpkg)) as db:
        return pd.read_sql_query("SELECT * FROM layer_styles", db)


def _demo_sources() -> list[dict]:
    with open(demo_dir() / "scenario.toml", "rb") as handle:
        return tomllib.load(handle)["source"]


def test_layer_list_and_crs(gpkg):
    """The six layers with their geometry types, then layer_styles (no geometry); EPSG:32632."""
    listed = {str(name): geometry for name, geometry in pyogrio.list_layers(gpkg)}
    assert listed == {**DEMO_LAYERS, "layer_styles": None}
    for layer in DEMO_LAYERS:
        assert pyogrio.read_info(gpkg, layer=layer)["crs"] == "EPSG:32632"  # scenario.toml crs


def test_feature_counts_equal_the_tables(gpkg, demo_output):
    """sites, sources and receptors have one feature per row of sites/sources/receptors.csv;
    the footprints one per volume or area source of the scenario."""
    for layer, table in (("sites", "sites.csv"), ("sources", "sources.csv"),
                         ("receptors", "receptors.csv")):  # fmt: skip
        rows = len(pd.read_csv(demo_output / table))
        assert pyogrio.read_info(gpkg, layer=layer)["features"] == rows, layer
    shaped = [s for s in _demo_sources() if s["kind"] != "point"]
    assert pyogrio.read_info(gpkg, layer="source_footprints")["features"] == len(shaped)


def test_sites_layer_equals_sites_csv(gpkg, demo_output):
    """The sites layer has sites.csv's columns and its values: ids, verdicts and every figure."""
    layer = gpd.read_file(gpkg, layer="sites")
    table = pd.read_csv(demo_output / "sites.csv")
    assert list(layer.columns[:-1]) == list(table.columns)
    for column in ("site_id", "name", "verdict", "deciding_rule"):
        assert list(layer[column]) == list(table[column]), column
    numbers = table.select_dtypes("number").columns
    assert len(numbers) > 20
    assert_allclose(layer[numbers].to_numpy(float), table[numbers].to_numpy(float), rtol=CSV_RTOL)


def test_sources_and_footprints_lie_where_the_scenario_puts_them(gpkg, demo_output):
    """Source points at sources.csv's x_m, y_m; each footprint centred on its source with the
    area width_m x length_m of the scenario (a turned rectangle keeps its area: analytic)."""
    points = gpd.read_file(gpkg, layer="sources")
    table = pd.read_csv(demo_output / "sources.csv")
    assert list(points["source_id"]) == list(table["source_id"])
    assert_allclose(points.geometry.x, table["x_m"], rtol=0, atol=0.01)  # csv keeps cm
    assert_allclose(points.geometry.y, table["y_m"], rtol=0, atol=0.01)
    footprints = gpd.read_file(gpkg, layer="source_footprints").set_index("source_id")
    for spec in (s for s in _demo_sources() if s["kind"] != "point"):
        shape = footprints.loc[spec["id"], "geometry"]
        assert shape.area == pytest.approx(spec["width_m"] * spec["length_m"], rel=1e-9)
        assert (shape.centroid.x, shape.centroid.y) == pytest.approx((spec["x"], spec["y"]))


def test_one_default_style_per_layer_in_both_formats(styles):
    """layer_styles: one default row per layer, QML rooted at qgis and SLD 1.1 rooted at
    StyledLayerDescriptor, each naming its table's geometry column."""
    assert sorted(styles["f_table_name"]) == sorted(DEMO_LAYERS)
    assert (styles["useAsDefault"] == 1).all()
    assert set(styles["f_geometry_column"]) == {"geom"}  # pyogrio's GeoPackage default
    for row in styles.itertuples():
        qml = ET.fromstring(row.styleQML.split("\n", 1)[1])  # after the DOCTYPE line
        assert qml.tag == "qgis" and qml.find("renderer-v2") is not None
        sld = ET.fromstring(row.styleSLD.encode("utf-8"))
        assert sld.tag == f"{SLD}StyledLayerDescriptor" and sld.get("version") == "1.1.0"
        assert sld.find(f"{SLD}NamedLayer/{SE}Name").text == row.f_table_name
        assert sld.findall(f".//{SE}Rule")


def test_site_styles_cover_every_verdict(styles, demo_output):
    """The sites' QML categories and SLD rule filters each list every verdict in sites.csv."""
    verdicts = set(pd.read_csv(demo_output / "sites.csv")["verdict"])
    row = styles.set_index("f_table_name").loc["sites"]
    qml = ET.fromstring(row["styleQML"].split("\n", 1)[1])
    renderer = qml.find("renderer-v2")
    assert renderer.get("type") == "categorizedSymbol" and renderer.get("attr") == "verdict"
    assert {c.get("value") for c in renderer.iter("category")} == verdicts
    sld = ET.fromstring(row["styleSLD"].encode("utf-8"))
    filters = sld.findall(f".//{SE}Rule/{OGC}Filter/{OGC}PropertyIsEqualTo")
    assert {f.find(f"{OGC}PropertyName").text for f in filters} == {"verdict"}
    assert {f.find(f"{OGC}Literal").text for f in filters} == verdicts


def test_gpkg_contents_registers_layer_styles(gpkg):
    """gpkg_contents lists layer_styles as an attributes table; the file passes SQLite's check."""
    with closing(sqlite3.connect(gpkg)) as db:
        kinds = dict(db.execute("SELECT table_name, data_type FROM gpkg_contents"))
        assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)
        assert db.execute("PRAGMA application_id").fetchone() == (0x47504B47,)  # "GPKG"
    assert kinds == {**dict.fromkeys(DEMO_LAYERS, "features"), "layer_styles": "attributes"}


def _bilinear(band: np.ndarray, transform, x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Bilinear interpolation of a north-up raster between its cell centres at x, y [m]."""
    col = (x - transform.c) / transform.a - 0.5
    row = (y - transform.f) / transform.e - 0.5
    c0 = np.clip(np.floor(col).astype(int), 0, band.shape[1] - 2)
    r0 = np.clip(np.floor(row).astype(int), 0, band.shape[0] - 2)
    fc, fr = col - c0, row - r0
    top = band[r0, c0] * (1 - fc) + band[r0, c0 + 1] * fc
    bottom = band[r0 + 1, c0] * (1 - fc) + band[r0 + 1, c0 + 1] * fc
    return top * (1 - fr) + bottom * fr


def test_contours_lie_where_deposition_crosses_their_level(gpkg, demo_output):
    """Every contour vertex reads its level off deposition.tif: linear between the two cell
    centres of the grid edge it lies on (bilinear there is linear), within float32 rounding."""
    import rasterio

    contours = gpd.read_file(gpkg, layer="contours")
    assert set(contours["units"]) == {"kg N/ha/yr"}
    with rasterio.open(demo_output / "deposition.tif") as src:
        band = src.read(1).astype(float)
        transform = src.transform
        xy = [np.asarray(g.coords) for g in contours.geometry]
        nearest = [np.array([v[0] for v in src.sample(line)]) for line in xy]
    for level, line, cells in zip(contours["value"], xy, nearest):
        read = _bilinear(band, transform, line[:, 0], line[:, 1])
        # float32 storage: ~6e-8 relative per cell value, neighbours a few times the level
        assert_allclose(read, level, rtol=1e-5)
        # the nearest cells lie on both sides of the level along the line (it crosses there)
        assert cells.min() <= level <= cells.max()


def test_contour_levels_are_the_sites_thresholds(gpkg, demo_output):
    """The levels are threshold_percent / 100 x critical load of the assessed sites (those the
    grid's range crosses), with the labels the map shows them by."""
    import rasterio

    table = pd.read_csv(demo_output / "sites.csv")
    assessed = table[table["assessed"] & table["threshold_percent"].notna()]
    levels = assessed["threshold_percent"] / 100 * assessed["critical_load_used_kg_n_ha_yr"]
    with rasterio.open(demo_output / "deposition.tif") as src:
        band = src.read(1)
    crossed = {round(v, 6) for v in levels if band.min() < v < band.max()}
    contours = gpd.read_file(gpkg, layer="contours")
    assert {round(v, 6) for v in contours["value"]} == crossed
    assert len(crossed) >= 2  # the demo has several distinct thresholds and loads
    page = (demo_output / "map.html").read_text(encoding="utf-8")
    for label in set(contours["label"]):
        assert label in page  # the map's contour labels (plain text: no character to escape)


def test_contour_styles_grade_by_value_with_dashes():
    """Each level has its own range (containing it) and the dashed levels a dash pattern."""
    contours = [(0.2, "4 %"), (1.0, "20 %"), (10.0, "100 %")]
    style = contours_style(contours)
    renderer = ET.fromstring(style.qml.split("\n", 1)[1]).find("renderer-v2")
    assert renderer.get("type") == "graduatedSymbol" and renderer.get("attr") == "value"
    ranges = [(float(r.get("lower")), float(r.get("upper"))) for r in renderer.iter("range")]
    for (level, _), (lower, upper) in zip(contours, ranges):
        assert lower <= level < upper
    dashes = [o.get("value") for o in renderer.iter("Option") if o.get("name") == "use_custom_dash"]
    assert "1" in dashes  # the map's second and third styles are dashed
    sld = ET.fromstring(style.sld.encode("utf-8"))
    assert any(p.get("name") == "stroke-dasharray" for p in sld.iter(f"{SE}SvgParameter"))


def test_user_text_in_styles_is_escaped(tmp_path):
    """A verdict with markup characters survives both formats as text (the XML stays valid)."""
    sites = pd.DataFrame({"verdict": ['fails <&> "x"', "passes"], "passes": [False, True]})
    style = sites_style(sites)
    qml = ET.fromstring(style.qml.split("\n", 1)[1])
    assert {c.get("value") for c in qml.iter("category")} == set(sites["verdict"])
    literals = {e.text for e in ET.fromstring(style.sld.encode()).iter(f"{OGC}Literal")}
    assert literals == set(sites["verdict"])


def test_styles_need_an_existing_layer(tmp_path):
    """A style for a layer the file does not have is refused (KeyError), nothing added."""
    path = tmp_path / "one.gpkg"
    gpd.GeoDataFrame(
        {"a": [1]}, geometry=gpd.points_from_xy([0.0], [0.0]), crs="EPSG:32632"
    ).to_file(path, layer="points", driver="GPKG")
    with pytest.raises(KeyError, match="nothere"):
        write_layer_styles(
            path, [LayerStyle("nothere", "<qgis/>", "<x/>", "")], "2024-01-01T00:00:00+00:00"
        )
    with closing(sqlite3.connect(path)) as db:
        tables = {r[0] for r in db.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert "layer_styles" not in tables  # the transaction rolled back
