"""The habitat sites on the web maps: one GeoJSON layer with a popup and tooltip per site.

The sites, which may number thousands, are one GeoJSON layer on both maps (:func:`add_sites`):
each feature carries its verdict and its popup and tooltip texts, every user value among them
already escaped by :func:`~siting.presentation.webmap_text.escape_text`, so no raw user
property is ever embedded in the page; a short script of ours binds them to each feature when
the page loads. Each site's name is also a permanent label
(:mod:`~siting.presentation.webmap_labels`), the most affected sites first, so their labels win
where two would touch. Used by :mod:`siting.presentation.webmap` and
:mod:`siting.presentation.webmap_place`; no physics.
"""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from siting.presentation.formats import VERDICT_COLOURS, most_affected_order, verdict_classes
from siting.presentation.webmap_labels import add_labels, label_point
from siting.presentation.webmap_text import PopupRows, column_values, escape_text, number_texts

if TYPE_CHECKING:  # imported for annotations only
    import folium
    import geopandas as gpd

__all__ = ["POPUP_OPTIONS", "SITE_CLASS", "SITE_POPUP_ROWS", "add_sites", "site_popup_values"]

#: CSS class on the sites' SVG paths: a stable hook for the browser tests
#: (tests/test_browser.py) and for anyone restyling the page; keep it when refactoring.
SITE_CLASS = "siting-site"

#: Options of every popup on the maps. Where an opened popup pans to, clear of the title block
#: (top left, above the map panes), and how tall it may grow are set by the page script
#: (_assets/siting/map.js), which measures the block.
POPUP_OPTIONS: dict[str, Any] = {"max_width": 380}

#: Rows of a site's popup: (label, column, unit); unit None for text. A row whose value is empty
#: text is left out; numbers show "n/a" when missing. The in-combination row (last) is shown
#: only where the site has that figure.
SITE_POPUP_ROWS: PopupRows = (
    ("Site id", "site_id", None),
    ("Designation", "designation", None),
    ("Habitat", ("habitat_name", "habitat"), None),  # its name where known, as in the report
    ("Verdict", "verdict", None),
    ("Deciding rule", "deciding_rule", None),
    ("PC max concentration", "pc_conc_max_ug_m3", "µg NH3/m³"),
    ("Critical level", "critical_level_ug_m3", "µg NH3/m³"),
    ("PC as % of level", "pc_pct_level", "%"),
    ("PC max deposition", "pc_dep_max_kg_n_ha_yr", "kg N/ha/yr"),
    ("Critical load used", "critical_load_used_kg_n_ha_yr", "kg N/ha/yr"),
    ("PC as % of load", "pc_pct_load", "%"),
    ("Screening threshold", "threshold_percent", "%"),
    ("Judged by the rule set, % of load", "judged_pct_load", "%"),
    ("Net change in deposition", "net_dep_max_kg_n_ha_yr", "kg N/ha/yr"),
    ("In-combination, % of load", "incomb_pct_load", "%"),
)

#: The meaning in brackets after each figure name of a deciding rule (rule_text.condition_words).
_FIGURE_MEANING = re.compile(r" \([^()]*\)")

#: Number rows left out (not "n/a") where a site lacks the figure: tables without rule sets or
#: without other sources.
_BLANK_WHEN_MISSING = frozenset({"incomb_pct_load", "judged_pct_load", "net_dep_max_kg_n_ha_yr"})

#: Decimal places kept of the site outlines' longitude and latitude: 1e-6 deg is ~0.1 m, well
#: below a grid cell, and halves the page against full double precision. Our own choice.
_LONLAT_DECIMALS = 6

#: Binds each site feature's popup and tooltip when the page loads (see add_sites); the popup
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


def _site_verdicts(frame: Any) -> list[str]:
    """Each site's class of verdict (passes, does not pass, not assessed): the style key."""
    return verdict_classes(frame) if "verdict" in frame else ["not assessed"] * len(frame)


def site_popup_values(frame: Any, rows: PopupRows = SITE_POPUP_ROWS) -> list[list[str]]:
    """Per site, the escaped value of each of ``rows`` ('' = row left out).

    ``rows`` are (label, column, unit) as in :data:`SITE_POPUP_ROWS`. Built column by column,
    so thousands of sites cost a fraction of a second.
    """
    columns = []
    for _label, column, unit in rows:
        values = column_values(frame, column)
        if column == "verdict":
            texts = [f"<strong>{escape_text(v) or 'not assessed'}</strong>" for v in values]
        elif column == "deciding_rule":  # short: the figures' meanings are in sites.csv
            texts = [escape_text(_FIGURE_MEANING.sub("", str(v))) for v in values]
        elif unit is None:
            texts = [escape_text(v) for v in values]
        else:
            texts = number_texts(values, unit, blank=column in _BLANK_WHEN_MISSING)
        columns.append(texts)
    return [list(row) for row in zip(*columns)]


def _site_script(rows: PopupRows = SITE_POPUP_ROWS, extra_labels: Sequence[str] = ()) -> str:
    """The feature script: our own labels of ``rows`` and ``extra_labels`` (escaped) and the
    popup options as JavaScript literals."""
    labels = [escape_text(label) for label, _column, _unit in rows]
    labels += [escape_text(label) for label in extra_labels]
    options = {"maxWidth": POPUP_OPTIONS["max_width"]}
    return _SITE_SCRIPT % {"labels": json.dumps(labels), "options": json.dumps(options)}


def _site_style(verdict: str) -> dict[str, Any]:
    """Leaflet path style of a site outline by verdict (dashed when not assessed)."""
    colour = VERDICT_COLOURS.get(verdict, VERDICT_COLOURS["not assessed"])
    return {
        "color": colour,
        "weight": 2.5,
        "fillColor": colour,
        "fillOpacity": 0.2,
        "dashArray": "6 4" if verdict not in ("passes", "does not pass") else None,
        "className": SITE_CLASS,
    }


def _site_features(
    sites_wgs84: gpd.GeoDataFrame,
    rows: PopupRows = SITE_POPUP_ROWS,
    extra: Sequence[tuple[str, Sequence[str]]] = (),
) -> list[dict[str, Any]]:
    """One GeoJSON feature per drawable site: rounded outline, verdict, escaped texts.

    Properties: ``verdict`` (lower case; the style key), ``name`` (escaped, 'Unnamed site'
    when blank) and ``popup`` (the escaped values of ``rows``, by default
    :data:`SITE_POPUP_ROWS`, then each site's ready-made HTML of ``extra``). Sites without a
    geometry are left out; ``id`` is the site's row position.
    """
    import shapely
    from shapely.geometry import mapping

    geoms = np.asarray(list(sites_wgs84.geometry), dtype=object)
    drawable = ~shapely.is_missing(geoms)
    drawable[drawable] = ~shapely.is_empty(geoms[drawable])
    rounded = shapely.transform(geoms[drawable], lambda xy: np.round(xy, _LONLAT_DECIMALS))
    verdicts = _site_verdicts(sites_wgs84)
    names = [escape_text(n) or "Unnamed site" for n in column_values(sites_wgs84, "name")]
    popups = site_popup_values(sites_wgs84, rows)
    for _label, values in extra:
        for popup, value in zip(popups, values):
            popup.append(str(value))
    return [
        {
            "type": "Feature",
            "id": int(i),
            "geometry": mapping(geometry),
            "properties": {"verdict": verdicts[i], "name": names[i], "popup": popups[i]},
        }
        for i, geometry in zip(np.flatnonzero(drawable), rounded)
    ]


def add_sites(
    group: folium.FeatureGroup,
    sites_wgs84: gpd.GeoDataFrame,
    *,
    rows: PopupRows = SITE_POPUP_ROWS,
    style: dict[str, Any] | None = None,
    highlight: bool = True,
    labels: bool = True,
    extra: Sequence[tuple[str, Sequence[str]]] = (),
) -> None:
    """All sites as one GeoJson layer, with a popup and tooltip per feature, and with
    ``labels`` each site's name as a permanent label (most affected first). ``extra`` adds
    popup rows: (label, one ready-made, escaped HTML value per site, '' to leave it out).

    One layer instead of one per site keeps map.html small and quick to write for thousands
    of sites. Each feature is styled by its ``verdict`` property (:func:`_site_style`), or
    all alike by ``style`` when given; its popup (the rows of ``rows`` that have a value) and
    tooltip are bound by :data:`_SITE_SCRIPT` from its already escaped properties.
    ``highlight`` thickens an outline under the pointer.
    """
    import folium
    from folium.utilities import JsCode

    features = _site_features(sites_wgs84, rows, extra)
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
        on_each_feature=JsCode(_site_script(rows, [label for label, _values in extra])),
        zoom_on_click=False,
        control=False,
    ).add_to(group)
    if labels:
        add_labels(group, "site", _site_labels(sites_wgs84))


def _site_labels(sites_wgs84: gpd.GeoDataFrame) -> list[list]:
    """[lat, lon, escaped name, css class] of each drawable site, most affected first
    (:func:`~siting.presentation.formats.most_affected_order`), its class of verdict as class."""
    names = column_values(sites_wgs84, "name")
    verdicts = _site_verdicts(sites_wgs84)
    geometries = list(sites_wgs84.geometry)
    labels = []
    for i in most_affected_order(sites_wgs84):
        point = label_point(geometries[i])
        if point is not None:
            css = "siting-verdict-" + verdicts[i].replace(" ", "-")
            labels.append([*point, escape_text(names[i]) or "Unnamed site", css])
    return labels
