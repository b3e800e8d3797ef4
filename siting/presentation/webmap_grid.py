"""The computed grid on the web maps: the coloured image, its contour lines and its edge.

The grid (deposition on the screening and regional maps, the worst share of a threshold on the
placement map) is reprojected to Web Mercator and coloured in classes into a PNG data URL,
shown as an image overlay that needs no tile server. Contour lines, each level in a style of
its own (:data:`CONTOUR_STYLES`: colour, weight and dash pattern, over a white casing) with its
value written on the line, and a dotted outline of the grid's edge (so the edge is not read as
the edge of the plume) are drawn as polylines. Used by :mod:`siting.presentation.webmap`,
:mod:`siting.presentation.webmap_place` and :mod:`siting.presentation.webmap_region`; no
physics.
"""

from __future__ import annotations

import base64
import io
import warnings
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.errors import InputError
from siting.presentation.formats import format_number
from siting.presentation.webmap_labels import add_labels
from siting.presentation.webmap_text import escape_text

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

__all__ = [
    "CONTOUR_CLASS",
    "CONTOUR_STYLES",
    "GRID_EDGE_CLASS",
    "GRID_EDGE_LAYER",
    "GRID_EDGE_TIP",
    "OVERLAY_CLASS",
    "OVERLAY_OPACITY",
    "SEARCH_EDGE_TIP",
    "add_contours",
    "add_extent_outline",
    "add_surface",
    "check_grid",
    "contour_legend_rows",
    "contour_style",
    "contour_text",
    "extent_legend_row",
    "overlay",
    "to_wgs84",
]

#: Opacity of the grid's image overlay [0-1].
OVERLAY_OPACITY = 0.7

#: CSS class of the overlay <img>: a stable hook for the browser tests (tests/test_browser.py)
#: and for anyone restyling the page; keep it when refactoring.
OVERLAY_CLASS = "siting-deposition"

#: CSS class on every contour line's SVG path (each also gets ``<CONTOUR_CLASS>-<i>``, i its
#: style): a stable hook for the browser tests (tests/test_browser.py); keep it.
CONTOUR_CLASS = "siting-contour"

#: Styles of the contour levels, lowest level first: colour, weight [px] and SVG dash pattern
#: (None: solid) differ from one to the next, so each line reads apart in colour and in grey.
#: Each line lies over a white casing 3 px wider. Our own choice; more levels than styles
#: reuse them in order.
CONTOUR_STYLES: tuple[dict[str, Any], ...] = (
    {"color": "#111111", "weight": 3.0, "dash_array": None},
    {"color": "#b0006d", "weight": 3.0, "dash_array": "10 6"},
    {"color": "#0b5d7a", "weight": 3.5, "dash_array": "1 6"},
    {"color": "#d35400", "weight": 2.5, "dash_array": "14 5 3 5"},
    {"color": "#4a148c", "weight": 2.0, "dash_array": "5 3"},
    {"color": "#6d4c1f", "weight": 4.0, "dash_array": "3 8"},
)
#: Bearings [deg clockwise from north] between which the contours' value labels are spread,
#: one level a bearing: east to south-south-east, clear of the title block (top left), the
#: layer list (top right) and the legend (bottom left). Our own choice.
_LABEL_BEARINGS_DEG = (100.0, 165.0)

_EXTENT_COLOUR = "#555555"
#: Layer-control name and CSS class of the grid's outline.
GRID_EDGE_LAYER = "Grid edge"
GRID_EDGE_CLASS = "siting-grid-edge"
#: Tooltips of the outline on the screening map and on the placement map.
GRID_EDGE_TIP = "Edge of the computed grid: nothing was computed outside it"
SEARCH_EDGE_TIP = "Edge of the searched area"


def check_grid(values: np.ndarray, cell_m: float, crs: str) -> tuple:
    """Validate the grid inputs; return (float grid, pyproj CRS)."""
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    grid = np.asarray(values, dtype=float)
    if grid.ndim != 2 or grid.shape[0] < 1 or grid.shape[1] < 1:
        raise InputError(f"map: deposition grid must be a non-empty 2-D array, got {grid.shape}")
    if not (np.isfinite(cell_m) and cell_m > 0):
        raise InputError(f"map: cell_m must be > 0, got {cell_m}")
    try:
        projected = CRS.from_user_input(crs)
    except CRSError as exc:
        raise InputError(f"map: crs {crs!r} is not a CRS pyproj knows ({exc})") from exc
    if not projected.is_projected:
        raise InputError(f"map: crs must be projected in metres, got {crs!r}")
    return grid, projected


def _to_mercator(
    grid: np.ndarray, projected: Any, west_m: float, north_m: float, cell_m: float
) -> tuple[np.ndarray, Any]:
    """The grid reprojected to EPSG:3857 (nearest neighbour, NaN = no data) and its transform."""
    from rasterio.enums import Resampling
    from rasterio.transform import Affine
    from rasterio.warp import calculate_default_transform, reproject

    n_rows, n_cols = grid.shape
    src_transform = Affine(cell_m, 0.0, west_m, 0.0, -cell_m, north_m)  # row 0 = north edge
    with warnings.catch_warnings():
        # rasterio's own from_bounds uses Affine "*", which newer affine flags as pending
        # deprecation; nothing for us to change.
        warnings.simplefilter("ignore", PendingDeprecationWarning)
        dst_transform, dst_cols, dst_rows = calculate_default_transform(
            projected,
            "EPSG:3857",
            n_cols,
            n_rows,
            left=west_m,
            bottom=north_m - n_rows * cell_m,
            right=west_m + n_cols * cell_m,
            top=north_m,
        )
    mercator = np.full((dst_rows, dst_cols), np.nan, dtype=np.float64)
    reproject(
        source=grid,
        destination=mercator,
        src_transform=src_transform,
        src_crs=projected,
        src_nodata=np.nan,
        dst_transform=dst_transform,
        dst_crs="EPSG:3857",
        dst_nodata=np.nan,
        resampling=Resampling.nearest,
    )
    return mercator, dst_transform


def _class_png(
    values: np.ndarray, edges: np.ndarray, colours: list[str], infinite_colour: str | None = None
) -> str:
    """PNG data URL of ``values`` coloured by class; NaN and values below the first edge are
    transparent, and so is +inf unless ``infinite_colour`` is given."""
    from matplotlib.colors import to_rgba
    from matplotlib.image import imsave

    rgba = np.zeros((*values.shape, 4), dtype=np.uint8)
    with np.errstate(invalid="ignore"):
        shown = np.isfinite(values) & (values >= edges[0])
    classes = np.clip(
        np.digitize(np.where(shown, values, edges[0]), edges) - 1, 0, len(colours) - 1
    )
    palette = (np.array([to_rgba(c) for c in colours]) * 255).round().astype(np.uint8)
    rgba[shown] = palette[classes[shown]]
    rgba[~shown, 3] = 0
    if infinite_colour is not None:
        rgba[np.isposinf(values)] = (np.array(to_rgba(infinite_colour)) * 255).round()
    buffer = io.BytesIO()
    imsave(buffer, rgba, format="png")
    return "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")


def overlay(
    grid: np.ndarray,
    projected: Any,
    west_m: float,
    north_m: float,
    cell_m: float,
    edges: np.ndarray,
    colours: list[str],
    infinite_colour: str | None = None,
) -> tuple[str, list[list[float]]]:
    """Reproject the grid to EPSG:3857, colour it by class; PNG data URL and lat/lon bounds.

    The nearest-neighbour resampling keeps a value of the grid in each coloured pixel. Bounds
    are ``[[lat_s, lon_w], [lat_n, lon_e]]`` of the reprojected image. Cells of +inf take
    ``infinite_colour`` when given (else they are transparent, like NaN).
    """
    from pyproj import Transformer

    mercator, transform = _to_mercator(grid, projected, west_m, north_m, cell_m)
    data_url = _class_png(mercator, edges, colours, infinite_colour)
    dst_rows, dst_cols = mercator.shape
    left, top = transform.c, transform.f
    right = left + dst_cols * transform.a
    bottom = top + dst_rows * transform.e
    to_lonlat = Transformer.from_crs("EPSG:3857", "EPSG:4326", always_xy=True)
    lon_w, lat_s = to_lonlat.transform(left, bottom)
    lon_e, lat_n = to_lonlat.transform(right, top)
    return data_url, [[lat_s, lon_w], [lat_n, lon_e]]


def contour_lines(
    grid: np.ndarray,
    west_m: float,
    north_m: float,
    cell_m: float,
    level_kg_n_ha_yr: float,
) -> list[np.ndarray]:
    """Contour lines of the grid at one level: the map's lines, and results.gpkg's.

    Parameters
    ----------
    grid : ndarray, shape (rows, columns)
        Deposition at the cell centres, north row first [kg N ha-1 yr-1].
    west_m, north_m : float
        The grid's west and north edges, projected [m].
    cell_m : float
        Cell size [m].
    level_kg_n_ha_yr : float
        The level traced [kg N ha-1 yr-1]; no line for a level that is not finite.

    Returns
    -------
    list of ndarray
        Each line as an (n, 2) array of projected x, y [m], traced by contourpy through the
        cell centres (linear between them).
    """
    import contourpy

    n_rows, n_cols = grid.shape
    if n_rows < 2 or n_cols < 2 or not np.isfinite(level_kg_n_ha_yr):
        return []
    x_m = west_m + (np.arange(n_cols) + 0.5) * cell_m
    y_m = north_m - (np.arange(n_rows) + 0.5) * cell_m
    # contourpy wants monotonic increasing coordinates: flip rows so y runs south to north.
    generator = contourpy.contour_generator(
        x_m,
        y_m[::-1],
        np.ma.masked_invalid(grid[::-1, :]),
        line_type=contourpy.LineType.Separate,
    )
    return [np.asarray(line) for line in generator.lines(float(level_kg_n_ha_yr)) if len(line) > 1]


def to_wgs84(frame: gpd.GeoDataFrame, crs: Any) -> gpd.GeoDataFrame:
    """The frame in EPSG:4326; a frame without CRS is taken to be in the scenario CRS."""
    if frame.crs is None:
        frame = frame.set_crs(crs)
    return frame.to_crs("EPSG:4326")


def add_surface(
    fmap: folium.Map, data_url: str, bounds: list[list[float]], name: str, show: bool = True
) -> None:
    """The coloured grid from :func:`overlay` as an image overlay named ``name`` (escaped),
    shown when the page opens unless ``show`` is False (then ticked on in the layer list)."""
    import folium

    folium.raster_layers.ImageOverlay(
        image=data_url,
        bounds=bounds,
        name=escape_text(name),
        opacity=OVERLAY_OPACITY,
        interactive=False,
        overlay=True,
        control=True,
        show=show,
        pixelated=True,
        class_name=OVERLAY_CLASS,
    ).add_to(fmap)


def contour_style(index: int) -> dict[str, Any]:
    """The style of the ``index``-th contour level (lowest first) from :data:`CONTOUR_STYLES`."""
    return CONTOUR_STYLES[index % len(CONTOUR_STYLES)]


#: Most places offered for one contour's value label (the page script takes the first that is
#: on screen and clear of the boxes). Our own choice: enough to follow a ring, few bytes.
_LABEL_CANDIDATES = 160


def _label_candidates(lines: list[np.ndarray], index: int, n_levels: int) -> np.ndarray:
    """Places for the value label of a level, best first: vertices of its lines ordered by how
    far out they lie along the level's own bearing (levels spread over
    :data:`_LABEL_BEARINGS_DEG`, so nested rings carry their labels apart); at most
    :data:`_LABEL_CANDIDATES`, spread along the lines. Shape (n, 2), projected x, y [m]."""
    if not lines:
        return np.zeros((0, 2))
    every = np.concatenate(lines)
    vertices = every[:: max(1, int(np.ceil(len(every) / _LABEL_CANDIDATES)))]
    low, high = _LABEL_BEARINGS_DEG
    bearing = np.radians(low + (high - low) * (index / (n_levels - 1) if n_levels > 1 else 0.5))
    along = (vertices - every.mean(axis=0)) @ np.array([np.sin(bearing), np.cos(bearing)])
    return vertices[np.argsort(-along, kind="stable")]


def contour_text(level: float, label: str) -> str:
    """The value label of a contour line, escaped: "<label>: <level> kg N/ha/yr"."""
    return f"{escape_text(label)}: {escape_text(format_number(level))} kg N/ha/yr"


def add_contours(
    group: folium.FeatureGroup,
    grid: np.ndarray,
    projected: Any,
    west_m: float,
    north_m: float,
    cell_m: float,
    contours: Sequence[tuple[float, str]],
) -> None:
    """The grid's lines at each level [kg N ha-1 yr-1] into ``group``: level ``i`` (in the
    order given, lowest first) in :func:`contour_style` ``i`` over a white casing, its label
    (escaped) as tooltip and, on the line, its value as a permanent label that the page
    script moves along the line to where it is on screen (:func:`_label_candidates`)."""
    import folium
    from pyproj import Transformer

    to_lonlat = Transformer.from_crs(projected, "EPSG:4326", always_xy=True)
    labels = []
    for index, (level, label) in enumerate(contours):
        style = contour_style(index)
        lines = contour_lines(grid, west_m, north_m, cell_m, float(level))
        text = contour_text(level, label)
        for line in lines:
            lon, lat = to_lonlat.transform(line[:, 0], line[:, 1])
            locations = np.column_stack([lat, lon]).tolist()
            folium.PolyLine(
                locations=locations,
                color="#ffffff",
                weight=style["weight"] + 3.0,
                opacity=0.85,
                interactive=False,
                class_name=f"{CONTOUR_CLASS}-casing",
            ).add_to(group)
            folium.PolyLine(
                locations=locations,
                color=style["color"],
                weight=style["weight"],
                opacity=1.0,
                dash_array=style["dash_array"],
                class_name=f"{CONTOUR_CLASS} {CONTOUR_CLASS}-{index % len(CONTOUR_STYLES)}",
                tooltip=folium.Tooltip(text),
            ).add_to(group)
        places = _label_candidates(lines, index, len(contours))
        if len(places):
            lon, lat = to_lonlat.transform(places[:, 0], places[:, 1])
            others = np.round(np.column_stack([lat, lon]), 6).tolist()
            css = f"{CONTOUR_CLASS}-label-{index % len(CONTOUR_STYLES)}"
            labels.append([lat[0], lon[0], text, css, others])
    add_labels(group, "contour", labels)


def contour_legend_rows(contours: Sequence[tuple[float, str]]) -> list[str]:
    """Legend rows of the contour levels, each a short line drawn in its own style (an inline
    SVG with the line's colour, weight and dash pattern) with its label (escaped)."""
    rows = []
    for index, (level, label) in enumerate(contours):
        style = contour_style(index)
        dash = f' stroke-dasharray="{style["dash_array"]}"' if style["dash_array"] else ""
        rows.append(
            '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
            f'<line x1="2" y1="6" x2="32" y2="6" stroke="#ffffff" '
            f'stroke-width="{style["weight"] + 3.0:g}" stroke-linecap="round"/>'
            f'<line x1="2" y1="6" x2="32" y2="6" stroke="{style["color"]}" '
            f'stroke-width="{style["weight"]:g}" stroke-linecap="round"{dash}/></svg>'
            f"{contour_text(level, label)}</div>"
        )
    return rows


def extent_legend_row(label: str = "edge of the computed grid") -> str:
    """Legend row of the grid's dotted outline (label escaped), drawn as on the map."""
    return (
        '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
        f'<line x1="2" y1="6" x2="32" y2="6" stroke="{_EXTENT_COLOUR}" stroke-width="2" '
        f'stroke-dasharray="2 5" stroke-linecap="round"/></svg>{escape_text(label)}</div>'
    )


def add_extent_outline(
    fmap: folium.Map,
    projected: Any,
    west_m: float,
    north_m: float,
    cell_m: float,
    shape: tuple[int, int],
    tooltip: str,
) -> None:
    """A dotted outline of the grid, so its edge is not read as the edge of the plume."""
    import folium
    from pyproj import Transformer

    n_rows, n_cols = shape
    east_m, south_m = west_m + n_cols * cell_m, north_m - n_rows * cell_m
    xs = np.array([west_m, east_m, east_m, west_m, west_m])
    ys = np.array([north_m, north_m, south_m, south_m, north_m])
    # densify so the outline follows the projection's curvature
    t = np.linspace(0.0, 1.0, 25)[:-1]
    dx = np.concatenate([xs[i] + (xs[i + 1] - xs[i]) * t for i in range(4)] + [xs[-1:]])
    dy = np.concatenate([ys[i] + (ys[i + 1] - ys[i]) * t for i in range(4)] + [ys[-1:]])
    lon, lat = Transformer.from_crs(projected, "EPSG:4326", always_xy=True).transform(dx, dy)
    group = folium.FeatureGroup(name=escape_text(GRID_EDGE_LAYER), overlay=True)
    folium.PolyLine(
        locations=np.column_stack([lat, lon]).tolist(),
        color=_EXTENT_COLOUR,
        weight=2,
        opacity=0.8,
        dash_array="2 5",
        class_name=GRID_EDGE_CLASS,
        tooltip=folium.Tooltip(escape_text(tooltip)),
    ).add_to(group)
    group.add_to(fmap)
