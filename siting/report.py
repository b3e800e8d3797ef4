"""The screening report (report.html) and the figures it shows.

This adapter turns results that other modules computed into one self-contained HTML file: inline
CSS, figures inlined as base64 PNG data URLs, no scripts and no links outside the file, so a
regulator can open it offline years later. It also holds the small presentation helpers shared
with :mod:`siting.webmap` (number formatting, the logarithmic deposition classes and their
colour map) and two matplotlib figures drawn with the Agg canvas, never through pyplot's global
state. No physics lives here: every number shown was computed elsewhere; this module only
formats, tabulates and plots it. Text from user files (site names, designations, source ids,
the title) is HTML-escaped wherever it enters the page.
"""

from __future__ import annotations

import base64
import html
import io
import json
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from siting.errors import InputError

if TYPE_CHECKING:  # imported for annotations only; the module does not need them at run time
    import geopandas as gpd
    from matplotlib.figure import Figure

__all__ = [
    "DEPOSITION_COLORMAP",
    "SUMMARY_COLUMNS",
    "VERDICT_COLOURS",
    "deposition_class_colours",
    "deposition_class_edges",
    "deposition_figure",
    "figure_png",
    "format_number",
    "is_missing",
    "pc_vs_distance_figure",
    "write_report",
]

#: Perceptually uniform matplotlib colour map used for the deposition classes (map and report).
DEPOSITION_COLORMAP = "cividis"

#: Colour of each verdict (map outlines, report figure points); our own choice.
VERDICT_COLOURS = {
    "below threshold": "#2f6fad",
    "above threshold": "#c2543a",
    "not assessed": "#8a8a8a",
}

#: The 1-3-10 series of class edges [kg N ha-1 yr-1] from which the shown classes are picked.
_CLASS_EDGE_SERIES_KG_N_HA_YR = tuple(
    float(f"{mantissa}e{exponent}") for exponent in range(-5, 5) for mantissa in (1, 3)
)

#: Columns of the summary table: (column in `sites`, header shown, kind of value).
SUMMARY_COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("name", "Site", "text"),
    ("designation", "Designation", "text"),
    ("habitat", "Habitat", "text"),
    ("critical_level_ug_m3", "Critical level used [µg NH3/m³]", "number"),
    ("critical_load_used_kg_n_ha_yr", "Critical load used [kg N/ha/yr]", "number"),
    ("pc_conc_max_ug_m3", "PC max concentration [µg NH3/m³]", "number"),
    ("pc_pct_level", "PC as % of critical level", "percent"),
    ("pc_dep_max_kg_n_ha_yr", "PC max deposition [kg N/ha/yr]", "number"),
    ("pc_pct_load", "PC as % of critical load", "percent"),
    ("threshold_percent", "Screening threshold [%]", "percent"),
    ("verdict", "Verdict", "verdict"),
)

#: Optional summary column shown after "% of load" when the caller provides it.
_INCOMBINATION_COLUMN = ("incomb_pct_load", "In-combination as % of critical load", "percent")

#: CSS class and plain-words hint per verdict (styling of the verdict cell).
_VERDICT_STYLE = {
    "below threshold": ("verdict-below", "insignificant at screening"),
    "above threshold": ("verdict-above", "needs further assessment"),
    "not assessed": ("verdict-none", "no PC figure for this site"),
}

_MISSING = "n/a"

_CAUTION_TOP_LINE = (
    "Screening estimate from a simplified model, not a decision: read the cautions in section 6. "
    "The competent authority and local regulations decide."
)

_CSS = """
:root { --ink: #1d2430; --muted: #5a6472; --rule: #c9ced6; --band: #f3f5f8; --accent: #23436b; }
* { box-sizing: border-box; }
body { font-family: "Segoe UI", "Helvetica Neue", Arial, sans-serif; color: var(--ink);
       margin: 0 auto; max-width: 1200px; padding: 1.2rem 1.6rem 3rem; line-height: 1.45; }
h1 { font-size: 1.6rem; margin: 0.4rem 0 0.2rem; color: var(--accent); }
h2 { font-size: 1.25rem; margin-top: 2rem; border-bottom: 2px solid var(--accent);
     padding-bottom: 0.2rem; color: var(--accent); }
h3 { font-size: 1.05rem; margin-top: 1.4rem; }
.meta { color: var(--muted); font-size: 0.9rem; margin: 0 0 0.8rem; }
.caution-line { background: #fff4d6; border: 1px solid #d9a400; border-left: 6px solid #d9a400;
                padding: 0.5rem 0.8rem; font-weight: 600; margin: 0.6rem 0 1rem; }
.cautions { background: #fff4d6; border: 2px solid #d9a400; padding: 0.6rem 1.2rem;
            font-size: 1.02rem; }
.cautions li { margin: 0.3rem 0; }
nav.toc { font-size: 0.92rem; }
nav.toc ol { margin: 0.2rem 0 0; padding-left: 1.4rem; }
table { border-collapse: collapse; margin: 0.6rem 0 1rem; font-size: 0.9rem; }
th, td { border: 1px solid var(--rule); padding: 0.28rem 0.5rem; vertical-align: top; }
th { background: #e4e8ee; text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tbody tr:nth-child(even) { background: var(--band); }
.table-wrap { overflow-x: auto; }
.verdict { font-weight: 700; padding: 0.1rem 0.45rem; border-radius: 0.25rem; white-space: nowrap;
           display: inline-block; }
.verdict-above { background: #fbe0d8; color: #7f1d0b; border: 1px solid #c2543a; }
.verdict-below { background: #dbe9f6; color: #0b3c6e; border: 1px solid #4a7fb5; }
.verdict-none { background: #ececec; color: #3d3d3d; border: 1px dashed #8a8a8a; }
.verdict-hint { display: block; font-size: 0.75rem; color: var(--muted); font-weight: 400; }
.empty { color: var(--muted); font-style: italic; }
figure { margin: 1rem 0 1.6rem; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: 0.9rem; margin-top: 0.3rem; }
pre.record { background: var(--band); border: 1px solid var(--rule); padding: 0.6rem;
             font-size: 0.8rem; white-space: pre-wrap; word-break: break-all; }
tr, img, figure, pre { page-break-inside: avoid; break-inside: avoid; }
thead { display: table-header-group; }
@media print {
  body { max-width: none; padding: 0; font-size: 10pt; }
  h2, h3 { page-break-after: avoid; break-after: avoid; }
  .table-wrap { overflow: visible; }
  nav.toc { display: none; }
  .cautions, .caution-line { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .verdict { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


# --------------------------------------------------------------------------------------------
# Presentation helpers shared with webmap.py
# --------------------------------------------------------------------------------------------


def is_missing(value: Any) -> bool:
    """True for None, NaN, pandas NA/NaT and blank strings; False for anything else.

    Parameters
    ----------
    value : any
        A table cell or other value; list-like values count as present.

    Returns
    -------
    missing : bool
    """
    if value is None:
        return True
    if isinstance(value, str):
        return value.strip() == ""
    if np.ndim(value) != 0:
        return False
    try:
        return bool(pd.isna(value))
    except (TypeError, ValueError):
        return False


def format_number(value: Any, unit: str = "", significant_digits: int = 3) -> str:
    """A number as short readable text with a fixed count of significant digits.

    Parameters
    ----------
    value : float, int, str or None
        The value; None, NaN and blank strings become ``"n/a"``; strings are returned unchanged
        (not escaped: callers escape).
    unit : str, optional
        Appended after a space when given, e.g. ``"kg N/ha/yr"``.
    significant_digits : int, optional
        Significant digits shown [-], >= 1. Values >= 10**significant_digits show as integers.

    Returns
    -------
    text : str
        E.g. ``"0.0123 kg N/ha/yr"``, ``"1230"``, ``"4.56e-06"`` (below 1e-4 in scientific
        notation to stay short).
    """
    if is_missing(value):
        return _MISSING
    if isinstance(value, str):
        return value
    if isinstance(value, (bool, np.bool_)):
        text = "yes" if value else "no"
    else:
        try:
            number = float(value)
        except (TypeError, ValueError):
            return str(value)
        if math.isinf(number):
            text = "∞" if number > 0 else "−∞"
        elif number == 0.0:
            text = "0"
        elif abs(number) < 1e-4:
            text = f"{number:.{max(significant_digits - 1, 0)}e}"
        else:
            text = np.format_float_positional(
                number, precision=significant_digits, unique=False, fractional=False, trim="-"
            )
    return f"{text} {unit}" if unit else text


def deposition_class_edges(deposition_kg_n_ha_yr: np.ndarray, max_classes: int = 7) -> np.ndarray:
    """Log-spaced class edges [kg N ha-1 yr-1] adapted to the range of a deposition grid.

    The edges come from the 1-3-10 series (..., 0.01, 0.03, 0.1, 0.3, 1, 3, 10, 30, ...). The top
    edge is the first series value above the largest finite value; the classes reach down
    ``max_classes`` steps from there (about three and a half decades), and values below the
    lowest edge are not coloured.

    Parameters
    ----------
    deposition_kg_n_ha_yr : ndarray
        Deposition values [kg N ha-1 yr-1]; NaN ignored.
    max_classes : int, optional
        Number of classes (edges minus one), >= 1.

    Returns
    -------
    edges_kg_n_ha_yr : ndarray
        Increasing class edges [kg N ha-1 yr-1], ``max_classes + 1`` of them. When the grid has
        no positive finite value the default edges 0.01 ... 30 are returned for 7 classes.
    """
    if max_classes < 1:
        raise InputError(f"deposition classes: max_classes must be >= 1, got {max_classes}")
    series = np.asarray(_CLASS_EDGE_SERIES_KG_N_HA_YR)
    values = np.asarray(deposition_kg_n_ha_yr, dtype=float)
    finite = values[np.isfinite(values) & (values > 0.0)]
    if finite.size == 0:
        top_index = int(np.searchsorted(series, 30.0))
    else:
        top_index = int(np.searchsorted(series, float(finite.max()), side="right"))
        top_index = min(top_index, series.size - 1)
    top_index = max(top_index, max_classes)
    return series[top_index - max_classes : top_index + 1].copy()


def deposition_class_colours(n_classes: int) -> list[str]:
    """Hex colours of ``n_classes`` deposition classes, low to high, from DEPOSITION_COLORMAP.

    Parameters
    ----------
    n_classes : int
        Number of classes, >= 1.

    Returns
    -------
    colours : list of str
        ``"#rrggbb"`` strings sampled evenly along the colour map.
    """
    from matplotlib import colormaps
    from matplotlib.colors import to_hex

    cmap = colormaps[DEPOSITION_COLORMAP]
    positions = np.linspace(0.0, 1.0, n_classes) if n_classes > 1 else np.array([0.5])
    return [to_hex(cmap(float(p))) for p in positions]


def figure_png(fig: Figure, dpi: int = 110) -> bytes:
    """Render a matplotlib Figure to PNG bytes with the Agg canvas (no pyplot, no display).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure; a FigureCanvasAgg is attached when it has none of that kind.
    dpi : int, optional
        Resolution [dots per inch].

    Returns
    -------
    png : bytes
        The PNG file contents.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    if not isinstance(fig.canvas, FigureCanvasAgg):
        FigureCanvasAgg(fig)
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, bbox_inches="tight")
    return buffer.getvalue()


def _polygon_rings(geometry: Any) -> list[np.ndarray]:
    """Exterior and interior rings of a (multi)polygon as (n, 2) coordinate arrays."""
    rings: list[np.ndarray] = []
    if geometry is None or getattr(geometry, "is_empty", True):
        return rings
    parts = getattr(geometry, "geoms", [geometry])
    for part in parts:
        if part.geom_type == "Polygon":
            rings.append(np.asarray(part.exterior.coords))
            rings.extend(np.asarray(ring.coords) for ring in part.interiors)
        elif part.geom_type in ("LineString", "LinearRing"):
            rings.append(np.asarray(part.coords))
    return rings


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
) -> bytes:
    """PNG of the deposition grid in log classes, with site outlines, sources and contours.

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
        Sources in the same CRS; drawn as markers at their representative points.
    contours : sequence of (float, str), optional
        Contour levels [kg N ha-1 yr-1] and their labels.
    crs_label : str, optional
        Shown in the axis labels, e.g. ``"EPSG:32632"``.

    Returns
    -------
    png : bytes
        The figure as PNG.

    Raises
    ------
    InputError
        If the grid is not 2-D or cell_m <= 0.
    """
    from matplotlib.colors import BoundaryNorm, ListedColormap
    from matplotlib.figure import Figure

    grid = np.asarray(deposition_kg_n_ha_yr, dtype=float)
    if grid.ndim != 2:
        raise InputError(f"deposition figure: grid must be 2-D, got shape {grid.shape}")
    if not cell_m > 0:
        raise InputError(f"deposition figure: cell_m must be > 0, got {cell_m}")
    n_rows, n_cols = grid.shape
    east_m = west_m + n_cols * cell_m
    south_m = north_m - n_rows * cell_m
    edges = deposition_class_edges(grid)
    colours = deposition_class_colours(edges.size - 1)
    cmap = ListedColormap(colours).with_extremes(
        under=(0, 0, 0, 0), over=colours[-1], bad=(0, 0, 0, 0)
    )
    norm = BoundaryNorm(edges, cmap.N)

    fig = Figure(figsize=(7.5, 6.5))
    ax = fig.add_subplot()
    shown = np.ma.masked_invalid(grid)
    image = ax.imshow(
        shown,
        cmap=cmap,
        norm=norm,
        extent=(west_m, east_m, south_m, north_m),
        origin="upper",
        interpolation="nearest",
    )
    colourbar = fig.colorbar(image, ax=ax, extend="neither", shrink=0.85)
    colourbar.set_ticks(edges)
    colourbar.set_ticklabels([format_number(e) for e in edges])
    colourbar.set_label("Deposition, PC [kg N/ha/yr]")

    valid = np.isfinite(grid)
    if contours and valid.any():
        x_m = west_m + (np.arange(n_cols) + 0.5) * cell_m
        y_m = north_m - (np.arange(n_rows) + 0.5) * cell_m
        vmin, vmax = float(np.nanmin(grid)), float(np.nanmax(grid))
        inside = sorted({float(v) for v, _ in contours if vmin < float(v) < vmax})
        if inside:
            contour_set = ax.contour(
                x_m, y_m, shown, levels=inside, colors="#202020", linewidths=1.0, linestyles="--"
            )
            labels = {float(v): str(text) for v, text in contours}
            label_texts = ax.clabel(
                contour_set, fmt={v: labels.get(v, format_number(v)) for v in inside}, fontsize=7
            )
            for text in label_texts:
                text.set_parse_math(False)  # user labels may contain "$"

    if sites is not None and len(sites):
        for _, row in sites.iterrows():
            for ring in _polygon_rings(row.geometry):
                ax.plot(ring[:, 0], ring[:, 1], color="#8a1c0a", linewidth=1.0)
            name = row.get("name")
            if not is_missing(name) and row.geometry is not None and not row.geometry.is_empty:
                point = row.geometry.representative_point()
                ax.annotate(
                    str(name),
                    (point.x, point.y),
                    fontsize=7,
                    ha="center",
                    color="#3a0d05",
                    parse_math=False,
                )
    if sources is not None and len(sources):
        points = [g.representative_point() for g in sources.geometry if g is not None]
        if points:
            ax.plot(
                [p.x for p in points],
                [p.y for p in points],
                linestyle="none",
                marker="^",
                markersize=7,
                markerfacecolor="#ffffff",
                markeredgecolor="#000000",
                label="sources",
            )
    ax.set_xlim(west_m, east_m)
    ax.set_ylim(south_m, north_m)
    ax.set_aspect("equal")
    suffix = f" ({crs_label})" if crs_label else ""
    ax.set_xlabel(f"Easting [m]{suffix}")
    ax.set_ylabel(f"Northing [m]{suffix}")
    ax.set_title("Process contribution: nitrogen deposition", fontsize=10)
    ax.ticklabel_format(useOffset=False, style="plain")
    ax.tick_params(labelsize=7)
    return figure_png(fig)


def pc_vs_distance_figure(sites: pd.DataFrame) -> bytes:
    """PNG of each site's maximum PC deposition against its distance from the sources.

    Parameters
    ----------
    sites : DataFrame
        One row per site with columns ``name``, ``distance_m`` (distance from the nearest
        assessed source [m]) and ``pc_dep_max_kg_n_ha_yr`` [kg N ha-1 yr-1]. When
        ``threshold_percent`` and ``critical_load_used_kg_n_ha_yr`` are present each site's
        screening threshold (threshold % of its critical load) is marked with a bar, and
        ``verdict`` colours the points. Rows without a positive deposition are left out (log y).

    Returns
    -------
    png : bytes
        The figure as PNG.

    Raises
    ------
    InputError
        If a required column is missing.
    """
    from matplotlib.figure import Figure

    missing = [c for c in ("name", "distance_m", "pc_dep_max_kg_n_ha_yr") if c not in sites]
    if missing:
        raise InputError(f"PC-distance figure: sites table lacks column(s) {', '.join(missing)}")
    distance_m = np.asarray(sites["distance_m"], dtype=float)
    dep_kg_n_ha_yr = np.asarray(sites["pc_dep_max_kg_n_ha_yr"], dtype=float)
    keep = np.isfinite(distance_m) & np.isfinite(dep_kg_n_ha_yr) & (dep_kg_n_ha_yr > 0)

    fig = Figure(figsize=(7.5, 4.8))
    ax = fig.add_subplot()
    if not keep.any():
        ax.text(
            0.5,
            0.5,
            "No site with a positive deposition to plot.",
            ha="center",
            va="center",
            transform=ax.transAxes,
        )
        ax.set_axis_off()
        return figure_png(fig)
    names = [str(n) if not is_missing(n) else "" for n in sites["name"]]
    verdicts = list(sites["verdict"]) if "verdict" in sites else [None] * len(sites)
    colours = [VERDICT_COLOURS.get(str(v), VERDICT_COLOURS["not assessed"]) for v in verdicts]
    idx = np.flatnonzero(keep)
    ax.scatter(
        distance_m[idx],
        dep_kg_n_ha_yr[idx],
        c=[colours[i] for i in idx],
        s=36,
        zorder=3,
        edgecolors="#000000",
        linewidths=0.5,
    )
    for i in idx:
        ax.annotate(
            names[i],
            (distance_m[i], dep_kg_n_ha_yr[i]),
            textcoords="offset points",
            xytext=(5, 4),
            fontsize=7,
            parse_math=False,
        )
    if {"threshold_percent", "critical_load_used_kg_n_ha_yr"} <= set(sites.columns):
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
            ax.legend(fontsize=8, loc="best")
    ax.set_yscale("log")
    ax.set_xlabel("Distance from the nearest source [m]")
    ax.set_ylabel("PC max deposition [kg N/ha/yr]")
    ax.set_title("Process contribution at each site by distance", fontsize=10)
    ax.grid(True, which="both", linewidth=0.4, alpha=0.5)
    return figure_png(fig)


# --------------------------------------------------------------------------------------------
# The report
# --------------------------------------------------------------------------------------------


def _esc(value: Any) -> str:
    """HTML-escaped text of any value (None/NaN -> 'n/a')."""
    if is_missing(value):
        return _MISSING
    return html.escape(str(value), quote=True)


def _cell(value: Any, kind: str) -> str:
    """One <td> of a table: numbers right-aligned and formatted, text escaped."""
    if kind == "verdict":
        text = "" if is_missing(value) else str(value)
        css, hint = _VERDICT_STYLE.get(text.strip().lower(), ("verdict-none", ""))
        shown = _esc(text) if text else _MISSING
        hint_html = f'<span class="verdict-hint">{html.escape(hint)}</span>' if hint else ""
        return f'<td><span class="verdict {css}">{shown}</span>{hint_html}</td>'
    if kind in ("number", "percent") and not isinstance(value, str):
        return f'<td class="num">{html.escape(format_number(value))}</td>'
    if not isinstance(value, str) and isinstance(value, (int, float, np.number)):
        return f'<td class="num">{html.escape(format_number(value))}</td>'
    return f"<td>{_esc(value)}</td>"


def _non_empty_columns(frame: pd.DataFrame) -> list[str]:
    """Columns of `frame` holding at least one non-missing value, geometry left out."""
    keep = []
    for column in frame.columns:
        if str(column) == "geometry":
            continue
        if any(not is_missing(v) for v in frame[column]):
            keep.append(column)
    return keep


def _frame_table(frame: pd.DataFrame, empty_text: str) -> str:
    """An HTML table of every non-empty column of a DataFrame, headers as the column names."""
    columns = _non_empty_columns(frame)
    if not len(frame) or not columns:
        return f'<p class="empty">{html.escape(empty_text)}</p>'
    head = "".join(f"<th>{_esc(c)}</th>" for c in columns)
    rows = []
    for _, record in frame.iterrows():
        rows.append("<tr>" + "".join(_cell(record[c], "auto") for c in columns) + "</tr>")
    return (
        f'<div class="table-wrap"><table><thead><tr>{head}</tr></thead>'
        f"<tbody>{''.join(rows)}</tbody></table></div>"
    )


def _summary_table(sites: pd.DataFrame) -> str:
    """The summary table: one row per site, the columns of SUMMARY_COLUMNS."""
    columns = list(SUMMARY_COLUMNS)
    if _INCOMBINATION_COLUMN[0] in sites and any(
        not is_missing(v) for v in sites[_INCOMBINATION_COLUMN[0]]
    ):
        at = [c[0] for c in columns].index("pc_pct_load") + 1
        columns.insert(at, _INCOMBINATION_COLUMN)
    head = "".join(f"<th>{html.escape(label)}</th>" for _, label, _ in columns)
    rows = []
    for _, record in sites.iterrows():
        cells = "".join(_cell(record.get(key), kind) for key, _, kind in columns)
        rows.append(f'<tr class="site-row">{cells}</tr>')
    if not rows:
        empty = "No habitat site in the layer."
        body = f'<tr><td colspan="{len(columns)}" class="empty">{empty}</td></tr>'
    else:
        body = "".join(rows)
    return (
        f'<div class="table-wrap"><table class="summary"><thead><tr>{head}</tr></thead>'
        f"<tbody>{body}</tbody></table></div>"
    )


def _mapping_table(mapping: Mapping[str, Any], empty_text: str) -> str:
    """A two-column key/value table of a dict; nested values shown as compact JSON."""
    if not mapping:
        return f'<p class="empty">{html.escape(empty_text)}</p>'
    rows = []
    for key, value in mapping.items():
        if isinstance(value, (dict, list, tuple)):
            shown = f"<td>{_esc(json.dumps(value, default=str, ensure_ascii=False))}</td>"
        else:
            shown = _cell(value, "auto")
        rows.append(f"<tr><th>{_esc(key)}</th>{shown}</tr>")
    return f"<table><tbody>{''.join(rows)}</tbody></table>"


def _bullet_list(items: Sequence[str], empty_text: str, css_class: str = "") -> str:
    """An escaped <ul>, or a muted paragraph when the list is empty."""
    if not items:
        return f'<p class="empty">{html.escape(empty_text)}</p>'
    cls = f' class="{css_class}"' if css_class else ""
    return f"<ul{cls}>" + "".join(f"<li>{_esc(item)}</li>" for item in items) + "</ul>"


def _figures_html(figures: Mapping[str, bytes]) -> str:
    """<figure> elements with PNG data URLs, captions escaped."""
    if not figures:
        return '<p class="empty">No figures were made for this run.</p>'
    parts = []
    for caption, png in figures.items():
        if not isinstance(png, (bytes, bytearray)) or not bytes(png).startswith(b"\x89PNG"):
            raise InputError(f"report figure {caption!r}: expected PNG bytes")
        data = base64.b64encode(bytes(png)).decode("ascii")
        parts.append(
            f'<figure><img src="data:image/png;base64,{data}" alt="{_esc(caption)}">'
            f"<figcaption>{_esc(caption)}</figcaption></figure>"
        )
    return "".join(parts)


def write_report(
    path: Path,
    *,
    title: str,
    version: str,
    run_time: str,
    scenario_file: str,
    sites: pd.DataFrame,
    sources: pd.DataFrame,
    weather_summary: dict,
    habitat_values: pd.DataFrame,
    warnings: list[str],
    cautions: list[str],
    method_notes: list[str],
    run_record: dict,
    figures: dict[str, bytes],
) -> None:
    """Write report.html: a self-contained, offline-readable account of one screening run.

    Parameters
    ----------
    path : Path
        File to write (the caller makes the output folder atomic).
    title : str
        Scenario title (user text, escaped).
    version : str
        siting version that made the run.
    run_time : str
        Time of the run, as it should be shown (e.g. ISO 8601).
    scenario_file : str
        Name or path of the scenario file, as it should be shown.
    sites : DataFrame
        One row per habitat site with the columns of :data:`SUMMARY_COLUMNS` (``name``,
        ``designation``, ``habitat``, ``critical_level_ug_m3`` [ug m-3],
        ``critical_load_used_kg_n_ha_yr`` [kg N ha-1 yr-1], ``pc_conc_max_ug_m3`` [ug m-3],
        ``pc_pct_level`` [%], ``pc_dep_max_kg_n_ha_yr`` [kg N ha-1 yr-1], ``pc_pct_load`` [%],
        ``threshold_percent`` [%], ``verdict``); ``incomb_pct_load`` [%] is shown when present.
    sources : DataFrame
        One row per source with its emission derivation; every non-empty column is shown under
        its own name (a ``geometry`` column is left out).
    weather_summary : dict
        Key -> value lines describing the weather data used.
    habitat_values : DataFrame
        Habitats and their critical values with the source of each (habitat,
        critical_load_min/max/used, critical_level, land_cover, deposition velocity, source
        columns); every non-empty column is shown.
    warnings : list of str
        Warnings collected during the run.
    cautions : list of str
        The cautions every output carries; shown prominently in section 6.
    method_notes : list of str
        Method and assumption statements for section 3.
    run_record : dict
        Version, time, inputs with SHA-256 and parameters; shown as indented JSON.
    figures : dict of str to bytes
        Caption -> PNG bytes, inlined as data URLs in that order.

    Raises
    ------
    InputError
        If `sites` lacks a summary column or a figure is not PNG bytes; nothing is written.
    """
    missing = [key for key, _, _ in SUMMARY_COLUMNS if key not in sites.columns]
    if missing:
        raise InputError(
            f"report: sites table lacks column(s) {', '.join(missing)}; "
            f"expected {', '.join(k for k, _, _ in SUMMARY_COLUMNS)}"
        )
    figures_html = _figures_html(figures)  # validates before anything is written
    record_text = json.dumps(run_record, indent=2, default=str, ensure_ascii=False)

    counts = {}
    for verdict in sites["verdict"]:
        key = "not assessed" if is_missing(verdict) else str(verdict)
        counts[key] = counts.get(key, 0) + 1
    count_text = "; ".join(f"{n} {k}" for k, n in counts.items()) or "no sites"

    sections = [
        (
            "summary",
            "1. Summary",
            f"<p>{len(sites)} habitat site(s): {_esc(count_text)}. "
            "Each figure is the maximum process contribution (PC) of the assessed sources over "
            "the site. The verdict compares the PC, as a percentage of the critical level and of "
            "the critical load, with the site's screening threshold; section 3 states how.</p>"
            + _summary_table(sites),
        ),
        (
            "inputs",
            "2. Inputs",
            "<h3>Sources and emission derivation</h3>"
            + _frame_table(sources, "No sources were given.")
            + "<h3>Weather</h3>"
            + _mapping_table(weather_summary, "No weather summary available.")
            + "<h3>Habitats and their critical values</h3>"
            + _frame_table(habitat_values, "No habitat values available."),
        ),
        (
            "method",
            "3. Method and assumptions",
            _bullet_list(method_notes, "No method notes recorded."),
        ),
        ("figures", "4. Figures", figures_html),
        ("warnings", "5. Warnings", _bullet_list(warnings, "No warnings were raised.")),
        (
            "cautions",
            "6. Cautions",
            f'<div class="cautions">{_bullet_list(cautions, "No cautions given.")}</div>',
        ),
        ("run-record", "7. Run record", f'<pre class="record">{html.escape(record_text)}</pre>'),
    ]
    toc = "".join(f'<li><a href="#{anchor}">{html.escape(h)}</a></li>' for anchor, h, _ in sections)
    body = "".join(
        f'<section id="{anchor}"><h2>{html.escape(heading)}</h2>{content}</section>'
        for anchor, heading, content in sections
    )
    page = (
        "<!DOCTYPE html>\n"
        '<html lang="en"><head><meta charset="utf-8">'
        '<meta name="viewport" content="width=device-width, initial-scale=1">'
        f"<title>{_esc(title)} · siting report</title>"
        f"<style>{_CSS}</style></head><body>"
        f'<p class="caution-line">{html.escape(_CAUTION_TOP_LINE)}</p>'
        f"<h1>{_esc(title)}</h1>"
        f'<p class="meta">Ammonia screening report · siting {_esc(version)} · '
        f"run {_esc(run_time)} · scenario {_esc(scenario_file)}</p>"
        f'<nav class="toc"><strong>Contents</strong><ol>{toc}</ol></nav>'
        f"{body}</body></html>\n"
    )
    Path(path).write_text(page, encoding="utf-8")
