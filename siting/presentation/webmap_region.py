"""The regional run's map (map.html of ``siting region``): many farms together, and who matters.

The surface is the deposition of all farms of the layer together (grid cells at the
short-vegetation deposition velocity), coloured in the screening map's log classes, with a
contour at each critical load the sites use. Over it: the habitat sites coloured by their
verdict (the all-farms total judged by the rule set's in-combination stages), each labelled,
its popup listing its top contributing farms; every farm as a circle sized by its emission,
labelled with its id when zoomed in; and for each site a line from each of its top farms to
the site's point of maximum deposition (thicker for a larger share), the contributing farms
ringed. The page has the legend, labels and title block of the other maps and works offline
(:mod:`siting.presentation.webmap`). Returned as text; the output layer writes it.
"""

from __future__ import annotations

import json
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.presentation.formats import (
    deposition_class_colours,
    deposition_class_edges,
    is_missing,
)
from siting.presentation.webmap import (
    data_bounds,
    finish_page,
    layer,
    legend_html,
    legend_section,
    new_map,
    surface_legend_rows,
    title_html,
    verdict_legend_rows,
)
from siting.presentation.webmap_grid import (
    GRID_EDGE_TIP,
    add_contours,
    add_extent_outline,
    add_surface,
    check_grid,
    contour_legend_rows,
    extent_legend_row,
    overlay,
    to_wgs84,
)
from siting.presentation.webmap_labels import add_labels
from siting.presentation.webmap_sites import POPUP_OPTIONS, add_sites
from siting.presentation.webmap_text import (
    KIND_WORDS,
    PopupRows,
    escape_text,
    number_or_blank,
    number_text,
    popup_table,
)

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd
    import pandas as pd

__all__ = ["CONTRIBUTION_CLASS", "FARM_CLASS", "REGION_SITE_ROWS", "render_region_map"]

#: CSS class on the farms' and the contribution lines' SVG paths: stable hooks for the
#: browser tests (tests/test_browser.py) and for restyling; keep them.
FARM_CLASS = "siting-farm"
CONTRIBUTION_CLASS = "siting-contribution"

#: Popup rows of a site on the regional map: its all-farms figures (``incomb_*``).
REGION_SITE_ROWS: PopupRows = (
    ("Site id", "site_id", None),
    ("Designation", "designation", None),
    ("Habitat", ("habitat_name", "habitat"), None),
    ("Verdict", "verdict", None),
    ("Deciding rule", "deciding_rule", None),
    ("All farms: max deposition", "incomb_dep_max_kg_n_ha_yr", "kg N/ha/yr"),
    ("Critical load used", "critical_load_used_kg_n_ha_yr", "kg N/ha/yr"),
    ("All farms, % of load", "incomb_pct_load", "%"),
    ("All farms: max concentration", "incomb_conc_max_ug_m3", "µg NH3/m³"),
    ("Critical level", "critical_level_ug_m3", "µg NH3/m³"),
    ("All farms, % of level", "incomb_pct_level", "%"),
)

#: Farms' circles (our own style): radius from the smallest to the largest emission [px].
_FARM_RADIUS_PX = (3.0, 9.0)
_FARM_STYLE = {"color": "#3e2723", "weight": 1, "fillColor": "#a1887f", "fillOpacity": 0.9}
#: Lines and rings of the top contributing farms (our own colour).
_CONTRIBUTION_COLOUR = "#5b2a86"
#: Contributors listed in a site's popup (all of them are drawn).
_POPUP_CONTRIBUTORS = 5

#: Binds the popup and tooltip of each farm or line feature from its escaped properties.
_FEATURE_SCRIPT = """function (feature, layer) {
    const p = feature.properties;
    layer.bindTooltip(p.tip, {"sticky": true});
    if (p.popup) { layer.bindPopup(p.popup, %(options)s); }
}"""


def _feature_script() -> str:
    """The feature script with our popup options as a JavaScript literal."""
    return _FEATURE_SCRIPT % {"options": json.dumps({"maxWidth": POPUP_OPTIONS["max_width"]})}


def _farm_radius(nh3_kg_yr: np.ndarray) -> np.ndarray:
    """Circle radius [px] by emission: area in proportion to it, within _FARM_RADIUS_PX."""
    values = np.nan_to_num(np.asarray(nh3_kg_yr, dtype=float), nan=0.0)
    top = values.max() if values.size and values.max() > 0 else 1.0
    low, high = _FARM_RADIUS_PX
    return low + (high - low) * np.sqrt(np.clip(values, 0.0, None) / top)


def _farm_popup(row: Any) -> str:
    """Popup HTML of one farm of the layer; user values escaped."""
    rows = [
        ("What", escape_text(KIND_WORDS.get(str(row.get("kind")), row.get("kind")))),
        ("Emission", number_text(row.get("nh3_kg_yr"), "kg NH3/yr")),
        ("Emission from", escape_text(row.get("emission_from"))),
        ("Release height", number_or_blank(row.get("release_height_m"), "m")),
        ("Footprint", number_or_blank(row.get("footprint_area_m2"), "m²")),
    ]
    head = "Farm " + (escape_text(row.get("farm_id")) or "(no id)")
    return popup_table(head, [(label, value) for label, value in rows if value])


def _farm_frame(farms: pd.DataFrame, projected: Any) -> gpd.GeoDataFrame:
    """The farms as points (x_m, y_m) in EPSG:4326, with their circle radius."""
    import geopandas as gpd
    import shapely

    frame = gpd.GeoDataFrame(
        farms.drop(columns=["release_class"], errors="ignore").copy(),
        geometry=shapely.points(farms["x_m"].to_numpy(float), farms["y_m"].to_numpy(float)),
        crs=projected,
    )
    frame["radius_px"] = _farm_radius(frame["nh3_kg_yr"]) if "nh3_kg_yr" in frame else 4.0
    return frame.to_crs("EPSG:4326")


def _add_farms(group: folium.FeatureGroup, farms_wgs84: gpd.GeoDataFrame) -> None:
    """Every farm as a circle sized by its emission, one GeoJSON layer, with a popup, a tooltip
    and its id as a label (shown when zoomed in)."""
    import folium
    from folium.utilities import JsCode

    features, labels = [], []
    for row in farms_wgs84.to_dict("records"):
        point = row["geometry"]
        farm_id = escape_text(row.get("farm_id")) or "(no id)"
        tip = f"Farm {farm_id}: {number_text(row.get('nh3_kg_yr'), 'kg NH3/yr')}"
        features.append(
            {
                "type": "Feature",
                "geometry": {
                    "type": "Point",
                    "coordinates": [round(point.x, 6), round(point.y, 6)],
                },
                "properties": {
                    "radius": round(float(row["radius_px"]), 1),
                    "tip": tip,
                    "popup": _farm_popup(row),
                },
            }
        )
        labels.append([point.y, point.x, farm_id, ""])
    if not features:
        return
    style = {**_FARM_STYLE, "className": FARM_CLASS}
    folium.GeoJson(
        data={"type": "FeatureCollection", "features": features},
        marker=folium.CircleMarker(radius=4),
        style_function=lambda feature: {**style, "radius": feature["properties"]["radius"]},
        on_each_feature=JsCode(_feature_script()),
        zoom_on_click=False,
        control=False,
    ).add_to(group)
    add_labels(group, "farm", labels)


def _contributor_list(site_id: Any, contributors: pd.DataFrame) -> str:
    """A site's top farms as an escaped HTML list (empty text where it has none)."""
    rows = contributors[contributors["site_id"] == site_id].sort_values("rank")
    items = "".join(
        f"<li>{escape_text(r.farm_id)}: {number_text(r.dep_kg_n_ha_yr, 'kg N/ha/yr')} "
        f"({number_text(r.share_of_site_total_percent, '%')} of the total), "
        f"{number_text(float(r.distance_m) / 1000.0, 'km')} away</li>"
        for r in rows.head(_POPUP_CONTRIBUTORS).itertuples()
    )
    if not items:
        return ""
    more = len(rows) - _POPUP_CONTRIBUTORS
    tail = f'<div class="code">and {more} more in contributors.csv</div>' if more > 0 else ""
    return f"<ol>{items}</ol>{tail}"


def _add_contributions(
    group: folium.FeatureGroup,
    sites: gpd.GeoDataFrame,
    contributors: pd.DataFrame,
    farms: pd.DataFrame,
    projected: Any,
) -> None:
    """For each site, a line from each of its top farms to its point of maximum deposition
    (weight by the farm's share of the site's total), a ring round each contributing farm and
    a dot at each site's most affected point."""
    import folium
    from folium.utilities import JsCode
    from pyproj import Transformer

    to_lonlat = Transformer.from_crs(projected, "EPSG:4326", always_xy=True)
    by_farm = farms.set_index("farm_id")
    by_site = sites.set_index("site_id")
    features = []
    ringed = set()
    for r in contributors.itertuples():
        if r.farm_id not in by_farm.index or r.site_id not in by_site.index:
            continue
        site = by_site.loc[r.site_id]
        if is_missing(site.get("max_x_m")) or is_missing(site.get("max_y_m")):
            continue
        farm = by_farm.loc[r.farm_id]
        lon, lat = to_lonlat.transform(
            np.array([farm["x_m"], site["max_x_m"]], dtype=float),
            np.array([farm["y_m"], site["max_y_m"]], dtype=float),
        )
        share = float(r.share_of_site_total_percent)
        tip = (
            f"Farm {escape_text(r.farm_id)} → {escape_text(r.site)}: "
            f"{number_text(r.dep_kg_n_ha_yr, 'kg N/ha/yr')} "
            f"({number_text(share, '%')} of the site's total, rank {int(r.rank)})"
        )
        features.append(
            {
                "type": "Feature",
                "geometry": {
                    "type": "LineString",
                    "coordinates": [
                        [round(lon[0], 6), round(lat[0], 6)],
                        [round(lon[1], 6), round(lat[1], 6)],
                    ],
                },  # fmt: skip
                "properties": {
                    "weight": round(1.0 + 5.0 * min(max(share, 0.0), 40.0) / 40.0, 2),
                    "tip": tip,
                    "popup": "",
                },
            }
        )
        ringed.add(r.farm_id)
    if features:
        base = {"color": _CONTRIBUTION_COLOUR, "opacity": 0.75, "className": CONTRIBUTION_CLASS}
        folium.GeoJson(
            data={"type": "FeatureCollection", "features": features},
            style_function=lambda f: {**base, "weight": f["properties"]["weight"]},
            on_each_feature=JsCode(_feature_script()),
            zoom_on_click=False,
            control=False,
        ).add_to(group)
    radius = dict(zip(farms["farm_id"], _farm_radius(farms["nh3_kg_yr"])))
    for farm_id in sorted(ringed, key=str):
        farm = by_farm.loc[farm_id]
        lon, lat = to_lonlat.transform(float(farm["x_m"]), float(farm["y_m"]))
        folium.CircleMarker(
            location=[lat, lon],
            radius=float(radius.get(farm_id, _FARM_RADIUS_PX[1])) + 2.5,
            color=_CONTRIBUTION_COLOUR,
            weight=2,
            fill=False,
            interactive=False,
        ).add_to(group)
    _add_most_affected_points(group, by_site, to_lonlat)


def _add_most_affected_points(group: folium.FeatureGroup, by_site: Any, to_lonlat: Any) -> None:
    """A white dot at each site's point of maximum deposition (max_x_m, max_y_m [m])."""
    import folium

    for site_id, site in by_site.iterrows():
        if is_missing(site.get("max_x_m")) or is_missing(site.get("max_y_m")):
            continue
        lon, lat = to_lonlat.transform(float(site["max_x_m"]), float(site["max_y_m"]))
        folium.CircleMarker(
            location=[lat, lon],
            radius=3,
            color="#1d2430",
            weight=1.5,
            fill=True,
            fill_color="#ffffff",
            fill_opacity=1.0,
            tooltip=folium.Tooltip(
                f"most affected point of {escape_text(site.get('name')) or escape_text(site_id)}"
            ),
        ).add_to(group)


def _critical_load_contours(sites: gpd.GeoDataFrame | None) -> list[tuple[float, str]]:
    """A contour at each distinct critical load the sites use [kg N ha-1 yr-1], lowest first."""
    if sites is None or "critical_load_used_kg_n_ha_yr" not in sites:
        return []
    loads = np.asarray(sites["critical_load_used_kg_n_ha_yr"], dtype=float)
    return [(float(v), "a critical load used") for v in np.unique(loads[np.isfinite(loads)])]


def _farm_legend_rows(any_contributors: bool) -> list[str]:
    """Legend rows of the farms, the contribution lines and the most affected points."""
    low, high = _FARM_RADIUS_PX
    rows = [
        '<div class="row"><svg class="sample" width="34" height="20" aria-hidden="true">'
        f'<circle cx="6" cy="10" r="{low:g}" fill="{_FARM_STYLE["fillColor"]}" '
        f'stroke="{_FARM_STYLE["color"]}"/><circle cx="22" cy="10" r="{high:g}" '
        f'fill="{_FARM_STYLE["fillColor"]}" stroke="{_FARM_STYLE["color"]}"/></svg>'
        "farm: circle area in proportion to its emission</div>"
    ]
    if any_contributors:
        rows += [
            '<div class="row"><svg class="sample" width="34" height="14" aria-hidden="true">'
            f'<line x1="2" y1="7" x2="32" y2="7" stroke="{_CONTRIBUTION_COLOUR}" '
            'stroke-width="3" stroke-opacity="0.75"/></svg>top farm → site\'s most affected '
            "point (thicker: larger share)</div>",
            '<div class="row"><svg class="sample" width="34" height="22" aria-hidden="true">'
            f'<circle cx="13" cy="11" r="8" fill="none" stroke="{_CONTRIBUTION_COLOUR}" '
            'stroke-width="2"/></svg>a top contributor to a site</div>',
            '<div class="row"><svg class="sample" width="34" height="10" aria-hidden="true">'
            '<circle cx="9" cy="5" r="3" fill="#ffffff" stroke="#1d2430" stroke-width="1.5"/>'
            "</svg>a site's point of maximum deposition</div>",
        ]
    return rows


def render_region_map(
    *,
    title: str,
    crs: str,
    west_m: float,
    north_m: float,
    cell_m: float,
    deposition_kg_n_ha_yr: np.ndarray,
    sites: gpd.GeoDataFrame | None,
    farms: pd.DataFrame,
    contributors: pd.DataFrame,
    cautions: list[str],
    version: str,
    run_time: str,
) -> str:
    """map.html of a regional run: all farms' deposition, sites by verdict, who contributes.

    Parameters
    ----------
    title : str
        The map's title (user text, escaped).
    crs : str
        Projected CRS of the grid, the farms' x_m, y_m and frames without a CRS.
    west_m, north_m : float
        West and north edges of the grid in `crs` [m].
    cell_m : float
        Cell size [m], > 0.
    deposition_kg_n_ha_yr : ndarray, shape (n_rows, n_cols)
        Deposition of all farms together [kg N ha-1 yr-1]; row 0 is the north edge; NaN = no
        data. Coloured in the classes of
        :func:`siting.presentation.formats.deposition_class_edges`.
    sites : GeoDataFrame or None
        The sites with their all-farms figures (columns of sites.csv of ``siting region``:
        site_id, name, designation, habitat, habitat_name, verdict, passes, deciding_rule,
        incomb_* [ug m-3, kg N ha-1 yr-1, %], critical_level_ug_m3, critical_load_used_
        kg_n_ha_yr, max_x_m, max_y_m [m]); None without a habitat layer.
    farms : DataFrame
        The farms (farm_id, kind, x_m, y_m [m], nh3_kg_yr [kg NH3 yr-1], release_height_m [m],
        footprint_area_m2 [m2], emission_from).
    contributors : DataFrame
        Per site its top farms at its point of maximum deposition (site_id, site, rank,
        farm_id, dep_kg_n_ha_yr [kg N ha-1 yr-1], share_of_site_total_percent [%],
        distance_m [m]).
    cautions : list of str
        Cautions shown in the title block.
    version : str
        siting version, shown as "siting <version>".
    run_time : str
        Time of the run as it should be shown.

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
    edges = deposition_class_edges(grid)
    colours = deposition_class_colours(edges.size - 1)
    data_url, bounds = overlay(grid, projected, west_m, north_m, cell_m, edges, colours)
    fmap = new_map(title, bounds, zoom_start=11)
    add_surface(fmap, data_url, bounds, "Deposition, all farms (kg N/ha/yr)")
    contours = _critical_load_contours(sites)
    if contours:  # off when the page opens: around many farms they are many rings
        add_contours(
            layer(fmap, "Contours: critical loads", show=False),
            grid, projected, west_m, north_m, cell_m, contours,
        )  # fmt: skip
    add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, GRID_EDGE_TIP)
    farms_wgs84 = _farm_frame(farms, projected)
    sites_wgs84 = None
    any_contributors = sites is not None and len(contributors) > 0
    if sites is not None and len(sites):
        order = np.argsort(-np.nan_to_num(np.asarray(sites["incomb_pct_load"], float), nan=-1))
        ranked = sites.iloc[order]  # the most affected first: their labels win
        sites_wgs84 = to_wgs84(ranked, projected)
        lists = [_contributor_list(s, contributors) for s in ranked["site_id"]]
        add_sites(
            layer(fmap, "Habitat sites"),
            sites_wgs84,
            rows=REGION_SITE_ROWS,
            extra=[("Top farms at its most affected point", lists)],
        )
        if any_contributors:
            _add_contributions(
                layer(fmap, "Top contributing farms"), ranked, contributors, farms, projected
            )
    _add_farms(layer(fmap, "Farms"), farms_wgs84)
    sections = [
        legend_section(
            "Deposition, all farms together, kg N/ha/yr",
            [*surface_legend_rows(edges, colours, "kg N/ha/yr"), extent_legend_row()],
        ),
        legend_section(
            "Contours: the sites' critical loads (grid at short-vegetation deposition; layer "
            "off when the page opens)",
            contour_legend_rows(contours),
        ),
        legend_section("Habitat sites, verdict of the all-farms total", verdict_legend_rows()),
        legend_section("Farms", _farm_legend_rows(any_contributors)),
    ]
    note = (
        f'<div class="note">{len(farms)} farms. Farm ids show when zoomed in; a site\'s popup '
        "lists its top farms.</div>"
    )
    view = data_bounds([sites_wgs84, farms_wgs84], bounds, margin=0.04)
    title_box = title_html(title, run_time, version, cautions)
    return finish_page(fmap, view, [title_box, legend_html(sections, note)])
