"""The interactive screening map (map.html), built with folium, and the steps every map shares.

This adapter draws results computed elsewhere: the deposition grid reprojected to Web Mercator
and coloured in log classes (an image overlay that needs no tile server), the contour lines
(each level in its own style, its value written on the line), habitat sites coloured by verdict
with popups of their figures, the sources drawn as their footprints and styled by role with
their emission derivation in words, the holding and its exclusion layers (dwellings,
watercourses) from the scenario, permanent labels (site names, source ids, feature names) that
make room for each other, a collapsible legend whose symbols are drawn as on the map, a title
block with the cautions, a scale bar and a north arrow. The page opens on a plain light
background: everything it needs to be read is drawn from the run's own data, and an
OpenStreetMap background is offered, off, in the layer control for those online. The page is
one self-contained file: folium is configured to write the vendored Leaflet and jQuery and our
page script inline instead of CDN links
(:func:`siting.presentation.webassets.render_offline`). No physics lives here, and no file is
written: the pages are returned as text, and the output layer writes them.

The map is split by what it draws: :mod:`~siting.presentation.webmap_grid` (the coloured grid,
contours, the grid's edge), :mod:`~siting.presentation.webmap_sites` (the habitat sites, one
GeoJSON layer), :mod:`~siting.presentation.webmap_layers` (sources, holding, exclusions),
:mod:`~siting.presentation.webmap_labels` (permanent labels),
:mod:`~siting.presentation.webmap_text` (escaping of user text, popup tables, names) and the
pages of the placement search
(:mod:`~siting.presentation.webmap_place`) and of a regional run
(:mod:`~siting.presentation.webmap_region`). Every text that comes from a user file goes through
:func:`escape_text` before it reaches the page.

:func:`render_screen_map` and the other pages are short sequences of the same steps:
:func:`new_map` (page title, style sheet, backgrounds), the coloured grid, their own layers, the
grid's outline, and :func:`finish_page` (title block, legend, north arrow, layer control, the
view, vendored assets, the page). The legend is assembled from sections (:func:`legend_html`).
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from siting.presentation.formats import (
    VERDICT_COLOURS,
    deposition_class_colours,
    deposition_class_edges,
    format_number,
)
from siting.presentation.webassets import render_offline
from siting.presentation.webmap_grid import (
    CONTOUR_STYLES,
    GRID_EDGE_TIP,
    OVERLAY_CLASS,
    OVERLAY_OPACITY,
    add_contours,
    add_extent_outline,
    add_surface,
    check_grid,
    contour_legend_rows,
    extent_legend_row,
    overlay,
    to_wgs84,
)
from siting.presentation.webmap_labels import LABEL_CLASS
from siting.presentation.webmap_layers import (
    ROLE_STYLES,
    SOURCE_CLASS,
    add_context,
    add_sources,
    context_legend_rows,
    source_legend_rows,
)
from siting.presentation.webmap_sites import SITE_CLASS, add_sites
from siting.presentation.webmap_text import escape_text

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

    from siting.readers.map_context import MapContext
    from siting.readers.tables import Tables

__all__ = [
    "LABEL_CLASS",
    "LEGEND_CLASS",
    "OVERLAY_CLASS",
    "ROLE_STYLES",
    "SITE_CLASS",
    "SOURCE_CLASS",
    "data_bounds",
    "escape_text",
    "finish_page",
    "layer",
    "legend_html",
    "legend_section",
    "new_map",
    "render_screen_map",
    "surface_legend_rows",
    "title_html",
    "verdict_legend_rows",
]

#: CSS class of the legend box (a <details> element): a stable hook for the browser tests.
LEGEND_CLASS = "siting-legend"

#: Colour of the plain background the page opens on (our own choice: light, warm, not grey).
_PLAIN_BACKGROUND = "#f6f4ee"
#: Names of the two backgrounds in the layer control.
PLAIN_BACKGROUND_LAYER = "Plain background (works offline)"
ONLINE_BACKGROUND_LAYER = "OpenStreetMap background (needs internet)"
#: A screen this small starts with the legend, the cautions list and the layer list folded
#: (the same media query as _assets/siting/map.js).
_SMALL_SCREEN = "(max-width: 700px), (max-height: 560px)"

_CONTOUR_LABEL_CSS = "".join(
    f".siting-contour-label-{i} .siting-label-text {{ color: {s['color']}; "
    f"border-color: {s['color']}; }}\n"
    for i, s in enumerate(CONTOUR_STYLES)
)

_MAP_CSS = (
    """
<style>
div.leaflet-container { background: %(background)s; }
.siting-box { position: fixed; z-index: 1000; background: rgba(255,255,255,0.95);
  border: 1px solid #8c96a3; border-radius: 4px; padding: 6px 10px; color: #1d2430;
  font: 12px/1.35 "Segoe UI", "Helvetica Neue", Arial, sans-serif;
  box-shadow: 0 1px 4px rgba(0,0,0,0.25); }
.siting-title { top: 10px; left: 56px; max-width: min(430px, calc(100vw - 124px)); }
.siting-title h1 { font-size: 15px; margin: 0 0 2px; color: #23436b; }
.siting-title .meta { color: #5a6472; margin-bottom: 4px; }
.siting-title details { margin-top: 2px; }
.siting-title summary { cursor: pointer; font-weight: 600; color: #7a5600; }
.siting-title ul { margin: 3px 0 0; padding-left: 16px; }
.siting-legend { bottom: 52px; left: 10px; width: 272px; max-width: calc(100vw - 40px);
  max-height: calc(100vh - 320px); min-height: 0; overflow-y: auto; padding: 0; }
.siting-legend > summary { cursor: pointer; font-weight: 700; padding: 6px 10px;
  position: sticky; top: 0; background: #eef2f7; border-radius: 4px; list-style: none; }
.siting-legend > summary::-webkit-details-marker { display: none; }
.siting-legend > summary::after { content: " \\25be"; }
.siting-legend:not([open]) > summary::after { content: " \\25b8"; }
.siting-legend .body { padding: 2px 10px 8px; }
.siting-legend h2 { font-size: 12px; margin: 7px 0 3px; }
.siting-legend .row { display: flex; align-items: center; gap: 6px; margin: 1px 0; }
.siting-legend .swatch { width: 18px; height: 12px; border: 1px solid #555; flex: none; }
.siting-legend .sample { flex: none; }
.siting-legend .note { color: #5a6472; font-size: 11px; margin: 2px 0; }
.leaflet-control-layers { font: 12px/1.4 "Segoe UI", "Helvetica Neue", Arial, sans-serif; }
.leaflet-control-layers label { font-size: 12px; margin: 1px 0; }
.siting-north { top: 92px; left: 10px; padding: 2px 4px; text-align: center; }
.siting-popup { font-size: 12px; line-height: 1.35; }
.siting-popup table { border-collapse: collapse; }
.siting-popup th { text-align: left; padding: 1px 8px 1px 0; font-weight: 600;
  vertical-align: top; }
.siting-popup td { padding: 1px 0; }
.siting-popup .head { font-size: 13px; font-weight: 700; margin-bottom: 4px; }
.siting-popup .code { color: #6b7480; font-size: 11px; }
.siting-popup .words { margin: 0 0 5px; font-weight: 600; }
.siting-popup .words.fails { color: #8a2b12; }
.siting-popup .words.passes { color: #1d4f7a; }
.siting-popup ol { margin: 2px 0 0; padding-left: 18px; }
.siting-label { background: none; border: none; }
.siting-label-text { position: absolute; display: inline-block; white-space: nowrap;
  transform: translate(-50%%, -50%%); padding: 0 3px; border-radius: 3px;
  font: 600 11px/1.3 "Segoe UI", "Helvetica Neue", Arial, sans-serif; color: #1d2430;
  background: rgba(255,255,255,0.82); border: 1px solid rgba(29,36,48,0.35);
  pointer-events: none; }
.leaflet-container .siting-label.siting-label-hidden { display: none; }
.siting-label-site .siting-label-text { font-size: 12px; font-weight: 700; }
.siting-verdict-does-not-pass .siting-label-text { color: #7a2814; border-color: #c2543a; }
.siting-verdict-passes .siting-label-text { color: #1d4f7a; border-color: #2f6fad; }
.siting-label-source .siting-label-text { transform: translate(8px, -50%%);
  background: rgba(255,255,255,0.9); }
.siting-role-proposed .siting-label-text { color: #5c0a33; border-color: #d81b60; }
.siting-label-contour .siting-label-text { font-weight: 700; font-size: 10.5px;
  background: rgba(255,255,255,0.9); border-width: 1.5px; }
.siting-label-exclusion .siting-label-text { transform: translate(8px, -50%%);
  font-weight: 400; font-style: italic; }
.siting-label-context .siting-label-text { font-weight: 400; color: #2b2b2b; }
.siting-label-farm .siting-label-text { transform: translate(7px, -50%%); font-weight: 400;
  font-size: 10px; }
.siting-rank-icon { background: none; border: none; }
.siting-rank { display: inline-block; box-sizing: border-box; min-width: 22px; height: 22px;
  padding: 0 4px; border-radius: 11px; background: #ffffff; border: 2px solid #111111;
  color: #111111; text-align: center; font: 700 12px/18px Arial, sans-serif;
  box-shadow: 0 1px 3px rgba(0,0,0,0.45); white-space: nowrap; }
.siting-rank-icon .siting-rank { position: absolute; left: 50%%; top: 50%%;
  transform: translate(-50%%, -50%%); }
.siting-rank.passes { background: #0f5f5c; border-color: #07302e; color: #ffffff; }
.siting-rank.first { min-width: 28px; height: 28px; border-radius: 14px; font-size: 14px;
  line-height: 24px; border-width: 2.5px; }
%(contours)s</style>
"""  # noqa: UP031 (the sheet's own braces would all need doubling in .format or an f-string)
    % {"background": _PLAIN_BACKGROUND, "contours": _CONTOUR_LABEL_CSS}
)

_NORTH_ARROW = (
    '<div class="siting-box siting-north" title="North is up">'
    '<svg width="22" height="34" viewBox="0 0 22 34" aria-label="North arrow">'
    '<text x="11" y="10" text-anchor="middle" font-size="10" font-weight="700" '
    'font-family="Arial, sans-serif">N</text>'
    '<polygon points="11,12 18,32 11,27 4,32" fill="#1d2430"/>'
    "</svg></div>"
)


# --- the legend ------------------------------------------------------------------------------


def surface_legend_rows(edges: np.ndarray, colours: list[str], unit: str) -> list[str]:
    """Legend rows of a coloured grid's classes (high classes on top, in ``unit``, escaped),
    swatches at the overlay's opacity, and a note on the uncoloured values below the first
    edge."""
    rows = []
    for i in range(len(colours) - 1, -1, -1):
        low, high = format_number(edges[i]), format_number(edges[i + 1])
        label = f"{low} – {high}" if i < len(colours) - 1 else f"≥ {low}"
        rows.append(
            f'<div class="row"><span class="swatch" style="background:{colours[i]};'
            f'opacity:{OVERLAY_OPACITY}"></span>{escape_text(f"{label} {unit}".strip())}</div>'
        )
    if edges[0] > 0:
        rows.append(
            f'<div class="note">below {escape_text(format_number(edges[0]))} '
            f"{escape_text(unit)}: not coloured</div>"
        )
    return rows


def verdict_legend_rows() -> list[str]:
    """Legend rows of the sites' classes of verdict, outlined and filled as on the map."""
    rows = []
    for verdict, colour in VERDICT_COLOURS.items():
        dash = ' stroke-dasharray="6 4"' if verdict == "not assessed" else ""
        rows.append(
            '<div class="row"><svg class="sample" width="34" height="14" aria-hidden="true">'
            f'<rect x="2" y="2" width="28" height="10" fill="{colour}" fill-opacity="0.2" '
            f'stroke="{colour}" stroke-width="2.5"{dash}/></svg>{escape_text(verdict)}</div>'
        )
    return rows


def legend_section(heading: str, rows: Sequence[str]) -> str:
    """A legend section: its heading (escaped) over ready-made rows; empty without rows."""
    if not rows:
        return ""
    return f"<h2>{escape_text(heading)}</h2>" + "".join(rows)


def legend_html(sections: Sequence[str], note: str = "") -> str:
    """The legend box: a <details> element, open (folded on small screens by the page
    script), whose summary is the button that folds it; ``sections`` are ready-made HTML
    (:func:`legend_section`), ``note`` a ready-made closing note."""
    return (
        f'<details class="siting-box {LEGEND_CLASS} siting-fold-small" open>'
        '<summary title="Show or hide the legend">Legend</summary><div class="body">'
        + "".join(sections)
        + note
        + "</div></details>"
    )


def title_html(title: str, run_time: str, version: str, cautions: Sequence[str]) -> str:
    """Title block: title, run time, version and the cautions (open; folded on a small screen,
    its summary still saying what the map is)."""
    items = "".join(f"<li>{escape_text(c)}</li>" for c in cautions)
    return (
        '<div class="siting-box siting-title">'
        f"<h1>{escape_text(title)}</h1>"
        f'<div class="meta">Ammonia screening map · {escape_text(run_time)} · '
        f"siting {escape_text(version)}</div>"
        '<details open class="siting-fold-small"><summary>Cautions: screening estimate, not a '
        f"decision</summary><ul>{items}</ul></details></div>"
    )


# --- steps shared by every map ---------------------------------------------------------------


def new_map(title: str, bounds: list[list[float]], zoom_start: int) -> folium.Map:
    """A map centred on ``bounds`` ([[lat_s, lon_w], [lat_n, lon_e]]) with the page title
    (escaped), our style sheet and two backgrounds: the plain light one, shown, and the
    OpenStreetMap tiles, off until chosen in the layer control (they need a network)."""
    import folium

    (lat_s, lon_w), (lat_n, lon_e) = bounds
    fmap = folium.Map(
        location=[(lat_s + lat_n) / 2.0, (lon_w + lon_e) / 2.0],
        zoom_start=zoom_start,
        tiles=None,
        control_scale=True,
        zoomSnap=0.25,  # the opening view fits the data snugly in the room the boxes leave
    )
    root = fmap.get_root()
    root.header.add_child(folium.Element(f"<title>{escape_text(title)} · siting map</title>"))
    root.header.add_child(folium.Element(_MAP_CSS))
    folium.FeatureGroup(
        name=escape_text(PLAIN_BACKGROUND_LAYER), overlay=False, control=True, show=True
    ).add_to(fmap)
    folium.TileLayer(
        "OpenStreetMap",
        name=escape_text(ONLINE_BACKGROUND_LAYER),
        overlay=False,
        control=True,
        show=False,
    ).add_to(fmap)
    return fmap


def layer(fmap: folium.Map, name: str, show: bool = True) -> folium.FeatureGroup:
    """A new overlay group named ``name`` (escaped), already on the map, to draw into; shown
    when the page opens unless ``show`` is False."""
    import folium

    group = folium.FeatureGroup(name=escape_text(name), overlay=True, show=show)
    group.add_to(fmap)
    return group


def data_bounds(
    frames: Sequence[gpd.GeoDataFrame | None],
    limit: list[list[float]] | None,
    margin: float = 0.12,
) -> list[list[float]]:
    """The view to open on: the lat/lon box of the features of ``frames`` (EPSG:4326), grown by
    ``margin`` of its size on each side and kept within ``limit`` (the grid's bounds, or None);
    ``limit`` itself when there are no features."""
    boxes = [f.total_bounds for f in frames if f is not None and len(f) and not f.is_empty.all()]
    if not boxes:
        return limit
    (lat_s, lon_w), (lat_n, lon_e) = limit or [[-90.0, -180.0], [90.0, 180.0]]
    west, south = min(b[0] for b in boxes), min(b[1] for b in boxes)
    east, north = max(b[2] for b in boxes), max(b[3] for b in boxes)
    grow_x = max(east - west, 1e-4) * margin
    grow_y = max(north - south, 1e-4) * margin
    return [
        [max(lat_s, south - grow_y), max(lon_w, west - grow_x)],
        [min(lat_n, north + grow_y), min(lon_e, east + grow_x)],
    ]


def finish_page(fmap: folium.Map, bounds: list[list[float]], boxes: list[str]) -> str:
    """Finish the map and return its page: the ready-made ``boxes`` (title block, legend), the
    north arrow, the layer control (folded on a small screen) and the view fitted to
    ``bounds`` in the room the title block and the legend leave; folium writes the vendored
    assets and our page script inline (:func:`siting.presentation.webassets.render_offline`),
    so an asset siting does not vendor raises AssetError before any page exists."""
    import folium
    from folium.utilities import JsCode

    root = fmap.get_root()
    for box in [*boxes, _NORTH_ARROW]:
        root.html.add_child(folium.Element(box))
    folium.LayerControl(collapsed=JsCode(f"window.matchMedia({_SMALL_SCREEN!r}).matches")).add_to(
        fmap
    )
    fmap.add_child(_fit_element(bounds))
    return render_offline(fmap)


def _fit_element(bounds: list[list[float]]):
    """The opening view: ``sitingMap.fit`` (_assets/siting/map.js) fits ``bounds`` into the
    room the title block and the legend leave free on the screen the page is opened on."""
    from branca.element import MacroElement
    from jinja2 import Template

    element = MacroElement()
    element._name = "SitingFit"
    element._template = Template(
        "{% macro script(this, kwargs) %}\n"
        "sitingMap.fit({{ this._parent.get_name() }}, {{ this.bounds }});\n"
        "{% endmacro %}"
    )
    (lat_s, lon_w), (lat_n, lon_e) = bounds
    element.bounds = json.dumps([[float(lat_s), float(lon_w)], [float(lat_n), float(lon_e)]])
    return element


# --- the screening map -----------------------------------------------------------------------


def render_screen_map(
    *,
    title: str,
    crs: str,
    west_m: float,
    north_m: float,
    cell_m: float,
    deposition_kg_n_ha_yr: np.ndarray,
    sites: gpd.GeoDataFrame,
    sources: gpd.GeoDataFrame,
    contours: list[tuple[float, str]],
    cautions: list[str],
    version: str,
    run_time: str,
    option_deposition: dict[str, np.ndarray] | None = None,
    tables: Tables | None = None,
    context: MapContext | None = None,
) -> str:
    """map.html of a screening run: the deposition surface, contours, sites, sources, farm.

    With options, each option's deposition is a layer of its own (off when the page opens),
    coloured in the same classes as the base's. The page opens on the sites and sources.

    Parameters
    ----------
    title : str
        Scenario title (user text, escaped).
    crs : str
        Projected CRS of the grid and of frames without a CRS, e.g. ``"EPSG:32632"``.
    west_m, north_m : float
        West and north edges of the grid in `crs` [m].
    cell_m : float
        Cell size [m], > 0.
    deposition_kg_n_ha_yr : ndarray, shape (n_rows, n_cols)
        PC deposition [kg N ha-1 yr-1]; row 0 is the north edge; NaN = no data. Coloured in
        the classes of :func:`siting.presentation.formats.deposition_class_edges`, reprojected
        nearest-neighbour so each coloured pixel keeps a value of the grid.
    sites : GeoDataFrame
        Habitat sites (polygons) with columns site_id, name, designation, habitat (and
        habitat_name), verdict, passes, deciding_rule, pc_pct_level [%], pc_pct_load [%],
        pc_conc_max_ug_m3 [ug m-3], pc_dep_max_kg_n_ha_yr [kg N ha-1 yr-1],
        critical_level_ug_m3 [ug m-3], critical_load_used_kg_n_ha_yr [kg N ha-1 yr-1],
        threshold_percent [%], incomb_pct_load [%]; missing columns show as "n/a".
    sources : GeoDataFrame
        Sources (points or footprint polygons) with columns source_id, kind (point | volume |
        area), role (proposed | existing | removed | other), height_m [m], livestock,
        housing, places, factor_nh3_kg_per_place_yr [kg NH3 place-1 yr-1], abatement,
        reduction_percent [%], effective_reduction_percent [%], reduction_flag, nh3_kg_yr
        [kg NH3 yr-1], emission_g_s [g s-1]; blank or NaN values are left out of the popup.
    contours : list of (float, str)
        Contour levels [kg N ha-1 yr-1], lowest first, with their labels (escaped); each
        level is drawn in a style of its own with "<label>: <level> kg N/ha/yr" on the line.
    cautions : list of str
        Cautions shown in the title block.
    version : str
        siting version, shown as "siting <version>".
    run_time : str
        Time of the run as it should be shown.
    option_deposition : dict of str to ndarray, optional
        Option name -> its PC deposition [kg N ha-1 yr-1] on the same grid.
    tables : Tables, optional
        The run's lookup tables: the sources' popups name the housing system and technique
        as the tables do (else the ids alone).
    context : MapContext, optional
        The scenario's holding boundary and exclusion layers
        (:func:`siting.readers.map_context.read_map_context`), drawn and labelled.

    Returns
    -------
    page_html : str
        The whole page, self-contained (no script or style sheet fetched to run it).

    Raises
    ------
    InputError
        If the grid is not 2-D, cell_m <= 0 or crs is not a projected CRS.
    AssetError
        If folium declares a script or style sheet that siting does not vendor.
    """
    grid, projected = check_grid(deposition_kg_n_ha_yr, cell_m, crs)
    option_deposition = option_deposition or {}
    edges = deposition_class_edges(np.stack([grid, *option_deposition.values()]))
    colours = deposition_class_colours(edges.size - 1)
    data_url, bounds = overlay(grid, projected, west_m, north_m, cell_m, edges, colours)
    sources_wgs84 = to_wgs84(sources, projected)
    sites_wgs84 = to_wgs84(sites, projected)
    fmap = new_map(title, bounds, zoom_start=13)
    add_surface(fmap, data_url, bounds, "Deposition, PC (kg N/ha/yr)")  # the base's
    for name, values in option_deposition.items():
        image, _ = overlay(values, projected, west_m, north_m, cell_m, edges, colours)
        add_surface(fmap, image, bounds, f"Option {name}: deposition, PC", show=False)
    view = data_bounds(
        [sites_wgs84, sources_wgs84, None if context is None or context.holding is None
         else to_wgs84(context.holding.frame, projected)],
        bounds,
    )  # fmt: skip
    add_context(fmap, context, projected)
    if contours:  # no "Contours" layer without levels
        add_contours(layer(fmap, "Contours"), grid, projected, west_m, north_m, cell_m, contours)
    add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, GRID_EDGE_TIP)
    add_sites(layer(fmap, "Habitat sites"), sites_wgs84)
    add_sources(layer(fmap, "Sources"), sources_wgs84, tables)
    sections = [
        legend_section(
            "Deposition (PC), kg N/ha/yr",
            [*surface_legend_rows(edges, colours, "kg N/ha/yr"), extent_legend_row()],
        ),
        legend_section("Contours: share of a site's critical load", contour_legend_rows(contours)),
        legend_section("Habitat sites, verdict", verdict_legend_rows()),
        legend_section("Sources, role", source_legend_rows(sources_wgs84)),
        legend_section("The farm", context_legend_rows(context)),
    ]
    note = (
        '<div class="note">Options: tick one in the layer list (and untick the base) to see its '
        "deposition in the same classes; contours are the base's.</div>"
        if option_deposition
        else ""
    )
    title_box = title_html(title, run_time, version, cautions)
    return finish_page(fmap, view, [title_box, legend_html(sections, note)])
