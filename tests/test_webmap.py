"""Tests of siting.presentation.webmap (and the modules it is split into): map.html content,
escaping of user text, overlay, legend, contours; the placement map."""

from __future__ import annotations

import html
import json
import re

import geopandas as gpd
import numpy as np
import pandas as pd
import pytest
from shapely.geometry import Point, box

from siting.errors import InputError
from siting.presentation.webmap import SITE_CLASS, escape_text, render_screen_map

CRS = "EPSG:32632"
WEST_M, NORTH_M, CELL_M = 500_000.0, 5_700_000.0, 25.0
N_ROWS, N_COLS = 48, 60

NASTY_SCRIPT = "<script>alert(1)</script>"
NASTY_TEMPLATE = "a`b${alert(1)}\\c"
NASTY_IMG = "<img src=x onerror=alert(1)>"

CAUTIONS = [
    "Screening estimate from a simplified model (flat terrain, no building wake, long-term means).",
    "Emission factors and deposition velocities carry wide uncertainty.",
    "Local regulations and the competent authority decide.",
]


def _grid() -> np.ndarray:
    """Synthetic deposition [kg N/ha/yr]: 20 at the source, falling off with distance."""
    rows, cols = np.mgrid[0:N_ROWS, 0:N_COLS]
    distance_m = np.hypot(rows - N_ROWS / 2, cols - N_COLS / 2) * CELL_M
    grid = 20.0 * np.exp(-distance_m / 150.0)  # synthetic, not physics: spans ~0.001-20
    grid[0, :5] = np.nan  # a strip of no data
    return grid


def _sites() -> gpd.GeoDataFrame:
    """Three habitat sites whose text fields try to inject HTML and JavaScript."""
    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    geoms = [
        box(centre_x + 200, centre_y - 100, centre_x + 400, centre_y + 100),
        box(centre_x - 600, centre_y - 300, centre_x - 400, centre_y - 100),
        box(centre_x - 100, centre_y + 300, centre_x + 100, centre_y + 500),
    ]
    return gpd.GeoDataFrame(
        {
            "site_id": ["S1", "S2`x", "S3${1}"],
            "name": [NASTY_SCRIPT, NASTY_TEMPLATE, NASTY_IMG],
            "designation": ["SAC", "<b>SSSI</b>", "local"],
            "habitat": ["raised bog", "oak woodland", "heath \\ dry"],
            "verdict": ["above threshold", "below threshold", "not assessed"],
            "pc_pct_level": [120.5, 0.8, np.nan],
            "pc_pct_load": [250.0, 0.4, np.nan],
            "pc_conc_max_ug_m3": [1.2, 0.008, np.nan],
            "pc_dep_max_kg_n_ha_yr": [12.5, 0.04, np.nan],
            "critical_level_ug_m3": [1.0, 1.0, 3.0],
            "critical_load_used_kg_n_ha_yr": [5.0, 10.0, 10.0],
            "threshold_percent": [1.0, 1.0, 100.0],
            "incomb_pct_load": [260.0, np.nan, np.nan],
        },
        geometry=geoms,
        crs=CRS,
    )


def _sources() -> gpd.GeoDataFrame:
    """A derived point source, a direct-figure area source and a removed house."""
    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    return gpd.GeoDataFrame(
        {
            "source_id": ["H1<i>", "STORE", "OLD"],
            "kind": ["point", "area", "point"],
            "role": ["proposed", "existing", "removed"],
            "height_m": [6.0, 1.0, 4.0],
            "livestock": ["finishing_pig", None, "finishing_pig"],
            "housing": ["slatted", None, "slatted"],
            "places": [2000, np.nan, 500],
            "factor_nh3_kg_per_place_yr": [2.5, np.nan, 2.5],
            "abatement": ["acid_scrubber", None, None],
            "reduction_percent": [90.0, np.nan, np.nan],
            "effective_reduction_percent": [70.0, np.nan, np.nan],
            "reduction_flag": ["", None, None],
            "nh3_kg_yr": [1500.0, 300.0, 1250.0],
            "emission_g_s": [0.0476, 0.0095, 0.0396],
        },
        geometry=[
            Point(centre_x, centre_y),
            box(centre_x + 50, centre_y + 50, centre_x + 90, centre_y + 80),
            Point(centre_x - 80, centre_y),
        ],
        crs=CRS,
    )


def _arguments(contours=((1.0, "1 kg N/ha/yr"),), **overrides) -> dict:
    """The keyword arguments of a map of the synthetic inputs, with ``overrides``."""
    arguments = {
        "title": "Farm <Nord> & `test`",
        "crs": CRS,
        "west_m": WEST_M,
        "north_m": NORTH_M,
        "cell_m": CELL_M,
        "deposition_kg_n_ha_yr": _grid(),
        "sites": _sites(),
        "sources": _sources(),
        "contours": list(contours),
        "cautions": CAUTIONS,
        "version": "0.1.0",
        "run_time": "2024-05-01T12:00:00Z",
    }
    arguments.update(overrides)
    return arguments


def _render(contours=((1.0, "1 kg N/ha/yr"),), **overrides) -> str:
    """The HTML of a map of the synthetic inputs (render_screen_map)."""
    return render_screen_map(**_arguments(contours, **overrides))


def _geojson_layers(text: str) -> list[dict]:
    """The data of every folium GeoJson layer in the page (``geo_json_<id>_add({...})``)."""
    decoder = json.JSONDecoder()
    return [
        decoder.raw_decode(text, match.end())[0]
        for match in re.finditer(r"geo_json_[0-9a-f]+_add\(", text)
    ]


def _site_layers(text: str) -> list[dict]:
    """The GeoJson layers of habitat sites: those whose features carry a verdict."""
    return [
        layer
        for layer in _geojson_layers(text)
        if layer.get("type") == "FeatureCollection"
        and layer["features"]
        and all("verdict" in f["properties"] for f in layer["features"])
    ]


def _site_properties(text: str) -> list[dict]:
    """Properties of every site feature in the page, in layer order."""
    return [f["properties"] for layer in _site_layers(text) for f in layer["features"]]


@pytest.fixture(scope="module")
def map_html() -> str:
    """The map rendered once for the read-only checks."""
    return _render()


def test_escape_text_neutralises_html_and_template_literals():
    """escape_text leaves no <, >, quotes, backtick, $, braces or backslash in its output."""
    out = escape_text("<a href='x'>\"`${1}\\</a>")
    assert not re.search(r"[<>\"'`${}\\]", out)
    assert out == (
        "&lt;a href=&#x27;x&#x27;&gt;&quot;&#96;&#36;&#123;1&#125;&#92;&lt;/a&gt;"
    )  # analytic: html.escape, then the numeric references of escape_text


def test_escape_text_handles_missing_and_numbers():
    """None and NaN become empty text; numbers their str()."""
    assert escape_text(None) == ""
    assert escape_text(float("nan")) == ""
    assert escape_text(2.5) == "2.5"


def test_map_file_is_written(tmp_path):
    """The output layer's write_screen_map writes the rendered page, a Leaflet map, as UTF-8."""
    from siting.output.screen import write_screen_map

    path = tmp_path / "map.html"
    write_screen_map(path, **_arguments())
    text = path.read_text(encoding="utf-8")
    assert path.stat().st_size > 0
    assert "L.map(" in text
    assert "Farm &lt;Nord&gt; &amp; &#96;test&#96;" in text  # the title, non-ASCII-safe


def test_hostile_site_names_never_appear_raw(map_html):
    """Site names with script tags, template-literal syntax or event handlers are escaped."""
    for raw in (NASTY_SCRIPT, NASTY_TEMPLATE, NASTY_IMG, "${alert(1)}", "onerror=alert(1)>"):
        assert raw not in map_html
    # the site layer's data, decoded from the page: names arrive escaped, for the popup
    # head and the tooltip alike
    names = [p["name"] for p in _site_properties(map_html)]
    assert names == [escape_text(NASTY_SCRIPT), escape_text(NASTY_TEMPLATE), escape_text(NASTY_IMG)]
    assert names == [
        "&lt;script&gt;alert(1)&lt;/script&gt;",
        "a&#96;b&#36;&#123;alert(1)&#125;&#92;c",
        "&lt;img src=x onerror=alert(1)&gt;",
    ]  # analytic: html.escape, then the numeric references of escape_text


def test_other_user_text_is_escaped(map_html):
    """Designation, habitat, source id and title reach the page only in escaped form."""
    assert "<b>SSSI</b>" not in map_html
    popups = [value for p in _site_properties(map_html) for value in p["popup"]]
    assert "&lt;b&gt;SSSI&lt;/b&gt;" in popups
    assert "heath &#92; dry" in popups
    assert "S2&#96;x" in popups and "S3&#36;&#123;1&#125;" in popups  # site ids
    assert "H1<i>" not in map_html and "H1&lt;i&gt;" in map_html
    assert "Farm <Nord>" not in map_html
    assert "Farm &lt;Nord&gt; &amp; &#96;test&#96;" in map_html


def test_raster_overlay_is_a_png_data_url(map_html):
    """The deposition overlay is embedded as a PNG data URL in an image overlay."""
    assert re.search(r'L\.imageOverlay\(\s*"data:image/png;base64,[A-Za-z0-9+/=]{100,}"', map_html)


def test_legend_lists_classes_in_kg_n_ha_yr(map_html):
    """The legend names the deposition unit and the class edges adapted to the data (max 20)."""
    assert "kg N/ha/yr" in map_html
    assert "≥ 10 kg N/ha/yr" in map_html  # top class 10-30 holds the maximum of 20
    assert "above threshold" in map_html and "not assessed" in map_html


def test_title_block_carries_cautions_version_and_time(map_html):
    """The title block shows the cautions, the siting version and the run time."""
    for caution in CAUTIONS:
        assert escape_text(caution) in map_html
    assert "siting 0.1.0" in map_html
    assert "2024-05-01T12:00:00Z" in map_html


def test_contours_appear_for_a_level_in_range():
    """A contour level inside the data range gives a polyline with its label as tooltip."""
    text = _render(contours=[(1.0, "one <kg>")])
    assert "L.polyline(" in text
    assert "one &lt;kg&gt;" in text and "one <kg>" not in text


def test_no_contour_lines_without_levels():
    """Without contour levels no contour line is drawn (the grid edge is the only polyline)."""
    text = _render(contours=[])
    assert text.count("L.polyline(") == 1 and "siting-grid-edge" in text


def test_map_has_layer_control_scale_and_osm_option(map_html):
    """Layer control, scale bar, north arrow and the OpenStreetMap base layer are present."""
    assert "L.control.layers(" in map_html
    assert "L.control.scale(" in map_html
    assert "North arrow" in map_html
    assert "tile.openstreetmap.org" in map_html


def _opening_view(text: str) -> tuple[float, float, float, float]:
    """(lat_s, lon_w, lat_n, lon_e) of the view the page opens on (its sitingMap.fit call)."""
    match = re.search(
        r"sitingMap\.fit\(map_\w+, \[\[([-\d.]+), ([-\d.]+)\], \[([-\d.]+), ([-\d.]+)\]\]\)",
        text,
    )
    assert match
    return tuple(map(float, match.groups()))


def test_map_opens_on_the_sites_and_sources_within_the_grid(map_html):
    """The page opens on the sites and sources (UTM 32N near 51.4 N, 9 E), inside the grid."""
    lat_s, lon_w, lat_n, lon_e = _opening_view(map_html)
    # analytic: x = 500 000 m lies on the 9 E central meridian; 5 700 000 m N is ~51.4 N
    assert 8.99 < lon_w < lon_e < 9.03
    assert 51.4 < lat_s < lat_n < 51.5
    for frame in (_sites(), _sources()):
        west, south, east, north = frame.to_crs("EPSG:4326").total_bounds
        assert lon_w < west and east < lon_e and lat_s < south and north < lat_n
    grid = re.search(
        r'L\.imageOverlay\(\s*"data:[^"]+",\s*\[\[([-\d.]+),\s*([-\d.]+)\],\s*'
        r"\[([-\d.]+),\s*([-\d.]+)\]\]",
        map_html,
    )
    g_s, g_w, g_n, g_e = map(float, grid.groups())
    assert g_s <= lat_s and g_w <= lon_w and lat_n <= g_n and lon_e <= g_e  # within the grid


def test_all_nan_grid_still_renders():
    """A grid with no data gives a map with a fully transparent overlay, without error."""
    text = _render(deposition_kg_n_ha_yr=np.full((5, 6), np.nan))
    assert "data:image/png;base64," in text


def test_bad_crs_and_grid_raise_input_error(tmp_path):
    """A geographic CRS or a 1-D grid is refused before anything is written."""
    from siting.output.screen import write_screen_map

    with pytest.raises(InputError, match="projected"):
        write_screen_map(tmp_path / "a.html", **_arguments(crs="EPSG:4326"))
    with pytest.raises(InputError, match="2-D"):
        write_screen_map(tmp_path / "b.html", **_arguments(deposition_kg_n_ha_yr=np.ones(5)))
    assert not (tmp_path / "a.html").exists() and not (tmp_path / "b.html").exists()


def test_popups_hold_formatted_figures(map_html):
    """Site popups show formatted figures with units; source popups the derivation."""
    popups = [value for p in _site_properties(map_html) for value in p["popup"]]
    assert "12.5 kg N/ha/yr" in popups  # _sites(): pc_dep_max_kg_n_ha_yr 12.5
    assert "1.2 µg NH3/m³" in popups  # _sites(): pc_conc_max_ug_m3 1.2
    assert "2000 places" in map_html
    assert "emission given directly in the scenario" in map_html
    assert html.escape("1500 kg NH3/yr") in map_html


def test_overlay_keeps_north_up_and_no_data_transparent():
    """The NaN strip in row 0 (north-west) is transparent in the top-left of the overlay PNG."""
    import base64
    import io

    from matplotlib.image import imread

    text = _render()
    # the overlay's PNG, not the layer-control icon inlined with leaflet.css
    encoded = re.search(
        r'L\.imageOverlay\(\s*"data:image/png;base64,([A-Za-z0-9+/=]+)"', text
    ).group(1)
    rgba = imread(io.BytesIO(base64.b64decode(encoded)), format="png")
    assert rgba.shape[2] == 4
    assert rgba[0, 0, 3] == 0  # no data at the north-west corner: transparent
    assert rgba[-1, 0, 3] > 0  # south-west corner holds data above the lowest class
    assert rgba[rgba.shape[0] // 2, rgba.shape[1] // 2, 3] > 0  # the peak is coloured


def test_pandas_na_shows_as_blank():
    """A pandas NA in a text column is treated as missing, not shown as '<NA>'."""
    sites = _sites().astype({"designation": "string"})
    sites.loc[0, "designation"] = pd.NA
    text = _render(sites=sites)
    assert "&lt;NA&gt;" not in text and "<NA>" not in text


def test_popup_rows_follow_the_site_figures(map_html):
    """Each site's popup values: verdict in bold, n/a for missing figures, in-combination only
    where given (values from _sites())."""
    first, second, third = (p["popup"] for p in _site_properties(map_html))
    assert first[3] == "<strong>above threshold</strong>"
    # pc_pct_load 250 and incomb_pct_load 260, three significant figures (format_number)
    assert "250 %" in first and first[-1] == "260 %"
    assert second[-1] == "" and third[-1] == ""  # no in-combination figure: row left out
    assert third.count("n/a") == 4  # concentration, % level, deposition, % load all NaN


def _many_sites(n: int) -> gpd.GeoDataFrame:
    """n small square sites on a lattice around the grid centre; verdicts cycle (synthetic)."""
    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    side = int(np.ceil(np.sqrt(n)))
    verdicts = ["above threshold", "below threshold", "not assessed"]
    return gpd.GeoDataFrame(
        {
            "site_id": [f"S{i}" for i in range(n)],
            "name": [f"Site {i} <{i}>" for i in range(n)],
            "verdict": [verdicts[i % 3] for i in range(n)],
            "pc_pct_load": np.linspace(0.1, 50.0, n),
        },
        geometry=[
            box(
                centre_x - 600 + 40 * (i % side),
                centre_y - 500 + 40 * (i // side),
                centre_x - 580 + 40 * (i % side),
                centre_y - 480 + 40 * (i // side),
            )
            for i in range(n)
        ],
        crs=CRS,
    )


def test_many_sites_are_one_layer_with_a_feature_each():
    """200 sites make one GeoJson layer of 200 features, not 200 layers (one layer keeps the
    page small and quick to write; common practice, no source)."""
    n = 200
    text = _render(sites=_many_sites(n))
    layers = _site_layers(text)
    assert len(layers) == 1
    assert len(layers[0]["features"]) == n
    assert [f["properties"]["name"] for f in layers[0]["features"]] == [
        escape_text(f"Site {i} <{i}>") for i in range(n)
    ]
    assert "Site 0 <0>" not in text
    # one bound popup script, not one popup element per site
    assert text.count(".bindPopup(function ()") == 1
    assert text.count("L.popup(") == len(_sources())  # the sources' own popups only


def test_site_style_is_keyed_on_the_verdict(map_html):
    """The one site layer styles each feature by its verdict: the verdict colours and the
    stable CSS class appear in its style map (siting.presentation.formats.VERDICT_COLOURS)."""
    from siting.presentation.formats import VERDICT_COLOURS

    styler = re.search(
        r"function geo_json_[0-9a-f]+_styler\(feature\) \{(.*?)\n        \}", map_html, re.S
    )
    assert styler is not None
    for colour in VERDICT_COLOURS.values():
        assert colour in styler.group(1)
    assert SITE_CLASS in styler.group(1)


def test_place_map_draws_the_sites_as_one_escaped_layer():
    """The placement map reuses the screening map's single site layer: one GeoJson of every
    site, the stable CSS class, only designation and habitat in the popup, hostile text
    escaped (common practice, no source)."""
    from siting.presentation.webmap_place import render_place_map

    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    holding = gpd.GeoDataFrame(
        geometry=[box(centre_x - 150, centre_y - 150, centre_x + 150, centre_y + 150)], crs=CRS
    )
    allowed = gpd.GeoDataFrame(
        geometry=[box(centre_x - 100, centre_y - 100, centre_x + 100, centre_y + 100)], crs=CRS
    )
    positions = gpd.GeoDataFrame(
        {
            "x": [centre_x],
            "y": [centre_y],
            "limiting_site": [NASTY_SCRIPT],
            "limiting_share_of_threshold": [0.8],
            "worst_pct_load": [0.9],
            "worst_site": [NASTY_IMG],
            "worst_pct_level": [0.5],
            "required_reduction_percent": [0.0],
        },
        geometry=[Point(centre_x, centre_y)],
        crs=CRS,
    )
    text = render_place_map(
        title="Farm <Nord>",
        crs=CRS,
        west_m=WEST_M,
        north_m=NORTH_M,
        cell_m=CELL_M,
        share_of_threshold=_grid() / 20.0,  # synthetic shares 0-1
        allowed_area=allowed,
        holding=holding,
        positions=positions,
        sites=_sites(),
        cautions=CAUTIONS,
        version="0.1.0",
        run_time="2024-05-01T12:00:00Z",
    )
    layers = [  # the holding outlines are features without properties
        layer
        for layer in _geojson_layers(text)
        if layer.get("features")
        and all("verdict" in f.get("properties", {}) for f in layer["features"])
    ]
    assert len(layers) == 1 and len(layers[0]["features"]) == len(_sites())
    properties = [f["properties"] for f in layers[0]["features"]]
    assert [p["name"] for p in properties] == [
        escape_text(NASTY_SCRIPT),
        escape_text(NASTY_TEMPLATE),
        escape_text(NASTY_IMG),
    ]
    assert properties[1]["popup"] == ["&lt;b&gt;SSSI&lt;/b&gt;", "oak woodland"]
    assert text.count(".bindPopup(function ()") == 1
    assert f'"className": "{SITE_CLASS}"' in text
    for raw in (NASTY_SCRIPT, NASTY_TEMPLATE, NASTY_IMG, "<b>SSSI</b>", "${alert(1)}"):
        assert raw not in text


def test_site_popup_shows_the_habitat_name_where_known():
    """The popup's Habitat row shows the habitat's name (as the report does), its id only when
    the frame has no name column (our own display rule, common practice, no source)."""
    import pandas as pd

    from siting.presentation.webmap_sites import SITE_POPUP_ROWS, site_popup_values

    row = [label for label, _, _ in SITE_POPUP_ROWS].index("Habitat")
    named = pd.DataFrame({"habitat": ["dry_heath"], "habitat_name": ["Dry heath"]})
    assert site_popup_values(named)[0][row] == "Dry heath"
    bare = pd.DataFrame({"habitat": ["dry_heath"]})
    assert site_popup_values(bare)[0][row] == "dry_heath"


# --- offline context, labels, contours, legend, names (issue 16) ----------------------------


def _context():
    """A holding and two exclusion layers (points and a line) with hostile feature names."""
    from shapely.geometry import LineString

    from siting.readers.map_context import ContextLayer, MapContext

    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    holding = gpd.GeoDataFrame(
        {"label": ["Farm <b>holding</b>"]},
        geometry=[box(centre_x - 200, centre_y - 150, centre_x + 200, centre_y + 150)],
        crs=CRS,
    )
    dwellings = gpd.GeoDataFrame(
        {"label": [NASTY_SCRIPT, ""]},
        geometry=[Point(centre_x - 120, centre_y + 60), Point(centre_x + 90, centre_y - 80)],
        crs=CRS,
    )
    brook = gpd.GeoDataFrame(
        {"label": ["Mill ${brook}"]},
        geometry=[LineString([(centre_x - 300, centre_y - 20), (centre_x + 300, centre_y + 10)])],
        crs=CRS,
    )
    return MapContext(
        ContextLayer("holding boundary", holding),
        (ContextLayer("dwellings", dwellings, 100.0), ContextLayer("watercourses", brook, 20.0)),
    )


def _label_calls(text: str) -> list[tuple[str, list]]:
    """(kind, items) of every sitingMap.labels call of the page, its JSON decoded."""
    decoder = json.JSONDecoder()
    calls = []
    for match in re.finditer(r'sitingMap\.labels\(map_\w+, \w+, "(\w+)", ', text):
        calls.append((match.group(1), decoder.raw_decode(text, match.end())[0]))
    return calls


def _labels_of(text: str, kind: str) -> list[str]:
    """The html of every label of one kind, in the order given."""
    return [item[2] for k, items in _label_calls(text) if k == kind for item in items]


@pytest.fixture(scope="module")
def context_html() -> str:
    """The map with the context layers, three contour levels and the bundled tables."""
    from siting.readers.tables import load_tables

    sources = _sources()
    sources.loc[2, "housing"] = "fully_slatted"  # OLD: a pair the bundled table knows
    return _render(
        contours=[(0.05, "1 % of 5 kg N/ha/yr"), (1.0, "20 % of 5 kg N/ha/yr"), (10.0, "x")],
        context=_context(),
        tables=load_tables(),
        sources=sources,
    )


def test_background_tiles_are_an_option_off_when_the_page_opens(map_html):
    """The plain background is the base layer shown; the online tiles are listed, not added."""
    tiles = re.search(r"var (tile_layer_\w+) = L\.tileLayer\(", map_html).group(1)
    assert f"{tiles}.addTo(" not in map_html  # folium adds a shown base layer; this one is off
    assert '"OpenStreetMap background (needs internet)" : ' + tiles in map_html
    plain = re.search(r'"Plain background \(works offline\)" : (feature_group_\w+)', map_html)
    assert plain and f"{plain.group(1)}.addTo(" in map_html
    assert "div.leaflet-container { background: #f6f4ee; }" in map_html  # not Leaflet's grey


def test_context_layers_are_drawn_labelled_and_in_the_layer_control(context_html):
    """Holding, dwellings and brook: each a named layer; every feature labelled, escaped."""
    for name in (
        "Holding boundary",
        "Dwellings (a new house keeps 100 m away)",
        "Watercourses (a new house keeps 20 m away)",
    ):
        assert f'"{name}" : feature_group_' in context_html, name
    assert _labels_of(context_html, "context") == ["Farm &lt;b&gt;holding&lt;/b&gt;"]
    # a feature without a name is labelled with its layer's name
    assert _labels_of(context_html, "exclusion") == [
        escape_text(NASTY_SCRIPT),
        "dwellings",
        "Mill &#36;&#123;brook&#125;",
    ]
    assert "Mill ${brook}" not in context_html and NASTY_SCRIPT not in context_html
    assert "siting-context" in context_html  # the features' CSS class


def test_site_and_source_labels_are_escaped_most_affected_first(map_html):
    """Sites are labelled by name, most affected first; sources by id, proposed first."""
    sites = _labels_of(map_html, "site")
    # _sites(): pc_pct_load 250 (threshold 1 %), 0.4 (1 %), not assessed last
    assert sites == [escape_text(NASTY_SCRIPT), escape_text(NASTY_TEMPLATE), escape_text(NASTY_IMG)]
    assert _labels_of(map_html, "source") == ["H1&lt;i&gt;", "STORE", "OLD"]  # by role order
    script = map_html[map_html.index("sitingMap.labels(") :]
    assert "</script" not in script.split("</script>")[0]  # the JSON cannot end its script


def _polyline_options(text: str) -> list[dict]:
    """The options of every L.polyline of the page (JSON after its list of points)."""
    decoder = json.JSONDecoder()
    found = []
    for match in re.finditer(r"L\.polyline\(\s*", text):
        _points, end = decoder.raw_decode(text, match.end())
        start = text.index("{", end)
        found.append(decoder.raw_decode(text, start)[0])
    return found


def test_each_contour_level_has_its_own_style_and_a_value_label(context_html):
    """Three levels: three colours, dash patterns and weights, each legend row drawn alike, and
    each line labelled '<label>: <level> kg N/ha/yr' (escaped)."""
    from siting.presentation.webmap_grid import CONTOUR_STYLES

    lines = [o for o in _polyline_options(context_html) if "siting-contour " in o["className"]]
    styles = {}
    for options in lines:
        index = int(options["className"].rsplit("-", 1)[1])
        styles.setdefault(index, set()).add(
            (options["color"], options["weight"], options["dashArray"])
        )
    assert sorted(styles) == [0, 1, 2]
    for index, seen in styles.items():
        expected = CONTOUR_STYLES[index]
        assert seen == {(expected["color"], expected["weight"], expected["dash_array"])}
        legend_line = f'stroke="{expected["color"]}" stroke-width="{expected["weight"]:g}"'
        assert legend_line in context_html  # the legend draws the line as the map does
    assert len({next(iter(seen)) for seen in styles.values()}) == 3  # all three differ
    for a in range(3):
        for b in range(a + 1, 3):  # each pair differs in colour and in dash pattern or weight
            sa, sb = CONTOUR_STYLES[a], CONTOUR_STYLES[b]
            assert sa["color"] != sb["color"]
            assert (sa["dash_array"], sa["weight"]) != (sb["dash_array"], sb["weight"])
    assert _labels_of(context_html, "contour") == [
        "1 % of 5 kg N/ha/yr: 0.05 kg N/ha/yr",
        "20 % of 5 kg N/ha/yr: 1 kg N/ha/yr",
        "x: 10 kg N/ha/yr",
    ]


def test_contour_labels_offer_places_along_their_line(context_html):
    """A contour label carries other places on its own line, first the one it starts at."""
    for kind, items in _label_calls(context_html):
        if kind != "contour":
            continue
        for lat, lon, _html, _css, places in items:
            assert len(places) > 3
            assert places[0] == pytest.approx([lat, lon], abs=1e-6)  # 6 decimals kept


def test_source_popups_name_housing_and_technique_as_the_tables_do(context_html):
    """With the run's tables the popup shows their words, the ids beside them."""
    from siting.readers.tables import load_tables

    tables = load_tables()
    factor = tables.factor("finishing_pig", "fully_slatted", "test")
    assert "fully slatted floor" in factor["description"]  # config/emission_factors.toml
    assert escape_text(factor["description"]) in context_html
    assert escape_text(tables.abatement["acid_scrubber"]["name"]) in context_html
    # _sources() H1: housing "slatted" is not in the table: the ids alone, no invented name
    assert "finishing_pig / slatted" in context_html


def test_legend_folds_and_draws_footprints_as_rectangles(map_html):
    """The legend is a <details> box with a summary button; sources with a footprint get a
    rectangle, outlets a circle, as on the map."""
    legend = re.search(r'<details class="siting-box siting-legend[^"]*" open>(.*?)</details>',
                       map_html, re.S)  # fmt: skip
    assert legend and "<summary" in legend.group(1)
    body = legend.group(1)
    assert re.search(r"<rect [^>]*/></svg>existing: house or store", body)  # STORE: area
    assert re.search(r"<circle [^>]*/></svg>proposed: outlet or stack", body)  # H1: point


def test_labels_reject_an_unknown_kind():
    """A label kind the page script does not know is refused (programming error)."""
    import folium

    from siting.presentation.webmap_labels import add_labels

    with pytest.raises(ValueError, match="unknown kind 'sign'"):
        add_labels(folium.FeatureGroup(), "sign", [[51.0, 9.0, "x", ""]])


# --- the placement map ----------------------------------------------------------------------


def _ranked_positions(n_side: int = 12, spacing_m: float = 10.0) -> gpd.GeoDataFrame:
    """A lattice of positions ranked best first by distance from its south-west corner, the
    best ones adjacent cells (synthetic)."""
    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    ii, jj = np.meshgrid(np.arange(n_side), np.arange(n_side))
    x = centre_x - 60 + spacing_m * ii.ravel()
    y = centre_y - 60 + spacing_m * jj.ravel()
    order = np.argsort(np.hypot(ii.ravel(), jj.ravel()), kind="stable")
    x, y = x[order], y[order]
    share = np.linspace(0.5, 3.0, x.size)  # the best pass, the rest do not (synthetic)
    return gpd.GeoDataFrame(
        {
            "x": x,
            "y": y,
            "limiting_site": ["Gorse <heath>"] * x.size,
            "limiting_share_of_threshold": share,
            "passes_as_described": share <= 1.0,
            "worst_pct_load": share * 4.0,
            "worst_site": ["Gorse <heath>"] * x.size,
            "worst_pct_level": share,
            "required_reduction_percent": np.clip(100 * (1 - 1 / share), 0, None),
        },
        geometry=[Point(a, b) for a, b in zip(x, y)],
        crs=CRS,
    )


def _place_html(positions, **overrides) -> str:
    """The placement map of the synthetic grid with the given positions."""
    from siting.presentation.webmap_place import render_place_map

    centre_x = WEST_M + N_COLS * CELL_M / 2
    centre_y = NORTH_M - N_ROWS * CELL_M / 2
    arguments = {
        "title": "Farm <Nord>",
        "crs": CRS,
        "west_m": WEST_M,
        "north_m": NORTH_M,
        "cell_m": 10.0,
        "share_of_threshold": _grid() / 20.0,
        "allowed_area": gpd.GeoDataFrame(
            geometry=[box(centre_x - 100, centre_y - 100, centre_x + 100, centre_y + 100)],
            crs=CRS,
        ),
        "holding": gpd.GeoDataFrame(
            geometry=[box(centre_x - 150, centre_y - 150, centre_x + 150, centre_y + 150)],
            crs=CRS,
        ),
        "positions": positions,
        "sites": _sites(),
        "cautions": CAUTIONS,
        "version": "0.1.0",
        "run_time": "2024-05-01T12:00:00Z",
    }
    arguments.update(overrides)
    return render_place_map(**arguments)


def test_numbered_positions_are_distinct_places_with_their_ranks():
    """Adjacent best cells: the numbers mark positions at least separation_m apart, each with
    its rank among all positions, the best first (rank 1 is the best position)."""
    from siting.presentation.webmap_place import _distinct_positions, separation_m

    positions = _ranked_positions()
    gap = separation_m(10.0)
    assert gap == 40.0  # four 10 m cells, the 40 m floor (our own rule)
    picked = _distinct_positions(positions, 10, gap)
    assert picked[0] == 0 and list(picked) == sorted(picked)
    xy = positions[["x", "y"]].to_numpy()[picked]
    distances = np.hypot(*(xy[:, None, :] - xy[None, :, :]).transpose(2, 0, 1))
    assert (distances[~np.eye(len(picked), dtype=bool)] >= gap).all()
    # every position left out is within gap of a better numbered one (greedy, by construction)
    for i in range(picked[-1]):
        if i not in picked:
            better = xy[picked < i]
            assert np.hypot(*(better - positions[["x", "y"]].to_numpy()[i]).T).min() < gap
    text = _place_html(positions)
    numbers = [int(n) for n in re.findall(r'siting-rank[^"\\]*\\"\\u003e(\d+)\\u003c', text)]
    assert sorted(numbers) == sorted(int(i) + 1 for i in picked)


def test_position_popup_says_in_words_whether_the_house_passes():
    """Passing, failing and never-passing positions each get their sentence, names escaped."""
    from types import SimpleNamespace

    from siting.presentation.webmap_place import position_words

    def row(share, passes=None):
        return SimpleNamespace(
            limiting_site="Gorse <heath>", limiting_share_of_threshold=share,
            passes_as_described=passes,
        )  # fmt: skip

    passes, words = position_words(row(0.43, True))
    assert passes and words.startswith("The house as described passes every site here")
    assert "Gorse &lt;heath&gt;, takes 43 % of what its rule set allows" in words
    passes, words = position_words(row(1.43, False))
    assert not passes
    assert words == (
        "The house as described does not pass here: Gorse &lt;heath&gt; at 143 % of what "
        "its rule set allows."
    )
    passes, words = position_words(row(float("inf"), False))
    assert not passes and "already fail without it" in words
    assert position_words(row(0.9))[0] and not position_words(row(1.1))[0]  # no column: share


def test_never_passing_cells_have_their_own_colour():
    """Cells of +inf (the other sources alone fail) are painted NEVER_COLOUR, not left clear."""
    import base64
    import io

    from matplotlib.colors import to_rgba
    from matplotlib.image import imread

    from siting.presentation.webmap_place import NEVER_COLOUR

    share = np.full((N_ROWS, N_COLS), np.inf)
    share[:, : N_COLS // 2] = 0.5
    text = _place_html(_ranked_positions(), share_of_threshold=share)
    encoded = re.search(r'L\.imageOverlay\(\s*"data:image/png;base64,([^"]+)"', text).group(1)
    rgba = imread(io.BytesIO(base64.b64decode(encoded)), format="png")
    east = rgba[rgba.shape[0] // 2, -2]
    assert np.allclose(east, to_rgba(NEVER_COLOUR), atol=1 / 255)
    assert "never: the other sources alone already fail" in text


def test_place_map_draws_exclusions_and_other_houses_labelled():
    """Dwellings, brook and the farm's other houses are drawn and labelled on the placement
    map, with the distance kept from each exclusion outlined."""
    text = _place_html(_ranked_positions(), context=_context(), sources=_sources())
    assert _labels_of(text, "exclusion")[1:] == ["dwellings", "Mill &#36;&#123;brook&#125;"]
    assert _labels_of(text, "source") == ["H1&lt;i&gt;", "STORE", "OLD"]
    assert '"Other houses and stores" : feature_group_' in text
    assert "m keep-away line" in text
    assert '"Holding boundary" : ' not in text  # the holding is the map's own outline layer


# --- the regional map -----------------------------------------------------------------------


@pytest.fixture(scope="module")
def region_run():
    """The invented regional demo on a coarse 250 m grid (seconds)."""
    from siting.readers.resources import demo_dir
    from siting.runs.region_inputs import RegionOptions
    from siting.runs.regional import region

    demo = demo_dir()
    return region(
        demo / "region_farms.gpkg",
        demo / "weather_table.csv",
        demo / "region_habitats.gpkg",
        RegionOptions(spacing_m=250.0, margin_m=1000.0, scheduler=None, top=3),
    )


def test_region_map_shows_sites_by_verdict_and_their_top_farms(region_run):
    """One site feature per site, coloured by verdict class, its popup listing its top farms;
    a line per contributor row; every farm a feature."""
    from siting.presentation.webmap_region import render_region_map

    grid = region_run.grid
    text = render_region_map(
        title="Region <x>",
        crs=region_run.inputs.crs,
        west_m=grid.west_m,
        north_m=grid.north_m,
        cell_m=grid.cell_m,
        deposition_kg_n_ha_yr=region_run.deposition_kg_n_ha_yr,
        sites=region_run.sites,
        farms=region_run.inputs.farms,
        contributors=region_run.contributors,
        cautions=CAUTIONS,
        version="0.1.0",
        run_time="2024-05-01T12:00:00Z",
    )
    sites = _site_properties(text)
    assert len(sites) == len(region_run.sites) == 8  # the demo's eight invented sites
    first = region_run.contributors.sort_values("rank").groupby("site_id").head(1)
    for props in sites:
        top_farms = props["popup"][-1]
        assert top_farms.startswith("<ol><li>") and top_farms.count("<li>") == 3  # top=3
    for farm_id in first["farm_id"]:
        assert any(f"<li>{farm_id}: " in p["popup"][-1] for p in sites)
    layers = _geojson_layers(text)
    lines = [f for layer in layers for f in layer.get("features", [])
             if f["geometry"]["type"] == "LineString"]  # fmt: skip
    assert len(lines) == len(region_run.contributors) == 8 * 3
    points = [f for layer in layers for f in layer.get("features", [])
              if f["geometry"]["type"] == "Point"]  # fmt: skip
    assert len(points) == len(region_run.inputs.farms) == 200
    assert "Region &lt;x&gt;" in text and "Region <x>" not in text
    assert '"Deposition, all farms (kg N/ha/yr)"' in text


def test_region_outputs_write_the_map_and_hash_it(region_run, tmp_path):
    """`write_region_outputs` writes map.html and records its SHA-256 in run.json."""
    import hashlib

    from siting.output.region import write_region_outputs

    out = write_region_outputs(region_run, tmp_path / "region")
    record = json.loads((out / "run.json").read_text(encoding="utf-8"))
    digest = hashlib.sha256((out / "map.html").read_bytes()).hexdigest()
    assert record["outputs"]["map.html"]["sha256"] == digest
    assert "sites.csv" in record["outputs"] and "run.json" not in record["outputs"]
