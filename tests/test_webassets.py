"""Tests of siting.presentation.webassets: map.html is one self-contained file that works offline."""

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
from siting.presentation.webassets import inline_assets
from siting.presentation.webmap import write_screen_map

CRS = "EPSG:32632"
WEST_M, NORTH_M, CELL_M = 500_000.0, 5_700_000.0, 50.0

#: First lines of the vendored files (leaflet@1.9.4 dist/leaflet.js, jquery@3.7.1
#: dist/jquery.slim.min.js): their copyright banners.
LEAFLET_BANNER = "Leaflet 1.9.4, a JS library for interactive maps"
LEAFLET_COPYRIGHT = "(c) 2010-2023 Vladimir Agafonkin, (c) 2010-2011 CloudMade"
JQUERY_BANNER = "jQuery v3.7.1"


def _folium_page(*extra_head: str) -> str:
    """A small folium page with the kinds of layers webmap draws, rendered but not inlined."""
    fmap = folium.Map(location=[51.4, 9.0], zoom_start=13, tiles=None, control_scale=True)
    folium.TileLayer("OpenStreetMap", name="background").add_to(fmap)
    marker = folium.CircleMarker([51.4, 9.0], radius=7)
    folium.Popup("<b>source</b>", max_width=300).add_to(marker)
    folium.Tooltip("tip").add_to(marker)
    marker.add_to(fmap)
    folium.LayerControl(collapsed=False).add_to(fmap)
    for element in extra_head:
        fmap.get_root().header.add_child(folium.Element(element))
    return fmap.get_root().render()


def _write_small_map(path) -> str:
    """Write a 10 x 12 cell map with one site and one source; return its HTML."""
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
    write_screen_map(
        path,
        title="offline test",
        crs=CRS,
        west_m=WEST_M,
        north_m=NORTH_M,
        cell_m=CELL_M,
        deposition_kg_n_ha_yr=grid,
        sites=sites,
        sources=sources,
        contours=[(1.0, "1 kg N/ha/yr")],
        cautions=["screening only"],
        version="0.1.0",
        run_time="2024-05-01T12:00:00Z",
    )
    return path.read_text(encoding="utf-8")


@pytest.fixture(scope="module")
def map_html(tmp_path_factory) -> str:
    """A map written once by write_screen_map for the read-only checks."""
    return _write_small_map(tmp_path_factory.mktemp("offline") / "map.html")


def test_folium_still_links_cdn_assets():
    """The premise: folium's own page links scripts from the network (else this module is moot)."""
    assert re.search(r'<script src="https://[^"]*leaflet[^"]*\.js"', _folium_page())


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
    """Bootstrap, icon fonts and awesome-markers, linked by folium, leave no trace."""
    page = inline_assets(_folium_page())
    for name in ("bootstrap", "fontawesome", "awesome-markers", "glyphicons", "awesome.rotate"):
        assert name not in page.lower()


def test_css_images_become_data_urls():
    """leaflet.css refers to no image file: layers.png is inline, the marker image is dropped."""
    page = inline_assets(_folium_page())
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


@pytest.mark.parametrize("url", _default_urls())
def test_every_default_folium_link_is_known(url):
    """Each script or style sheet folium links by default is either inlined or left out."""
    tag = f'<script src="{url}"></script>' if url.endswith(".js") else f'<link href="{url}"/>'
    page = inline_assets(f"<html><head>{tag}</head><body></body></html>")
    assert url not in page
    assert not re.search(r"<(script|link)\b[^>]*\b(src|href)=", page)


@pytest.mark.parametrize(
    ("element", "url"),
    [
        (
            '<script src="https://cdn.example.org/extra.js"></script>',
            "https://cdn.example.org/extra.js",
        ),
        (
            '<link rel="stylesheet" href="//cdn.example.org/extra.css"/>',
            "//cdn.example.org/extra.css",
        ),
        ('<link rel="stylesheet" href="local.css">', "local.css"),
        (
            '<script src="https://cdn.jsdelivr.net/npm/leaflet@2.0.0/dist/leaflet.js"></script>',
            "leaflet@2.0.0",
        ),
    ],
)
def test_unknown_asset_raises_naming_the_url(element, url):
    """A link siting does not vendor (a new host, a local file, a new major version) is refused."""
    page = _folium_page(element)
    with pytest.raises(AssetError, match=re.escape(url)):
        inline_assets(page)


def test_asset_error_is_a_siting_error():
    """AssetError is caught as SitingError by the CLI (one line, exit code 2)."""
    assert issubclass(AssetError, SitingError) and issubclass(AssetError, RuntimeError)


def test_awesome_marker_is_refused():
    """A folium.Icon marker would throw without awesome-markers, so the page is refused."""
    fmap = folium.Map(tiles=None)
    folium.Marker([51.4, 9.0], icon=folium.Icon(color="red")).add_to(fmap)
    with pytest.raises(AssetError, match="awesome-markers"):
        inline_assets(fmap.get_root().render())


def test_nothing_written_when_an_asset_is_unknown(tmp_path, monkeypatch):
    """With no known assets, write_screen_map raises AssetError and writes no file."""
    monkeypatch.setattr(siting.presentation.webassets, "_ASSETS", ())
    path = tmp_path / "map.html"
    with pytest.raises(AssetError, match="leaflet"):
        _write_small_map(path)
    assert not path.exists()


def test_readme_lists_every_vendored_file_with_its_hash():
    """_assets/README.md names each vendored file with the SHA-256 of the copy shipped."""
    folder = siting.presentation.webassets._ASSETS_DIR
    readme = (folder / "README.md").read_text(encoding="utf-8")
    files = [p for p in sorted(folder.rglob("*")) if p.is_file() and p.name != "README.md"]
    assert len(files) == 7  # leaflet.js, .css, 2 images, LICENSE; jquery slim, LICENSE.txt
    for path in files:
        relative = path.relative_to(folder).as_posix()
        digest = hashlib.sha256(path.read_bytes()).hexdigest()
        assert f"| `{relative}` |" in readme and digest in readme, relative
