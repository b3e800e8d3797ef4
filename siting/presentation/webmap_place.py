"""The placement search's map: where on the holding a new house does least harm.

The surface is, with the house at each allowed cell, the worst share of a site's screening
threshold over all sites, coloured in diverging classes (passing blue-greens, failing browns,
and a class of its own where no emission of the house passes because the other sources alone
fail). Over it: the holding boundary and the allowed area, the farm's other houses and stores
as their footprints, the exclusion layers (dwellings, watercourses) with the distance kept from
each, the habitat sites (outlined alike: their figures are of the screening run, not of the
positions), each labelled; the best positions as numbered markers, the edge of the searched
area, a collapsible legend and the title block with the cautions.

The best positions are often neighbouring cells, which as ten markers would sit on top of one
another. The map numbers *distinct* positions instead: walking down the ranking, a position is
marked when it is at least :func:`separation_m` from every one already marked, and it carries
its rank among all positions (its row in positions.csv); the legend says so. Each marker's
popup says in words whether the house as described passes there, and why not. Built from the
steps of :mod:`siting.presentation.webmap`; returned as text, written by the output layer.
"""

from __future__ import annotations

from dataclasses import replace
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.presentation.formats import format_number, is_missing
from siting.presentation.webmap import (
    data_bounds,
    finish_page,
    layer,
    legend_html,
    legend_section,
    new_map,
    surface_legend_rows,
    title_html,
)
from siting.presentation.webmap_grid import (
    SEARCH_EDGE_TIP,
    add_extent_outline,
    add_surface,
    check_grid,
    extent_legend_row,
    overlay,
    to_wgs84,
)
from siting.presentation.webmap_labels import add_obstacles
from siting.presentation.webmap_layers import (
    add_context,
    add_sources,
    context_legend_rows,
    source_legend_rows,
)
from siting.presentation.webmap_sites import POPUP_OPTIONS, SITE_CLASS, SITE_POPUP_ROWS, add_sites
from siting.presentation.webmap_text import PopupRows, escape_text

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

    from siting.readers.map_context import MapContext
    from siting.readers.tables import Tables

__all__ = ["NEVER_COLOUR", "RANK_CLASS", "SHARE_CLASS_EDGES", "render_place_map", "separation_m"]

#: Classes of the placement surface: the worst share of a site's screening threshold
#: (1 = exactly at it); four passing classes, four failing ones. Our own choice.
SHARE_CLASS_EDGES = np.array([0.0, 0.25, 0.5, 0.75, 1.0, 1.5, 2.0, 5.0, 10.0])

#: Colour of the cells where no emission of the house passes (share +inf: the other sources
#: the rule set counts already fail without it). Our own choice: apart from the browns.
NEVER_COLOUR = "#4b3f72"

#: CSS class of the numbered markers' elements: a stable hook for the browser tests.
RANK_CLASS = "siting-rank"

#: Outline of every habitat site on the placement map (figures there are of the screening
#: run, not of the positions, so the sites are not coloured by verdict). Our own colour.
_PLACE_SITE_STYLE: dict[str, Any] = {
    "color": "#6a3d9a",
    "weight": 2,
    "fillOpacity": 0.15,
    "className": SITE_CLASS,
}


def separation_m(cell_m: float, allowed_area_m2: float = 0.0) -> float:
    """The least distance between two numbered positions [m]: four cells of the search, at
    least 40 m, and a sixth of the side of a square as large as the allowed area, so ten
    numbers spread over the holding (our own choice: a house moved less is in much the same
    place).

    Parameters
    ----------
    cell_m : float
        Spacing of the searched positions [m].
    allowed_area_m2 : float
        Area where the house's centre may go [m2].

    Returns
    -------
    float
    """
    return max(4.0 * float(cell_m), 40.0, float(np.sqrt(max(allowed_area_m2, 0.0))) / 6.0)


def _distinct_positions(positions: Any, top: int, min_distance_m: float) -> np.ndarray:
    """Row positions of up to ``top`` positions, best first, each at least ``min_distance_m``
    from every one before it (x, y [m] columns)."""
    x = np.asarray(positions["x"], dtype=float)
    y = np.asarray(positions["y"], dtype=float)
    free = np.ones(x.size, dtype=bool)
    picked = []
    while len(picked) < top and free.any():
        i = int(np.argmax(free))  # the best position still free
        picked.append(i)
        free &= np.hypot(x - x[i], y - y[i]) >= min_distance_m
    return np.array(picked, dtype=int)


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


def _cost_legend_rows(edges: np.ndarray, colours: list[str]) -> list[str]:
    """The cost surface's legend rows: one per class, and how the cost is made."""
    rows = [
        f'<div class="row"><span class="swatch" style="background:{c}"></span>'
        f"EUR {low:,.0f} – {high:,.0f} a year</div>"
        for low, high, c in zip(edges[:-1], edges[1:], colours)
    ]
    rows.append(
        '<div class="note">Layer off when the page opens. The cheapest of: as planned, each '
        "technique at the share of the air it needs (lower end of its published range), fewer "
        "places, or both, at the scenario's [appraisal] prices; uncoloured where no way "
        "passes.</div>"
    )
    return rows


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
        (holding, "#2b2b2b", "8 5", "holding boundary"),
        (allowed_area, "#1b7f3b", None, "allowed area: where the house's centre may go"),
    ):
        for geom in to_wgs84(frame, projected).geometry:
            folium.GeoJson(
                geom.__geo_interface__,
                style_function=lambda _f, c=colour, d=dash: {
                    "color": c,
                    "weight": 2.5 if d else 2,
                    "fill": False,
                    "dashArray": d,
                },
                tooltip=folium.Tooltip(escape_text(label)),
                zoom_on_click=False,
                control=False,
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


def _passes(row: Any) -> bool:
    """Whether the house as described passes at a position: positions.csv's
    ``passes_as_described``, else its limiting share at most 1."""
    passes = getattr(row, "passes_as_described", None)
    if passes is not None and not is_missing(passes):
        return str(passes).strip().lower() in ("true", "1")
    share = float(row.limiting_share_of_threshold)
    return bool(np.isfinite(share) and share <= 1.0)


def position_words(row: Any) -> tuple[bool, str]:
    """Whether the house as described passes at a position, and why, in words (escaped).

    Parameters
    ----------
    row : namedtuple
        A row of positions.csv (``limiting_site``, ``limiting_share_of_threshold``,
        ``passes_as_described`` where present).

    Returns
    -------
    passes : bool
    words : str
        E.g. "The house as described passes every site here; the most affected, Gorseburrow
        Heath, takes 43 % of what its rule set allows." or "The house as described does not
        pass here: Gorseburrow Heath at 143 % of what its rule set allows."
    """
    site = escape_text(row.limiting_site) or "a site"
    share = float(row.limiting_share_of_threshold)
    passes = _passes(row)
    if passes:
        return passes, (
            "The house as described passes every site here; the most affected, "
            f"{site}, takes {escape_text(format_number(100.0 * share))} % of what its rule "
            "set allows."
        )
    if not np.isfinite(share):
        return passes, (
            f"The house as described does not pass here: at {site} the farm's other "
            "sources that the rule set counts already fail without it, so no emission of "
            "the house passes."
        )
    return passes, (
        f"The house as described does not pass here: {site} at "
        f"{escape_text(format_number(100.0 * share))} % of what its rule set allows."
    )


def _position_popup(rank: int, total: int, row: Any, ways: Any = None) -> str:
    """Popup HTML of one ranked position (a row of positions.csv): in words whether the house
    passes there, then its figures, with its ways side by side where given; site names
    escaped."""
    passes, words = position_words(row)
    lines = [
        f"x {row.x:.0f}, y {row.y:.0f}",
        f"worst % of critical load: {format_number(row.worst_pct_load)} "
        f"({escape_text(row.worst_site)})",
        f"worst % of critical level: {format_number(row.worst_pct_level)}",
        f"reduction needed: {row.required_reduction_percent:.0f} %",
    ]
    verdict = getattr(row, "verdict", None)
    if verdict is not None and not is_missing(verdict):
        lines.append(f"verdict at {escape_text(row.limiting_site)}: {escape_text(str(verdict))}")
    rule = getattr(row, "deciding_rule", None)
    if rule is not None and not is_missing(rule):
        lines.append(f"deciding rule: {escape_text(str(rule))}")
    way = getattr(row, "cheapest_option", None)
    if way is not None and not is_missing(way):
        lines.append(f"cheapest way to pass: {escape_text(str(way))}")
    places = getattr(row, "max_places_unabated", None)
    if places is not None and not is_missing(places):
        lines.append(f"most places unabated: {places:.0f}")
    table = _ways_html(ways) if ways is not None and len(ways) else ""
    return (
        f'<div class="siting-popup"><div class="head">Rank {rank} of {total} positions</div>'
        f'<p class="words {"passes" if passes else "fails"}">{words}</p>'
        + "<br>".join(lines)
        + table
        + "</div>"
    )


def _add_positions(
    group: folium.FeatureGroup,
    positions_wgs84: gpd.GeoDataFrame,
    picked: np.ndarray,
    side_by_side: Any = None,
) -> None:
    """The picked positions as numbered markers (their rank among all positions), each with
    its popup (and its ways side by side, where given); the best drawn on top."""
    import folium

    total = len(positions_wgs84)
    rows = list(positions_wgs84.iloc[picked].itertuples())
    add_obstacles(group, [[row.geometry.y, row.geometry.x, 13.0] for row in rows])
    for order, (index, row) in reversed(list(enumerate(zip(picked, rows)))):
        rank = int(index) + 1
        ways = None if side_by_side is None else side_by_side[side_by_side["rank"] == rank]
        passes = _passes(row)
        css = " ".join(
            [RANK_CLASS, *(["passes"] if passes else []), *(["first"] if order == 0 else [])]
        )
        folium.Marker(
            location=[row.geometry.y, row.geometry.x],
            icon=folium.DivIcon(
                html=f'<div class="{css}">{rank}</div>',
                icon_size=(22, 22),
                icon_anchor=(11, 11),
                class_name="siting-rank-icon",
            ),
            tooltip=folium.Tooltip(
                f"rank {rank}: {'passes' if passes else 'does not pass'} as described"
            ),
            popup=folium.Popup(_position_popup(rank, total, row, ways), **POPUP_OPTIONS),
            z_index_offset=1000 - order,
        ).add_to(group)


def _positions_legend_rows(any_pass: bool, min_distance_m: float, shown: int) -> list[str]:
    """Legend rows of the numbered positions: what the numbers are, and how they were picked."""
    what = "the best positions" if any_pass else "the least affecting positions (none passes)"
    return [
        '<div class="row"><span class="siting-rank" style="flex:none">1</span>'
        f"{shown} of {escape_text(what)}, numbered by rank among all positions "
        "(positions.csv)</div>",
        '<div class="row"><span class="siting-rank passes" style="flex:none">2</span>'
        "filled: the house as described passes there</div>",
        f'<div class="note">Neighbouring cells rank alike, so each number marks a distinct '
        f"place: at least {escape_text(format_number(min_distance_m))} m from every better "
        "one. Click a number for what it takes there.</div>",
    ]


def _share_legend_rows(edges: np.ndarray, colours: list[str]) -> list[str]:
    """Legend rows of the share surface, with the class where nothing the house emits passes."""
    return [
        *surface_legend_rows(edges, colours, ""),
        f'<div class="row"><span class="swatch" style="background:{NEVER_COLOUR};'
        'opacity:0.7"></span>never: the other sources alone already fail</div>',
        '<div class="note">House placed at a coloured cell: its emission as described, as a '
        "share of the most the rule set allows at the worst-hit site (with the farm's other "
        "sources its basis includes). Below 1 it passes every site; above 1 it needs "
        "abatement or fewer places (see positions.csv).</div>",
        extent_legend_row("edge of the searched area"),
    ]


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
    top: int = 10,
    sources: gpd.GeoDataFrame | None = None,
    context: MapContext | None = None,
    tables: Tables | None = None,
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
        over all sites (1 = exactly at the threshold; below 1 passes; +inf where no emission
        of the house passes); NaN where the house may not go. Row 0 is the north edge.
    allowed_area, holding : GeoDataFrame
        The allowed area and the holding boundary (polygons).
    cheapest_cost_eur_yr : ndarray (n_rows, n_cols), optional
        The cheapest way's annual cost by house position [EUR yr-1], NaN where it may not go
        or no way passes: a second surface, off when the page opens, with its own legend.
    side_by_side : DataFrame, optional
        The best positions' ways side by side (rank, way, passes, share_of_allowed,
        cost_eur_yr), shown in each position's popup.
    positions : GeoDataFrame
        The ranked positions (points) with the columns of positions.csv, best first: all of
        them, or at least the best; ``top`` distinct ones are numbered (see the module).
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
    top : int
        How many distinct positions are numbered.
    sources : GeoDataFrame, optional
        The farm's other sources (footprints or points; columns as for the screening map),
        drawn and labelled: the existing houses and stores the house keeps away from.
    context : MapContext, optional
        The scenario's exclusion layers (its holding is ``holding``), drawn with the
        distance the house keeps from each and every feature labelled.
    tables : Tables, optional
        The run's lookup tables, for the sources' popups.

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
    data_url, bounds = overlay(
        grid, projected, west_m, north_m, cell_m, edges, colours, infinite_colour=NEVER_COLOUR
    )
    fmap = new_map(title, bounds, zoom_start=15)
    add_surface(fmap, data_url, bounds, "Worst share of a threshold, by house position")
    cost_rows: list[str] = []
    if cheapest_cost_eur_yr is not None and np.isfinite(cheapest_cost_eur_yr).any():
        cost_edges = _cost_edges(cheapest_cost_eur_yr)
        cost_colours = _cost_colours(cost_edges.size - 1)
        cost_url, _ = overlay(
            np.asarray(cheapest_cost_eur_yr, dtype=float),
            projected, west_m, north_m, cell_m, cost_edges, cost_colours,
        )  # fmt: skip
        add_surface(fmap, cost_url, bounds, "Cheapest annual cost to pass (EUR/yr)", show=False)
        cost_rows = _cost_legend_rows(cost_edges, cost_colours)
    _add_holding(layer(fmap, "Holding and allowed area"), holding, allowed_area, projected)
    exclusions = None if context is None else replace(context, holding=None)
    add_context(fmap, exclusions, projected, buffers=True)
    sources_wgs84 = None if sources is None or not len(sources) else to_wgs84(sources, projected)
    if sources_wgs84 is not None:
        add_sources(layer(fmap, "Other houses and stores"), sources_wgs84, tables)
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
    label = "Best positions (numbered)" if any_pass else "Least affecting positions (none passes)"
    gap_m = separation_m(cell_m, float(allowed_area.to_crs(projected).area.sum()))
    picked = _distinct_positions(positions, top, gap_m)
    positions_wgs84 = to_wgs84(positions, projected)
    _add_positions(layer(fmap, label), positions_wgs84, picked, side_by_side)
    add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, SEARCH_EDGE_TIP)
    sections = [
        legend_section(
            "Numbered positions", _positions_legend_rows(any_pass, gap_m, int(picked.size))
        ),
        legend_section(
            "Share of what the rule set allows (1 = at the limit)",
            _share_legend_rows(edges, colours),
        ),
        legend_section("Cheapest annual cost to pass", cost_rows),
        legend_section(
            "The farm",
            [
                '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
                '<line x1="2" y1="6" x2="32" y2="6" stroke="#2b2b2b" stroke-width="2.5" '
                'stroke-dasharray="8 5"/></svg>holding boundary</div>',
                '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
                '<line x1="2" y1="6" x2="32" y2="6" stroke="#1b7f3b" stroke-width="2"/></svg>'
                "allowed area: where the house's centre may go</div>",
                *([] if sources_wgs84 is None else source_legend_rows(sources_wgs84)),
                *context_legend_rows(exclusions, buffers=True),
            ],
        ),
        legend_section(
            "Habitat sites",
            [
                '<div class="row"><svg class="sample" width="34" height="14" aria-hidden="true">'
                f'<rect x="2" y="2" width="28" height="10" fill="{_PLACE_SITE_STYLE["color"]}" '
                f'fill-opacity="0.15" stroke="{_PLACE_SITE_STYLE["color"]}" stroke-width="2"/>'
                "</svg>habitat site (its verdict depends on the position)</div>"
            ],
        ),
    ]
    view = data_bounds([to_wgs84(holding, projected)], None, margin=0.06)
    title_box = title_html(title, run_time, version, cautions)
    return finish_page(fmap, view, [title_box, legend_html(sections)])
