"""The interactive screening map (map.html), built with folium, and the steps both maps share.

This adapter draws results computed elsewhere: the deposition grid reprojected to Web Mercator
and coloured in log classes (an image overlay that needs no tile server), contour lines, habitat
sites coloured by verdict with popups of their figures, the sources styled by role with their
emission derivation, a legend, a title block with the cautions, a scale bar and a north arrow.
An OpenStreetMap background is offered in the layer control, but everything we draw shows
without it. The page is one self-contained file: folium is configured to write the vendored
Leaflet and jQuery inline instead of its CDN links
(:func:`siting.presentation.webassets.render_offline`). No physics lives here, and no file is
written: the pages are returned as text, and the output layer writes them.

The map is split by what it draws: :mod:`~siting.presentation.webmap_grid` (the coloured grid,
contours, the grid's edge), :mod:`~siting.presentation.webmap_sites` (the habitat sites, one
GeoJSON layer), :mod:`~siting.presentation.webmap_text` (escaping of user text, popup tables)
and :mod:`~siting.presentation.webmap_place` (the placement search's map). Every text that comes
from a user file goes through :func:`escape_text` before it reaches the page. The sources are
added one by one, with only their geometry in the GeoJSON.

:func:`render_screen_map` (map.html of a screening run) and
:func:`siting.presentation.webmap_place.render_place_map` are short sequences of the same steps:
:func:`new_map` (page title, style sheet, background), the coloured grid, their own layers, the
grid's outline, and :func:`finish_page` (title block, legend, north arrow, layer control,
vendored assets, the page).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.presentation.formats import (
    VERDICT_COLOURS,
    deposition_class_colours,
    deposition_class_edges,
    format_number,
    is_missing,
)
from siting.presentation.webassets import render_offline
from siting.presentation.webmap_grid import (
    GRID_EDGE_TIP,
    OVERLAY_CLASS,
    OVERLAY_OPACITY,
    add_contours,
    add_extent_outline,
    add_surface,
    check_grid,
    extent_legend_row,
    overlay,
    to_wgs84,
)
from siting.presentation.webmap_sites import POPUP_OPTIONS, SITE_CLASS, add_sites
from siting.presentation.webmap_text import (
    escape_text,
    number_or_blank,
    number_text,
    popup_table,
)

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

__all__ = [
    "OVERLAY_CLASS",
    "ROLE_STYLES",
    "SITE_CLASS",
    "SOURCE_CLASS",
    "escape_text",
    "finish_page",
    "layer",
    "legend_html",
    "new_map",
    "render_screen_map",
    "title_html",
]

#: Marker and outline style of each source role (our own palette).
ROLE_STYLES: dict[str, dict[str, Any]] = {
    "proposed": {"color": "#5c0a33", "fill_color": "#d81b60", "dash_array": None},
    "existing": {"color": "#101820", "fill_color": "#455a64", "dash_array": None},
    "removed": {"color": "#616161", "fill_color": "#ffffff", "dash_array": "4 3"},
    "other": {"color": "#3e2723", "fill_color": "#a1887f", "dash_array": None},
}

#: CSS class on the sources' SVG paths: a stable hook for the browser tests
#: (tests/test_browser.py) and for anyone restyling the page; keep it when refactoring. The
#: sites' and the overlay's classes: webmap_sites.SITE_CLASS, webmap_grid.OVERLAY_CLASS.
SOURCE_CLASS = "siting-source"

_MAP_CSS = """
<style>
.siting-box { position: fixed; z-index: 1000; background: rgba(255,255,255,0.94);
  border: 1px solid #8c96a3; border-radius: 4px; padding: 6px 10px; color: #1d2430;
  font: 12px/1.35 "Segoe UI", "Helvetica Neue", Arial, sans-serif;
  box-shadow: 0 1px 4px rgba(0,0,0,0.25); }
.siting-title { top: 10px; left: 56px; max-width: 430px; }
.siting-title h1 { font-size: 15px; margin: 0 0 2px; color: #23436b; }
.siting-title .meta { color: #5a6472; margin-bottom: 4px; }
.siting-title details { margin-top: 2px; }
.siting-title summary { cursor: pointer; font-weight: 600; color: #7a5600; }
.siting-title ul { margin: 3px 0 0; padding-left: 16px; }
.siting-legend { bottom: 26px; right: 10px; max-width: 250px; max-height: 70vh;
  overflow-y: auto; }
.siting-legend h2 { font-size: 12px; margin: 6px 0 3px; }
.siting-legend h2:first-child { margin-top: 0; }
.siting-legend .row { display: flex; align-items: center; gap: 6px; margin: 1px 0; }
.siting-legend .swatch { width: 18px; height: 12px; border: 1px solid #555; flex: none; }
.siting-legend .dot { width: 12px; height: 12px; border-radius: 50%; border: 2px solid #000;
  flex: none; }
.siting-legend .line { width: 22px; height: 0; border-top: 2px dashed #111; flex: none; }
.siting-legend .note { color: #5a6472; font-size: 11px; }
.siting-north { top: 92px; left: 10px; padding: 2px 4px; text-align: center; }
.siting-popup { font-size: 12px; line-height: 1.35; }
.siting-popup table { border-collapse: collapse; }
.siting-popup th { text-align: left; padding: 1px 8px 1px 0; font-weight: 600;
  vertical-align: top; }
.siting-popup td { padding: 1px 0; }
.siting-popup .head { font-size: 13px; font-weight: 700; margin-bottom: 4px; }
</style>
"""

_NORTH_ARROW = (
    '<div class="siting-box siting-north" title="North is up">'
    '<svg width="22" height="34" viewBox="0 0 22 34" aria-label="North arrow">'
    '<text x="11" y="10" text-anchor="middle" font-size="10" font-weight="700" '
    'font-family="Arial, sans-serif">N</text>'
    '<polygon points="11,12 18,32 11,27 4,32" fill="#1d2430"/>'
    "</svg></div>"
)


def _source_popup(row: Any) -> str:
    """Popup HTML of one source: its release and emission derivation; user values escaped."""
    fields = [
        ("Kind", escape_text(row.get("kind"))),
        ("Role", escape_text(row.get("role"))),
        ("Release height", number_text(row.get("height_m"), "m")),
        ("Livestock", escape_text(row.get("livestock"))),
        ("Housing", escape_text(row.get("housing"))),
        ("Places", number_or_blank(row.get("places"))),
        (
            "Emission factor",
            number_or_blank(row.get("factor_nh3_kg_per_place_yr"), "kg NH3/place/yr"),
        ),
        ("Abatement", escape_text(row.get("abatement"))),
        ("Stated reduction", number_or_blank(row.get("reduction_percent"), "%")),
        ("Effective reduction", number_or_blank(row.get("effective_reduction_percent"), "%")),
        ("Reduction check", escape_text(row.get("reduction_flag"))),
        ("Emission", number_text(row.get("nh3_kg_yr"), "kg NH3/yr")),
        ("Source strength", number_text(row.get("emission_g_s"), "g/s")),
    ]
    rows = [(label, value) for label, value in fields if value]
    if is_missing(row.get("places")) or is_missing(row.get("factor_nh3_kg_per_place_yr")):
        rows.append(("Derivation", "emission given directly in the scenario"))
    else:
        reduction = row.get("effective_reduction_percent")
        less = (
            f", less {number_text(reduction, '%')} effective reduction"
            if not is_missing(reduction)
            else ""
        )
        rows.append(
            (
                "Derivation",
                f"{number_text(row.get('places'))} places × "
                f"{number_text(row.get('factor_nh3_kg_per_place_yr'), 'kg NH3/place/yr')}{less} "
                f"→ {number_text(row.get('nh3_kg_yr'), 'kg NH3/yr')}",
            )
        )
    return popup_table("Source " + (escape_text(row.get("source_id")) or "(no id)"), rows)


def legend_html(
    edges: np.ndarray,
    colours: list[str],
    contours: Sequence[tuple[float, str]],
    roles_present: Sequence[str],
    heading: str = "Deposition (PC), kg N/ha/yr",
    unit: str = "kg N/ha/yr",
    extra_rows: Sequence[str] = (),
    verdicts: bool = True,
) -> str:
    """Legend box: surface classes (in ``unit``), verdicts, source roles, contours, and
    ``extra_rows`` (ready-made HTML rows, e.g. the grid edge)."""
    parts = ['<div class="siting-box siting-legend">', f"<h2>{escape_text(heading)}</h2>"]
    for i in range(len(colours) - 1, -1, -1):  # high classes on top
        low, high = format_number(edges[i]), format_number(edges[i + 1])
        label = f"{low} – {high}" if i < len(colours) - 1 else f"≥ {low}"
        parts.append(
            f'<div class="row"><span class="swatch" style="background:{colours[i]};'
            f'opacity:{OVERLAY_OPACITY}"></span>{escape_text(label)} {escape_text(unit)}</div>'
        )
    if edges[0] > 0:
        parts.append(
            f'<div class="note">below {escape_text(format_number(edges[0]))} '
            f"{escape_text(unit)}: not coloured</div>"
        )
    parts.extend(extra_rows)
    for verdict, colour in VERDICT_COLOURS.items() if verdicts else ():
        if verdict == next(iter(VERDICT_COLOURS)):
            parts.append("<h2>Habitat sites, verdict</h2>")
        dash = "dashed" if verdict == "not assessed" else "solid"
        parts.append(
            f'<div class="row"><span class="swatch" style="background:{colour}33;'
            f'border:2px {dash} {colour}"></span>{escape_text(verdict)}</div>'
        )
    if roles_present:
        parts.append("<h2>Sources, role</h2>")
        for role in roles_present:
            style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
            dash = "dashed" if style["dash_array"] else "solid"
            parts.append(
                f'<div class="row"><span class="dot" style="background:{style["fill_color"]};'
                f'border:2px {dash} {style["color"]}"></span>{escape_text(role)}</div>'
            )
    if contours:
        parts.append("<h2>Contours</h2>")
        for level, label in contours:
            parts.append(
                f'<div class="row"><span class="line"></span>{escape_text(label)} '
                f"({escape_text(format_number(level))} kg N/ha/yr)</div>"
            )
    parts.append("</div>")
    return "".join(parts)


def title_html(title: str, run_time: str, version: str, cautions: Sequence[str]) -> str:
    """Title block: title, run time, version and the cautions (open, collapsible)."""
    items = "".join(f"<li>{escape_text(c)}</li>" for c in cautions)
    return (
        '<div class="siting-box siting-title">'
        f"<h1>{escape_text(title)}</h1>"
        f'<div class="meta">Ammonia screening map · {escape_text(run_time)} · '
        f"siting {escape_text(version)}</div>"
        f"<details open><summary>Cautions: screening estimate, not a decision</summary>"
        f"<ul>{items}</ul></details></div>"
    )


def _add_sources(group: folium.FeatureGroup, sources_wgs84: gpd.GeoDataFrame) -> None:
    """Sources styled by role: points as circle markers, footprints as outlines."""
    import folium

    for _, row in sources_wgs84.iterrows():
        geometry = row.geometry
        if geometry is None or geometry.is_empty:
            continue
        role = str(row.get("role")).strip().lower() if not is_missing(row.get("role")) else "other"
        style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
        popup = folium.Popup(_source_popup(row), **POPUP_OPTIONS)
        tooltip = folium.Tooltip(
            "Source " + (escape_text(row.get("source_id")) or "(no id)") + f" ({escape_text(role)})"
        )
        if geometry.geom_type == "Point":
            marker = folium.CircleMarker(
                location=[geometry.y, geometry.x],
                radius=7,
                color=style["color"],
                weight=2,
                fill=True,
                fill_color=style["fill_color"],
                fill_opacity=0.95,
                dash_array=style["dash_array"],
            )
            # set directly: folium 0.15's path_options drops a class_name argument
            marker.options["className"] = SOURCE_CLASS
        else:
            leaflet_style = {
                "color": style["color"],
                "weight": 2,
                "fillColor": style["fill_color"],
                "fillOpacity": 0.6,
                "dashArray": style["dash_array"],
                "className": SOURCE_CLASS,
            }
            marker = folium.GeoJson(
                data={"type": "Feature", "properties": {}, "geometry": geometry.__geo_interface__},
                style_function=lambda _feature, s=leaflet_style: s,
                zoom_on_click=False,
                control=False,
            )
        popup.add_to(marker)
        tooltip.add_to(marker)
        marker.add_to(group)


def _roles_present(sources_wgs84: gpd.GeoDataFrame) -> list[str]:
    """The sources' roles for the legend: ours in :data:`ROLE_STYLES` order, then others sorted."""
    if "role" not in sources_wgs84:
        return []
    seen = {str(r).strip().lower() for r in sources_wgs84["role"] if not is_missing(r)}
    return [r for r in ROLE_STYLES if r in seen] + sorted(seen - set(ROLE_STYLES))


# --- steps shared by both maps -------------------------------------------------------------


def new_map(title: str, bounds: list[list[float]], zoom_start: int) -> folium.Map:
    """A map centred on ``bounds`` ([[lat_s, lon_w], [lat_n, lon_e]]) with the page title
    (escaped), our style sheet and the optional OpenStreetMap background."""
    import folium

    (lat_s, lon_w), (lat_n, lon_e) = bounds
    fmap = folium.Map(
        location=[(lat_s + lat_n) / 2.0, (lon_w + lon_e) / 2.0],
        zoom_start=zoom_start,
        tiles=None,
        control_scale=True,
    )
    root = fmap.get_root()
    root.header.add_child(folium.Element(f"<title>{escape_text(title)} · siting map</title>"))
    root.header.add_child(folium.Element(_MAP_CSS))
    folium.TileLayer(
        "OpenStreetMap",
        name=escape_text("OpenStreetMap background (needs internet)"),
        overlay=False,
        control=True,
        show=True,
    ).add_to(fmap)
    return fmap


def layer(fmap: folium.Map, name: str) -> folium.FeatureGroup:
    """A new overlay group named ``name`` (escaped), already on the map, to draw into."""
    import folium

    group = folium.FeatureGroup(name=escape_text(name), overlay=True)
    group.add_to(fmap)
    return group


def finish_page(fmap: folium.Map, bounds: list[list[float]], boxes: list[str]) -> str:
    """Finish the map and return its page: the ready-made ``boxes`` (title block, legend), the
    north arrow, the layer control and the view fitted to ``bounds``; folium writes the
    vendored assets inline (:func:`siting.presentation.webassets.render_offline`), so an asset
    siting does not vendor raises AssetError before any page exists."""
    import folium

    root = fmap.get_root()
    for box in [*boxes, _NORTH_ARROW]:
        root.html.add_child(folium.Element(box))
    folium.LayerControl(collapsed=False).add_to(fmap)
    fmap.fit_bounds(bounds)
    return render_offline(fmap)


# --- the screening map ---------------------------------------------------------------------


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
) -> str:
    """map.html of a screening run: the deposition surface, contours, sites and sources.

    With options, each option's deposition is a layer of its own (off when the page opens),
    coloured in the same classes as the base's.

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
        Habitat sites (polygons) with columns site_id, name, designation, habitat, verdict
        ("below threshold" | "above threshold" | "not assessed"), pc_pct_level [%],
        pc_pct_load [%], pc_conc_max_ug_m3 [ug m-3], pc_dep_max_kg_n_ha_yr [kg N ha-1 yr-1],
        critical_level_ug_m3 [ug m-3], critical_load_used_kg_n_ha_yr [kg N ha-1 yr-1],
        threshold_percent [%], incomb_pct_load [%]; missing columns show as "n/a".
    sources : GeoDataFrame
        Sources (points or polygons) with columns source_id, kind, role
        (proposed | existing | removed | other), height_m [m], livestock, housing, places,
        factor_nh3_kg_per_place_yr [kg NH3 place-1 yr-1], abatement, reduction_percent [%],
        effective_reduction_percent [%], reduction_flag, nh3_kg_yr [kg NH3 yr-1],
        emission_g_s [g s-1]; blank or NaN values are left out of the popup.
    contours : list of (float, str)
        Contour levels [kg N ha-1 yr-1] with their labels (tooltip text, escaped).
    cautions : list of str
        Cautions shown in the title block.
    version : str
        siting version, shown as "siting <version>".
    run_time : str
        Time of the run as it should be shown.
    option_deposition : dict of str to ndarray, optional
        Option name -> its PC deposition [kg N ha-1 yr-1] on the same grid.

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
    fmap = new_map(title, bounds, zoom_start=13)
    add_surface(fmap, data_url, bounds, "Deposition, PC (kg N/ha/yr)")  # the base's
    for name, values in option_deposition.items():
        image, _ = overlay(values, projected, west_m, north_m, cell_m, edges, colours)
        add_surface(fmap, image, bounds, f"Option {name}: deposition, PC", show=False)
    if contours:  # no "Contours" layer without levels
        add_contours(layer(fmap, "Contours"), grid, projected, west_m, north_m, cell_m, contours)
    add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, GRID_EDGE_TIP)
    add_sites(layer(fmap, "Habitat sites"), to_wgs84(sites, projected))
    _add_sources(layer(fmap, "Sources"), sources_wgs84)
    roles = _roles_present(sources_wgs84)
    extra = [extent_legend_row()]
    if option_deposition:
        extra.append(
            '<div class="note">options: tick one in the layer list (and untick the base) to '
            "see its deposition in the same classes; contours are the base's</div>"
        )
    legend = legend_html(edges, colours, contours, roles, extra_rows=extra)
    title_box = title_html(title, run_time, version, cautions)
    return finish_page(fmap, bounds, [title_box, legend])
