"""Permanent labels on the web maps: site names, source ids, contour values, context features.

A label is a small text box on the map, shown without hovering. All labels of one kind in one
layer are one script call of siting's own page script (``_assets/siting/map.js``,
``sitingMap.labels``) with a JSON list of ``[lat, lon, html, css class (, other places)]``;
the script makes a Leaflet DivIcon marker of each (not interactive, so clicks reach the
feature below) and lays them out after every move or zoom: by importance of kind, a label that would cover one
already placed is hidden (source ids are joined instead: "H1, H2"), and each kind has a least
zoom. Every text is escaped (:func:`~siting.presentation.webmap_text.escape_text`) before it
is put in the list, and the list is written as JSON with ``<``, ``>`` and ``&`` as Unicode
escapes, so nothing in it can end the script. No physics; nothing is written here.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # imported for annotations only
    import folium

__all__ = ["LABEL_CLASS", "LABEL_KINDS", "add_labels", "add_obstacles", "label_point"]

#: CSS class on every label's element (each also ``<LABEL_CLASS>-<kind>``): a stable hook for
#: the browser tests (tests/test_browser.py) and for restyling; keep it.
LABEL_CLASS = "siting-label"

#: The kinds of label ``map.js`` knows, most important first (it lays them out in this order).
LABEL_KINDS = ("rank", "site", "source", "farm", "contour", "context", "exclusion")

#: JSON of the label list, safe inside an inline <script> (no "</script>", "<!--" or "&").
_JSON_ESCAPES = (("<", "\\u003c"), (">", "\\u003e"), ("&", "\\u0026"))


def _script_json(value: Any) -> str:
    """``value`` as JSON (ASCII, so U+2028/2029 are escaped) that cannot end a <script>."""
    text = json.dumps(value, ensure_ascii=True, allow_nan=False)
    for raw, escaped in _JSON_ESCAPES:
        text = text.replace(raw, escaped)
    return text


def label_point(geometry: Any) -> tuple[float, float] | None:
    """(lat, lon) of a label for a geometry in EPSG:4326: a point inside a polygon (its
    representative point), the middle of a line, the point itself; None when empty."""
    if geometry is None or geometry.is_empty:
        return None
    if geometry.geom_type in ("LineString", "MultiLineString"):
        point = geometry.interpolate(0.5, normalized=True)
    elif geometry.geom_type == "Point":
        point = geometry
    else:
        point = geometry.representative_point()
    return float(point.y), float(point.x)


def _script_element(call: str, items: list[list], kind: str | None = None):
    """A folium element whose script calls ``sitingMap.<call>`` with the map, its parent layer,
    (``kind``,) and ``items`` (see add_labels, add_obstacles)."""
    from branca.element import MacroElement
    from jinja2 import Template

    element = MacroElement()
    element._name = "SitingLabels"
    element._template = Template(
        "{% macro script(this, kwargs) %}\n"
        f"sitingMap.{call}({{{{ this.map_name }}}}, {{{{ this._parent.get_name() }}}}, "
        + ("{{ this.kind }}, " if kind is not None else "")
        + "{{ this.items }});\n{% endmacro %}"
    )
    element.kind = _script_json(kind)
    element.items = _script_json(items)
    return element


class _MapName:
    """The map's variable name, looked up when the page is rendered (the layer's parent is
    known by then)."""

    def __init__(self, group: Any) -> None:
        self.group = group

    def __str__(self) -> str:
        return self.group._parent.get_name()


def add_labels(group: folium.FeatureGroup, kind: str, items: Sequence[Sequence[Any]]) -> None:
    """Permanent labels of one ``kind`` into ``group`` (switched on and off with it).

    Parameters
    ----------
    group : folium.FeatureGroup
        The layer the labelled features are in; it must be added to the map itself.
    kind : str
        One of :data:`LABEL_KINDS`: it sets the labels' importance, look and least zoom.
    items : sequence of [lat, lon, html, css class] or [lat, lon, html, css class, places]
        Position [deg], the label's text already escaped by
        :func:`~siting.presentation.webmap_text.escape_text` (it is shown as HTML), an extra
        CSS class of ours or ``""``, and optionally other places for it ([lat, lon] pairs,
        best first: the page script puts the label at the first that is on screen and clear
        of the title block, legend and layer list); in order of importance within the kind.

    Raises
    ------
    ValueError
        For a kind map.js does not know.
    """
    if kind not in LABEL_KINDS:
        raise ValueError(f"map labels: unknown kind {kind!r} (known: {', '.join(LABEL_KINDS)})")
    rows = [
        [round(float(item[0]), 7), round(float(item[1]), 7), str(item[2]), str(item[3])]
        + ([[[float(a), float(b)] for a, b in item[4]]] if len(item) > 4 else [])
        for item in items
    ]
    if not rows:
        return
    element = _script_element("labels", rows, kind)
    element.map_name = _MapName(group)
    group.add_child(element)


def add_obstacles(group: folium.FeatureGroup, items: Sequence[Sequence[float]]) -> None:
    """Markers of ``group`` that labels keep clear of while the group is shown (the numbered
    positions of the placement map).

    Parameters
    ----------
    group : folium.FeatureGroup
        The layer the markers are in; it must be added to the map itself.
    items : sequence of [lat, lon, radius]
        Each marker's centre [deg] and the half-size of its box [px].
    """
    rows = [[round(float(lat), 7), round(float(lon), 7), float(r)] for lat, lon, r in items]
    if rows:
        element = _script_element("obstacles", rows)
        element.map_name = _MapName(group)
        group.add_child(element)
