"""What results.gpkg shows in a desktop GIS: its contour lines and each layer's default style.

The contour lines are traced by the same function as the map's
(:func:`siting.presentation.webmap_grid.contour_lines`, through the cell centres of the
deposition grid), so a line in the GeoPackage lies where the map draws it. Each layer's style is
written twice, as text: QML (the style XML a desktop GIS reads from a GeoPackage's
``layer_styles`` table) and OGC Symbology Encoding / SLD 1.1 (a StyledLayerDescriptor with one
Rule and Filter per class). The sites are classed by ``verdict`` in the colours of their class
(:data:`siting.presentation.formats.VERDICT_COLOURS`: blue for passing, orange-red for not
passing, grey for not assessed, a pair that reads apart with any common colour-vision
deficiency), with a thicker outline where a site does not pass; the sources and their
footprints by ``role`` in the map's palette (:data:`~siting.presentation.webmap_layers.ROLE_STYLES`);
the contour lines graded by ``value`` in the map's line styles (colour, width and dash pattern,
over a white casing: :data:`~siting.presentation.webmap_grid.CONTOUR_STYLES`); the holding as
a light fill with a dashed outline. The XML is built with :mod:`xml.etree.ElementTree`, so text
from user files (verdict words, labels) is escaped. Nothing is read or written here:
:mod:`siting.output.geopackage` writes the layers and the styles.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET
from collections.abc import Iterable, Sequence
from typing import NamedTuple

import numpy as np

from siting.presentation.formats import VERDICT_COLOURS, format_number, verdict_classes
from siting.presentation.webmap_grid import CONTOUR_STYLES
from siting.presentation.webmap_grid import contour_lines as map_contour_lines
from siting.presentation.webmap_layers import ROLE_STYLES

__all__ = [
    "CONTOUR_UNITS",
    "LayerStyle",
    "contour_lines",
    "contours_style",
    "footprints_style",
    "holding_style",
    "receptors_style",
    "sites_style",
    "sources_style",
]

#: Units of the contour values (the ``units`` attribute of the contours layer).
CONTOUR_UNITS = "kg N/ha/yr"

#: Millimetres per CSS pixel (96 per inch): the map's line widths and dashes [px] in QML [mm].
_MM_PER_PX = 25.4 / 96.0
#: Version of the style format written in the QML header (a reader takes any 3.x).
_QML_VERSION = "3.28.0"
_SLD = "http://www.opengis.net/sld"
_SE = "http://www.opengis.net/se"
_OGC = "http://www.opengis.net/ogc"
_XLINK = "http://www.w3.org/1999/xlink"
_XSI = "http://www.w3.org/2001/XMLSchema-instance"
for _prefix, _uri in (("sld", _SLD), ("se", _SE), ("ogc", _OGC), ("xlink", _XLINK), ("xsi", _XSI)):
    ET.register_namespace(_prefix, _uri)

#: Fill opacity of the site, footprint and holding polygons [0-1]; our own choice.
_FILL_OPACITY = 0.55
#: Outline width [px] of a site that passes or is not assessed, and of one that does not pass.
_SITE_OUTLINE_PX = (1.5, 3.0)
#: Holding boundary: outline colour, width [px] and dash pattern [px], and its fill (our own).
_HOLDING = {"color": "#2b2b2b", "weight": 2.5, "dash": (8.0, 5.0), "fill": "#f2efe6"}
#: Named points: a diamond of this size [px], fill and outline (our own).
_RECEPTOR = {"size": 9.0, "fill": "#ffbf00", "color": "#1d1d1d"}
#: Source outlets (points): circle size [px].
_SOURCE_SIZE_PX = 9.0


class LayerStyle(NamedTuple):
    """One layer's default style: the layer it styles, QML and SLD 1.1 text, a description.

    Attributes
    ----------
    layer : str
        The GeoPackage layer (table) name.
    qml : str
        The style as QML (root element ``qgis``).
    sld : str
        The style as OGC SLD 1.1 (root element ``StyledLayerDescriptor``).
    description : str
        What the style shows, in words.
    """

    layer: str
    qml: str
    sld: str
    description: str


class _Class(NamedTuple):
    """One class of a layer's style: its key (a value, or a (lower, upper) range), legend label
    and symbol."""

    key: object
    label: str
    symbol: dict


# --------------------------------------------------------------------------------------------
# Contour lines
# --------------------------------------------------------------------------------------------


def contour_lines(
    deposition_kg_n_ha_yr: np.ndarray,
    west_m: float,
    north_m: float,
    cell_m: float,
    contours: Sequence[tuple[float, str]],
) -> list[tuple[float, str, np.ndarray]]:
    """The deposition grid's contour lines at each level, traced as on the map.

    Parameters
    ----------
    deposition_kg_n_ha_yr : ndarray, shape (n_rows, n_cols)
        Deposition [kg N ha-1 yr-1], row 0 north; NaN cells are left out.
    west_m, north_m, cell_m : float
        Grid edges and cell size [m]; lines run through the cell centres.
    contours : sequence of (float, str)
        Levels [kg N ha-1 yr-1] with their labels (as for the map).

    Returns
    -------
    list of (float, str, ndarray)
        (level, label, vertices (n, 2) of projected x, y [m]) per line, levels in the order
        given; a level the grid does not cross gives no line.
    """
    grid = np.asarray(deposition_kg_n_ha_yr, dtype=float)
    if grid.ndim != 2:
        return []
    return [
        (float(level), str(label), line)
        for level, label in contours
        for line in map_contour_lines(grid, west_m, north_m, cell_m, float(level))
    ]


# --------------------------------------------------------------------------------------------
# Symbols, shared by both formats: plain dicts
# --------------------------------------------------------------------------------------------


def _fill(colour: str, outline: str, width_px: float, dash=None, opacity=_FILL_OPACITY) -> dict:
    return {"kind": "fill", "fill": colour, "opacity": opacity, "stroke": outline,
            "width_px": width_px, "dash_px": dash}  # fmt: skip


def _line(colour: str, width_px: float, dash=None, casing: bool = True) -> dict:
    return {"kind": "line", "stroke": colour, "width_px": width_px, "dash_px": dash,
            "casing": casing}  # fmt: skip


def _marker(shape: str, colour: str, outline: str, size_px: float) -> dict:
    return {"kind": "marker", "shape": shape, "fill": colour, "stroke": outline,
            "size_px": size_px}  # fmt: skip


def _darker(colour: str, fraction: float = 0.35) -> str:
    """A colour ``#rrggbb`` mixed with ``fraction`` of black: a fill's outline in its hue."""
    r, g, b = (round(int(colour[i : i + 2], 16) * (1.0 - fraction)) for i in (1, 3, 5))
    return f"#{r:02x}{g:02x}{b:02x}"


def _dash(text: str | None) -> tuple[float, ...] | None:
    """A dash pattern "10 6" [px] as numbers (None: solid)."""
    return tuple(float(v) for v in text.split()) if text else None


def _role_symbol(role: str, kind: str) -> dict:
    style = ROLE_STYLES.get(role, ROLE_STYLES["other"])
    if kind == "fill":
        return _fill(style["fill_color"], style["color"], 1.5, _dash(style["dash_array"]))
    return _marker("circle", style["fill_color"], style["color"], _SOURCE_SIZE_PX)


# --------------------------------------------------------------------------------------------
# QML
# --------------------------------------------------------------------------------------------


def _rgba(colour: str, opacity: float = 1.0) -> str:
    """A colour ``#rrggbb`` as QML writes it, "r,g,b,a" (0-255)."""
    r, g, b = (int(colour[i : i + 2], 16) for i in (1, 3, 5))
    return f"{r},{g},{b},{round(255 * opacity)}"


def _mm(px: float) -> str:
    return f"{px * _MM_PER_PX:.3g}"


def _options(parent: ET.Element, values: dict[str, str]) -> None:
    holder = ET.SubElement(parent, "Option", type="Map")
    for name, value in values.items():
        ET.SubElement(holder, "Option", name=name, type="QString", value=str(value))


def _line_options(colour: str, width_px: float, dash) -> dict[str, str]:
    values = {"line_color": _rgba(colour), "line_style": "solid", "line_width": _mm(width_px),
              "line_width_unit": "MM", "capstyle": "round", "joinstyle": "round",
              "use_custom_dash": "1" if dash else "0", "customdash_unit": "MM"}  # fmt: skip
    if dash:
        values["customdash"] = ";".join(_mm(d) for d in dash)
    return values


def _qml_symbol(parent: ET.Element, name: str, symbol: dict) -> None:
    kind = symbol["kind"]
    element = ET.SubElement(parent, "symbol", type=kind, name=name, alpha="1",
                            clip_to_extent="1", force_rhr="0")  # fmt: skip
    layers = []
    if kind == "fill":
        dash = symbol["dash_px"]
        layers.append(("SimpleFill", {
            "color": _rgba(symbol["fill"], symbol["opacity"]), "style": "solid",
            "outline_color": _rgba(symbol["stroke"]), "outline_width": _mm(symbol["width_px"]),
            "outline_width_unit": "MM", "outline_style": "no" if dash else "solid",
            "joinstyle": "miter"}))  # fmt: skip
        if dash:  # a dashed outline in the map's own pattern: a line layer along the edge
            layers.append(("SimpleLine", _line_options(symbol["stroke"], symbol["width_px"], dash)))
    elif kind == "line":
        if symbol["casing"]:
            layers.append(("SimpleLine", _line_options("#ffffff", symbol["width_px"] + 3.0, None)))
        layers.append(("SimpleLine", _line_options(symbol["stroke"], symbol["width_px"],
                                                   symbol["dash_px"])))  # fmt: skip
    else:
        layers.append(("SimpleMarker", {
            "name": symbol["shape"], "color": _rgba(symbol["fill"]),
            "outline_color": _rgba(symbol["stroke"]), "outline_style": "solid",
            "outline_width": _mm(1.0), "outline_width_unit": "MM",
            "size": _mm(symbol["size_px"]), "size_unit": "MM"}))  # fmt: skip
    for layer_class, values in layers:
        layer = ET.SubElement(element, "layer", {"class": layer_class, "enabled": "1",
                                                 "locked": "0", "pass": "0"})  # fmt: skip
        _options(layer, values)


_GEOMETRY_TYPE = {"marker": "0", "line": "1", "fill": "2"}


def _qml(attribute: str, classes: Sequence[_Class], graduated: bool) -> str:
    """A categorized (or graduated, on ranges) renderer over ``attribute`` as QML text."""
    root = ET.Element("qgis", version=_QML_VERSION, styleCategories="Symbology")
    renderer = ET.SubElement(root, "renderer-v2", attr=attribute, forceraster="0",
                             symbollevels="0", enableorderby="0")  # fmt: skip
    if graduated:
        renderer.set("type", "graduatedSymbol")
        renderer.set("graduatedMethod", "GraduatedColor")
        holder = ET.SubElement(renderer, "ranges")
        for i, c in enumerate(classes):
            lower, upper = c.key
            ET.SubElement(holder, "range", lower=repr(lower), upper=repr(upper), symbol=str(i),
                          label=c.label, render="true")  # fmt: skip
    else:
        renderer.set("type", "categorizedSymbol")
        holder = ET.SubElement(renderer, "categories")
        for i, c in enumerate(classes):
            ET.SubElement(holder, "category", value=str(c.key), symbol=str(i), label=c.label,
                          render="true")  # fmt: skip
    symbols = ET.SubElement(renderer, "symbols")
    for i, c in enumerate(classes):
        _qml_symbol(symbols, str(i), c.symbol)
    if graduated:
        ET.SubElement(renderer, "classificationMethod", id="Custom")
    kind = classes[0].symbol["kind"] if classes else "fill"
    ET.SubElement(root, "layerGeometryType").text = _GEOMETRY_TYPE[kind]
    body = ET.tostring(root, encoding="unicode")
    return f"<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n{body}\n"


# --------------------------------------------------------------------------------------------
# SLD 1.1
# --------------------------------------------------------------------------------------------


def _se(parent: ET.Element, tag: str, text: str | None = None, **attributes) -> ET.Element:
    element = ET.SubElement(parent, f"{{{_SE}}}{tag}", attributes)
    if text is not None:
        element.text = text
    return element


def _svg(parent: ET.Element, name: str, value: str) -> None:
    _se(parent, "SvgParameter", value, name=name)


def _stroke(parent: ET.Element, colour: str, width_px: float, dash=None) -> None:
    stroke = _se(parent, "Stroke")
    _svg(stroke, "stroke", colour)
    _svg(stroke, "stroke-width", f"{width_px:g}")
    _svg(stroke, "stroke-linejoin", "round")
    if dash:
        _svg(stroke, "stroke-dasharray", " ".join(f"{d:g}" for d in dash))


def _sld_symbolizers(rule: ET.Element, symbol: dict) -> None:
    kind = symbol["kind"]
    if kind == "fill":
        polygon = _se(rule, "PolygonSymbolizer")
        fill = _se(polygon, "Fill")
        _svg(fill, "fill", symbol["fill"])
        _svg(fill, "fill-opacity", f"{symbol['opacity']:g}")
        _stroke(polygon, symbol["stroke"], symbol["width_px"], symbol["dash_px"])
    elif kind == "line":
        if symbol["casing"]:
            _stroke(_se(rule, "LineSymbolizer"), "#ffffff", symbol["width_px"] + 3.0)
        _stroke(_se(rule, "LineSymbolizer"), symbol["stroke"], symbol["width_px"],
                symbol["dash_px"])  # fmt: skip
    else:
        graphic = _se(_se(rule, "PointSymbolizer"), "Graphic")
        mark = _se(graphic, "Mark")
        _se(mark, "WellKnownName", "square" if symbol["shape"] == "diamond" else "circle")
        _svg(_se(mark, "Fill"), "fill", symbol["fill"])
        _stroke(mark, symbol["stroke"], 1.0)
        _se(graphic, "Size", f"{symbol['size_px']:g}")
        if symbol["shape"] == "diamond":
            _se(graphic, "Rotation", "45")


def _ogc(parent: ET.Element, tag: str, text: str | None = None) -> ET.Element:
    element = ET.SubElement(parent, f"{{{_OGC}}}{tag}")
    if text is not None:
        element.text = text
    return element


def _comparison(parent: ET.Element, operator: str, attribute: str, literal: str) -> None:
    test = _ogc(parent, operator)
    _ogc(test, "PropertyName", attribute)
    _ogc(test, "Literal", literal)


def _sld(layer: str, title: str, attribute: str, classes: Sequence[_Class], graduated: bool):
    """One FeatureTypeStyle with a Rule (and Filter on ``attribute``) per class, as SLD text."""
    root = ET.Element(f"{{{_SLD}}}StyledLayerDescriptor", {
        "version": "1.1.0",
        f"{{{_XSI}}}schemaLocation":
            f"{_SLD} http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd"})  # fmt: skip
    named = ET.SubElement(root, f"{{{_SLD}}}NamedLayer")
    _se(named, "Name", layer)
    user = ET.SubElement(named, f"{{{_SLD}}}UserStyle")
    _se(user, "Name", layer)
    _se(_se(user, "Description"), "Title", title)
    style = _se(user, "FeatureTypeStyle")
    for c in classes:
        rule = _se(style, "Rule")
        _se(rule, "Name", c.label)
        _se(_se(rule, "Description"), "Title", c.label)
        if c.key is None:  # one symbol for every feature: no filter
            pass
        elif graduated:
            lower, upper = c.key
            both = _ogc(_ogc(rule, "Filter"), "And")
            _comparison(both, "PropertyIsGreaterThanOrEqualTo", attribute, repr(lower))
            _comparison(both, "PropertyIsLessThan", attribute, repr(upper))
        else:
            _comparison(_ogc(rule, "Filter"), "PropertyIsEqualTo", attribute, str(c.key))
        _sld_symbolizers(rule, c.symbol)
    body = ET.tostring(root, encoding="unicode")
    return f'<?xml version="1.0" encoding="UTF-8"?>\n{body}\n'


def _style(layer: str, title: str, attribute: str, classes: Sequence[_Class], graduated=False):
    return LayerStyle(
        layer, _qml(attribute, classes, graduated), _sld(layer, title, attribute, classes, graduated),
        title,
    )  # fmt: skip


# --------------------------------------------------------------------------------------------
# The layers' styles
# --------------------------------------------------------------------------------------------


def sites_style(sites, layer: str = "sites") -> LayerStyle:
    """The sites classed by ``verdict``: one category per verdict present, in its class colour.

    Parameters
    ----------
    sites : pandas.DataFrame
        The sites table (``verdict``, and ``passes`` and ``assessed`` where present).
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
        Categories in first-seen order; a verdict's colour is that of its class
        (:func:`siting.presentation.formats.verdict_classes`), and a site that does not pass
        has the thicker outline.
    """
    classes = {}
    for value, kind in zip(sites["verdict"], verdict_classes(sites)):
        word = "" if value is None or value != value else str(value)
        if word not in classes:
            colour = VERDICT_COLOURS[kind]
            width = _SITE_OUTLINE_PX[kind == "does not pass"]
            symbol = _fill(colour, _darker(colour), width)
            classes[word] = _Class(word, word or "(no verdict)", symbol)
    return _style(layer, "Habitat sites by verdict under the rule set", "verdict",
                  list(classes.values()))  # fmt: skip


def _roles(values: Iterable) -> list[str]:
    seen = {}
    for value in values:
        role = "other" if value is None or value != value else str(value).strip().lower()
        seen.setdefault(role, None)
    return list(seen)


def sources_style(roles: Iterable, layer: str = "sources") -> LayerStyle:
    """The sources' outlets (points) classed by ``role`` in the map's colours.

    Parameters
    ----------
    roles : iterable of str
        The ``role`` of each source (proposed, existing, removed, other).
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
    """
    classes = [_Class(r, f"{r} source", _role_symbol(r, "marker")) for r in _roles(roles)]
    return _style(layer, "Sources by role", "role", classes)


def footprints_style(roles: Iterable, layer: str = "source_footprints") -> LayerStyle:
    """The footprints of volume and area sources, filled and classed by ``role``.

    Parameters
    ----------
    roles : iterable of str
        The ``role`` of each footprint's source.
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
    """
    classes = [_Class(r, f"{r} house or store", _role_symbol(r, "fill")) for r in _roles(roles)]
    return _style(layer, "Footprints of houses and stores by role", "role", classes)


def receptors_style(layer: str = "receptors") -> LayerStyle:
    """The named points: one symbol for all, an amber diamond.

    Parameters
    ----------
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
    """
    symbol = _marker("diamond", _RECEPTOR["fill"], _RECEPTOR["color"], _RECEPTOR["size"])
    return _single(layer, "Named points", symbol)


def holding_style(layer: str = "holding") -> LayerStyle:
    """The holding boundary: a light fill with a dashed dark outline.

    Parameters
    ----------
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
    """
    symbol = _fill(_HOLDING["fill"], _HOLDING["color"], _HOLDING["weight"], _HOLDING["dash"], 0.35)
    return _single(layer, "Holding boundary", symbol)


def contours_style(contours: Sequence[tuple[float, str]], layer: str = "contours") -> LayerStyle:
    """The contour lines graded by ``value``: level ``i`` (lowest first) in the map's style ``i``.

    Parameters
    ----------
    contours : sequence of (float, str)
        Levels [kg N ha-1 yr-1] and labels, as for the map.
    layer : str
        The layer's name.

    Returns
    -------
    LayerStyle
        One range per level, bounded halfway (geometrically) to the next level, each in the
        colour, width and dash pattern of the map's :data:`CONTOUR_STYLES` entry.
    """
    levels = sorted({float(v) for v, _ in contours})
    labels = {float(v): str(t) for v, t in contours}
    bounds = [0.0]
    bounds += [float(np.sqrt(a * b)) if a > 0 else (a + b) / 2 for a, b in zip(levels, levels[1:])]
    bounds += [levels[-1] * 10.0 + 1.0] if levels else []
    classes = []
    for i, level in enumerate(levels):
        style = CONTOUR_STYLES[i % len(CONTOUR_STYLES)]
        label = f"{labels[level]}: {format_number(level)} {CONTOUR_UNITS}"
        symbol = _line(style["color"], style["weight"], _dash(style["dash_array"]))
        classes.append(_Class((bounds[i], bounds[i + 1]), label, symbol))
    return _style(layer, "Deposition contours at the sites' thresholds", "value", classes, True)


def _single(layer: str, title: str, symbol: dict) -> LayerStyle:
    """A style of one symbol for every feature (QML singleSymbol; SLD one Rule, no Filter)."""
    root = ET.Element("qgis", version=_QML_VERSION, styleCategories="Symbology")
    renderer = ET.SubElement(root, "renderer-v2", type="singleSymbol", forceraster="0",
                             symbollevels="0", enableorderby="0")  # fmt: skip
    _qml_symbol(ET.SubElement(renderer, "symbols"), "0", symbol)
    ET.SubElement(root, "layerGeometryType").text = _GEOMETRY_TYPE[symbol["kind"]]
    qml = "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"
    qml += ET.tostring(root, encoding="unicode") + "\n"
    sld = _sld(layer, title, "", [_Class(None, title, symbol)], graduated=False)
    return LayerStyle(layer, qml, sld, title)
