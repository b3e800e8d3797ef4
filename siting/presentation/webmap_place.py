"""The placement search's map: where on the holding a new house does least harm.

The surface is, with the house at each allowed cell, the worst share of a site's screening
threshold over all sites, coloured in diverging classes (passing blue-greens, failing browns).
Over it: the holding boundary and the allowed area, the habitat sites (outlined alike: their
figures are of the screening run, not of the positions), the best positions with their rank,
the edge of the searched area, a legend and the title block with the cautions. Built from the
steps of :mod:`siting.presentation.webmap`; returned as text, written by the output layer.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np

from siting.presentation.formats import format_number, is_missing
from siting.presentation.webmap import finish_page, layer, legend_html, new_map, title_html
from siting.presentation.webmap_grid import (
    SEARCH_EDGE_TIP,
    add_extent_outline,
    add_surface,
    check_grid,
    extent_legend_row,
    overlay,
    to_wgs84,
)
from siting.presentation.webmap_sites import SITE_CLASS, SITE_POPUP_ROWS, add_sites
from siting.presentation.webmap_text import PopupRows, escape_text

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

__all__ = ["SHARE_CLASS_EDGES", "render_place_map"]

#: Classes of the placement surface: the worst share of a site's screening threshold
#: (1 = exactly at it); four passing classes, four failing ones. Our own choice.
SHARE_CLASS_EDGES = np.array([0.0, 0.25, 0.5, 0.75, 1.0, 1.5, 2.0, 5.0, 10.0])

#: Outline of every habitat site on the placement map (figures there are of the screening
#: run, not of the positions, so the sites are not coloured by verdict). Our own colour.
_PLACE_SITE_STYLE: dict[str, Any] = {
    "color": "#6a3d9a",
    "weight": 2,
    "fillOpacity": 0.15,
    "className": SITE_CLASS,
}


def _cost_edges(cost_eur_yr: np.ndarray) -> np.ndarray:
    """Class edges of the cheapest annual cost [EUR yr-1]: 0 (nothing to pay), then steps of
    the 1-2-5 series up to the largest cost, at most eight classes."""
    top = float(np.nanmax(cost_eur_yr))
    series = [m * 10.0**e for e in range(9) for m in (1.0, 2.0, 5.0)]
    upper = [v for v in series if v < top] + [next(v for v in series if v >= top)]
    return np.array([0.0, *upper[-7:]]) if top > 0 else np.array([0.0, 1.0])


def _cost_colours(n: int) -> list[str]:
    """Sequential colours of the cost classes: light (cheap) to dark (dear)."""
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    cmap = colormaps["YlOrRd"]
    return [to_hex(cmap(0.1 + 0.85 * i / max(n - 1, 1))) for i in range(n)]


def _cost_legend_html(edges: np.ndarray, colours: list[str]) -> str:
    """The cost surface's legend: one row per class, and how the cost is made."""
    rows = "".join(
        f'<div class="row"><span class="swatch" style="background:{c}"></span>'
        f"EUR {low:,.0f} – {high:,.0f} a year</div>"
        for low, high, c in zip(edges[:-1], edges[1:], colours)
    )
    return (
        '<div class="siting-box siting-legend siting-cost-legend" style="right:auto;left:10px;bottom:64px;'
        'max-width:260px"><b>Cheapest annual cost to pass</b> (layer off '
        f"when the page opens){rows}"
        '<div class="note">The cheapest of: as planned, each technique at the share of the air '
        "it needs (lower end of its published range), fewer places, or both, at the "
        "scenario's [appraisal] prices; uncoloured where no way passes.</div></div>"
    )


def _share_colours() -> list[str]:
    """Diverging colours: blue-greens for passing classes, browns for failing ones."""
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    cmap = colormaps["BrBG_r"]
    return [to_hex(cmap(v)) for v in (0.08, 0.2, 0.32, 0.44, 0.6, 0.72, 0.84, 0.96)]


#: Popup rows of a site on the placement map: the screening map's designation and habitat.
_PLACE_SITE_ROWS: PopupRows = tuple(
    row for row in SITE_POPUP_ROWS if row[0] in ("Designation", "Habitat")
)


def _add_holding(
    group: folium.FeatureGroup,
    holding: gpd.GeoDataFrame,
    allowed_area: gpd.GeoDataFrame,
    projected: Any,
) -> None:
    """Outlines of the holding boundary (dashed grey) and the allowed area (green)."""
    import folium

    for frame, colour, dash, label in (
        (holding, "#3b3b3b", "6 4", "holding boundary"),
        (allowed_area, "#1b7f3b", None, "allowed area"),
    ):
        for geom in to_wgs84(frame, projected).geometry:
            folium.GeoJson(
                geom.__geo_interface__,
                style_function=lambda _f, c=colour, d=dash: {
                    "color": c,
                    "weight": 2,
                    "fill": False,
                    "dashArray": d,
                },
                tooltip=folium.Tooltip(escape_text(label)),
            ).add_to(group)


def _ways_html(ways: Any) -> str:
    """The farmer's comparison of one position as a small popup table: each way, whether it
    passes (✓ / ✗), its emission as a share of the most that passes there, its annual cost."""
    rows = "".join(
        f"<tr><td>{escape_text(way.way)}</td><td>{'✓' if way.passes else '✗'}</td>"
        f"<td>{'never' if way.share_of_allowed == float('inf') else f'{way.share_of_allowed:.2f}'}"
        f"</td><td>{format_number(way.cost_eur_yr)}</td></tr>"
        for way in ways.itertuples()
    )
    return (
        '<table style="font-size:11px;border-collapse:collapse"><tr><th>side by side</th>'
        "<th>passes</th><th>share of limit</th><th>EUR/yr</th></tr>"
        f"{rows}</table>"
    )


def _position_popup(rank: int, row: Any, ways: Any = None) -> str:
    """Popup HTML of one ranked position (a row of positions.csv), with its ways side by side
    where given; site names escaped."""
    lines = [
        f"<b>Rank {rank}</b>",
        f"x {row.x:.0f}, y {row.y:.0f}",
        f"limiting site: {escape_text(row.limiting_site)} ({_share_text(row)})",
        f"verdict there: {escape_text(str(getattr(row, 'verdict', '')))}",
        f"deciding rule: {escape_text(str(getattr(row, 'deciding_rule', '')))}",
        f"worst % of critical load: {format_number(row.worst_pct_load)} "
        f"({escape_text(row.worst_site)})",
        f"worst % of critical level: {format_number(row.worst_pct_level)}",
        f"reduction needed: {row.required_reduction_percent:.0f} %",
    ]
    way = getattr(row, "cheapest_option", None)
    if way is not None and not is_missing(way):
        lines.insert(1, f"<b>{escape_text(str(way))}</b>")
    places = getattr(row, "max_places_unabated", None)
    if places is not None and not is_missing(places):
        lines.append(f"most places unabated: {places:.0f}")
    table = _ways_html(ways) if ways is not None and len(ways) else ""
    return "<br>".join(lines) + table


def _share_text(row: Any) -> str:
    """The limiting share in words: inf means no emission of the house passes there."""
    share = float(row.limiting_share_of_threshold)
    if share == float("inf"):
        return "no emission of the house passes: the other sources alone fail"
    return f"{share:.2f} of the most its rule set allows"


def _add_positions(
    group: folium.FeatureGroup, positions_wgs84: gpd.GeoDataFrame, side_by_side: Any = None
) -> None:
    """The best positions, best first, as white circle markers with their rank (and their
    ways side by side in the popup, where given)."""
    import folium

    for row in positions_wgs84.reset_index(drop=True).itertuples():
        rank = row.Index + 1
        ways = None if side_by_side is None else side_by_side[side_by_side["rank"] == rank]
        folium.CircleMarker(
            location=[row.geometry.y, row.geometry.x],
            radius=8,
            color="#111111",
            weight=2,
            fill=True,
            fill_color="#ffffff",
            fill_opacity=1.0,
            tooltip=folium.Tooltip(f"rank {rank}"),
            popup=folium.Popup(_position_popup(rank, row, ways), max_width=360),
        ).add_to(group)


def _place_legend_html(edges: np.ndarray, colours: list[str], any_pass: bool = True) -> str:
    """Legend of the placement map: share classes, how to read them, positions, grid edge."""
    best = "best positions" if any_pass else "least affecting positions: none passes"
    best_row = (
        '<div class="row"><span class="dot" style="background:#ffffff;'
        f'border:2px solid #111111"></span>{best} (rank in popup)</div>'
    )
    note = (
        '<div class="note">House placed at a coloured cell: its emission as described, as a '
        "share of the most the rule set allows at the worst-hit site (with the farm's other "
        "sources its basis includes). Below 1 it passes every site; above 1 it needs "
        "abatement or fewer places (see positions.csv)."
        "</div>"
    )
    return legend_html(
        edges,
        colours,
        [],
        [],
        heading="Share of what the rule set allows (1 = at the limit)",
        unit="",
        extra_rows=[note, best_row, extent_legend_row("edge of the searched area")],
        verdicts=False,
    )


def render_place_map(
    *,
    title: str,
    crs: str,
    west_m: float,
    north_m: float,
    cell_m: float,
    share_of_threshold: np.ndarray,
    allowed_area: gpd.GeoDataFrame,
    cheapest_cost_eur_yr: np.ndarray | None = None,
    side_by_side: Any = None,
    holding: gpd.GeoDataFrame,
    positions: gpd.GeoDataFrame,
    sites: gpd.GeoDataFrame,
    cautions: list[str],
    version: str,
    run_time: str,
) -> str:
    """The placement map's page: where on the holding the house does least harm.

    Parameters
    ----------
    title : str
        The map's title (user text, escaped).
    crs : str
        Projected CRS of the grid and of frames without a CRS, e.g. ``"EPSG:32632"``.
    west_m, north_m : float
        West and north edges of the grid in `crs` [m].
    cell_m : float
        Cell size [m], > 0 (the spacing of the searched positions).
    share_of_threshold : ndarray (n_rows, n_cols)
        With the house at each cell centre, the largest share of a site's screening threshold
        over all sites (1 = exactly at the threshold; below 1 passes); NaN where the house may
        not go. Row 0 is the north edge of the grid.
    allowed_area, holding : GeoDataFrame
        The allowed area and the holding boundary (polygons).
    cheapest_cost_eur_yr : ndarray (n_rows, n_cols), optional
        The cheapest way's annual cost by house position [EUR yr-1], NaN where it may not go
        or no way passes: a second surface, off when the page opens, with its own legend.
    side_by_side : DataFrame, optional
        The best positions' ways side by side (rank, way, passes, share_of_allowed,
        cost_eur_yr), shown in each position's popup.
    positions : GeoDataFrame
        The best positions (points) with the columns of positions.csv, best first.
    sites : GeoDataFrame
        Habitat sites, as for :func:`siting.presentation.webmap.render_screen_map` (figures
        are of the screening run, not of the positions, so only name, designation, habitat
        are shown).
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
    grid, projected = check_grid(share_of_threshold, cell_m, crs)
    edges, colours = SHARE_CLASS_EDGES, _share_colours()
    data_url, bounds = overlay(grid, projected, west_m, north_m, cell_m, edges, colours)

    fmap = new_map(title, bounds, zoom_start=15)
    add_surface(fmap, data_url, bounds, "Worst share of a threshold, by house position")
    boxes = []
    if cheapest_cost_eur_yr is not None and np.isfinite(cheapest_cost_eur_yr).any():
        cost_edges = _cost_edges(cheapest_cost_eur_yr)
        cost_colours = _cost_colours(cost_edges.size - 1)
        cost_url, _ = overlay(
            np.asarray(cheapest_cost_eur_yr, dtype=float),
            projected, west_m, north_m, cell_m, cost_edges, cost_colours,
        )  # fmt: skip
        add_surface(fmap, cost_url, bounds, "Cheapest annual cost to pass (EUR/yr)", show=False)
        boxes.append(_cost_legend_html(cost_edges, cost_colours))
    _add_holding(layer(fmap, "Holding and allowed area"), holding, allowed_area, projected)
    add_sites(
        layer(fmap, "Habitat sites"),
        to_wgs84(sites, projected),
        rows=_PLACE_SITE_ROWS,
        style=_PLACE_SITE_STYLE,
        highlight=False,
    )
    any_pass = "passes_as_described" not in positions or bool(
        positions["passes_as_described"].any()
    )
    label = "Best positions" if any_pass else "Least affecting positions (none passes)"
    _add_positions(layer(fmap, label), to_wgs84(positions, projected), side_by_side)
    add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, SEARCH_EDGE_TIP)
    title_box = title_html(title, run_time, version, cautions)
    legend = _place_legend_html(edges, colours, any_pass)
    return finish_page(fmap, bounds, [title_box, legend, *boxes])
