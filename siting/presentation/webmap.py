"""The interactive screening map (map.html), built with folium.

This adapter draws results computed elsewhere: the deposition grid reprojected to Web Mercator
and coloured in log classes (an image overlay that needs no tile server), contour lines, habitat
sites coloured by verdict with popups of their figures, the sources styled by role with their
emission derivation, a legend, a title block with the cautions, a scale bar and a north arrow.
An OpenStreetMap background is offered in the layer control, but everything we draw shows
without it. The page is one self-contained file: :func:`siting.presentation.webassets.inline_assets` puts the
vendored Leaflet and jQuery in place of folium's CDN links. No physics lives here.

Every text that comes from a user file goes through :func:`escape_text` before it reaches the
page. folium writes popup and tooltip content into JavaScript template literals without
escaping, so HTML escaping alone is not enough: backticks, ``$``, braces and backslashes are
turned into HTML character references too. The sources are added one by one, with only their
geometry in the GeoJSON. The habitat sites, which may number thousands, are one GeoJSON layer
(:func:`_add_sites`, on both maps): each feature carries its verdict and its popup and tooltip
texts, every user value among them already escaped by :func:`escape_text`, so no raw user
property is ever embedded in the page; a short script of ours binds them to each feature when
the page loads.

:func:`write_screen_map` (map.html of a screening run) and :func:`write_place_map` (the
placement search's map) are short sequences of the same steps: :func:`_new_map` (page title,
style sheet, background), :func:`_add_surface` (the coloured grid), their own layers,
:func:`_add_extent_outline`, and :func:`_write_map` (title block, legend, north arrow, layer
control, vendored assets, the file).
"""

from __future__ import annotations

import base64
import html
import io
import json
import re
import warnings
from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.errors import InputError
from siting.presentation.formats import (
    VERDICT_COLOURS,
    deposition_class_colours,
    deposition_class_edges,
    format_number,
    is_missing,
)
from siting.presentation.webassets import inline_assets

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

__all__ = [
    "OVERLAY_CLASS",
    "ROLE_STYLES",
    "SITE_CLASS",
    "SOURCE_CLASS",
    "escape_text",
    "write_place_map",
    "write_screen_map",
]

#: Marker and outline style of each source role (our own palette).
ROLE_STYLES: dict[str, dict[str, Any]] = {
    "proposed": {"color": "#5c0a33", "fill_color": "#d81b60", "dash_array": None},
    "existing": {"color": "#101820", "fill_color": "#455a64", "dash_array": None},
    "removed": {"color": "#616161", "fill_color": "#ffffff", "dash_array": "4 3"},
    "other": {"color": "#3e2723", "fill_color": "#a1887f", "dash_array": None},
}

#: Opacity of the deposition image overlay [0-1].
_OVERLAY_OPACITY = 0.7

#: CSS classes on the drawn features (SVG paths, the overlay <img>): stable hooks for the browser
#: tests (tests/test_browser.py) and for anyone restyling the page; keep them when refactoring.
SITE_CLASS = "siting-site"
SOURCE_CLASS = "siting-source"
OVERLAY_CLASS = "siting-deposition"

_CONTOUR_COLOUR = "#111111"

#: Popup options: an opened popup is panned clear of the title block (top left, ~215 px tall
#: with the cautions open), which sits above the map panes.
_POPUP_OPTIONS: dict[str, Any] = {"max_width": 380, "auto_pan_padding_top_left": [10, 240]}

#: Characters that would still act inside a JavaScript template literal after html.escape.
_JS_TEMPLATE_REPLACEMENTS = (
    ("`", "&#96;"),
    ("$", "&#36;"),
    ("\\", "&#92;"),
    ("{", "&#123;"),
    ("}", "&#125;"),
)

#: Control characters, including the JavaScript line terminators U+2028 and U+2029.
_CONTROL_CHARACTERS = re.compile("[\x00-\x1f\x7f\u2028\u2029]")

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


def escape_text(value: Any) -> str:
    """Neutralise user text for any place in map.html: HTML and JavaScript template literals.

    The value is HTML-escaped (``&``, ``<``, ``>``, both quotes), then the characters that still
    act inside a JavaScript template literal become numeric character references: backtick
    ``&#96;``, dollar ``&#36;``, backslash ``&#92;``, braces ``&#123;`` ``&#125;``. Control
    characters and the line terminators U+2028/U+2029 become spaces. A browser shows the
    result as the original text; neither HTML nor JavaScript can read code out of it.

    Parameters
    ----------
    value : any
        Text or any value with a ``str()``; None, NaN, pandas NA and blank text give ``""``.

    Returns
    -------
    text : str
        Safe to place in HTML, in attribute values and inside folium popups and tooltips.
    """
    if is_missing(value):
        return ""
    text = _CONTROL_CHARACTERS.sub(" ", str(value))
    text = html.escape(text, quote=True)
    for raw, reference in _JS_TEMPLATE_REPLACEMENTS:
        text = text.replace(raw, reference)
    return text


def _num(value: Any, unit: str = "") -> str:
    """Formatted, escaped number with unit ('n/a' when missing)."""
    return escape_text(format_number(value, unit if not is_missing(value) else ""))


def _num_or_blank(value: Any, unit: str = "") -> str:
    """Like _num, but empty text when the value is missing (the popup row is then left out)."""
    return "" if is_missing(value) else _num(value, unit)


def _popup_table(head: str, rows: Sequence[tuple[str, str]]) -> str:
    """Popup HTML from an escaped heading and (escaped label, escaped value) rows."""
    body = "".join(f"<tr><th>{label}</th><td>{value}</td></tr>" for label, value in rows)
    return f'<div class="siting-popup"><div class="head">{head}</div><table>{body}</table></div>'


#: (label, column, unit) rows of a popup table; see _SITE_POPUP_ROWS. A column may be a tuple
#: of names: the first the frame has is shown.
_PopupRows = tuple[tuple[str, str | tuple[str, ...], str | None], ...]

#: Rows of a site's popup: (label, column, unit); unit None for text. A row whose value is empty
#: text is left out; numbers show "n/a" when missing. The in-combination row (last) is shown
#: only where the site has that figure.
_SITE_POPUP_ROWS: _PopupRows = (
    ("Site id", "site_id", None),
    ("Designation", "designation", None),
    ("Habitat", ("habitat_name", "habitat"), None),  # its name where known, as in the report
    ("Verdict", "verdict", None),
    ("PC max concentration", "pc_conc_max_ug_m3", "µg NH3/m³"),
    ("Critical level", "critical_level_ug_m3", "µg NH3/m³"),
    ("PC as % of level", "pc_pct_level", "%"),
    ("PC max deposition", "pc_dep_max_kg_n_ha_yr", "kg N/ha/yr"),
    ("Critical load used", "critical_load_used_kg_n_ha_yr", "kg N/ha/yr"),
    ("PC as % of load", "pc_pct_load", "%"),
    ("Screening threshold", "threshold_percent", "%"),
    ("In-combination, % of load", "incomb_pct_load", "%"),
)


def _column(frame: Any, column: str | tuple[str, ...]) -> list:
    """A column's values as a list (all None when the frame lacks it); of a tuple of names,
    the first the frame has."""
    for name in (column,) if isinstance(column, str) else column:
        if name in frame:
            return frame[name].tolist()
    return [None] * len(frame)


def _site_verdicts(frame: Any) -> list[str]:
    """Each site's verdict in lower case, 'not assessed' when missing."""
    return [
        str(v).strip().lower() if not is_missing(v) else "not assessed"
        for v in _column(frame, "verdict")
    ]


def _number_texts(values: list, unit: str, blank: bool = False) -> list[str]:
    """:func:`_num` (or :func:`_num_or_blank` with ``blank``) of many values, faster: a value
    that is a number gives digits and our own unit, which need no escaping; anything else
    goes through :func:`_num` as one value would."""
    missing = "" if blank else escape_text(format_number(None))
    unit_text = escape_text(unit)
    texts = []
    for value in values:
        if isinstance(value, (float, int, np.floating, np.integer)) and not isinstance(
            value, (bool, np.bool_)
        ):
            number = float(value)
            texts.append(missing if np.isnan(number) else f"{format_number(number)} {unit_text}")
        else:
            texts.append(_num_or_blank(value, unit) if blank else _num(value, unit))
    return texts


def _site_popup_values(frame: Any, rows: _PopupRows = _SITE_POPUP_ROWS) -> list[list[str]]:
    """Per site, the escaped value of each of ``rows`` ('' = row left out).

    ``rows`` are (label, column, unit) as in :data:`_SITE_POPUP_ROWS`. Built column by column,
    so thousands of sites cost a fraction of a second.
    """
    columns = []
    for _label, column, unit in rows:
        values = _column(frame, column)
        if column == "verdict":
            texts = [f"<strong>{escape_text(v) or 'not assessed'}</strong>" for v in values]
        elif unit is None:
            texts = [escape_text(v) for v in values]
        else:
            texts = _number_texts(values, unit, blank=column == "incomb_pct_load")
        columns.append(texts)
    return [list(row) for row in zip(*columns)]


def _source_popup(row: Any) -> str:
    """Popup HTML of one source: its release and emission derivation; user values escaped."""
    fields = [
        ("Kind", escape_text(row.get("kind"))),
        ("Role", escape_text(row.get("role"))),
        ("Release height", _num(row.get("height_m"), "m")),
        ("Livestock", escape_text(row.get("livestock"))),
        ("Housing", escape_text(row.get("housing"))),
        ("Places", _num_or_blank(row.get("places"))),
        (
            "Emission factor",
            _num_or_blank(row.get("factor_nh3_kg_per_place_yr"), "kg NH3/place/yr"),
        ),
        ("Abatement", escape_text(row.get("abatement"))),
        ("Stated reduction", _num_or_blank(row.get("reduction_percent"), "%")),
        ("Effective reduction", _num_or_blank(row.get("effective_reduction_percent"), "%")),
        ("Reduction check", escape_text(row.get("reduction_flag"))),
        ("Emission", _num(row.get("nh3_kg_yr"), "kg NH3/yr")),
        ("Source strength", _num(row.get("emission_g_s"), "g/s")),
    ]
    rows = [(label, value) for label, value in fields if value]
    if is_missing(row.get("places")) or is_missing(row.get("factor_nh3_kg_per_place_yr")):
        rows.append(("Derivation", "emission given directly in the scenario"))
    else:
        reduction = row.get("effective_reduction_percent")
        less = (
            f", less {_num(reduction, '%')} effective reduction"
            if not is_missing(reduction)
            else ""
        )
        rows.append(
            (
                "Derivation",
                f"{_num(row.get('places'))} places × "
                f"{_num(row.get('factor_nh3_kg_per_place_yr'), 'kg NH3/place/yr')}{less} "
                f"→ {_num(row.get('nh3_kg_yr'), 'kg NH3/yr')}",
            )
        )
    return _popup_table("Source " + (escape_text(row.get("source_id")) or "(no id)"), rows)


def _check_grid(deposition_kg_n_ha_yr: np.ndarray, cell_m: float, crs: str) -> tuple:
    """Validate the grid inputs; return (float grid, pyproj CRS)."""
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    grid = np.asarray(deposition_kg_n_ha_yr, dtype=float)
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


def _overlay(
    grid: np.ndarray,
    projected: Any,
    west_m: float,
    north_m: float,
    cell_m: float,
    edges: np.ndarray,
    colours: list[str],
) -> tuple[str, list[list[float]]]:
    """Reproject the grid to EPSG:3857, colour it by class; PNG data URL and lat/lon bounds."""
    from matplotlib.colors import to_rgba
    from matplotlib.image import imsave
    from pyproj import Transformer
    from rasterio.enums import Resampling
    from rasterio.transform import Affine
    from rasterio.warp import calculate_default_transform, reproject

    n_rows, n_cols = grid.shape
    src_transform = Affine(cell_m, 0.0, west_m, 0.0, -cell_m, north_m)  # row 0 = north edge
    east_m = west_m + n_cols * cell_m
    south_m = north_m - n_rows * cell_m
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
            bottom=south_m,
            right=east_m,
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
    rgba = np.zeros((dst_rows, dst_cols, 4), dtype=np.uint8)
    with np.errstate(invalid="ignore"):
        shown = np.isfinite(mercator) & (mercator >= edges[0])
    classes = np.clip(
        np.digitize(np.where(shown, mercator, edges[0]), edges) - 1, 0, len(colours) - 1
    )
    palette = (np.array([to_rgba(c) for c in colours]) * 255).round().astype(np.uint8)
    rgba[shown] = palette[classes[shown]]
    rgba[~shown, 3] = 0
    buffer = io.BytesIO()
    imsave(buffer, rgba, format="png")
    data_url = "data:image/png;base64," + base64.b64encode(buffer.getvalue()).decode("ascii")

    left = dst_transform.c
    top = dst_transform.f
    right = left + dst_cols * dst_transform.a
    bottom = top + dst_rows * dst_transform.e
    to_lonlat = Transformer.from_crs("EPSG:3857", "EPSG:4326", always_xy=True)
    lon_w, lat_s = to_lonlat.transform(left, bottom)
    lon_e, lat_n = to_lonlat.transform(right, top)
    return data_url, [[lat_s, lon_w], [lat_n, lon_e]]


def _contour_lines(
    grid: np.ndarray,
    west_m: float,
    north_m: float,
    cell_m: float,
    level_kg_n_ha_yr: float,
) -> list[np.ndarray]:
    """Contour lines of the grid at one level, as (n, 2) arrays of projected x, y [m]."""
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


def _with_crs(frame: gpd.GeoDataFrame, crs: Any) -> gpd.GeoDataFrame:
    """The frame in EPSG:4326; a frame without CRS is taken to be in the scenario CRS."""
    if frame.crs is None:
        frame = frame.set_crs(crs)
    return frame.to_crs("EPSG:4326")


def _legend_html(
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
            f'opacity:{_OVERLAY_OPACITY}"></span>{escape_text(label)} {escape_text(unit)}</div>'
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


def _title_html(title: str, run_time: str, version: str, cautions: Sequence[str]) -> str:
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


#: Decimal places kept of the site outlines' longitude and latitude: 1e-6 deg is ~0.1 m, well
#: below a grid cell, and halves the page against full double precision. Our own choice.
_LONLAT_DECIMALS = 6

#: Binds each site feature's popup and tooltip when the page loads (see _add_sites); the popup
#: is assembled only when opened. Labels and options are filled in by _site_script.
_SITE_SCRIPT = """function (feature, layer) {
    const labels = %(labels)s;
    const p = feature.properties;
    layer.bindTooltip("<div>" + p.name + "</div>", {"sticky": true});
    layer.bindPopup(function () {
        const rows = labels.map(function (label, i) {
            return p.popup[i] ? "<tr><th>" + label + "</th><td>" + p.popup[i] + "</td></tr>" : "";
        }).join("");
        return '<div class="siting-popup"><div class="head">' + p.name + "</div><table>"
            + rows + "</table></div>";
    }, %(options)s);
}"""


def _site_script(rows: _PopupRows = _SITE_POPUP_ROWS) -> str:
    """The feature script: our own labels of ``rows`` (escaped) and the popup options as
    JavaScript literals."""
    labels = [escape_text(label) for label, _column, _unit in rows]
    options = {
        "maxWidth": _POPUP_OPTIONS["max_width"],
        "autoPanPaddingTopLeft": _POPUP_OPTIONS["auto_pan_padding_top_left"],
    }
    return _SITE_SCRIPT % {"labels": json.dumps(labels), "options": json.dumps(options)}


def _site_style(verdict: str) -> dict[str, Any]:
    """Leaflet path style of a site outline by verdict (dashed when not assessed)."""
    colour = VERDICT_COLOURS.get(verdict, VERDICT_COLOURS["not assessed"])
    return {
        "color": colour,
        "weight": 2.5,
        "fillColor": colour,
        "fillOpacity": 0.2,
        "dashArray": "6 4" if verdict not in ("below threshold", "above threshold") else None,
        "className": SITE_CLASS,
    }


def _site_features(
    sites_wgs84: gpd.GeoDataFrame, rows: _PopupRows = _SITE_POPUP_ROWS
) -> list[dict[str, Any]]:
    """One GeoJSON feature per drawable site: rounded outline, verdict, escaped texts.

    Properties: ``verdict`` (lower case; the style key), ``name`` (escaped, 'Unnamed site'
    when blank) and ``popup`` (the escaped values of ``rows``, by default
    :data:`_SITE_POPUP_ROWS`). Sites without a geometry are left out; ``id`` is the site's row
    position.
    """
    import shapely
    from shapely.geometry import mapping

    geoms = np.asarray(list(sites_wgs84.geometry), dtype=object)
    drawable = ~shapely.is_missing(geoms)
    drawable[drawable] = ~shapely.is_empty(geoms[drawable])
    rounded = shapely.transform(geoms[drawable], lambda xy: np.round(xy, _LONLAT_DECIMALS))
    verdicts = _site_verdicts(sites_wgs84)
    names = [escape_text(n) or "Unnamed site" for n in _column(sites_wgs84, "name")]
    popups = _site_popup_values(sites_wgs84, rows)
    return [
        {
            "type": "Feature",
            "id": int(i),
            "geometry": mapping(geometry),
            "properties": {"verdict": verdicts[i], "name": names[i], "popup": popups[i]},
        }
        for i, geometry in zip(np.flatnonzero(drawable), rounded)
    ]


def _add_sites(
    group: folium.FeatureGroup,
    sites_wgs84: gpd.GeoDataFrame,
    *,
    rows: _PopupRows = _SITE_POPUP_ROWS,
    style: dict[str, Any] | None = None,
    highlight: bool = True,
) -> None:
    """All sites as one GeoJson layer, with a popup and tooltip per feature.

    One layer instead of one per site keeps map.html small and quick to write for thousands
    of sites. Each feature is styled by its ``verdict`` property (:func:`_site_style`), or
    all alike by ``style`` when given; its popup (the rows of ``rows`` that have a value) and
    tooltip are bound by :data:`_SITE_SCRIPT` from its already escaped properties.
    ``highlight`` thickens an outline under the pointer.
    """
    import folium
    from folium.utilities import JsCode

    features = _site_features(sites_wgs84, rows)
    if not features:
        return
    folium.GeoJson(
        data={"type": "FeatureCollection", "features": features},
        style_function=(
            (lambda _feature: style)
            if style is not None
            else (lambda feature: _site_style(feature["properties"]["verdict"]))
        ),
        highlight_function=(
            (lambda _feature: {"weight": 4, "fillOpacity": 0.35}) if highlight else None
        ),
        on_each_feature=JsCode(_site_script(rows)),
        zoom_on_click=False,
        control=False,
    ).add_to(group)


def _add_sources(group: folium.FeatureGroup, sources_wgs84: gpd.GeoDataFrame) -> None:
    """Sources styled by role: points as circle markers, footprints as outlines."""
    import folium

    for _, row in sources_wgs84.iterrows():
        geometry = row.geometry
        if geometry is None or geometry.is_empty:
            continue
        role = str(row.get("role")).strip().lower() if not is_missing(row.get("role")) else "other"
        style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
        popup = folium.Popup(_source_popup(row), **_POPUP_OPTIONS)
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


def _new_map(title: str, bounds: list[list[float]], zoom_start: int) -> folium.Map:
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


def _add_surface(fmap: folium.Map, data_url: str, bounds: list[list[float]], name: str) -> None:
    """The coloured grid from :func:`_overlay` as an image overlay named ``name`` (escaped)."""
    import folium

    folium.raster_layers.ImageOverlay(
        image=data_url,
        bounds=bounds,
        name=escape_text(name),
        opacity=_OVERLAY_OPACITY,
        interactive=False,
        overlay=True,
        control=True,
        show=True,
        pixelated=True,
        class_name=OVERLAY_CLASS,
    ).add_to(fmap)


def _layer(fmap: folium.Map, name: str) -> folium.FeatureGroup:
    """A new overlay group named ``name`` (escaped), already on the map, to draw into."""
    import folium

    group = folium.FeatureGroup(name=escape_text(name), overlay=True)
    group.add_to(fmap)
    return group


_EXTENT_COLOUR = "#555555"
#: Layer-control name and CSS class of the grid's outline.
GRID_EDGE_LAYER = "Grid edge"
GRID_EDGE_CLASS = "siting-grid-edge"
#: Tooltips of the outline on the screening map and on the placement map.
_GRID_EDGE_TIP = "Edge of the computed grid: nothing was computed outside it"
_SEARCH_EDGE_TIP = "Edge of the searched area"


def _extent_legend_row(label: str = "edge of the computed grid") -> str:
    """Legend row of the grid's dotted outline (label escaped)."""
    return (
        '<div class="row"><span class="line" style="border-top:2px dotted #555555"></span>'
        f"{escape_text(label)}</div>"
    )


def _add_extent_outline(
    fmap,
    projected,
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


def _write_map(fmap: folium.Map, path: Path, bounds: list[list[float]], boxes: list[str]) -> None:
    """Finish and write the page: the ready-made ``boxes`` (title block, legend), the north
    arrow, the layer control and the view fitted to ``bounds``. folium's CDN links are
    replaced by the vendored assets (:func:`siting.presentation.webassets.inline_assets`) before anything
    is written, so an asset siting does not vendor leaves no file."""
    import folium

    root = fmap.get_root()
    for box in [*boxes, _NORTH_ARROW]:
        root.html.add_child(folium.Element(box))
    folium.LayerControl(collapsed=False).add_to(fmap)
    fmap.fit_bounds(bounds)
    page = inline_assets(root.render())
    Path(path).write_bytes(page.encode("utf-8"))


# --- the screening map ---------------------------------------------------------------------


def _add_contours(
    fmap: folium.Map,
    grid: np.ndarray,
    projected: Any,
    west_m: float,
    north_m: float,
    cell_m: float,
    contours: Sequence[tuple[float, str]],
) -> None:
    """The "Contours" layer (none without levels): dashed lines of the grid at each level
    [kg N ha-1 yr-1], each with its label as tooltip (escaped)."""
    import folium
    from pyproj import Transformer

    if not contours:
        return
    group = _layer(fmap, "Contours")
    to_lonlat = Transformer.from_crs(projected, "EPSG:4326", always_xy=True)
    for level, label in contours:
        for line in _contour_lines(grid, west_m, north_m, cell_m, float(level)):
            lon, lat = to_lonlat.transform(line[:, 0], line[:, 1])
            folium.PolyLine(
                locations=np.column_stack([lat, lon]).tolist(),
                color=_CONTOUR_COLOUR,
                weight=2,
                opacity=0.9,
                dash_array="6 4",
                tooltip=folium.Tooltip(
                    f"{escape_text(label)} ({escape_text(format_number(level))} kg N/ha/yr)"
                ),
            ).add_to(group)


def write_screen_map(
    path: Path,
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
) -> None:
    """Write map.html: the deposition surface, contours, habitat sites and sources on a web map.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    title : str
        Scenario title (user text, escaped).
    crs : str
        Projected CRS of the grid and of frames without a CRS, e.g. ``"EPSG:32632"``.
    west_m, north_m : float
        West and north edges of the grid in `crs` [m].
    cell_m : float
        Cell size [m], > 0.
    deposition_kg_n_ha_yr : ndarray, shape (n_rows, n_cols)
        PC deposition [kg N ha-1 yr-1]; row 0 is the north edge; NaN = no data.
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

    Raises
    ------
    InputError
        If the grid is not 2-D, cell_m <= 0 or crs is not a projected CRS; nothing is written.
    AssetError
        If folium links a script or style sheet that siting does not vendor; nothing is written.

    Notes
    -----
    The raster is reprojected with nearest-neighbour resampling so each coloured pixel keeps a
    value of the grid. Class edges come from :func:`siting.presentation.formats.deposition_class_edges`.
    """
    grid, projected = _check_grid(deposition_kg_n_ha_yr, cell_m, crs)
    edges = deposition_class_edges(grid)
    colours = deposition_class_colours(edges.size - 1)
    data_url, bounds = _overlay(grid, projected, west_m, north_m, cell_m, edges, colours)
    sources_wgs84 = _with_crs(sources, projected)
    fmap = _new_map(title, bounds, zoom_start=13)
    _add_surface(fmap, data_url, bounds, "Deposition, PC (kg N/ha/yr)")
    _add_contours(fmap, grid, projected, west_m, north_m, cell_m, contours)
    _add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, _GRID_EDGE_TIP)
    _add_sites(_layer(fmap, "Habitat sites"), _with_crs(sites, projected))
    _add_sources(_layer(fmap, "Sources"), sources_wgs84)
    roles = _roles_present(sources_wgs84)
    legend = _legend_html(edges, colours, contours, roles, extra_rows=[_extent_legend_row()])
    title_box = _title_html(title, run_time, version, cautions)
    _write_map(fmap, path, bounds, [title_box, legend])


# --- the placement map ---------------------------------------------------------------------

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


def _share_colours() -> list[str]:
    """Diverging colours: blue-greens for passing classes, browns for failing ones."""
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    cmap = colormaps["BrBG_r"]
    return [to_hex(cmap(v)) for v in (0.08, 0.2, 0.32, 0.44, 0.6, 0.72, 0.84, 0.96)]


#: Popup rows of a site on the placement map: the screening map's designation and habitat.
_PLACE_SITE_ROWS: _PopupRows = tuple(
    row for row in _SITE_POPUP_ROWS if row[0] in ("Designation", "Habitat")
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
        for geom in _with_crs(frame, projected).geometry:
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


def _position_popup(rank: int, row: Any) -> str:
    """Popup HTML of one ranked position (a row of positions.csv); site names escaped."""
    lines = [
        f"<b>Rank {rank}</b>",
        f"x {row.x:.0f}, y {row.y:.0f}",
        f"limiting site: {escape_text(row.limiting_site)} "
        f"({row.limiting_share_of_threshold:.2f} of its threshold)",
        f"worst % of critical load: {format_number(row.worst_pct_load)} "
        f"({escape_text(row.worst_site)})",
        f"worst % of critical level: {format_number(row.worst_pct_level)}",
        f"reduction needed: {row.required_reduction_percent:.0f} %",
    ]
    places = getattr(row, "max_places_unabated", None)
    if places is not None and not is_missing(places):
        lines.append(f"most places unabated: {places:.0f}")
    return "<br>".join(lines)


def _add_positions(group: folium.FeatureGroup, positions_wgs84: gpd.GeoDataFrame) -> None:
    """The best positions, best first, as white circle markers with their rank."""
    import folium

    for row in positions_wgs84.reset_index(drop=True).itertuples():
        rank = row.Index + 1
        folium.CircleMarker(
            location=[row.geometry.y, row.geometry.x],
            radius=8,
            color="#111111",
            weight=2,
            fill=True,
            fill_color="#ffffff",
            fill_opacity=1.0,
            tooltip=folium.Tooltip(f"rank {rank}"),
            popup=folium.Popup(_position_popup(rank, row), max_width=320),
        ).add_to(group)


def _place_legend_html(edges: np.ndarray, colours: list[str]) -> str:
    """Legend of the placement map: share classes, how to read them, positions, grid edge."""
    best_row = (
        '<div class="row"><span class="dot" style="background:#ffffff;'
        'border:2px solid #111111"></span>best positions (rank in popup)</div>'
    )
    note = (
        '<div class="note">House placed at a coloured cell: its process contribution at '
        "the worst-hit site, as a share of that site's screening threshold. Below 1 it "
        "passes every site; above 1 it needs abatement or fewer places (see positions.csv)."
        "</div>"
    )
    return _legend_html(
        edges,
        colours,
        [],
        [],
        heading="Worst share of a site's threshold (1 = at it)",
        unit="",
        extra_rows=[note, best_row, _extent_legend_row("edge of the searched area")],
        verdicts=False,
    )


def write_place_map(
    path: Path,
    *,
    title: str,
    crs: str,
    west_m: float,
    north_m: float,
    cell_m: float,
    share_of_threshold: np.ndarray,
    allowed_area,
    holding,
    positions,
    sites,
    cautions: list[str],
    version: str,
    run_time: str,
) -> None:
    """Write the placement map: where on the holding the house does least harm.

    Parameters
    ----------
    share_of_threshold : ndarray (n_rows, n_cols)
        With the house at each cell centre, the largest share of a site's screening threshold
        over all sites (1 = exactly at the threshold; below 1 passes); NaN where the house may
        not go. Row 0 is the north edge of the grid (west_m, north_m, cell_m in ``crs``).
    allowed_area, holding : GeoDataFrame
        The allowed area and the holding boundary (polygons).
    positions : GeoDataFrame
        The best positions (points) with the columns of positions.csv, best first.
    sites : GeoDataFrame
        Habitat sites, as for :func:`write_screen_map` (figures are of the screening run, not
        of the positions, so only name, designation, habitat are shown).

    Other parameters as for :func:`write_screen_map`. User text is escaped throughout.
    """
    grid, projected = _check_grid(share_of_threshold, cell_m, crs)
    edges, colours = SHARE_CLASS_EDGES, _share_colours()
    data_url, bounds = _overlay(grid, projected, west_m, north_m, cell_m, edges, colours)

    fmap = _new_map(title, bounds, zoom_start=15)
    _add_surface(fmap, data_url, bounds, "Worst share of a threshold, by house position")
    _add_holding(_layer(fmap, "Holding and allowed area"), holding, allowed_area, projected)
    _add_sites(
        _layer(fmap, "Habitat sites"),
        _with_crs(sites, projected),
        rows=_PLACE_SITE_ROWS,
        style=_PLACE_SITE_STYLE,
        highlight=False,
    )
    _add_positions(_layer(fmap, "Best positions"), _with_crs(positions, projected))
    _add_extent_outline(fmap, projected, west_m, north_m, cell_m, grid.shape, _SEARCH_EDGE_TIP)
    title_box = _title_html(title, run_time, version, cautions)
    _write_map(fmap, path, bounds, [title_box, _place_legend_html(edges, colours)])
