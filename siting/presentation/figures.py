"""The report's figures, drawn as matplotlib Figures.

Two report figures: the deposition grid in log classes with site outlines, sources and contours
(:func:`deposition_figure`), and each site's maximum process contribution against its distance
from the sources (:func:`pc_vs_distance_figure`); the weather charts are in
:mod:`siting.presentation.weather_figures`. Each draws into the Axes it is given (``ax``) or,
without one, into a Figure of its own, and returns that Figure; the PNG bytes report.html
inlines are made from it by :func:`figure_png` (from
:mod:`siting.presentation.figure_parts`, named here too), called by the output layer. No
pyplot state is used or left behind, and text from user files (site names, contour labels) is
drawn as plain text, never as mathtext. A habitat layer may hold thousands of sites: every site
is drawn (outlines as one line collection, points as one scatter), but only the
:data:`MAX_LABELLED_SITES` most affected are named
(:func:`siting.presentation.formats.most_affected_order`), and the figure then says so. No
physics lives here: every number plotted was computed elsewhere. The deposition classes, the
verdict colours and the number formats come from :mod:`siting.presentation.formats`."""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.errors import InputError
from siting.presentation.figure_parts import (
    MAX_LABELLED_SITES,
    figure_and_axes,
    figure_png,
    label_sites,
    labels_note,
)
from siting.presentation.formats import (
    VERDICT_COLOURS,
    deposition_class_colours,
    deposition_class_edges,
    format_number,
    is_missing,
    most_affected_order,
    verdict_classes,
)

if TYPE_CHECKING:  # imported for annotations only; the module does not need them at run time
    import geopandas as gpd
    import pandas as pd
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = [
    "MAX_LABELLED_SITES",
    "deposition_figure",
    "figure_and_axes",
    "figure_png",
    "pc_vs_distance_figure",
]

#: Above this many sites the deposition figure draws their outlines thin and half transparent,
#: or they would hide the grid they lie on. Our own choice.
_THIN_OUTLINES_ABOVE = 200

#: Above this many plotted sites the PC-distance legend goes beside the axes: matplotlib's
#: "best" placement tests every point against every candidate spot, slow for thousands, and
#: with that many points no spot inside is free anyway. Our own choice.
_LEGEND_INSIDE_MAX_POINTS = 50

#: Marker and fill of each source role in the deposition figure; our own choice.
_SOURCE_MARKERS = {
    "proposed": ("^", "#c2543a"),
    "existing": ("^", "#ffffff"),
    "removed": ("v", "#b0b0b0"),
    "other": ("s", "#ffffff"),
}

#: Size of each report figure drawn into a Figure of its own [inches].
_DEPOSITION_SIZE_IN = (7.5, 6.5)
_DISTANCE_SIZE_IN = (7.5, 4.8)


def _site_outlines(geometries: Any) -> list[np.ndarray]:
    """Boundary lines (exterior and interior rings) of every (multi)polygon, as (n, 2) arrays.

    Vectorised over the geometries with shapely 2, so thousands of sites cost milliseconds;
    None and empty geometries give nothing.
    """
    return _site_rings(geometries)[0]


def _site_rings(geometries: Any) -> tuple[list[np.ndarray], np.ndarray]:
    """The boundary lines of :func:`_site_outlines`, and for each the row of the geometry (the
    site) it outlines."""
    import shapely

    geoms = np.asarray(list(geometries), dtype=object)
    rows = np.arange(geoms.size)
    if geoms.size == 0:
        return [], rows
    keep = ~shapely.is_missing(geoms)
    keep[keep] = ~shapely.is_empty(geoms[keep])
    geoms, rows = geoms[keep], rows[keep]
    if geoms.size == 0:
        return [], rows
    # a hole or a part is a line of its own
    lines, owner = shapely.get_parts(shapely.boundary(geoms), return_index=True)
    drawn = ~shapely.is_empty(lines)
    lines, owner = lines[drawn], rows[owner[drawn]]
    coords, index = shapely.get_coordinates(lines, return_index=True)
    if not len(coords):
        return [], np.zeros(0, dtype=int)
    starts = np.flatnonzero(np.diff(index)) + 1
    parts = np.split(coords, starts)
    line_of_part = index[np.concatenate([[0], starts])]
    kept = [i for i, part in enumerate(parts) if len(part) > 1]
    return [parts[i] for i in kept], owner[line_of_part[kept]]


def deposition_figure(
    deposition_kg_n_ha_yr: np.ndarray,
    *,
    west_m: float,
    north_m: float,
    cell_m: float,
    sites: gpd.GeoDataFrame | None = None,
    sources: gpd.GeoDataFrame | None = None,
    contours: Sequence[tuple[float, str]] = (),
    crs_label: str = "",
    ax: Axes | None = None,
) -> Figure:
    """The deposition grid in log classes, with site outlines, sources and contours.

    Parameters
    ----------
    deposition_kg_n_ha_yr : ndarray, shape (n_rows, n_cols)
        Deposition [kg N ha-1 yr-1]; row 0 is the north edge; NaN = no data (not coloured).
    west_m, north_m : float
        West and north edges of the grid in the projected CRS [m].
    cell_m : float
        Cell size [m], > 0.
    sites : GeoDataFrame, optional
        Habitat sites in the same projected CRS as the grid; outlines drawn and labelled with
        the ``name`` column when present.
    sources : GeoDataFrame, optional
        Sources in the same CRS; drawn as markers at their representative points, one marker
        style per ``role`` (proposed, existing, removed, other) when that column is present.
    contours : sequence of (float, str), optional
        Contour levels [kg N ha-1 yr-1] and their labels.
    crs_label : str, optional
        Shown in the axis labels, e.g. ``"EPSG:32632"``.
    ax : matplotlib Axes, optional
        Draw into this Axes (its colour bar takes room beside it in its figure); by default
        into a new Figure of its own.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure drawn in.

    Raises
    ------
    InputError
        If the grid is not 2-D or cell_m <= 0.

    Notes
    -----
    Drawn in steps, in this order (the order is part of the look): the classes layer and its
    colour bar (:func:`_draw_deposition_classes`), the contours (:func:`_draw_contours`), the
    site outlines (:func:`_draw_site_outlines`), the sources and the legend
    (:func:`_draw_sources`, :func:`_map_legend`), the axes (:func:`_style_map_axes`) and last
    the site names (:func:`_name_sites_on_map`), measured against the final axes.
    """
    grid = np.asarray(deposition_kg_n_ha_yr, dtype=float)
    if grid.ndim != 2:
        raise InputError(f"deposition figure: grid must be 2-D, got shape {grid.shape}")
    if not cell_m > 0:
        raise InputError(f"deposition figure: cell_m must be > 0, got {cell_m}")
    n_rows, n_cols = grid.shape
    extent_m = (west_m, west_m + n_cols * cell_m, north_m - n_rows * cell_m, north_m)

    fig, ax = figure_and_axes(ax, figsize=_DEPOSITION_SIZE_IN)
    _draw_deposition_classes(ax, grid, extent_m)
    _draw_contours(ax, grid, contours, west_m=west_m, north_m=north_m, cell_m=cell_m)
    has_sites = sites is not None and len(sites) > 0
    if has_sites:
        _draw_site_outlines(ax, sites)
    if sources is not None and len(sources):
        _draw_sources(ax, sources)
    _map_legend(ax)
    _style_map_axes(ax, extent_m, crs_label)
    if has_sites and "name" in sites:
        _name_sites_on_map(ax, sites)
    return fig


def _draw_deposition_classes(
    ax: Any, grid: np.ndarray, extent_m: tuple[float, float, float, float]
) -> None:
    """Draw the grid in the deposition classes, with a colour bar ticked at the class edges.

    Parameters
    ----------
    ax : matplotlib Axes
        The map axes; the colour bar is added beside it in its figure.
    grid : ndarray, shape (n_rows, n_cols)
        Deposition [kg N ha-1 yr-1], row 0 north; NaN cells are left uncoloured, as are cells
        below the lowest class edge; cells above the highest take the top class colour.
    extent_m : (west, east, south, north)
        Edges of the grid in the projected CRS [m].
    """
    from matplotlib.colors import BoundaryNorm, ListedColormap

    edges = deposition_class_edges(grid)
    colours = deposition_class_colours(edges.size - 1)
    cmap = ListedColormap(colours).with_extremes(
        under=(0, 0, 0, 0), over=colours[-1], bad=(0, 0, 0, 0)
    )
    image = ax.imshow(
        np.ma.masked_invalid(grid),
        cmap=cmap,
        norm=BoundaryNorm(edges, cmap.N),
        extent=extent_m,
        origin="upper",
        interpolation="nearest",
    )
    colourbar = ax.get_figure().colorbar(image, ax=ax, extend="neither", shrink=0.85)
    colourbar.set_ticks(edges)
    colourbar.set_ticklabels([format_number(e) for e in edges])
    colourbar.set_label("Deposition, PC [kg N/ha/yr]")


def _draw_contours(
    ax: Any,
    grid: np.ndarray,
    contours: Sequence[tuple[float, str]],
    *,
    west_m: float,
    north_m: float,
    cell_m: float,
) -> None:
    """Draw the contour levels that fall inside the grid's range, dashed, with their labels.

    Parameters
    ----------
    ax : matplotlib Axes
        The map axes.
    grid : ndarray, shape (n_rows, n_cols)
        Deposition [kg N ha-1 yr-1], row 0 north; NaN cells are ignored.
    contours : sequence of (float, str)
        Levels [kg N ha-1 yr-1] and their labels; a level not strictly between the grid's
        minimum and maximum is not drawn. Labels are plain text (user labels may hold "$").
    west_m, north_m, cell_m : float
        Grid edges and cell size [m]; contours are traced through the cell centres.
    """
    if not contours or not np.isfinite(grid).any():
        return
    n_rows, n_cols = grid.shape
    x_m = west_m + (np.arange(n_cols) + 0.5) * cell_m
    y_m = north_m - (np.arange(n_rows) + 0.5) * cell_m
    vmin, vmax = float(np.nanmin(grid)), float(np.nanmax(grid))
    inside = sorted({float(v) for v, _ in contours if vmin < float(v) < vmax})
    if not inside:
        return
    contour_set = ax.contour(
        x_m,
        y_m,
        np.ma.masked_invalid(grid),
        levels=inside,
        colors="#202020",
        linewidths=1.0,
        linestyles="--",
    )
    labels = {float(v): str(text) for v, text in contours}
    label_texts = ax.clabel(
        contour_set, fmt={v: labels.get(v, format_number(v)) for v in inside}, fontsize=7
    )
    for text in label_texts:
        text.set_parse_math(False)  # user labels may contain "$"


#: How each class of verdict outlines its sites in the deposition figure: line style and width
#: (the colour is VERDICT_COLOURS'). Solid for a site that does not pass, dashed for one that
#: passes, dotted for one not assessed, so a grey print still tells them apart; our own choice.
_OUTLINE_STYLES = {
    "does not pass": ("solid", 1.5),
    "passes": ((0, (4.0, 2.0)), 1.3),
    "not assessed": ((0, (1.0, 1.5)), 1.1),
}

#: Words of each class of verdict in the deposition figure's legend.
_OUTLINE_LEGEND = {
    "does not pass": "site that does not pass",
    "passes": "site that passes",
    "not assessed": "site not assessed",
}


def _outline_legend_label(kind: str, words: list[str]) -> str:
    """A legend entry: the class of verdict, and the rule set's own words for it when they
    differ (``site that does not pass (above threshold)``)."""
    own = [w for w in dict.fromkeys(words) if w and w != kind][:2]
    return f"{_OUTLINE_LEGEND[kind]} ({', '.join(own)})" if own else _OUTLINE_LEGEND[kind]


def _draw_site_outlines(ax: Any, sites: gpd.GeoDataFrame) -> None:
    """Draw every site's outline as one line collection, coloured and dashed by its verdict,
    with a legend entry per class of verdict drawn.

    Each site takes the colour of its class of verdict (:data:`VERDICT_COLOURS`: passes, does
    not pass, not assessed; :func:`verdict_classes`) and the line style of
    :data:`_OUTLINE_STYLES`, over a thin white halo that keeps it visible on the dark
    classes. Above :data:`_THIN_OUTLINES_ABOVE` sites the outlines are thin, half transparent
    and without halo, so the deposition shows between them; the legend keeps the full line.
    """
    from matplotlib.collections import LineCollection
    from matplotlib.patheffects import withStroke

    kinds = verdict_classes(sites)
    outlines, owner = _site_rings(sites.geometry)
    many = len(sites) > _THIN_OUTLINES_ABOVE
    if outlines:
        ring_kinds = [kinds[i] for i in owner]
        styles = [_OUTLINE_STYLES.get(k, _OUTLINE_STYLES["not assessed"]) for k in ring_kinds]
        widths = [0.4 if many else width for _, width in styles]
        collection = LineCollection(
            outlines,
            colors=[VERDICT_COLOURS.get(k, VERDICT_COLOURS["not assessed"]) for k in ring_kinds],
            linestyles=[style for style, _ in styles],
            linewidths=widths,
            alpha=0.6 if many else 1.0,
        )
        if not many:
            collection.set_path_effects(
                [withStroke(linewidth=max(widths) + 2.0, foreground="#ffffff", alpha=0.85)]
            )
        ax.add_collection(collection)
    words = [str(v) if not is_missing(v) else "" for v in sites.get("verdict", [""] * len(sites))]
    for kind in _OUTLINE_STYLES:  # the legend: each class drawn, worst first
        if kind in kinds:
            style, width = _OUTLINE_STYLES[kind]
            label = _outline_legend_label(kind, [w for w, k in zip(words, kinds) if k == kind])
            ax.plot([], [], color=VERDICT_COLOURS[kind], linestyle=style, linewidth=width,
                    label=label)  # fmt: skip


def _source_roles(sources: gpd.GeoDataFrame) -> list[str]:
    """Each source's role, stripped and lower case; "" when missing or without a role column."""
    if "role" not in sources:
        return [""] * len(sources)
    return [str(r).strip().lower() if not is_missing(r) else "" for r in sources["role"]]


def _draw_sources(ax: Any, sources: gpd.GeoDataFrame) -> None:
    """Draw the sources at their representative points, one marker style per role.

    Roles are drawn in first-seen order, each with its legend entry ("proposed source", ...,
    or "source" without a role); the marker and fill come from :data:`_SOURCE_MARKERS`, an
    unknown role drawn as an open triangle. Missing and empty geometries are skipped.
    """
    roles = _source_roles(sources)
    for role in dict.fromkeys(roles):  # first-seen order
        marker, face = _SOURCE_MARKERS.get(role, ("^", "#ffffff"))
        points = [
            g.representative_point()
            for g, r in zip(sources.geometry, roles)
            if r == role and g is not None and not g.is_empty
        ]
        if points:
            ax.plot(
                [p.x for p in points],
                [p.y for p in points],
                linestyle="none",
                marker=marker,
                markersize=7,
                markerfacecolor=face,
                markeredgecolor="#000000",
                label=f"{role} source" if role else "source",
            )


def _map_legend(ax: Any) -> None:
    """Add the map's legend at the lower left, when anything drawn has a legend entry."""
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=7, loc="lower left", framealpha=0.85)


def _style_map_axes(ax: Any, extent_m: tuple[float, float, float, float], crs_label: str) -> None:
    """Set the map's limits to the grid, equal aspect, axis labels with the CRS, and title.

    Parameters
    ----------
    ax : matplotlib Axes
        The map axes.
    extent_m : (west, east, south, north)
        Edges of the grid in the projected CRS [m]; the axes show exactly the grid.
    crs_label : str
        Added to both axis labels in brackets when not empty.
    """
    west_m, east_m, south_m, north_m = extent_m
    ax.set_xlim(west_m, east_m)
    ax.set_ylim(south_m, north_m)
    ax.set_aspect("equal")
    suffix = f" ({crs_label})" if crs_label else ""
    ax.set_xlabel(f"Easting [m]{suffix}")
    ax.set_ylabel(f"Northing [m]{suffix}")
    ax.set_title("Process contribution: nitrogen deposition", fontsize=10)
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.tick_params(labelsize=7)


def _name_sites_on_map(ax: Any, sites: gpd.GeoDataFrame) -> None:
    """Name the most affected sites at a point inside each (:func:`_label_sites`), with the
    note when some names are left out."""
    import shapely

    geoms = np.asarray(list(sites.geometry), dtype=object)
    drawable = ~shapely.is_missing(geoms)
    drawable[drawable] = ~shapely.is_empty(geoms[drawable])
    named = drawable & np.array([not is_missing(n) for n in sites["name"]], dtype=bool)
    order = np.array([i for i in most_affected_order(sites) if named[i]], dtype=int)
    if not order.size:
        return
    inside = shapely.point_on_surface(geoms[order[: 10 * MAX_LABELLED_SITES]])
    xy = shapely.get_coordinates(inside)
    names = sites["name"].to_numpy(dtype=object)[order[: len(xy)]]
    if label_sites(ax, xy, names, fontsize=7, ha="center", color="#3a0d05"):
        labels_note(ax, len(sites))


def pc_vs_distance_figure(sites: pd.DataFrame, *, ax: Axes | None = None) -> Figure:
    """Each site's maximum PC deposition against its distance from the sources.

    Parameters
    ----------
    sites : DataFrame
        One row per site with columns ``name``, ``distance_m`` (distance from the nearest
        assessed source [m]) and ``pc_dep_max_kg_n_ha_yr`` [kg N ha-1 yr-1]. When
        ``threshold_percent`` and ``critical_load_used_kg_n_ha_yr`` are present each site's
        screening threshold (threshold % of its critical load) is marked with a bar, and
        ``verdict`` colours the points. Rows without a positive deposition are left out (log y).
    ax : matplotlib Axes, optional
        Draw into this Axes; by default into a new Figure of its own.

    Returns
    -------
    fig : matplotlib.figure.Figure
        The figure drawn in.

    Raises
    ------
    InputError
        If a required column is missing.

    Notes
    -----
    Drawn in steps, in this order: the verdict scatter (:func:`_draw_verdict_points`), the
    threshold marks (:func:`_draw_threshold_marks`), the legend (:func:`_verdict_legend`),
    the log axes (:func:`_style_distance_axes`) and last the site names
    (:func:`_name_sites_by_distance`), measured against the final limits.
    """
    missing = [c for c in ("name", "distance_m", "pc_dep_max_kg_n_ha_yr") if c not in sites]
    if missing:
        raise InputError(f"PC-distance figure: sites table lacks column(s) {', '.join(missing)}")
    distance_m = np.asarray(sites["distance_m"], dtype=float)
    dep_kg_n_ha_yr = np.asarray(sites["pc_dep_max_kg_n_ha_yr"], dtype=float)
    keep = np.isfinite(distance_m) & np.isfinite(dep_kg_n_ha_yr) & (dep_kg_n_ha_yr > 0)

    fig, ax = figure_and_axes(ax, figsize=_DISTANCE_SIZE_IN)
    if not keep.any():
        _say_nothing_to_plot(ax)
        return fig
    idx = np.flatnonzero(keep)
    many = idx.size > _LEGEND_INSIDE_MAX_POINTS
    verdicts = verdict_classes(sites) if "verdict" in sites else [None] * len(sites)
    _draw_verdict_points(ax, distance_m[idx], dep_kg_n_ha_yr[idx], [verdicts[i] for i in idx], many)
    _draw_threshold_marks(ax, sites, distance_m, idx)
    _verdict_legend(ax, verdicts, many)
    _style_distance_axes(ax)
    _name_sites_by_distance(ax, sites, keep, distance_m, dep_kg_n_ha_yr)
    return fig


def _say_nothing_to_plot(ax: Any) -> None:
    """Replace the axes with a centred note that no site has a positive deposition."""
    ax.text(
        0.5,
        0.5,
        "No site with a positive deposition to plot.",
        ha="center",
        va="center",
        transform=ax.transAxes,
    )
    ax.set_axis_off()


def _draw_verdict_points(
    ax: Any,
    distance_m: np.ndarray,
    dep_kg_n_ha_yr: np.ndarray,
    verdicts: Sequence[Any],
    many: bool,
) -> None:
    """Draw one point per plotted site, filled with its verdict's colour.

    Parameters
    ----------
    ax : matplotlib Axes
        The PC-distance axes.
    distance_m : ndarray, shape (n,)
        Distance of each plotted site from the nearest source [m].
    dep_kg_n_ha_yr : ndarray, shape (n,)
        Its maximum PC deposition [kg N ha-1 yr-1], > 0.
    verdicts : sequence, length n
        Its class of verdict (a key of ``VERDICT_COLOURS``); another (or None) takes the
        "not assessed" colour.
    many : bool
        More than :data:`_LEGEND_INSIDE_MAX_POINTS` sites: smaller points with thinner edges,
        so fewer hide each other.
    """
    ax.scatter(
        distance_m,
        dep_kg_n_ha_yr,
        c=[VERDICT_COLOURS.get(str(v), VERDICT_COLOURS["not assessed"]) for v in verdicts],
        s=16 if many else 36,
        zorder=3,
        edgecolors="#000000",
        linewidths=0.3 if many else 0.5,
    )


def _draw_threshold_marks(
    ax: Any, sites: pd.DataFrame, distance_m: np.ndarray, idx: np.ndarray
) -> None:
    """Mark each plotted site's screening threshold with a short bar at its distance.

    Parameters
    ----------
    ax : matplotlib Axes
        The PC-distance axes.
    sites : DataFrame
        The sites table; nothing is drawn without both ``threshold_percent`` [%] and
        ``critical_load_used_kg_n_ha_yr`` [kg N ha-1 yr-1]. The threshold is their product
        over 100 [kg N ha-1 yr-1]; a site without a positive, finite one gets no mark.
    distance_m : ndarray, shape (n_sites,)
        Distance of every site from the nearest source [m].
    idx : ndarray of int
        Rows of the plotted sites.
    """
    if not {"threshold_percent", "critical_load_used_kg_n_ha_yr"} <= set(sites.columns):
        return
    threshold_kg_n_ha_yr = (
        np.asarray(sites["threshold_percent"], dtype=float)
        / 100.0
        * np.asarray(sites["critical_load_used_kg_n_ha_yr"], dtype=float)
    )
    marks = idx[np.isfinite(threshold_kg_n_ha_yr[idx]) & (threshold_kg_n_ha_yr[idx] > 0)]
    if marks.size:
        ax.scatter(
            distance_m[marks],
            threshold_kg_n_ha_yr[marks],
            marker="_",
            s=220,
            color="#000000",
            linewidths=1.5,
            zorder=2,
            label="screening threshold of the site",
        )


def _verdict_legend(ax: Any, verdicts: Sequence[Any], many: bool) -> None:
    """Add a legend entry per known verdict of the table (first-seen order), then the legend.

    The verdicts are those of every row of the table, plotted or not. With ``many``
    points the legend goes beside the axes (:data:`_LEGEND_INSIDE_MAX_POINTS`), else at
    matplotlib's "best" spot inside.
    """
    for verdict in dict.fromkeys(str(v) for v in verdicts if str(v) in VERDICT_COLOURS):
        ax.scatter([], [], c=VERDICT_COLOURS[verdict], s=36, edgecolors="#000000",
                   linewidths=0.5, label=verdict)  # fmt: skip
    if not ax.get_legend_handles_labels()[0]:
        return
    if many:
        ax.legend(fontsize=8, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    else:
        ax.legend(fontsize=8, loc="best")


def _style_distance_axes(ax: Any) -> None:
    """Log deposition axis with plain-number ticks (minor at 2 and 5), labels, title, grid."""
    from matplotlib.ticker import FuncFormatter, LogLocator

    ax.set_yscale("log")
    plain = FuncFormatter(lambda value, _: format_number(value))
    ax.yaxis.set_major_formatter(plain)
    ax.yaxis.set_minor_locator(LogLocator(base=10.0, subs=(2.0, 5.0)))
    ax.yaxis.set_minor_formatter(plain)
    ax.tick_params(axis="y", which="minor", labelsize=7)
    ax.set_xlabel("Distance from the nearest source [m]")
    ax.set_ylabel("PC max deposition [kg N/ha/yr]")
    ax.set_title("Process contribution at each site by distance", fontsize=10)
    ax.grid(True, which="both", linewidth=0.4, alpha=0.5)


def _name_sites_by_distance(
    ax: Any,
    sites: pd.DataFrame,
    keep: np.ndarray,
    distance_m: np.ndarray,
    dep_kg_n_ha_yr: np.ndarray,
) -> None:
    """Name the most affected plotted sites beside their points (:func:`_label_sites`), with
    the note when some names are left out.

    Parameters
    ----------
    ax : matplotlib Axes
        The PC-distance axes, fully styled; its limits are settled here before the name boxes
        are measured.
    sites : DataFrame
        The sites table (``name`` column; ranked by :func:`most_affected_order`).
    keep : ndarray of bool, shape (n_sites,)
        The plotted sites; only those with a name are named.
    distance_m, dep_kg_n_ha_yr : ndarray, shape (n_sites,)
        Each site's point [m] and [kg N ha-1 yr-1].
    """
    names = sites["name"].to_numpy(dtype=object)
    nameable = keep & np.array([not is_missing(n) for n in names], dtype=bool)
    order = np.array([i for i in most_affected_order(sites) if nameable[i]], dtype=int)
    ax.autoscale_view()  # final limits before the name boxes are measured
    if order.size and label_sites(
        ax,
        np.column_stack([distance_m[order], dep_kg_n_ha_yr[order]]),
        names[order],
        textcoords="offset points",
        xytext=(5, 4),
        fontsize=7,
    ):
        labels_note(ax, int(keep.sum()))
