"""Tests of siting.presentation.webassets: map.html is one self-contained file that works offline.

folium is configured (each element's default_js / default_css) to write the vendored files
inline; these tests check the page folium renders, and that nothing else is needed to run it.
"""

from __future__ import annotations

import hashlib
import re

import folium
import geopandas as gpd
import numpy as np
import pytest
from shapely.geometry import Point, box

import siting.presentation.webassets
from siting.errors import AssetError, SitingError
from siting.presentation.webassets import render_offline
from siting.presentation.webmap import render_screen_map

CRS = "EPSG:32632"
WEST_M, NORTH_M, CELL_M = 500_000.0, 5_700_000.0, 50.0

#: First lines of the vendored files (leaflet@1.9.4 dist/leaflet.js, jquery@3.7.1
#: dist/jquery.slim.min.js): their copyright banners.
LEAFLET_BANNER = "Leaflet 1.9.4, a JS library for interactive maps"
LEAFLET_COPYRIGHT = "(c) 2010-2023 Vladimir Agafonkin, (c) 2010-2011 CloudMade"
JQUERY_BANNER = "jQuery v3.7.1"


def _folium_map() -> folium.Map:
    """A small folium map with the kinds of layers webmap draws, not yet rendered."""
    fmap = folium.Map(location=[51.4, 9.0], zoom_start=13, tiles=None, control_scale=True)
    folium.TileLayer("OpenStreetMap", name="background").add_to(fmap)
    marker = folium.CircleMarker([51.4, 9.0], radius=7)
    folium.Popup("<b>source</b>", max_width=300).add_to(marker)
    folium.Tooltip("tip").add_to(marker)
    marker.add_to(fmap)
    folium.LayerControl(collapsed=False).add_to(fmap)
    return fmap


def _small_map_arguments() -> dict:
    """Arguments of a 10 x 12 cell map with one site and one source."""
    rows, cols = np.mgrid[0:10, 0:12]
    grid = 5.0 * np.exp(-np.hypot(rows - 5, cols - 6) / 3.0)  # synthetic, not physics
    centre_x, centre_y = WEST_M + 6 * CELL_M, NORTH_M - 5 * CELL_M
    sites = gpd.GeoDataFrame(
        {"site_id": ["S1"], "name": ["bog"], "verdict": ["above threshold"]},
        geometry=[box(centre_x + 100, centre_y - 50, centre_x + 200, centre_y + 50)],
        crs=CRS,
    )
    sources = gpd.GeoDataFrame(
        {"source_id": ["H1"], "role": ["proposed"], "nh3_kg_yr": [500.0]},
        geometry=[Point(centre_x, centre_y)],
        crs=CRS,
    )
    return {
        "title": "offline test",
        "crs": CRS,
        "west_m": WEST_M,
        "north_m": NORTH_M,
        "cell_m": CELL_M,
        "deposition_kg_n_ha_yr": grid,
        "sites": sites,
        "sources": sources,
        "contours": [(1.0, "1 kg N/ha/yr")],
        "cautions": ["screening only"],
        "version": "0.1.0",
        "run_time": "2024-05-01T12:00:00Z",
    }


@pytest.fixture(scope="module")
def map_html() -> str:
    """A map rendered once by render_screen_map for the read-only checks."""
    return render_screen_map(**_small_map_arguments())


def test_folium_still_links_cdn_assets():
    """The premise: folium's own page links scripts from the network (else this module is moot)."""
    page = _folium_map().get_root().render()
    assert re.search(r'<script src="https://[^"]*leaflet[^"]*\.js"', page)


def test_folium_defaults_are_left_alone():
    """The assets are configured on the map instance: folium's class-wide lists, which every
    other map in the process starts from, still name the CDN files afterwards."""
    from folium.folium import _default_css, _default_js

    before = (list(folium.Map.default_js), list(folium.Map.default_css))
    render_offline(_folium_map())
    assert (folium.Map.default_js, folium.Map.default_css) == before
    assert folium.Map.default_js is _default_js and folium.Map.default_css is _default_css
    assert any("leaflet" in url for _name, url in _default_js)


def test_written_map_links_no_script_or_style_sheet(map_html):
    """map.html has no <script src=...> and no <link href=...>: nothing is fetched to run it."""
    assert not re.search(r"<script\b[^>]*\bsrc\s*=", map_html, re.IGNORECASE)
    assert not re.search(r"<link\b[^>]*\bhref\s*=", map_html, re.IGNORECASE)
    for cdn in ("cdn.jsdelivr.net", "cdnjs.cloudflare.com", "code.jquery.com", "bootstrapcdn"):
        assert cdn not in map_html


def test_leaflet_and_jquery_code_is_inline(map_html):
    """The Leaflet and jQuery code sits in the page, each once, before the map script."""
    assert map_html.count(LEAFLET_BANNER) == 1
    assert map_html.count(JQUERY_BANNER) == 1
    assert map_html.index(LEAFLET_BANNER) < map_html.index("L.map(")
    assert ".leaflet-container" in map_html  # leaflet.css, inlined as a <style>


def test_licence_notices_reach_the_page(map_html):
    """Each inlined library keeps its copyright banner and carries its full licence text."""
    assert LEAFLET_COPYRIGHT in map_html
    assert "leaflet@1.9.4 licence, BSD-2-Clause" in map_html
    assert "Redistribution and use in source and binary forms" in map_html  # BSD-2 text
    assert "jquery@3.7.1 licence, MIT" in map_html
    assert "Permission is hereby granted, free of charge" in map_html  # MIT text


def test_unneeded_assets_are_dropped():
    """Bootstrap, icon fonts and awesome-markers, declared by folium, leave no trace."""
    page = render_offline(_folium_map())
    for name in ("bootstrap", "fontawesome", "awesome-markers", "glyphicons", "awesome.rotate"):
        assert name not in page.lower()


def test_css_images_become_data_urls():
    """leaflet.css refers to no image file: layers.png is inline, the marker image is dropped."""
    page = render_offline(_folium_map())
    assert "url(images/" not in page
    assert 'url("data:image/png;base64,' in page


def test_tile_url_stays(map_html):
    """The OpenStreetMap tile URL is data for the optional background, not an asset."""
    assert "https://tile.openstreetmap.org/{z}/{x}/{y}.png" in map_html


def _default_urls() -> list[str]:
    """Every URL the installed folium links by default, and the one folium 0.15 adds."""
    from folium.folium import _default_css, _default_js

    return [url for _name, url in (*_default_js, *_default_css)] + [
        # regression: folium 0.15.0 folium/folium.py _default_css (Bootstrap 3 instead of the
        # glyphicons-only sheet of 0.17-0.20); pyproject allows folium >= 0.15
        "https://netdna.bootstrapcdn.com/bootstrap/3.0.0/css/bootstrap.min.css"
    ]


def _declaring(url: str) -> folium.Map:
    """A map whose own asset lists (on the instance) declare only ``url``."""
    fmap = folium.Map(location=[51.4, 9.0], tiles=None)
    fmap.default_js = [("declared", url)] if url.endswith(".js") else []
    fmap.default_css = [] if url.endswith(".js") else [("declared", url)]
    return fmap


@pytest.mark.parametrize("url", _default_urls())
def test_every_default_folium_link_is_known(url):
    """Each script or style sheet folium declares by default is either inlined or left out."""
    page = render_offline(_declaring(url))
    assert url not in page
    assert not re.search(r"<(script|link)\b[^>]*\b(src|href)=", page)


def test_an_asset_declared_twice_is_written_once():
    """Leaflet declared by the map and again, under another name, by an element on it (as
    plugins declare the library they extend) is written once."""
    from folium.elements import JSCSSMixin

    class _NeedsLeaflet(JSCSSMixin):
        default_js = [("leaflet_for_plugin", folium.Map.default_js[0][1])]

    fmap = _folium_map()
    _NeedsLeaflet().add_to(fmap)
    page = render_offline(fmap)
    assert page.count(LEAFLET_BANNER) == 1


@pytest.mark.parametrize(
    "url",
    [
        "https://cdn.example.org/extra.js",
        "//cdn.example.org/extra.css",
        "local.css",
        "https://cdn.jsdelivr.net/npm/leaflet@2.0.0/dist/leaflet.js",
    ],
)
def test_unknown_asset_raises_naming_the_url(url):
    """A declared asset siting does not vendor (a new host, a local file, a new major version)
    is refused, named."""
    fmap = _folium_map()
    if url.endswith(".js"):
        fmap.default_js = [*fmap.default_js, ("extra", url)]
    else:
        fmap.default_css = [*fmap.default_css, ("extra", url)]
    with pytest.raises(AssetError, match=re.escape(url)):
        render_offline(fmap)


def test_a_plugins_own_asset_is_refused():
    """An element below the map declaring its own CDN files (folium's Fullscreen plugin) is
    found and refused, naming its URL."""
    from folium.plugins import Fullscreen

    fmap = _folium_map()
    Fullscreen().add_to(fmap)
    url = Fullscreen.default_js[0][1]
    with pytest.raises(AssetError, match=re.escape(url)):
        render_offline(fmap)


def test_a_link_added_while_rendering_is_refused():
    """A script folium links although the map was configured (an element added to the page
    while it renders) is caught before the page is returned."""
    from branca.element import JavascriptLink, MacroElement

    class _LateLink(MacroElement):
        """Adds a CDN script to the page's header only when rendered."""

        def render(self, **kwargs):
            url = "https://cdn.jsdelivr.net/npm/leaflet@1.9.3/dist/leaflet.js"
            self.get_root().header.add_child(JavascriptLink(url), name="late")
            super().render(**kwargs)

    fmap = _folium_map()
    _LateLink().add_to(fmap)
    with pytest.raises(AssetError, match="leaflet@1.9.3"):
        render_offline(fmap)


def test_asset_error_is_a_siting_error():
    """AssetError is caught as SitingError by the CLI (one line, exit code 2)."""
    assert issubclass(AssetError, SitingError) and issubclass(AssetError, RuntimeError)


def test_awesome_marker_is_refused():
    """A folium.Icon marker would throw without awesome-markers, so the page is refused."""
    fmap = folium.Map(tiles=None)
    folium.Marker([51.4, 9.0], icon=folium.Icon(color="red")).add_to(fmap)
    with pytest.raises(AssetError, match="awesome-markers"):
        render_offline(fmap)


def test_awesome_marker_of_a_geojson_is_refused():
    """An Icon held by a GeoJson's point marker (outside the element's children) is found."""
    fmap = folium.Map(tiles=None)
    folium.GeoJson(
        {"type": "Point", "coordinates": [9.0, 51.4]},
        marker=folium.Marker(icon=folium.Icon(color="red")),
    ).add_to(fmap)
    with pytest.raises(AssetError, match="awesome-markers"):
        render_offline(fmap)


def test_geojson_loaded_over_the_network_is_refused(tmp_path):
    """GeoJson(embed=False) fetches its data with $.ajax, which the slim jQuery lacks."""
    data = tmp_path / "sites.geojson"
    data.write_text('{"type": "FeatureCollection", "features": []}', encoding="utf-8")
    fmap = folium.Map(tiles=None)
    folium.GeoJson(str(data), embed=False).add_to(fmap)
    with pytest.raises(AssetError, match=r"embed=False"):
        render_offline(fmap)


def test_nothing_written_when_an_asset_is_unknown(tmp_path, monkeypatch):
    """With no known assets, the output layer's write_screen_map raises AssetError and writes
    no file."""
    from siting.output.screen import write_screen_map

    monkeypatch.setattr(siting.presentation.webassets, "_ASSETS", ())
    path = tmp_path / "map.html"
    with pytest.raises(AssetError, match="leaflet"):
        write_screen_map(path, **_small_map_arguments())
    assert not path.exists()


def test_readme_lists_every_vendored_file_with_its_hash():
    """_assets/README.md names each vendored file with the SHA-256 of the copy shipped."""
    folder = siting.presentation.webassets._ASSETS_DIR
    readme = (folder / "README.md").read_text(encoding="utf-8")
    files = [
        p
        for p in sorted(folder.rglob("*"))
        if p.is_file() and p.name != "README.md" and p.parent.name != "siting"
    ]  # siting/ holds our own page script, not a vendored copy: described, not hashed
    assert len(files) == 7  # leaflet.js, .css, 2 images, LICENSE; jquery slim, LICENSE.txt
    assert "`siting/map.js`" in readme
    for path in files:
        relative = path.relative_to(folder).as_posix()
        digest = hashlib.sha256(path.read_bytes()).hexdigest()
        assert f"| `{relative}` |" in readme and digest in readme, relative
