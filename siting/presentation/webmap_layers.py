"""The farm on the web maps: its sources drawn as their footprints, its holding and exclusions.

With no network there is no background map, so the maps draw the farm from the scenario itself:
each source as its footprint (houses and stores are rectangles, outlets a small circle) styled
by role, with its id as a permanent label and its emission derivation in words in the popup
(the names of config/ tables: "Finishing pig > 30 kg, fully slatted floor over a slurry pit",
"Acid (chemical) air scrubber"); the holding boundary; and each exclusion layer of
``[[holding.exclusion]]`` (dwellings, watercourses, ...) with every feature labelled. Each is
a layer of its own in the layer control, and each has a legend row drawn as it is on the map.
Used by :mod:`siting.presentation.webmap`, :mod:`~siting.presentation.webmap_place` and
:mod:`~siting.presentation.webmap_region`; no physics, nothing written.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from siting.presentation.formats import format_number, is_missing
from siting.presentation.webmap_grid import to_wgs84
from siting.presentation.webmap_labels import add_labels, label_point
from siting.presentation.webmap_sites import POPUP_OPTIONS
from siting.presentation.webmap_text import (
    KIND_WORDS,
    escape_text,
    housing_name,
    number_or_blank,
    number_text,
    popup_table,
    technique_name,
)

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

    from siting.readers.map_context import ContextLayer, MapContext

__all__ = [
    "CONTEXT_CLASS",
    "ROLE_STYLES",
    "SOURCE_CLASS",
    "add_context",
    "add_sources",
    "context_legend_rows",
    "roles_present",
    "source_legend_rows",
    "source_popup",
]

#: Marker and outline style of each source role (our own palette).
ROLE_STYLES: dict[str, dict[str, Any]] = {
    "proposed": {"color": "#5c0a33", "fill_color": "#d81b60", "dash_array": None},
    "existing": {"color": "#101820", "fill_color": "#455a64", "dash_array": None},
    "removed": {"color": "#616161", "fill_color": "#ffffff", "dash_array": "4 3"},
    "other": {"color": "#3e2723", "fill_color": "#a1887f", "dash_array": None},
}

#: CSS class on the sources' SVG paths: a stable hook for the browser tests
#: (tests/test_browser.py) and for anyone restyling the page; keep it when refactoring.
SOURCE_CLASS = "siting-source"
#: CSS class on the holding boundary's and the exclusion features' SVG paths (same purpose).
CONTEXT_CLASS = "siting-context"

#: Outline of the holding boundary (our own style).
_HOLDING_STYLE = {"color": "#2b2b2b", "weight": 2.5, "dash_array": "8 5"}
#: Colours of the exclusion layers by the kind of their features (our own palette: lines
#: blue, as a brook or ditch most often is; points, the dwellings, yellow with a dark rim);
#: a second layer of the same kind takes the next colour.
_EXCLUSION_COLOURS = {
    "line": ("#1f6fb2", "#00838f", "#5c6bc0"),
    "point": ("#f2c14e", "#ef8a62", "#b8e186"),
    "area": ("#7b3f99", "#8d5524", "#c2185b"),
}


def _role(row: Any) -> str:
    """A source's role in lower case ('other' when missing)."""
    role = row.get("role")
    return "other" if is_missing(role) else str(role).strip().lower()


def _named(name: str, code: Any) -> str:
    """Escaped "name (id)", or the id alone where there is no name."""
    if not name:
        return escape_text(code)
    return f'{escape_text(name)} <span class="code">({escape_text(code)})</span>'


def source_popup(row: Any, tables: Any = None) -> str:
    """Popup HTML of one source: what it is, its release and emission derivation in words;
    user values escaped.

    Parameters
    ----------
    row : mapping
        A row of the sources table (columns as for
        :func:`siting.presentation.webmap.render_screen_map`).
    tables : Tables, optional
        The run's lookup tables, for the names of housing systems and techniques.

    Returns
    -------
    html : str
    """
    kind = row.get("kind")
    housing = housing_name(tables, row.get("livestock"), row.get("housing"))
    codes = " / ".join(
        str(row.get(c)) for c in ("livestock", "housing") if not is_missing(row.get(c))
    )
    fields = [
        ("What", escape_text(KIND_WORDS.get(str(kind), kind))),
        ("Role", escape_text(_role(row) if not is_missing(row.get("role")) else None)),
        ("Release height", number_text(row.get("height_m"), "m")),
        ("Animals and housing", _named(housing, codes) if codes else ""),
        ("Places", number_or_blank(row.get("places"))),
        (
            "Emission factor",
            number_or_blank(row.get("factor_nh3_kg_per_place_yr"), "kg NH3/place/yr"),
        ),
        (
            "Abatement",
            _named(technique_name(tables, row.get("abatement")), row.get("abatement"))
            if not is_missing(row.get("abatement"))
            else "",
        ),
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


def add_sources(
    group: folium.FeatureGroup, sources_wgs84: gpd.GeoDataFrame, tables: Any = None
) -> None:
    """Sources styled by role: footprints as filled outlines, points as circle markers, each
    with its popup (:func:`source_popup`), a tooltip and its id as a permanent label."""
    import folium

    labels = []
    order = {role: i for i, role in enumerate(ROLE_STYLES)}
    rows = sorted(
        (row for _, row in sources_wgs84.iterrows()),
        key=lambda row: order.get(_role(row), len(order)),
    )  # labels of proposed sources first: they win a collision
    for row in rows:
        geometry = row.geometry
        if geometry is None or geometry.is_empty:
            continue
        role = _role(row)
        style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
        source_id = escape_text(row.get("source_id")) or "(no id)"
        popup = folium.Popup(source_popup(row, tables), **POPUP_OPTIONS)
        tooltip = folium.Tooltip(f"Source {source_id} ({escape_text(role)})")
        if geometry.geom_type == "Point":
            marker = folium.CircleMarker(
                location=[geometry.y, geometry.x],
                radius=6,
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
                "fillOpacity": 0.75,
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
        point = label_point(geometry.centroid if geometry.geom_type != "Point" else geometry)
        labels.append(
            [*point, source_id, f"siting-role-{role if role in ROLE_STYLES else 'other'}"]
        )
    add_labels(group, "source", labels)


def roles_present(sources_wgs84: gpd.GeoDataFrame) -> list[str]:
    """The sources' roles for the legend: ours in :data:`ROLE_STYLES` order, then others sorted."""
    if "role" not in sources_wgs84:
        return []
    seen = {str(r).strip().lower() for r in sources_wgs84["role"] if not is_missing(r)}
    return [r for r in ROLE_STYLES if r in seen] + sorted(seen - set(ROLE_STYLES))


def _swatch_svg(style: dict[str, Any], shape: str) -> str:
    """A legend symbol as drawn on the map: a rectangle (footprint) or a circle (outlet)."""
    dash = f' stroke-dasharray="{style["dash_array"]}"' if style.get("dash_array") else ""
    paint = f'fill="{style["fill_color"]}" stroke="{style["color"]}" stroke-width="2"{dash}'
    if shape == "circle":
        body = f'<circle cx="9" cy="7" r="5" {paint}/>'
    else:
        body = f'<rect x="2" y="2" width="14" height="10" fill-opacity="0.75" {paint}/>'
    return f'<svg class="sample" width="34" height="14" aria-hidden="true">{body}</svg>'


def source_legend_rows(sources_wgs84: gpd.GeoDataFrame) -> list[str]:
    """Legend rows of the sources: per role present, the footprint rectangle and/or the
    outlet circle, as drawn."""
    rows = []
    for role in roles_present(sources_wgs84):
        style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
        mine = sources_wgs84[
            [not is_missing(r) and str(r).strip().lower() == role for r in sources_wgs84["role"]]
        ]
        types = {g.geom_type for g in mine.geometry if g is not None and not g.is_empty}
        if types - {"Point"}:
            rows.append(
                f'<div class="row">{_swatch_svg(style, "rect")}{escape_text(role)}: house or '
                "store (its footprint)</div>"
            )
        if "Point" in types:
            rows.append(
                f'<div class="row">{_swatch_svg(style, "circle")}{escape_text(role)}: outlet '
                "or stack</div>"
            )
    return rows


# --- the holding and its exclusion layers ---------------------------------------------------


def _geometry_kind(frame: Any) -> str:
    """'point', 'line' or 'area': what most of a layer's features are."""
    types = [g.geom_type for g in frame.geometry if g is not None and not g.is_empty]
    kinds = ["point" if "Point" in t else "line" if "Line" in t else "area" for t in types]
    return max(("point", "line", "area"), key=kinds.count) if kinds else "area"


def _exclusion_colours(context: MapContext) -> list[str]:
    """The colour of each exclusion layer, by its kind of features and its order."""
    seen: dict[str, int] = {}
    colours = []
    for layer in context.exclusions:
        kind = _geometry_kind(layer.frame)
        palette = _EXCLUSION_COLOURS[kind]
        colours.append(palette[seen.get(kind, 0) % len(palette)])
        seen[kind] = seen.get(kind, 0) + 1
    return colours


def _layer_title(layer: ContextLayer) -> str:
    """The layer-control name of an exclusion layer (not escaped)."""
    if layer.buffer_m > 0:
        return (
            f"{layer.name.capitalize()} (a new house keeps {format_number(layer.buffer_m)} m away)"
        )
    return layer.name.capitalize()


def _feature_style(colour: str, geom_type: str, dash: str | None = None) -> dict[str, Any]:
    """Leaflet style of a context feature: lines as lines, polygons lightly filled."""
    filled = geom_type in ("Polygon", "MultiPolygon")
    return {
        "color": colour,
        "weight": 3.5 if geom_type in ("LineString", "MultiLineString") else 2.5,
        "fill": filled,
        "fillColor": colour,
        "fillOpacity": 0.12 if filled else 0.0,
        "dashArray": dash,
        "className": CONTEXT_CLASS,
    }


def _add_context_layer(
    group: folium.FeatureGroup,
    layer: ContextLayer,
    projected: Any,
    colour: str,
    dash: str | None,
    buffers: bool,
    kind: str,
) -> None:
    """The features of one context layer into ``group``, each with tooltip, popup and a label
    of ``kind`` (webmap_labels.LABEL_KINDS)."""
    import folium

    frame = to_wgs84(layer.frame, projected)
    buffered = to_wgs84(layer.frame.buffer(layer.buffer_m), projected) if buffers else None
    what = escape_text(layer.name)
    keep = (
        f"a new house keeps {escape_text(format_number(layer.buffer_m))} m away"
        if layer.buffer_m > 0
        else ""
    )
    labels = []
    for i, (label, geometry) in enumerate(zip(frame["label"], frame.geometry)):
        if geometry is None or geometry.is_empty:
            continue
        name = escape_text(label) or what
        popup_rows = [("Layer", what)] + ([("Keep-away", keep)] if keep else [])
        if geometry.geom_type in ("Point", "MultiPoint"):
            for point in getattr(geometry, "geoms", [geometry]):
                marker = folium.CircleMarker(
                    location=[point.y, point.x],
                    radius=6,
                    color="#1d2430",
                    weight=2,
                    fill=True,
                    fill_color=colour,
                    fill_opacity=0.95,
                )
                marker.options["className"] = CONTEXT_CLASS
                folium.Tooltip(name).add_to(marker)
                folium.Popup(popup_table(name, popup_rows), **POPUP_OPTIONS).add_to(marker)
                marker.add_to(group)
        else:
            style = _feature_style(colour, geometry.geom_type, dash)
            folium.GeoJson(
                data={"type": "Feature", "properties": {}, "geometry": geometry.__geo_interface__},
                style_function=lambda _f, s=style: s,
                tooltip=folium.Tooltip(name),
                popup=folium.Popup(popup_table(name, popup_rows), **POPUP_OPTIONS),
                zoom_on_click=False,
                control=False,
            ).add_to(group)
        if buffered is not None:
            folium.GeoJson(
                data={
                    "type": "Feature",
                    "properties": {},
                    "geometry": buffered.geometry.iloc[i].__geo_interface__,
                },
                style_function=lambda _f, c=colour: {
                    "color": c,
                    "weight": 1,
                    "dashArray": "3 4",
                    "fill": False,
                    "interactive": False,
                },
                zoom_on_click=False,
                control=False,
            ).add_to(group)
        point = label_point(geometry)
        if point is not None:
            labels.append([*point, name, "", *_places_along(geometry)])
    add_labels(group, kind, labels)


#: Where along a line its label may sit, as fractions of its length, most wanted first.
_ALONG_LINE = (0.5, 0.4, 0.6, 0.3, 0.7, 0.2, 0.8, 0.1, 0.9)


def _places_along(geometry: Any) -> list[list[list[float]]]:
    """For a line, [[lat, lon], ...] places for its label along it (the page script takes the
    first free one); nothing for other geometries."""
    if geometry.geom_type not in ("LineString", "MultiLineString"):
        return []
    places = [geometry.interpolate(f, normalized=True) for f in _ALONG_LINE]
    return [[[round(p.y, 7), round(p.x, 7)] for p in places]]


def add_context(
    fmap: folium.Map, context: MapContext | None, projected: Any, buffers: bool = False
) -> None:
    """The holding boundary and each exclusion layer as layers of their own (named, escaped),
    every feature with a tooltip, a popup and a label; ``buffers`` also outlines the distance
    a new house keeps from each exclusion feature."""
    import folium

    if context is None:
        return
    if context.holding is not None:
        group = folium.FeatureGroup(name=escape_text("Holding boundary"), overlay=True)
        group.add_to(fmap)
        _add_context_layer(
            group, context.holding, projected, _HOLDING_STYLE["color"],
            _HOLDING_STYLE["dash_array"], False, "context",
        )  # fmt: skip
    for layer, colour in zip(context.exclusions, _exclusion_colours(context)):
        group = folium.FeatureGroup(name=escape_text(_layer_title(layer)), overlay=True)
        group.add_to(fmap)
        _add_context_layer(group, layer, projected, colour, None, buffers, "exclusion")


def context_legend_rows(context: MapContext | None, buffers: bool = False) -> list[str]:
    """Legend rows of the holding boundary and each exclusion layer, drawn as on the map."""
    if context is None:
        return []
    rows = []
    if context.holding is not None:
        rows.append(
            '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
            f'<line x1="2" y1="6" x2="32" y2="6" stroke="{_HOLDING_STYLE["color"]}" '
            f'stroke-width="2.5" stroke-dasharray="{_HOLDING_STYLE["dash_array"]}"/></svg>'
            "holding boundary</div>"
        )
    for layer, colour in zip(context.exclusions, _exclusion_colours(context)):
        types = {g.geom_type for g in layer.frame.geometry if g is not None and not g.is_empty}
        if types & {"Point", "MultiPoint"}:
            symbol = (
                f'<circle cx="9" cy="6" r="5" fill="{colour}" stroke="#1d2430" stroke-width="2"/>'
            )
        elif types & {"LineString", "MultiLineString"}:
            symbol = f'<line x1="2" y1="6" x2="32" y2="6" stroke="{colour}" stroke-width="3.5"/>'
        else:
            symbol = (
                f'<rect x="3" y="1" width="28" height="10" fill="{colour}" fill-opacity="0.12" '
                f'stroke="{colour}" stroke-width="2.5"/>'
            )
        keep = f" (kept {format_number(layer.buffer_m)} m away)" if layer.buffer_m > 0 else ""
        rows.append(
            f'<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
            f"{symbol}</svg>{escape_text(layer.name + keep)}</div>"
        )
        if buffers and layer.buffer_m > 0:
            rows.append(
                '<div class="row"><svg class="sample" width="34" height="12" aria-hidden="true">'
                f'<line x1="2" y1="6" x2="32" y2="6" stroke="{colour}" stroke-width="1" '
                f'stroke-dasharray="3 4"/></svg>{escape_text(layer.name)}: '
                f"{escape_text(format_number(layer.buffer_m))} m keep-away line</div>"
            )
    return rows
